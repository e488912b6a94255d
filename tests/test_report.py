"""The proposal report: sections, numbers traceable to report.json, and a real browser."""

import json
import re
import shutil
import subprocess

import pytest
from cloakview.render.cli.main import main
from scenes import RING, write_scene

SECTIONS = ("1. Layout", "2. Bill of lenses", "3. What visitors see", "4. Walking past",
            "5. Where visitors can stand", "6. What can be hidden", "7. Build tolerances",
            "8. Assumptions", "9. Cautions")


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
                 "--inner", "I60", "--builds", "4", "--lateral-range", "-20:20:10",
                 "--distance-range", "400:800:200", "--height-range", "1100:1200:50",
                 "--heights", "1150", "--out", str(out)]) == 0
    return out


def test_every_section_and_picture_is_there(report):
    page = (report / "index.html").read_text()
    for section in SECTIONS:
        assert section in page
    for src in re.findall(r'src="([^"]+)"', page):
        assert (report / src).is_file(), src
    assert (report / "layout.svg").read_text().startswith("<svg")
    for caution in ("sunlight", "heavy", "edges", "accessibility", "licensed professionals"):
        assert caution in page


def test_numbers_on_the_page_come_from_the_json(report):
    page = (report / "index.html").read_text()
    data = json.loads((report / "report.json").read_text())
    assert f'Device length {data["design"]["length_mm"]:.1f} mm' in page
    assert f'Lens cost: {data["lens_cost"]:.2f}' in page
    assert data["lens_cost"] == 2 * (40 + 55)
    assert f'{data["tolerance"]["yield"]:.0%} work from the design viewer' in page
    for ring in data["rings"]:
        assert f'{ring["height_mm"]:.0f} x {ring["length_mm"]:.0f}' in page
    for lens in data["design"]["lenses"]:
        assert f'{lens["rail_mm"]:.1f}' in page


def _chromium():
    return shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package "
                    "chromium; .ci/run installs it)")
def test_page_loads_in_headless_chromium(report, tmp_path):
    flags = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
             "--no-first-run", "--disable-background-networking", "--disable-component-update",
             "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}"]
    url = (report / "index.html").as_uri()
    dom = subprocess.run([*flags, "--enable-logging=stderr", "--v=0",
                          "--virtual-time-budget=5000", "--dump-dom", url],
                         capture_output=True, text=True, timeout=120)
    assert 'data-broken-images="0"' in dom.stdout
    console = [line for line in dom.stderr.splitlines() if "CONSOLE" in line]
    assert not console, console
    shot = tmp_path / "report.png"
    subprocess.run([*flags, "--hide-scrollbars", "--window-size=1100,3000",
                    f"--screenshot={shot}", url], capture_output=True, timeout=120)
    assert shot.is_file() and shot.stat().st_size > 20_000
