"""Each kind of bad input once found by fuzzing ends in one line, exit 2, nothing written."""

import pytest
from cloakview.render.cli.main import main
from scenes import RING, write_scene

INVENTORY = ("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
             "O180,180,50,5.6,biconvex,acrylic,40,2\nI60,60,50,13.6,biconvex,acrylic,55,2\n")
SMALL_SWEEP = ["--heights", "1150", "--lateral-range", "0:10:10", "--distance-range",
               "600:600:100", "--height-range", "1150:1150:25", "--size", "16x16",
               "--workers", "1"]


@pytest.fixture
def exhibit(tmp_path):
    scene = write_scene(tmp_path / "s", layers=RING, width=24, height=16)
    (tmp_path / "lenses.csv").write_text(INVENTORY)
    return tmp_path, scene


CASES = [
    (["design", "--f-outer", "200", "--f-inner", "199.9999999999"], "--f-outer", "too close"),
    (["design", "--f-outer", "150.00000000015", "--f-inner", "150"], "--f-outer", "too close"),
    (["design", "--f-outer", "1e308", "--f-inner", "75"], "--f-outer", "at most 1000 m"),
    (["design", "--f-outer", "200", "--f-inner", "75", "--material", "1.5/10"], "--material",
     None),
    (["walk", "{scene}", "--fps", "nan"], "--fps", "finite"),
    (["walk", "{scene}", "--fps", "0"], "--fps", "from 1 to 120"),
    (["walk", "{scene}", "--fps", "1e-320"], "--fps", "from 1 to 120"),
    (["walk", "{scene}", "--distance", "inf"], "--distance", "finite"),
    (["walk", "{scene}", "--height", "nan"], "--height", "finite"),
    (["walk", "{scene}", "--span", "1e308"], "--span", "from 0 to"),
    (["walk", "{scene}", "--seconds", "-1"], "--seconds", "from 0 to"),
    (["walk", "{scene}", "--frames", "2", "--workers", "-1"], "--workers", "1 or more"),
    (["walk", "{scene}", "--path", "zigzag"], "--path", "choose straight, arc, crouch"),
    (["sightlines", "{scene}", *SMALL_SWEEP, "--height-range", "1e308:1e308:1"],
     "--height-range", "within 0 to 5000"),
    (["sightlines", "{scene}", *SMALL_SWEEP, "--lateral-range", "1e308:1e308:1"],
     "--lateral-range", "within"),
    (["sightlines", "{scene}", "--heights", "1e308"], "--heights", "from 0 to 5000"),
    (["zone", "{scene}", "--viewing-box", "nan,1,1"], "--viewing-box", "finite"),
    (["choose", "{inventory}", "--max-length", "nan"], "--max-length", "finite"),
    (["choose", "{inventory}", "--max-length", "0"], "--max-length", "greater than 0"),
    (["choose", "{inventory}", "--budget", "inf"], "--budget", "finite"),
    (["choose", "{inventory}", "--min-object", "nan,1"], "--min-object", "finite"),
    (["tolerance", "{scene}", "--seed", "-1"], "--seed", "from 0"),
    (["tolerance", "{scene}", "--decenter", "nan"], "--decenter", "from 0 to 100"),
    (["report", "{scene}", "--builds", "0"], "--builds", "1 to 10000"),
    (["report", "{scene}", "--axial", "nan"], "--axial", "from 0 to 100"),
    (["render", "{scene}", "--eye", "0,1150,-600", "--look-at", "0,1150,-600"], "look_at_mm",
     "must differ"),
]


@pytest.mark.parametrize(("argv", "key", "rule"), CASES,
                         ids=[" ".join(c[0])[:50] for c in CASES])
def test_bad_values_are_one_line_and_write_nothing(exhibit, argv, key, rule, capsys):
    folder, scene = exhibit
    out = folder / "out"
    argv = [a.format(scene=scene, inventory=folder / "lenses.csv") for a in argv]
    if argv[0] != "design":
        argv += ["--out", str(out)]
    before = sorted(p.name for p in folder.rglob("*"))
    assert main(argv) == 2
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if not line.startswith("cloakview: warning")]
    assert len(lines) == 1 and lines[0].startswith("cloakview: error: "), err
    assert key in lines[0] and (rule is None or rule in lines[0]), lines[0]
    assert sorted(p.name for p in folder.rglob("*")) == before


def test_a_picture_name_too_long_for_any_file_system_is_one_line(exhibit, capsys):
    folder, scene = exhibit
    scene.write_text(scene.read_text().replace('image = "art/poster.png"',
                                               f'image = "{"y" * 300}"'))
    assert main(["render", str(scene), "--out", str(folder / "out")]) == 2
    err = capsys.readouterr().err
    assert "layer[0].image" in err and "path too long" in err and len(err) < 400
