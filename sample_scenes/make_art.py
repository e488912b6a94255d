"""Generate the sample scenes' pictures (run: python -m sample_scenes.make_art).

Everything here is invented for the demo: a gallery wall in a painted style with a
measuring grid (to judge distortion through the lenses), a ring-shaped brooch to
hide in the gallery device, a tabletop poster and a ring of beads for the tabletop
kit. Fixed seeds make the files the same on every run.
"""

from __future__ import annotations

from pathlib import Path

import cv2
import numpy as np

HERE = Path(__file__).parent
FONT = cv2.FONT_HERSHEY_SIMPLEX


def _save(path: Path, rgba_or_rgb: np.ndarray) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    image = rgba_or_rgb
    order = [2, 1, 0, 3] if image.shape[-1] == 4 else [2, 1, 0]
    cv2.imwrite(str(path), np.ascontiguousarray(image[..., order]),
                [cv2.IMWRITE_PNG_COMPRESSION, 9])


def _brush_field(rng, h, w, palette, strokes, size):
    """A painterly field: many soft, elongated strokes of palette colours."""
    canvas = np.zeros((h, w, 3), np.float32)
    canvas[:] = palette[0]
    for _ in range(strokes):
        colour = palette[rng.integers(len(palette))] + rng.normal(0, 12, 3)
        centre = (int(rng.integers(0, w)), int(rng.integers(0, h)))
        axes = (int(rng.integers(size // 3, size)), int(rng.integers(size // 10, size // 3)))
        cv2.ellipse(canvas, centre, axes, float(rng.uniform(0, 180)), 0, 360,
                    colour.tolist(), -1, cv2.LINE_AA)
    return cv2.GaussianBlur(canvas, (0, 0), size / 12)


def _landscape(rng, h, w):
    """A small invented landscape painting."""
    y = np.linspace(0, 1, h)[:, None, None]
    sky = (1 - y) * np.array([120, 170, 230]) + y * np.array([250, 215, 170])
    art = np.broadcast_to(sky, (h, w, 3)).astype(np.float32).copy()
    cv2.circle(art, (int(w * 0.72), int(h * 0.28)), h // 9, (255, 236, 160), -1, cv2.LINE_AA)
    for level, colour in ((0.55, (90, 120, 95)), (0.68, (60, 95, 70)), (0.8, (40, 70, 52))):
        xs = np.arange(w)
        ridge = h * level + h * 0.06 * np.sin(xs / w * rng.uniform(4, 9) + rng.uniform(0, 6))
        pts = np.stack([xs, ridge], axis=1).astype(np.int32)
        poly = np.concatenate([pts, [[w - 1, h - 1], [0, h - 1]]]).astype(np.int32)
        cv2.fillPoly(art, [poly], colour, cv2.LINE_AA)
    texture = _brush_field(rng, h, w, [np.zeros(3), np.array([20.0, 10, 0])], 300, 40)
    return np.clip(art + texture * 0.4 - 4, 0, 255)


def _portrait(rng, h, w):
    """A small invented abstract portrait-format painting."""
    palette = [np.array(c, float) for c in ((180, 70, 60), (230, 180, 90), (60, 80, 140),
                                            (240, 230, 210), (30, 40, 60))]
    return _brush_field(rng, h, w, palette, 160, max(h, w) // 4)


def gallery_wall(path: Path) -> None:
    """2400 x 1600 mm wall at 1 px/mm; the device axis meets it at the centre."""
    rng = np.random.default_rng(7)
    h, w = 1600, 2400
    plaster = _brush_field(rng, h, w, [np.array(c, float) for c in
                                       ((228, 218, 198), (220, 208, 186), (234, 226, 210))],
                           900, 160)
    wall = plaster.copy()
    frames = [((260, 330), (620, 460), _landscape), ((1560, 300), (560, 700), _portrait),
              ((330, 900), (420, 540), _portrait), ((1500, 1110), (700, 380), _landscape)]
    for (x, y), (fw, fh), painter in frames:
        cv2.rectangle(wall, (x - 28, y - 28), (x + fw + 28, y + fh + 28), (120, 84, 40), -1)
        cv2.rectangle(wall, (x - 10, y - 10), (x + fw + 10, y + fh + 10), (200, 170, 110), -1)
        wall[y:y + fh, x:x + fw] = painter(rng, fh, fw)
    # Central target panel with a measuring grid: 10 mm minor, 50 mm major lines.
    cx, cy, half = w // 2, h // 2, 330
    panel = wall[cy - half:cy + half, cx - half:cx + half]
    panel[:] = 0.25 * panel + 0.75 * np.array([246, 243, 235])
    wall = np.clip(wall, 0, 255).astype(np.uint8)
    for offset in range(-half, half + 1, 10):
        major = offset % 50 == 0
        colour = (40, 60, 110) if major else (150, 165, 190)
        thick = 2 if major else 1
        cv2.line(wall, (cx + offset, cy - half), (cx + offset, cy + half), colour, thick)
        cv2.line(wall, (cx - half, cy + offset), (cx + half, cy + offset), colour, thick)
    for offset in range(-300, 301, 100):
        if offset:
            label = f"{offset // 10:+d}"
            cv2.putText(wall, label, (cx + offset + 4, cy - 6), FONT, 0.7, (150, 40, 40), 2,
                        cv2.LINE_AA)
            cv2.putText(wall, label, (cx + 6, cy - offset - 6), FONT, 0.7, (150, 40, 40), 2,
                        cv2.LINE_AA)
    for r, colour in ((60, (200, 60, 50)), (30, (240, 200, 60)), (12, (60, 120, 200))):
        cv2.circle(wall, (cx, cy), r, colour, 4, cv2.LINE_AA)
    cv2.putText(wall, "HALL OF LIGHT  -  grid 1 cm, labels in cm from the axis",
                (cx - half, cy + half + 60), FONT, 1.0, (70, 50, 30), 2, cv2.LINE_AA)
    _save(path, wall)


def _ring_object(size_px, outer, inner, rng, beads: bool):
    """An RGBA ring-shaped object: a brooch of leaves and gems, or a ring of beads."""
    rgba = np.zeros((size_px, size_px, 4), np.uint8)
    c = size_px / 2
    mid = (outer + inner) / 2
    if beads:
        count = 14
        colours = [(230, 60, 60), (250, 200, 40), (60, 170, 90), (60, 110, 230),
                   (200, 90, 210), (250, 140, 40), (40, 190, 200)]
        for k in range(count):
            a = 2 * np.pi * k / count
            x, y = c + mid * np.cos(a), c + mid * np.sin(a)
            col = colours[k % len(colours)]
            cv2.circle(rgba, (int(x), int(y)), int((outer - inner) / 2), (*col, 255), -1,
                       cv2.LINE_AA)
            cv2.circle(rgba, (int(x - 0.2 * (outer - inner) / 2), int(y - 0.25 *
                                                                      (outer - inner) / 2)),
                       int((outer - inner) / 9), (255, 255, 255, 255), -1, cv2.LINE_AA)
    else:
        cv2.circle(rgba, (int(c), int(c)), int(mid), (212, 168, 60, 255),
                   int((outer - inner) * 0.45), cv2.LINE_AA)
        for k in range(18):
            a = 2 * np.pi * k / 18 + rng.uniform(-0.05, 0.05)
            x, y = c + mid * np.cos(a), c + mid * np.sin(a)
            angle = np.degrees(a) + 90
            leaf = (int((outer - inner) * 0.42), int((outer - inner) * 0.17))
            green = (60 + rng.integers(0, 40), 130 + rng.integers(0, 50), 60, 255)
            cv2.ellipse(rgba, (int(x), int(y)), leaf, float(angle) + 35, 0, 360,
                        tuple(int(v) for v in green), -1, cv2.LINE_AA)
        for k in range(6):
            a = 2 * np.pi * (k + 0.5) / 6
            x, y = c + mid * np.cos(a), c + mid * np.sin(a)
            cv2.circle(rgba, (int(x), int(y)), int((outer - inner) * 0.16), (200, 30, 60, 255),
                       -1, cv2.LINE_AA)
            cv2.circle(rgba, (int(x) - 3, int(y) - 3), int((outer - inner) * 0.05),
                       (255, 220, 230, 255), -1, cv2.LINE_AA)
    return rgba


def tabletop_poster(path: Path) -> None:
    """A 600 x 400 mm poster at 2 px/mm: a checkerboard with coloured letters."""
    h, w = 800, 1200
    y, x = np.mgrid[0:h, 0:w]
    checker = ((x // 40 + y // 40) % 2).astype(np.float32)
    poster = np.stack([235 - 150 * checker, 232 - 140 * checker, 222 - 120 * checker], -1)
    poster = poster.astype(np.uint8)
    letters = "SEE THROUGH"
    colours = [(220, 60, 50), (240, 170, 30), (60, 160, 80), (50, 100, 220)]
    for i, ch in enumerate(letters):
        cv2.putText(poster, ch, (70 + i * 98, 300), FONT, 3.2, colours[i % 4], 9, cv2.LINE_AA)
    cv2.putText(poster, "squares are 20 mm", (380, 700), FONT, 1.4, (30, 30, 30), 3,
                cv2.LINE_AA)
    cv2.circle(poster, (w // 2, h // 2), 30, (220, 40, 40), 5, cv2.LINE_AA)
    _save(path, poster)


def main() -> None:
    """Write every picture the sample scenes use."""
    rng = np.random.default_rng(11)
    gallery_wall(HERE / "gallery" / "art" / "gallery_wall.png")
    _save(HERE / "gallery" / "art" / "brooch.png",
          _ring_object(800, 390, 140, rng, beads=False))
    tabletop_poster(HERE / "tabletop" / "art" / "poster.png")
    _save(HERE / "tabletop" / "art" / "bead_ring.png",
          _ring_object(600, 290, 80, rng, beads=True))


if __name__ == "__main__":
    main()
