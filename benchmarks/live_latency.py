"""cloakview live: time from a pointer move to the new frame being painted, in Chromium.

Run: python benchmarks/live_latency.py           (a table, then the same as JSON)
     python benchmarks/live_latency.py --json    (only the JSON)

Starts ``cloakview live`` for the bundled gallery exhibit (its own process), opens it in headless
Chromium (the system's, driven by Playwright) and drags the eye point across the floor
plan with the mouse at about 60 moves per second. The page records, for every frame it
paints, the time from the pointer event whose eye point the frame shows to the moment the
frame is painted (the animation frame after the picture was decoded). Then the button
is let go, and the time from the last move to the full-quality frame being painted is
taken, several times (the page asks for it on release; a pointer that stops while the
button is held gets it after 250 ms of rest). Not a test: the numbers depend on the machine
and its load.
"""

import argparse
import contextlib
import json
import os
import platform
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from cloakview import sample_scenes
from cloakview.render.proposal.pdf import CHROMIUM_FLAGS, chromium
from playwright.sync_api import sync_playwright

MOVE_HZ = 60
EXTRA = os.environ.get("LIVE_EXTRA", "").split()


def _summary(values):
    values = sorted(values)
    if not values:
        return None
    return {"count": len(values), "median": round(statistics.median(values), 1),
            "p90": round(values[int(0.9 * (len(values) - 1))], 1),
            "max": round(values[-1], 1)}


def _drag(page, seconds, span_px, release=True):
    """Drag the eye marker to and fro sideways for ``seconds``; return the last move's time."""
    box = page.locator("#eye-marker").bounding_box()
    x0, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x0, y)
    page.mouse.down()
    start = time.perf_counter()
    step = 0
    while time.perf_counter() - start < seconds:
        phase = (step % 120) / 120.0
        offset = span_px * (1 - abs(2 * phase - 1) * 2) / 2  # a triangle wave
        page.mouse.move(x0 + offset, y)
        step += 1
        time.sleep(max(0.0, start + step / MOVE_HZ - time.perf_counter()))
    if release:
        page.mouse.up()
    return page.evaluate("performance.now()"), step


@contextlib.contextmanager
def _live_command(folder):
    """``cloakview live`` for the gallery in its own process (as a planner runs it)."""
    command = [sys.executable, "-m", "cloakview.render.cli.main", "live",
               str(sample_scenes.scene_path("gallery")), "--no-browser", "--port", "0",
               "--out", str(Path(folder) / "saved"), *EXTRA]
    with subprocess.Popen(command, stdout=subprocess.PIPE, text=True,
                          env={**os.environ, "PYTHONUNBUFFERED": "1"}) as process:
        try:
            for line in process.stdout:
                found = re.search(r"at (http://\S+/) ", line)
                if found:
                    yield found.group(1)
                    break
            else:
                sys.exit("cloakview live did not start")
        finally:
            process.terminate()
            process.communicate(timeout=30)


def measure(drag_seconds=6.0, rests=5):
    with tempfile.TemporaryDirectory() as folder:
        with _live_command(folder) as url, sync_playwright() as playwright:
            context = playwright.chromium.launch_persistent_context(
                str(Path(folder) / "profile"), executable_path=chromium(), headless=True,
                args=[f for f in CHROMIUM_FLAGS if f != "--headless"],
                viewport={"width": 1400, "height": 1000})
            page = context.new_page()
            page.goto(url)
            page.wait_for_function("window.cloakview.last && "
                                   "window.cloakview.last.quality === 'full'", timeout=120_000)
            scene = page.evaluate("window.cloakview.scene")
            sizes = {"preview": scene["preview_size_px"], "full": scene["full_size_px"]}
            page.click("#zoom-eye")
            page.evaluate("window.cloakview.stats.painted = []")
            _, moves = _drag(page, drag_seconds, 120)
            painted = page.evaluate("window.cloakview.stats.painted")
            previews = [p for p in painted if p["quality"] == "preview"]
            shown = [p for p in previews if p["latency_ms"] >= 0]
            rest_ms = {True: [], False: []}
            for i in range(2 * rests):
                release = i % 2 == 0
                page.evaluate("window.cloakview.stats.painted = []")
                _drag(page, 0.5, 30 + 10 * i, release)
                page.wait_for_function(
                    "() => window.cloakview.stats.painted.some(p => p.quality === 'full')",
                    timeout=120_000)
                full = next(p for p in page.evaluate("window.cloakview.stats.painted")
                            if p["quality"] == "full")
                if not release:
                    page.mouse.up()
                    page.wait_for_timeout(1500)  # the frame asked for on release
                # A full frame's latency counts from the pointer event of its eye point: the
                # last move before the rest.
                rest_ms[release].append(full["latency_ms"])
            context.close()
    return {
        "machine": {"python": platform.python_version(), "cpus": os.cpu_count(),
                    "platform": platform.platform()},
        "date": time.strftime("%Y-%m-%d"),
        "pointer_moves": moves, "drag_seconds": drag_seconds,
        "preview_frames_painted": len(previews),
        "preview_frames_per_s": round(len(previews) / drag_seconds, 1),
        "preview_move_to_paint_ms": _summary([p["latency_ms"] for p in shown]),
        "preview_server_render_ms": _summary([1000 * p["server_s"] for p in previews]),
        "preview_parts_median_ms": {part: round(statistics.median(p[part] for p in shown), 1)
                                    for part in ("waited_ms", "answer_ms", "picture_ms",
                                                 "paint_ms")},
        "full_release_to_paint_ms": _summary(rest_ms[True]),
        "full_held_rest_to_paint_ms": _summary(rest_ms[False]),
        "sizes_px": sizes,
    }


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", action="store_true", help="print only the JSON")
    parser.add_argument("--seconds", type=float, default=6.0, help="how long to drag")
    args = parser.parse_args()
    if chromium() is None:
        sys.exit("Chromium is not installed (Debian package chromium)")
    result = measure(args.seconds)
    if not args.json:
        p, f, s = (result["preview_move_to_paint_ms"], result["full_release_to_paint_ms"],
                   result["preview_server_render_ms"])
        h = result["full_held_rest_to_paint_ms"]
        print(f"preview {result['sizes_px']['preview']}: {result['preview_frames_per_s']} "
              f"frames/s while dragging ({result['pointer_moves']} moves in "
              f"{result['drag_seconds']} s)")
        print(f"  pointer move to frame painted: median {p['median']} ms, 90th percentile "
              f"{p['p90']} ms, max {p['max']} ms (server render median {s['median']} ms)")
        print(f"full {result['sizes_px']['full']}: last move to frame painted: median "
              f"{f['median']} ms, max {f['max']} ms when the button is let go; median "
              f"{h['median']} ms, max {h['max']} ms when it is held still (250 ms rest first)")
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
