"""Small scenes written on the fly for the tests (pictures drawn with numpy)."""

from __future__ import annotations

from pathlib import Path

import imageio.v3 as iio
import numpy as np

BASE = """
title = "test bench"

[device]
f_outer_mm = 180
f_inner_mm = 60
diameter_mm = 50
material = "acrylic"
shape = "biconvex"
axis_height_mm = 1150
{device_extra}

[housing]
tube_diameter_mm = 66
panel_width_mm = 200
panel_height_mm = 200
{housing_extra}

[[layer]]
name = "poster"
role = "background"
image = "art/poster.png"
width_mm = 600
center_mm = [0, 1150]
z_mm = 1150

{layers}

[[viewer]]
name = "on-axis"
eye_mm = [0, 1150, -600]
fov_deg = 8
size = [{width}, {height}]
{viewer_extra}

[render]
supersample = {supersample}
{render_extra}
"""

RING = """
[[layer]]
name = "ring"
role = "hidden"
image = "art/ring.png"
width_mm = 44
center_mm = [0, 1150]
z_mm = 222
"""

#: The same ring at two thirds of the size (4.7 to 14 mm): from the viewer 600 mm away it
#: lies inside the ideal cloak's through-window, R (d + z) / (d + L) = 15.6 mm at z = 222
#: mm (see test_place.py), so background replaces it and the effect works.
RING_FITS = RING.replace("width_mm = 44", "width_mm = 29.3333")

DOT = """
[[layer]]
name = "dot"
role = "hidden"
image = "art/dot.png"
width_mm = 44
center_mm = [0, 1150]
z_mm = 222
"""


def write_art(folder: Path) -> None:
    """A checkerboard poster, a ring (radius 7 to 21 mm) and an axis dot (radius 3 mm)."""
    art = folder / "art"
    art.mkdir(parents=True, exist_ok=True)
    y, x = np.mgrid[0:400, 0:600]
    checker = ((x // 20 + y // 20) % 2).astype(np.uint8)
    poster = np.stack([200 * checker + 30, 180 * checker + 40, 90 + 100 * (y > 200)], -1)
    iio.imwrite(art / "poster.png", poster.astype(np.uint8))
    yy, xx = np.mgrid[0:440, 0:440]
    r = np.hypot(xx - 219.5, yy - 219.5) / 10.0  # mm (44 mm across 440 px)
    for name, mask in (("ring", (r >= 7) & (r <= 21)), ("dot", r <= 3)):
        rgba = np.zeros((440, 440, 4), np.uint8)
        rgba[mask] = (230, 40, 40, 255)
        iio.imwrite(art / f"{name}.png", rgba)


def write_scene(folder: Path, layers: str = "", width=96, height=64, supersample=1,
                device_extra="", housing_extra="", viewer_extra="", render_extra="",
                text: str | None = None) -> Path:
    """Write a scene file (and its art) into ``folder``; return its path."""
    write_art(folder)
    path = folder / "scene.toml"
    path.write_text(text if text is not None else BASE.format(
        layers=layers, width=width, height=height, supersample=supersample,
        device_extra=device_extra, housing_extra=housing_extra, viewer_extra=viewer_extra,
        render_extra=render_extra))
    return path
