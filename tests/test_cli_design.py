"""The design command: its JSON, its table, its errors."""

import json
import subprocess
import sys

import pytest
from cloakview.render.cli.main import main


def _json(capsys, *args):
    assert main(["design", *args, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_ideal_reference_design(capsys):
    # J. S. Choi and J. C. Howell, Optics Express 22(24), 29465 (2014): t1 = f1 + f2 and
    # t2 = 2 f2 (f1 + f2) / (f1 - f2); computed for 200/75: 275, 330 and 880 mm.
    out = _json(capsys, "--f-outer", "200", "--f-inner", "75", "--ideal")
    assert out["outer_spacing_mm"] == pytest.approx(275)
    assert out["inner_spacing_mm"] == pytest.approx(330)
    assert out["length_mm"] == pytest.approx(880)
    assert out["vertex_gaps_mm"] == pytest.approx([275, 330, 275])
    assert out["abcd"] == [[pytest.approx(1), pytest.approx(880)],
                           [pytest.approx(0, abs=1e-12), pytest.approx(1)]]
    assert [lens["position_mm"] for lens in out["lenses"]] == pytest.approx([0, 275, 605, 880])


def test_thick_design_is_free_space_over_its_length(capsys):
    out = _json(capsys, "--f-outer", "200", "--f-inner", "75")
    (a, b), (c, d) = out["abcd"]
    length = out["length_mm"]
    assert abs(a - 1) < 1e-9 and abs(d - 1) < 1e-9 and abs(c) * length < 1e-9
    assert b == pytest.approx(length, rel=1e-9)
    assert out["inner_spacing_mm"] > 330  # the thick-lens correction lengthens the gap
    for lens in out["lenses"]:
        assert set(lens) >= {"position_mm", "focal_length_mm", "diameter_mm",
                             "center_thickness_mm", "mass_g"}
        assert lens["mass_g"] > 0


def test_table_has_positions_matrix_and_cautions(capsys):
    assert main(["design", "--f-outer", "150", "--f-inner", "50", "--material", "acrylic",
                 "--shape", "plano-convex", "--diameter", "40"]) == 0
    text = capsys.readouterr().out
    for needle in ("rail", "System matrix", "587.6 nm", "Through-window", "sunlight",
                   "licensed professionals"):
        assert needle in text


@pytest.mark.parametrize("args, needle", [
    (["--f-outer", "-200", "--f-inner", "75"], "--f-outer = -200.0: must be greater than 0"),
    (["--f-outer", "nan", "--f-inner", "75"], "--f-outer = nan: must be a finite number"),
    (["--f-outer", "75", "--f-inner", "200"], "inner gap"),
    (["--f-outer", "200", "--f-inner", "75", "--diameter", "400"],
     "--diameter = 400.0: no biconvex lens of f = 200 mm"),
    (["--f-outer", "200", "--f-inner", "75", "--min-edge", "-2"], "--min-edge"),
    (["--f-outer", "200", "--f-inner", "75", "--material", "cheese"], "unknown material"),
    (["--f-outer", "200", "--f-inner", "75", "--shape", "cube"], "--shape = 'cube'"),
    (["--f-outer", "x", "--f-inner", "75"], "invalid float value"),
    (["--f-inner", "75"], "required: --f-outer"),
])
def test_bad_input_is_one_line_and_exit_2(capsys, args, needle):
    assert main(["design", *args]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("cloakview: error: ")
    assert needle in err


def test_console_script_has_no_traceback():
    proc = subprocess.run([sys.executable, "-m", "cloakview.render.cli.main", "design",
                           "--f-outer", "10",
                           "--f-inner", "20"], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr and proc.stdout == ""


def test_table_states_mass_in_the_units_of_its_column_and_the_material_source(capsys):
    assert main(["design", "--f-outer", "200", "--f-inner", "75", "--material", "1.52/60"]) == 0
    text = capsys.readouterr().out
    out = _json(capsys, "--f-outer", "200", "--f-inner", "75", "--material", "1.52/60")
    grams = out["total_mass_g"]
    assert f"lens mass {grams:.0f} g ({grams / 1000:.2f} kg)" in text
    assert "mass g" in text  # the per-lens column is in grams too
    # Gladstone and Dale (1863): the density is an estimate from n_d, and the table says so.
    assert "estimated from n_d" in text and "ND/VD/DENSITY" in text

