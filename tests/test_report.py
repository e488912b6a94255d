"""The proposal report: a self-contained page, its PDF, the drawing in mm, numbers from JSON."""

import json
import re
import subprocess
import xml.etree.ElementTree as ET

import pytest
from cloakview.render.cli.main import main
from cloakview.render.proposal.pdf import CHROMIUM_FLAGS, chromium
from scenes import RING, write_scene

SECTIONS = ("1. Layout", "2. Bill of lenses", "3. What visitors see", "4. Walking past",
            "5. Where visitors can stand", "6. What can be hidden", "7. Build tolerances",
            "8. Assumptions", "9. Cautions")
SMALL_SWEEP = ["--lateral-range", "-20:20:10", "--distance-range", "400:800:200",
               "--height-range", "1100:1200:50", "--heights", "1150"]
needs_chromium = pytest.mark.skipif(chromium() is None, reason="Chromium is not installed "
                                    "(Debian package chromium; .ci/run installs it)")


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    scene = write_scene(folder / "scene", layers=RING)
    inventory = folder / "lenses.csv"
    inventory.write_text("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,"
                         "price,quantity\nO180,180,50,5.6,biconvex,acrylic,40,2\n"
                         "I60,60,50,13.6,biconvex,acrylic,55,2\n")
    out = folder / "out"
    assert main(["report", str(scene), "--inventory", str(inventory), "--outer", "O180",
                 "--inner", "I60", "--builds", "4", *SMALL_SWEEP, "--currency", "EUR",
                 "--project", "Test hall", "--author", "A. Tester", "--revision", "C",
                 "--date", "2026-12-01", "--out", str(out)]) == 0
    return out


def test_folder_holds_the_deliverables_and_nothing_else(report):
    names = {p.name for p in report.iterdir() if not p.name.startswith(".")}
    expected = {"index.html", "report.json", "layout.svg", "run.json"}
    if chromium() is not None:
        expected.add("report.pdf")
    assert names == expected


def test_page_is_self_contained(report):
    page = (report / "index.html").read_text()
    for section in SECTIONS:
        assert section in page
    references = re.findall(r'(?:src|href)="([^"]*)"', page)
    assert references  # the pictures are there
    assert all(r.startswith("data:") or r.startswith("#") for r in references), \
        [r[:40] for r in references if not r.startswith(("data:", "#"))]
    for caution in ("sunlight", "heavy", "edges", "accessibility", "licensed professionals"):
        assert caution in page


def test_title_block_and_bill(report):
    page = (report / "index.html").read_text()
    data = json.loads((report / "report.json").read_text())
    for value in ("Test hall", "A. Tester", "<td>C</td>", "2026-12-01"):
        assert value in page
    bill = data["bill"]
    outer = next(b for b in bill["lines"] if b["part"] == "outer")
    assert (outer["id"], outer["quantity"], outer["unit_price"], outer["line_total"]) == \
        ("O180", 2, 40.0, 80.0)
    assert bill["total_price"] == 2 * (40 + 55)
    assert "unit price (EUR)" in page and f"{bill['total_price']:.2f}" in page
    assert bill["total_mass_g"] == pytest.approx(data["design"]["total_mass_g"])


def test_numbers_on_the_page_come_from_the_json(report):
    page = (report / "index.html").read_text()
    data = json.loads((report / "report.json").read_text())
    assert f'Device length {data["design"]["length_mm"]:.1f} mm' in page
    assert data["tolerance"]["yield_interval_95"][0] <= data["tolerance"]["yield"]
    for ring in data["rings"]:
        assert f'{ring["height_mm"]:.0f} x {ring["length_mm"]:.0f}' in page
    for lens in data["design"]["lenses"]:
        assert f'{lens["rail_mm"]:.1f}' in page


def test_layout_drawing_is_in_millimetres(report):
    root = ET.parse(report / "layout.svg").getroot()
    ns = {"s": "http://www.w3.org/2000/svg"}
    width, height = root.get("width"), root.get("height")
    assert width.endswith("mm") and height.endswith("mm")
    box = [float(v) for v in root.get("viewBox").split()]
    assert box[2] == pytest.approx(float(width[:-2])) and box[3] == pytest.approx(
        float(height[:-2]))  # one user unit is one millimetre
    data = json.loads((report / "report.json").read_text())
    tube = root.find(".//s:rect[@id='tube']", ns)
    # The test bench's tube runs from the panel (10 mm before the first lens, its default
    # gap) to 10 mm past the last vertex (its default overhang): length + 20 mm.
    assert float(tube.get("width")) == pytest.approx(data["design"]["length_mm"] + 20.0,
                                                     abs=0.05)
    assert float(tube.get("height")) == pytest.approx(66.0)  # tube_diameter_mm of the bench
    assert root.find(".//s:circle[@id='eye']", ns) is not None
    assert len(root.findall(".//s:polygon[@class='lens']", ns)) == 4


@needs_chromium
def test_pdf_pages_and_text(report):
    from pypdf import PdfReader

    reader = PdfReader(report / "report.pdf")
    assert 3 <= len(reader.pages) <= 14
    text = " ".join(p.extract_text() for p in reader.pages)
    for words in ("Bill of lenses", "Cautions", "Test hall", "sunlight"):
        assert words in text


@needs_chromium
def test_page_loads_in_headless_chromium(report, tmp_path):
    flags = [chromium(), *CHROMIUM_FLAGS, f"--user-data-dir={tmp_path / 'profile'}"]
    url = (report / "index.html").as_uri()
    dom = subprocess.run([*flags, "--enable-logging=stderr", "--v=0",
                          "--virtual-time-budget=5000", "--dump-dom", url],
                         capture_output=True, text=True, timeout=120)
    assert 'data-broken-images="0"' in dom.stdout
    console = [line for line in dom.stderr.splitlines() if "CONSOLE" in line]
    assert not console, console


def test_charts_have_ticks_and_units(tmp_path):
    scene = write_scene(tmp_path / "s", layers=RING)
    out = tmp_path / "sl"
    assert main(["sightlines", str(scene), *SMALL_SWEEP, "--size", "32x24", "--workers", "1",
                 "--out", str(out), "--json"]) == 0
    svg = (out / "floor_1150mm.svg").read_text()
    assert "sideways offset of the eye from the axis [mm]" in svg
    assert "distance of the eye from the front panel [m]" in svg
    ticks = re.findall(r">\s*(&#8722;|−|-)?\d+(\.\d+)?\s*<", svg)
    assert len(ticks) >= 4  # numeric tick labels kept as text
    assert (out / "floor_1150mm.png").is_file()
    elevation = (out / "elevation.svg").read_text()
    assert "eye height above the floor [mm]" in elevation
