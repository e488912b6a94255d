"""A fuzzer for the command line: mutated scene files, pictures, inventories and options.

Each case builds a small valid exhibit (scene, pictures, inventory, path file) in its own
folder, mutates one or two things, runs one ``cloakview`` command in this process, and
judges the run:
- ``ok``: exit 0;
- ``refused``: exit 2 with exactly one ``cloakview: error:`` line on stderr (besides
  progress lines and renamed-option warnings) and nothing written;
- ``traceback``: an exception escaped, or stderr shows a traceback;
- ``multi-line``: an exit-2 error that is not one line;
- ``wrote-on-error``: an exit-2 run that left files behind;
- ``escaped``: any run that wrote outside its ``--out`` folder (and the sweep cache).
Used by ``tests/test_fuzz.py`` (a few hundred cases) and ``benchmarks/fuzz.py`` (thousands).
"""

from __future__ import annotations

import contextlib
import io
import random
import re
import traceback
from pathlib import Path

import numpy as np
from cloakview.render.cli.main import main
from PIL import Image
from scenes import RING, write_scene

INVENTORY = ("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
             "O180,180,50,5.6,biconvex,acrylic,40,2\nI60,60,50,13.6,biconvex,acrylic,55,2\n"
             "S120,120,50,6.5,biconvex,soda-lime,30,4\n")
PATH_CSV = "x_mm,y_mm,z_mm\n0,1150,-700\n10,1150,-700\n"
#: Odd values to put where a number, a string or a list belongs.
ODD = ["nan", "inf", "-inf", "-1", "0", "1e308", "-1e308", "1e-320", "9" * 400,
       "999999999999999999999", "''", '"x"', '"../../etc"', '"a\\u0000b"', "[1]", "[]",
       "[1, 2, 3, 4]", "true", '"' + "y" * 300 + '"', "{}", '"#zzzzzz"', '"flat"', "-0.0",
       "1", "150.00000000015", "0.5", '"1.5/10"', '"ND/VD"', '"meniscus"', "3e3", "7"]
ODD_OPTION = ["nan", "inf", "-1", "0", "1e308", "-1e308", "1e-320", "x", "", "1,2", "1,2,3",
              "5:1:1", "-5:5:5", "0:1e308:1", "1e308:1e308:1", "1x1", "99999x99999", "8x8",
              "seated", "child,1e308", "../o", "/dev/null", "1,nan,2", "-100,1150,-700",
              "0,1150,0", "zigzag", "7", "3", "0.5", "100", "12", "64x48", "1.5/10",
              "nonexistent.toml", "-0", "4300" * 2]
OPTIONS = {
    "design": ["--f-outer", "--f-inner", "--diameter", "--outer-diameter", "--inner-diameter",
               "--material", "--shape", "--min-edge"],
    "render": ["--viewer", "--eye", "--look-at", "--views", "--size", "--supersample"],
    "eyes": ["--viewer", "--ipd", "--size"],
    "walk": ["--path", "--distance", "--height", "--to-height", "--span", "--arc-deg",
             "--seconds", "--fps", "--frames", "--size", "--supersample", "--workers"],
    "sightlines": ["--heights", "--lateral-range", "--distance-range", "--height-range",
                   "--size", "--workers"],
    "zone": ["--viewer", "--viewing-box"],
    "choose": ["--max-length", "--budget", "--distance", "--viewing-box", "--min-object",
               "--top", "--workers"],
    "tolerance": ["--axial", "--decenter", "--tilt", "--focal", "--builds", "--seed", "--size",
                  "--workers"],
    "report": ["--inventory", "--outer", "--inner", "--axial", "--builds", "--heights",
               "--lateral-range", "--author", "--paper", "--currency"],
}
#: Small, fast defaults per command (the fuzzer mutates from there).
BASE = {
    "design": ["--f-outer", "200", "--f-inner", "75"],
    "render": ["--size", "24x16", "--views", "cloaked,vanish"],
    "eyes": ["--size", "24x16"],
    "walk": ["--frames", "2", "--size", "24x16", "--workers", "1"],
    "sightlines": ["--heights", "1150", "--lateral-range", "0:10:10", "--distance-range",
                   "600:600:100", "--height-range", "1150:1150:25", "--size", "16x16",
                   "--workers", "1"],
    "zone": [],
    "choose": ["--workers", "1"],
    "tolerance": ["--builds", "1", "--size", "16x16", "--workers", "1", "--axial", "0.5",
                  "--decenter", "0", "--tilt", "0", "--focal", "0"],
    "report": ["--builds", "1", "--axial", "0.5", "--decenter", "0", "--tilt", "0",
               "--focal", "0", "--heights", "1150", "--lateral-range", "0:10:10",
               "--distance-range", "600:600:100", "--height-range", "1150:1150:25",
               "--size", "16x16", "--workers", "1", "--no-pdf"],
}
_PROGRESS = re.compile(r"^[\w -]+ \[[#.]+\] \d+/\d+ ")
OUTCOMES = ("ok", "refused", "traceback", "multi-line", "wrote-on-error", "escaped")


def _files(folder: Path) -> dict[str, int]:
    """Every path below ``folder``: files with their modification time, folders as 0."""
    return {str(p.relative_to(folder)): p.stat().st_mtime_ns if p.is_file() else 0
            for p in folder.rglob("*")}


def _mutate_text(text: str, rng: random.Random) -> str:
    lines = text.splitlines()
    kind = rng.randrange(6)
    if kind <= 2:  # replace a value
        candidates = [i for i, line in enumerate(lines) if "=" in line]
        i = rng.choice(candidates)
        key = lines[i].split("=", 1)[0]
        lines[i] = f"{key}= {rng.choice(ODD)}"
    elif kind == 3:  # drop a line
        lines.pop(rng.randrange(len(lines)))
    elif kind == 4:  # duplicate a line, or misspell a key
        i = rng.randrange(len(lines))
        if "=" in lines[i] and rng.random() < 0.5:
            key, value = lines[i].split("=", 1)
            lines[i] = key.strip()[::-1] + " =" + value
        else:
            lines.insert(i, lines[i])
    else:  # cut the file short
        return text[:rng.randrange(len(text))]
    return "\n".join(lines) + "\n"


def _mutate_bytes(path: Path, rng: random.Random) -> None:
    """Re-encode a text file, or spoil a few bytes of it."""
    text = path.read_text(encoding="utf-8")
    kind = rng.randrange(4)
    if kind == 0:
        path.write_bytes(text.encode("utf-16"))
    elif kind == 1:
        path.write_bytes(b"\xef\xbb\xbf" + text.encode())
    elif kind == 2:
        path.write_bytes(text.encode("latin-1", "replace") + b"\xe9\xff")
    else:
        data = bytearray(text.encode())
        for _ in range(3):
            data[rng.randrange(len(data))] = rng.randrange(256)
        path.write_bytes(bytes(data))


def _mutate_picture(path: Path, rng: random.Random) -> None:
    kind = rng.randrange(8)
    if kind == 0:
        Image.new("LA", (40, 30), (128, 255)).save(path, format="PNG")
    elif kind == 1:
        Image.new("P", (40, 30), 3).save(path, format="PNG", transparency=0)
    elif kind == 2:
        Image.new("CMYK", (40, 30), (10, 0, 0, 200)).save(path, format="JPEG")
    elif kind == 3:
        frames = [Image.new("RGB", (8, 8), c) for c in ("red", "blue")]
        frames[0].save(path, format="GIF", save_all=True, append_images=frames[1:])
    elif kind == 4:
        path.write_bytes(path.read_bytes()[:rng.randrange(1, 200)])
    elif kind == 5:
        Image.new("1", (33, 17), 1).save(path, format="PNG")
    elif kind == 6:
        Image.fromarray(np.full((20, 20), 40000, np.uint16)).save(path, format="PNG")
    else:
        path.write_text("not a picture")


def make_case(folder: Path, seed: int) -> list[str]:
    """Write one mutated exhibit into ``folder``; return the command line to run."""
    rng = random.Random(seed)
    scene = write_scene(folder / "exhibit", layers=RING, width=24, height=16,
                        render_extra="wavelengths_nm = [587.56]")
    inventory = folder / "lenses.csv"
    inventory.write_text(INVENTORY)
    path_csv = folder / "path.csv"
    path_csv.write_text(PATH_CSV)
    command = rng.choice(list(OPTIONS))
    benign = rng.random() < 0.25  # a quarter of the cases stay valid: the success paths
    target = 4 if benign else rng.randrange(5)
    if target == 0 and command not in ("design", "choose"):
        scene.write_text(_mutate_text(scene.read_text(), rng))
    elif target == 1 and command not in ("design", "choose"):
        _mutate_picture(folder / "exhibit" / "art" / rng.choice(["poster.png", "ring.png"]), rng)
    elif target == 2 and command in ("choose", "report"):
        if rng.random() < 0.5:
            inventory.write_text(_mutate_csv(INVENTORY, rng))
        else:
            _mutate_bytes(inventory, rng)
    elif target == 3 and command == "walk" and rng.random() < 0.5:
        path_csv.write_text(_mutate_csv(PATH_CSV, rng))
    args = list(BASE[command])
    for _ in range(0 if benign else rng.choice((1, 1, 2))):
        option = rng.choice(OPTIONS[command])
        value = rng.choice(ODD_OPTION)
        if option == "--path" and rng.random() < 0.5:
            value = str(path_csv)
        if option == "--inventory" and rng.random() < 0.7:
            value = str(inventory)
        if option in args:
            args[args.index(option) + 1] = value
        else:
            args += [option, value]
    if command == "report" and "--inventory" not in args and rng.random() < 0.5:
        args += ["--inventory", str(inventory), "--outer", "O180", "--inner", "I60"]
    positional = {"design": [], "choose": [str(inventory)]}.get(command, [str(scene)])
    out = folder / "out"
    if not benign and rng.random() < 0.05:
        out = rng.choice([folder / "exhibit", folder / "lenses.csv", folder / "exhibit" / "art"])
    if command == "design":
        return [command, *args]
    return [command, *positional, *args, "--out", str(out)]


def _mutate_csv(text: str, rng: random.Random) -> str:
    rows = [line.split(",") for line in text.splitlines()]
    kind = rng.randrange(4)
    if kind == 0:
        r, c = rng.randrange(1, len(rows)), rng.randrange(len(rows[0]))
        rows[r][c] = rng.choice(ODD_OPTION + ["-50", "flat", "", "1e400"])
    elif kind == 1:
        rows[0][rng.randrange(len(rows[0]))] = "bogus"
    elif kind == 2:
        rows.pop(rng.randrange(len(rows)))
    else:
        rows[rng.randrange(len(rows))].append("extra")
    return "\n".join(",".join(row) for row in rows) + "\n"


def judge(folder: Path, argv: list[str]) -> tuple[str, str]:
    """Run ``argv`` and classify the run (see the module docstring); also return stderr."""
    before = _files(folder)
    out_arg = argv[argv.index("--out") + 1] if "--out" in argv else None
    err, stdout = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(stdout):
        try:
            code = main(argv)
        except SystemExit as stop:  # --help and --version exit; anything else is a bug
            code = stop.code
        except BaseException:  # noqa: BLE001 - this is what the fuzzer hunts
            return "traceback", traceback.format_exc()
    text = err.getvalue()
    after = _files(folder)
    changed = {name for name, stamp in after.items() if before.get(name) != stamp}
    out = Path(out_arg).resolve() if out_arg else None
    outside = {name for name in changed
               if out is None or not (folder / name).resolve().is_relative_to(out)}
    if "Traceback" in text:
        return "traceback", text
    if outside:
        return "escaped", f"{sorted(outside)[:3]}\n{text}"
    if code == 0:
        return "ok", text
    lines = [line for line in text.splitlines()
             if line.strip() and not line.startswith("cloakview: warning:")
             and not _PROGRESS.match(line)]
    if code != 2 or len(lines) != 1 or not lines[0].startswith("cloakview: error:"):
        return "multi-line", f"exit {code}\n{text}"
    if changed:
        return "wrote-on-error", f"{sorted(changed)[:3]}\n{text}"
    return "refused", text
