"""Outputs stay inside --out, never replace an input, and a refused run writes nothing."""

import os
import subprocess
import sys

import pytest
from cloakview.render.cli.main import main
from cloakview.render.outfolder import LOCK_NAME
from scenes import RING, write_scene

INVENTORY = ("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
             "O180,180,50,5.6,biconvex,acrylic,40,2\nI60,60,50,13.6,biconvex,acrylic,55,2\n")


def _tree(folder):
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


@pytest.mark.parametrize("name", ["../art", "..", "metrics.json", "a/b", "x" * 300, ".hidden",
                                  "bad\u0000name"])
def test_viewer_names_that_are_not_plain_file_names_are_refused(tmp_path, name, capsys):
    scene = write_scene(tmp_path / "s", layers=RING, viewer_extra="")
    text = scene.read_text().replace('name = "on-axis"', f'name = "{name.replace(chr(0), "")}"')
    if "\u0000" in name:
        text = text.replace('name = "badname"', 'name = "bad\\u0000name"')
    scene.write_text(text)
    before = _tree(tmp_path)
    assert main(["render", str(scene), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "viewer[0].name" in err and "becomes a folder name" in err
    assert len(err.strip().splitlines()) == 1 and len(err) < 400
    assert _tree(tmp_path) == before


def test_an_output_folder_holding_an_input_is_refused(tmp_path, capsys):
    inventory = tmp_path / "designs.csv"  # the very name choose writes
    inventory.write_text(INVENTORY)
    assert main(["choose", str(inventory), "--workers", "1", "--out", str(tmp_path)]) == 2
    assert "holds the input file designs.csv" in capsys.readouterr().err
    assert inventory.read_text() == INVENTORY
    scene = write_scene(tmp_path / "s", layers=RING)
    path_file = tmp_path / "w" / "walk.csv"
    path_file.parent.mkdir()
    path_file.write_text("x_mm,y_mm,z_mm\n0,1150,-700\n")
    assert main(["walk", str(scene), "--path", str(path_file), "--out",
                 str(tmp_path / "w")]) == 2
    assert "holds the input file walk.csv" in capsys.readouterr().err
    assert sorted(os.listdir(tmp_path / "w")) == ["walk.csv"]
    assert main(["render", str(scene), "--out", str(tmp_path / "s" / "art")]) == 2
    assert "holds the input file" in capsys.readouterr().err


@pytest.mark.parametrize(("out", "rule"), [
    ("", "must name a folder"),
    ("FILE", "is a file, not a folder"),
    ("/dev/null", "is a file, not a folder"),
    ("x" * 300, "path too long"),
])
def test_impossible_output_folders_are_refused_before_any_work(tmp_path, out, rule, capsys,
                                                                monkeypatch):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    (tmp_path / "FILE").write_text("keep")
    monkeypatch.chdir(tmp_path)
    before = _tree(tmp_path)
    assert main(["render", str(scene), "--out", out]) == 2
    err = capsys.readouterr().err
    assert rule in err and "rendering" not in err  # refused before the work started
    assert _tree(tmp_path) == before and (tmp_path / "FILE").read_text() == "keep"


def test_a_second_run_into_a_folder_in_use_is_refused(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    out = tmp_path / "o"
    out.mkdir()
    alive = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        (out / LOCK_NAME).write_text(str(alive.pid))
        assert main(["render", str(scene), "--views", "cloaked", "--out", str(out)]) == 2
        assert f"another cloakview run (process {alive.pid})" in capsys.readouterr().err
    finally:
        alive.kill()
        alive.wait()
    # The holder is gone: its lock and a temporary file it left are cleaned up.
    (out / ".cloaked.png.cloakview-tmp-abcd.png").write_bytes(b"half")
    assert main(["render", str(scene), "--views", "cloaked", "--out", str(out)]) == 0
    assert not (out / LOCK_NAME).exists()
    assert not list(out.rglob("*cloakview-tmp*"))
    assert (out / "on-axis" / "cloaked.png").is_file()


def test_a_refused_run_removes_the_folder_it_created(tmp_path, capsys):
    inventory = tmp_path / "lenses.csv"
    inventory.write_text(INVENTORY)
    out = tmp_path / "new" / "designs"
    # Feasible pairs exist, but none this short: refused after the search.
    assert main(["choose", str(inventory), "--max-length", "100", "--workers", "1",
                 "--out", str(out)]) == 2
    assert "no design meets every constraint" in capsys.readouterr().err
    assert not (tmp_path / "new").exists()


def test_a_second_run_replaces_the_first_runs_outputs_and_keeps_other_files(tmp_path):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    text = scene.read_text()
    out = tmp_path / "o"
    assert main(["render", str(scene), "--views", "cloaked", "--out", str(out), "--json"]) == 0
    (out / "my-notes.txt").write_text("the planner's own file")
    scene.write_text(text.replace('name = "on-axis"', 'name = "renamed"'))
    assert main(["render", str(scene), "--views", "cloaked", "--out", str(out), "--json"]) == 0
    names = sorted(p.name for p in out.iterdir() if not p.name.startswith("."))
    assert names == ["metrics.csv", "metrics.json", "my-notes.txt", "renamed", "run.json"]


def test_a_walk_run_again_reuses_its_frames_from_the_cache(tmp_path, capsys):
    import json

    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    argv = ["walk", str(scene), "--frames", "3", "--workers", "1", "--json"]
    assert main([*argv, "--out", str(tmp_path / "a")]) == 0
    first = json.loads(capsys.readouterr().out)
    assert first["reused"] == 0
    assert main([*argv, "--out", str(tmp_path / "b")]) == 0
    second = json.loads(capsys.readouterr().out)
    assert second["reused"] == 3
    for i in range(3):
        name = f"frames/frame_{i:05d}.png"
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
