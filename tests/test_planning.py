"""Lens inventories and the design search."""

import json

import pytest
from cloakview.render.cli.main import main
from cloakview.render.planning import search as planning
from cloakview.render.planning.inventory import load_inventory
from scenes import RING, write_scene

HEADER = "id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
SMALL = HEADER + """A400,400,100,9.5,plano-convex,acrylic,85,4
B300,300,100,11.5,plano-convex,acrylic,80,2
C150,150,100,22.6,plano-convex,acrylic,95,3
D75,75,50,10.8,biconvex,soda-lime,50,4
E200,200,50,5.2,biconvex,soda-lime,45,1
"""


def _write(tmp_path, text):
    path = tmp_path / "lenses.csv"
    path.write_text(text)
    return path


def test_inventory_lenses_have_their_focal_lengths(tmp_path):
    # Each lens is solved from the thick lensmaker's equation (Hecht ch. 6) at its given
    # centre thickness; its effective focal length must be the catalogue value.
    items = load_inventory(_write(tmp_path, SMALL))
    assert [round(i.focal_length_mm, 6) for i in items] == [400, 300, 150, 75, 200]
    assert items[0].lens.center_thickness_mm == 9.5 and items[0].lens.edge_thickness_mm > 0


@pytest.mark.parametrize("text, match", [
    (HEADER + "A,400,abc,9,biconvex,acrylic,10,2\n", r"lenses.csv:2, column diameter_mm = 'abc'"),
    (HEADER + "A,400,100,9,biconvex,cheese,10,2\n", r"lenses.csv:2, column material"),
    (HEADER + "A,400,100,9,biconvex,acrylic,10,2.5\n", r"column quantity = '2.5': must be a whole"),
    (HEADER + "A,400,100,0.5,biconvex,acrylic,10,2\n", r"lenses.csv:2, column center_thickness"),
    (HEADER + "A,400,100,9,biconvex,acrylic,10,2\nA,300,100,9,biconvex,acrylic,10,2\n",
     r"lenses.csv:3, column id = 'A': ids must be unique"),
    ("id,focal_length_mm\nA,100\n", r"lenses.csv:1 = .*missing column"),
    (HEADER.strip() + ",colour\nA,400,100,9,biconvex,acrylic,10,2,red\n",
     r"column colour = 'colour': unknown column"),
])
def test_malformed_rows_name_line_and_column(tmp_path, text, match):
    with pytest.raises(ValueError, match=match):
        load_inventory(_write(tmp_path, text))


def test_search_finds_the_brute_force_best_and_explains_rejections(tmp_path):
    path = _write(tmp_path, SMALL)
    items = load_inventory(path)
    constraints = planning.Constraints(max_length_mm=1500.0)
    rows, _ = planning.search(path, items, constraints, workers=1)
    # Every ordered pair with a longer outer focal length is considered (Choi and Howell
    # 2014: the layout needs f_outer > f_inner), and the first row is feasible.
    pairs = [(a.id, b.id) for a in items for b in items
             if a is not b and a.focal_length_mm > b.focal_length_mm]
    assert sorted((r["outer"], r["inner"]) for r in rows) == sorted(pairs)
    assert rows[0]["reason"] is None and rows[0]["rank"] == 1 and rows[0]["pareto"]
    reasons = {(r["outer"], r["inner"]): r["reason"] for r in rows}
    assert "only 1 of E200 in stock" in reasons[("A400", "E200")]
    assert "285 mm over the maximum length" in reasons[("A400", "C150")]  # 1785 mm long


def test_nothing_feasible_says_what_to_relax(tmp_path, capsys):
    path = _write(tmp_path, SMALL)
    assert main(["choose", str(path), "--max-length", "500", "--workers", "1",
                 "--out", str(tmp_path / "out")]) == 2
    last = capsys.readouterr().err.strip().splitlines()[-1]  # after the progress lines
    assert last.startswith("cloakview: error: ")
    assert "raise --max-length to at least 929 mm" in last


def test_render_top_design_in_a_scene(tmp_path):
    scene = write_scene(tmp_path / "scene", layers=RING)
    path = _write(tmp_path, HEADER + "O180,180,50,5.6,biconvex,acrylic,40,2\n"
                  "I60,60,50,13.6,biconvex,acrylic,55,2\n")
    out = tmp_path / "out"
    assert main(["choose", str(path), "--workers", "1", "--render-in", str(scene),
                 "--out", str(out)]) == 0
    assert (out / "top_design.png").is_file()
    metrics = json.loads((out / "top_design_metrics.json").read_text())
    assert metrics["hidden_fraction"] >= 0.95  # the ring sits in this design's cloaked zone


def test_inventory_radii_take_the_usual_signs_and_a_byte_order_mark(tmp_path):
    # Biconvex, R1 = +50, R2 = -50, d = 10 mm, n = 1.5 would give f = 51.7 mm (Hecht, Optics,
    # thick-lens equation); here acrylic, so check only that the signs are read as written.
    text = ("\ufeffid,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,"
            "quantity,r1_mm,r2_mm\nB,102.5,40,6,biconvex,acrylic,10,2,100,-100\n")
    path = tmp_path / "bom.csv"
    path.write_bytes(text.encode("utf-8"))
    [item] = load_inventory(path)
    assert item.lens.r1_mm == 100 and item.lens.r2_mm == -100


@pytest.mark.parametrize(("data", "match"), [
    ("id,focal\u00e9".encode("latin-1"), r"inventory file is not UTF-8 text \(byte 8\)"),
    ("id\n".encode("utf-16"), "not UTF-8 text"),
    (HEADER.encode() + b"A,400,100,9.5,plano-convex,acrylic,85,4,0,1\n",
     "more values than the 8 columns"),
])
def test_inventories_that_are_not_utf8_text_are_one_clean_line(tmp_path, data, match):
    path = tmp_path / "bad.csv"
    path.write_bytes(data)
    with pytest.raises(ValueError, match=match) as error:
        load_inventory(path)
    assert "\n" not in str(error.value)


def test_a_zero_radius_names_its_column_once(tmp_path):
    path = _write(tmp_path, HEADER.strip() + ",r1_mm,r2_mm\nA,400,100,9.5,biconvex,acrylic,"
                  "85,4,0,-400\n")
    with pytest.raises(ValueError) as error:
        load_inventory(path)
    assert str(error.value).count("column r1_mm") == 1


def test_choose_table_is_aligned_counts_and_flags_long_designs(tmp_path, capsys):
    import cloakview

    inventory = cloakview.sample_scenes.path("inventory.csv")
    assert main(["choose", str(inventory), "--workers", "1", "--top", "12", "--currency",
                 "EUR", "--out", str(tmp_path / "o")]) == 0
    lines = capsys.readouterr().out.splitlines()
    header, rows = lines[0], lines[1:13]
    assert "cost EUR" in header
    start = header.index("length mm")  # every row's numbers end under their heading
    end = start + len("length mm")
    assert all(row[end - 1].isdigit() and row[end] == " " for row in rows)
    data = json.loads((tmp_path / "o" / "designs.json").read_text())
    feasible = [r for r in data["designs"] if r["reason"] is None]
    assert lines[13].startswith(f"Top 12 of {len(feasible)} feasible designs")
    long = [r for r in feasible if r["length_mm"] > 3000]
    assert long and all(r["flag"] == "longer than 3 m" for r in long)
    assert all(r["flag"] is None for r in feasible if r["length_mm"] <= 3000)
