"""The package as users meet it: one import namespace, the Python API, the command line."""

import argparse
import os
import re
import shlex
import subprocess
import sys
import venv
from pathlib import Path

import cloakview
import pytest
from cloakview.render.cli.main import build_parser, main
from scenes import RING, write_scene

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _code_blocks(language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", README, flags=re.S)


@pytest.mark.slow
def test_the_wheel_installs_only_cloakview_at_the_top(tmp_path):
    # Build from a copy of the tracked files, so the checkout gets no build folders.
    files = subprocess.run(["git", "ls-files"], cwd=ROOT, capture_output=True, text=True,
                           check=True).stdout.split()
    source = tmp_path / "src"
    for name in files:
        (source / name).parent.mkdir(parents=True, exist_ok=True)
        (source / name).write_bytes((ROOT / name).read_bytes())
    wheels = tmp_path / "wheels"
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet",
                    "--disable-pip-version-check", "-w", str(wheels), str(source)],
                   check=True, capture_output=True)
    env_dir = tmp_path / "venv"
    venv.EnvBuilder(system_site_packages=True, with_pip=True).create(env_dir)
    python = env_dir / "bin" / "python"
    site = Path(subprocess.run([str(python), "-c", "import sysconfig; "
                                "print(sysconfig.get_paths()['purelib'])"],
                               capture_output=True, text=True, check=True).stdout.strip())
    before = set(os.listdir(site))
    wheel = next(wheels.glob("cloakview-*.whl"))
    subprocess.run([str(python), "-m", "pip", "install", "--no-deps", "--ignore-installed",
                    "--quiet", "--disable-pip-version-check", str(wheel)], check=True,
                   capture_output=True)
    added = {name for name in set(os.listdir(site)) - before if not name.endswith(".dist-info")}
    assert added == {"cloakview"}
    # The installed copy (not this checkout) imports, finds its bundled files, shows its API.
    check = ("import sys; sys.meta_path[:] = [f for f in sys.meta_path if 'editable' not in "
             "repr(f)]; import cloakview, pydoc; "
             f"assert cloakview.__file__.startswith({str(site)!r}), cloakview.__file__; "
             "assert cloakview.sample_scenes.path('inventory.csv').is_file(); "
             "assert cloakview.sample_scenes.scene_path('gallery').is_file(); "
             "import importlib.resources as r; page = r.files('cloakview.render.live') / 'page'; "
             "assert {p.name for p in page.iterdir()} >= {'index.html', 'live.js', 'live.css'}; "
             "print(pydoc.render_doc(cloakview, renderer=pydoc.plaintext))")
    empty = tmp_path / "empty"
    empty.mkdir()
    shown = subprocess.run([str(python), "-c", check], cwd=empty, capture_output=True,
                           text=True, check=True).stdout
    for name in ("design", "load_scene", "render", "walk", "sightlines", "zone", "choose",
                 "tolerance", "report"):
        assert f"\n    {name}(" in shown


def test_the_readme_python_example_runs(tmp_path, monkeypatch, capsys):
    [example] = _code_blocks("python")
    monkeypatch.chdir(tmp_path)
    exec(compile(example, "README.md", "exec"), {})
    printed = capsys.readouterr().out
    assert "880" in printed  # device length of the 200/75 mm design [mm], see test_cloak.py


def test_every_readme_command_is_accepted_by_the_parser():
    parser = build_parser()
    commands = [line for block in _code_blocks("bash") for line in block.splitlines()
                if line.startswith("cloakview ")]
    assert len(commands) >= 15
    for line in commands:
        for part in line.split(" && "):
            words = shlex.split(part)
            assert words[0] == "cloakview", part
            parser.parse_args(words[1:])  # raises on an unknown or misspelt option


def _all_options():
    parser = build_parser()
    sub = next(a for a in parser._subparsers._group_actions)
    for command, subparser in sub.choices.items():
        for action in subparser._actions:
            if action.option_strings and action.dest != "help":
                yield command, action


def test_every_option_has_help_and_every_out_a_default():
    for command, action in _all_options():
        assert action.help, (command, action.option_strings)
        if action.dest == "out" and command != "demo":
            assert action.default, command


def test_version_is_the_installed_one_and_lands_in_run_json(tmp_path, capsys):
    from importlib.metadata import version

    with pytest.raises(SystemExit) as stop:
        main(["--version"])
    assert stop.value.code == 0
    assert capsys.readouterr().out.strip() == f"cloakview {version('cloakview')}"
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    assert main(["render", str(scene), "--views", "cloaked", "--out", str(tmp_path / "o"),
                 "--json"]) == 0
    import json

    assert json.loads((tmp_path / "o" / "run.json").read_text())["version"] == \
        version("cloakview")


def test_debug_is_accepted_after_the_command(tmp_path):
    with pytest.raises(cloakview.InputError):
        main(["design", "--f-outer", "10", "--f-inner", "20", "--debug"])


def test_ranges_and_points_may_start_with_a_minus_sign():
    args = build_parser().parse_args(["sightlines", "s.toml", "--lateral-range", "-60:60:20"])
    assert args.lateral_range == "-60:60:20"
    args = build_parser().parse_args(["render", "s.toml", "--eye", "-100,1250,-1500"])
    assert args.eye == "-100,1250,-1500"


@pytest.mark.parametrize(("old", "new", "value", "dest", "expected"), [
    (["tolerance", "s.toml"], "--decentre", "0.2", "decenter", 0.2),
    (["zone", "s.toml"], "--box", "1,2,3", "viewing_box", "1,2,3"),
    (["choose", "i.csv"], "--zone", "1,2,3", "viewing_box", "1,2,3"),
    (["sightlines", "s.toml"], "--lateral", "-5:5:5", "lateral_range", "-5:5:5"),
])
def test_old_option_names_still_work_with_a_warning(old, new, value, dest, expected, capsys):
    args = build_parser().parse_args([*old, new, value])
    assert getattr(args, dest) == expected
    assert f"warning: {new} is now" in capsys.readouterr().err


def test_options_that_would_be_ignored_are_refused(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    out = tmp_path / "o"
    assert main(["render", str(scene), "--look-at", "0,1150,0", "--out", str(out)]) == 2
    assert "--look-at = '0,1150,0': needs --eye" in capsys.readouterr().err
    assert main(["report", str(scene), "--outer", "A", "--out", str(out)]) == 2
    assert "--outer = 'A': needs an inventory" in capsys.readouterr().err
    assert main(["walk", str(scene), "--path", "zigzag", "--out", str(out)]) == 2
    assert "choose straight, arc, crouch or a CSV file" in capsys.readouterr().err
    assert not out.exists()


def test_api_errors_are_reported_under_the_option_that_set_them(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    assert main(["tolerance", str(scene), "--decenter", "-1"]) == 2
    assert "--decenter = -1.0: must be a number from 0 to 100" in capsys.readouterr().err


def test_samples_command_copies_what_the_readme_commands_use(tmp_path):
    assert main(["samples", "--out", str(tmp_path / "samples")]) == 0
    for name in ("inventory.csv", "gallery/scene.toml", "tabletop/scene.toml"):
        assert (tmp_path / "samples" / name).is_file()
    scene = cloakview.load_scene(tmp_path / "samples" / "gallery" / "scene.toml")
    assert scene.viewers


def test_help_lists_the_parser_defaults(capsys):
    parser = build_parser()
    sub = next(a for a in parser._subparsers._group_actions).choices["walk"]
    text = sub.format_help()
    assert "(default: 1500.0)" in text and "(default: straight)" in text
    assert isinstance(parser, argparse.ArgumentParser)
