"""The live preview: its frame desk, its web answers and the page in a real browser."""

import json
import os
import re
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.request

import numpy as np
import pytest
from cloakview import sample_scenes
from cloakview.optics.errors import InputError
from cloakview.render.api.frames import render
from cloakview.render.proposal.pdf import CHROMIUM_FLAGS, chromium

pytest.importorskip("starlette")
pytest.importorskip("uvicorn")
from cloakview.render.live import server  # noqa: E402 - needs the optional web stack
from cloakview.render.live.session import (  # noqa: E402
    FrameDesk,
    FrameRequest,
    LiveSession,
    Superseded,
    parse_request,
)

SCENE = sample_scenes.scene_path("gallery")
INVENTORY = sample_scenes.path(sample_scenes.INVENTORY)
#: The gallery's eye-port viewer stands 1500 mm in front of the first lens at the axis
#: height 1250 mm; its front panel is 15 mm in front of that lens (the scene file).
EYE_PORT = {"lateral_mm": 0.0, "distance_mm": 1485.0, "height_mm": 1250.0}
#: The gallery's side-step viewer: 75 mm to the right of the eye-port.
SIDE_STEP = {**EYE_PORT, "lateral_mm": 75.0}


def _post(url, body, raw=None):
    data = raw if raw is not None else json.dumps(body).encode()
    request = urllib.request.Request(url, data=data, method="POST",
                                     headers={"Content-Type": "application/json"})
    try:
        with urllib.request.urlopen(request, timeout=120) as response:
            return response.status, json.loads(response.read())
    except urllib.error.HTTPError as error:
        return error.code, json.loads(error.read())


def _get(url):
    try:
        with urllib.request.urlopen(url, timeout=60) as response:
            return response.status, response.headers.get("Content-Type"), response.read()
    except urllib.error.HTTPError as error:
        return error.code, error.headers.get("Content-Type"), error.read()


@pytest.fixture(scope="module")
def live(tmp_path_factory):
    out = tmp_path_factory.mktemp("live") / "saved"
    session = LiveSession(SCENE, inventory=INVENTORY, out=out)
    with server.in_background(session) as url:
        yield session, url, out


# -- the frame desk: newest first ---------------------------------------------------------
def test_a_newer_request_supersedes_the_waiting_one_and_abandons_a_full_render():
    started, release = threading.Event(), threading.Event()
    abandoned = []

    def slow_render(request, abandon):
        if request.view == "first":
            started.set()
            release.wait(10)
            abandoned.append(abandon())
        return request.view

    desk = FrameDesk(slow_render)
    try:
        first = desk.submit(FrameRequest(0, 1, 1, quality="full", view="first"))
        assert started.wait(10)
        waiting = desk.submit(FrameRequest(0, 2, 1, view="second"))
        newest = desk.submit(FrameRequest(0, 3, 1, view="third"))
        with pytest.raises(Superseded):
            waiting.result(10)
        release.set()
        assert first.result(10) == "first"
        assert abandoned == [True]  # a newer request waited while the full render ran
        assert newest.result(10) == "third"
    finally:
        desk.close()


def test_a_preview_in_progress_is_not_abandoned():
    seen = []

    def render_once(request, abandon):
        seen.append(abandon())
        return request.view

    desk = FrameDesk(render_once)
    try:
        assert desk.submit(FrameRequest(0, 1, 1, view="cloaked")).result(10) == "cloaked"
        assert seen == [False]
    finally:
        desk.close()


@pytest.mark.parametrize(("body", "key"), [
    ({**EYE_PORT, "distance_mm": 0}, "distance_mm"),
    ({**EYE_PORT, "distance_mm": -300}, "distance_mm"),
    ({**EYE_PORT, "lateral_mm": float("nan")}, "lateral_mm"),
    ({**EYE_PORT, "height_mm": 1e9}, "height_mm"),
    ({**EYE_PORT, "height_mm": True}, "height_mm"),
    ({**EYE_PORT, "quality": "best"}, "quality"),
    ({**EYE_PORT, "view": "x-ray"}, "view"),
    ({**EYE_PORT, "outer": "no-such-lens", "inner": "no-such-lens"}, "outer"),
    ({**EYE_PORT, "outer": "acrylic-d100-f400"}, "inner"),
    ({**EYE_PORT, "zoom": 2}, "zoom"),
    ([1, 2, 3], "request"),
])
def test_bad_frame_requests_name_the_field(body, key):
    with pytest.raises(InputError) as caught:
        parse_request(body, {"acrylic-d100-f400": None})
    assert caught.value.key == key


# -- the web answers ----------------------------------------------------------------------
def test_frames_for_the_scene_viewers_carry_their_verdicts(live):
    _, url, _ = live
    status, works = _post(url + "api/frame", {**EYE_PORT, "quality": "full"})
    assert status == 200 and works["metrics"]["verdict_class"] == "works"
    assert set(works["views"]) == {"cloaked", "naked", "reference", "difference", "vanish"}
    status, aside = _post(url + "api/frame", {**SIDE_STEP, "quality": "full"})
    assert status == 200 and aside["metrics"]["verdict_class"] != "works"
    status, preview = _post(url + "api/frame", {**SIDE_STEP, "view": "vanish"})
    assert status == 200 and preview["metrics"] is None  # a picture only
    assert preview["views"] == ["vanish"] and preview["size_px"] == [400, 225]
    assert preview["wavelengths_nm"] == [587.56]
    assert preview["picture"].startswith("data:image/jpeg;base64,/9j/")  # JPEG's FF D8 FF
    status, kind, data = _get(url + f"api/frame/{works['frame']}/vanish.jpg")
    assert status == 200 and kind == "image/jpeg" and data[:3] == b"\xff\xd8\xff"


def test_a_full_frame_equals_the_render_command_at_that_eye(live, tmp_path):
    # The page's picture and numbers are those of `cloakview render --eye` (same path).
    session, url, _ = live
    status, answer = _post(url + "api/frame", {**SIDE_STEP, "quality": "full"})
    assert status == 200
    [same] = render(SCENE, eye_mm=answer["eye_mm"], look_at_mm=session.base.look_at_mm,
                    views=("cloaked",))
    kept = session._frames[answer["frame"]]
    np.testing.assert_array_equal(kept.images["cloaked"], same.images["cloaked"])
    assert answer["metrics"]["verdict"] == same.metrics["verdict"]


def test_bad_requests_get_a_400_with_one_line(live):
    _, url, _ = live
    for body, field in [({**EYE_PORT, "distance_mm": -20}, "distance_mm"),
                        ({**EYE_PORT, "outer": "nope", "inner": "nope"}, "outer"),
                        ({**EYE_PORT, "outer": "acrylic-d100-f150",
                          "inner": "acrylic-d100-f400"}, "outer, inner")]:
        status, answer = _post(url + "api/frame", body)
        assert status == 400 and answer["error"].startswith(field), answer
        assert "\n" not in answer["error"]
    status, answer = _post(url + "api/frame", None, raw=b"{not json")
    assert status == 400 and "must be JSON" in answer["error"]
    assert _get(url + "api/frame/999999/cloaked.jpg")[0] == 404
    status, _, body = _get(url + "api/plan?outer=acrylic-d100-f150&inner=acrylic-d100-f400")
    assert status == 400 and b"make no device" in body


def test_only_the_page_is_served(live):
    _, url, _ = live
    assert _get(url)[0] == 200
    assert _get(url + "page/live.js")[0] == 200
    for path in ("page/../session.py", "page/%2e%2e/session.py", "scene.toml",
                 "art/gallery_wall.png", "api/../../pyproject.toml"):
        assert _get(url + path)[0] == 404, path


def test_swapped_lenses_re_lay_the_device(live):
    session, url, _ = live
    own = session.describe()["plan"]["length_mm"]
    status, _, body = _get(url + "api/plan?outer=acrylic-d100-f300&inner=acrylic-d100-f120")
    assert status == 200
    # Thin-lens layout (Choi and Howell, Opt. Express 22, 29465 (2014)): outer-to-inner
    # spacing f1 + f2 and inner gap 2 f2 (f1 + f2) / (f1 - f2), so a length of
    # 2 * 420 + 2 * 120 * 420 / 180 = 1400 mm for f1 = 300, f2 = 120 against
    # 2 * 550 + 2 * 150 * 550 / 250 = 1760 mm for the scene's own 400/150 pair. The housing
    # keeps its panel gap and extension, so the device is 360 mm shorter (thick-lens
    # corrections move both layouts by a few millimetres).
    assert json.loads(body)["length_mm"] == pytest.approx(own - 360, abs=15)


def test_saved_views_add_up_with_a_viewer_entry_each(live):
    _, url, out = live
    status, first = _post(url + "api/save", {**SIDE_STEP, "name": "aside"})
    assert status == 200, first
    status, second = _post(url + "api/save", EYE_PORT)
    assert status == 200 and second["name"] == "view-001"
    for name in ("aside", "view-001"):
        assert {p.name for p in (out / name).iterdir()} == {
            "cloaked.png", "naked.png", "reference.png", "difference.png", "vanish.png",
            "metrics.json"}
    metrics = json.loads((out / "aside" / "metrics.json").read_text())
    assert metrics["floor_position_mm"]["lateral"] == 75.0
    assert metrics["verdict"] == first["verdict"]
    entries = (out / "viewers.toml").read_text()
    assert entries.count("[[viewer]]") == 2 and 'name = "aside"' in entries
    import tomllib
    parsed = tomllib.loads(entries)["viewer"]
    assert parsed[0]["eye_mm"] == pytest.approx([75.0, 1250.0, -1500.0])
    status, again = _post(url + "api/save", {**EYE_PORT, "name": "aside"})
    assert status == 400 and again["error"].startswith("name")
    assert not list(out.rglob(".*tmp*"))


# -- the command line ---------------------------------------------------------------------
@pytest.mark.slow
def test_the_command_serves_the_page_on_loopback(tmp_path):
    command = [sys.executable, "-m", "cloakview.render.cli.main", "live", str(SCENE),
               "--no-browser", "--port", "0", "--out", str(tmp_path / "saved")]
    with subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                          env={**os.environ, "PYTHONUNBUFFERED": "1"}) as process:
        try:
            url = None
            deadline = time.monotonic() + 240
            while url is None and time.monotonic() < deadline:
                line = process.stdout.readline()
                assert line, process.stderr.read()
                found = re.search(r"at (http://127\.0\.0\.1:\d+/)", line)
                url = found and found.group(1)
            status, _, body = _get(url + "api/scene")
            assert status == 200 and json.loads(body)["title"].startswith("Hall of Light")
        finally:
            process.terminate()
            process.communicate(timeout=30)
    assert not (tmp_path / "saved").exists()  # nothing saved, nothing written


def test_the_command_refuses_bad_input_in_one_line(tmp_path, capsys):
    from cloakview.render.cli.main import main
    assert main(["live", str(SCENE), "--no-browser", "--port", "70000",
                 "--out", str(tmp_path / "o")]) == 2
    assert main(["live", str(SCENE), "--no-browser", "--inventory",
                 str(tmp_path / "missing.csv")]) == 2
    assert main(["live", str(SCENE), "--no-browser", "--sight-lines", str(tmp_path)]) == 2
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == 3 and all(line.startswith("cloakview: error:") for line in lines)
    assert "--port" in lines[0] and "--inventory" in lines[1] and "--sight-lines" in lines[2]
    assert not (tmp_path / "o").exists()


# -- the page in a real browser -----------------------------------------------------------
def _browser(playwright, tmp_path):
    return playwright.chromium.launch_persistent_context(
        str(tmp_path / "profile"), executable_path=chromium(), headless=True,
        args=[flag for flag in CHROMIUM_FLAGS if flag != "--headless"],
        viewport={"width": 1400, "height": 1000})


def _wait_full(page, after_frame=0, **wanted):
    """The next full-quality answer painted after ``after_frame`` whose request has ``wanted``."""
    page.wait_for_function(
        "([n, wanted]) => { const a = window.cloakview.last; return a && a.quality === 'full'"
        " && a.frame > n && Object.entries(wanted).every(([k, v]) => a.request[k] === v); }",
        arg=[after_frame, wanted], timeout=60_000)
    return page.evaluate("window.cloakview.last")


@pytest.mark.slow
@pytest.mark.skipif(chromium() is None, reason="Chromium is not installed (Debian package "
                    "chromium; .ci/run installs it)")
def test_the_page_in_chromium(live, tmp_path):
    sync_api = pytest.importorskip("playwright.sync_api")
    _, url, out = live
    problems = []
    with sync_api.sync_playwright() as playwright:
        context = _browser(playwright, tmp_path)
        page = context.new_page()
        page.on("console", lambda m: m.type == "error" and problems.append(m.text))
        page.on("pageerror", lambda e: problems.append(str(e)))
        page.goto(url)
        first = _wait_full(page)
        assert first["metrics"]["verdict_class"] == "works"
        assert page.locator("#verdict").get_attribute("data-verdict-class") == "works"
        before = page.locator("#view").screenshot()

        # Drag the eye 80 mm to the right on the plan (zoomed to 2 mm per pixel).
        page.click("#zoom-eye")
        box = page.locator("#eye-marker").bounding_box()
        x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
        page.mouse.move(x, y)
        page.mouse.down()
        page.mouse.move(x + 40, y, steps=12)
        page.mouse.up()
        moved = _wait_full(page, first["frame"])
        assert moved["request"]["lateral_mm"] == pytest.approx(80, abs=4)
        assert moved["metrics"]["verdict_class"] != "works"
        assert page.locator("#verdict").get_attribute("data-verdict-class") != "works"
        assert page.locator("#view").screenshot() != before
        painted = page.evaluate("window.cloakview.stats.painted")
        assert any(p["quality"] == "preview" for p in painted)

        # Back on the axis with the arrow keys (16 presses of 5 mm), then a child's height.
        page.locator("#plan").focus()
        for _ in range(16):
            page.keyboard.press("ArrowLeft")
        back = _wait_full(page, moved["frame"], lateral_mm=0)
        assert back["request"]["lateral_mm"] == 0
        assert back["metrics"]["verdict_class"] == "works"
        page.get_by_role("button", name=re.compile(r"^1125 mm: child")).click()
        low = _wait_full(page, back["frame"], height_mm=1125)
        assert low["request"]["height_mm"] == 1125
        assert page.input_value("#height-slider") == "1125"
        assert low["metrics"]["verdict_class"] != "works"  # 125 mm below the axis
        page.locator("#height-slider").focus()
        for _ in range(4):
            page.keyboard.press("ArrowRight")  # 4 slider steps of 5 mm
        raised = _wait_full(page, low["frame"], height_mm=1145)
        assert raised["request"]["height_mm"] == 1145

        # Other lenses from the inventory re-lay the device.
        length_before = page.inner_text("#lens-note")
        page.select_option("#outer", "acrylic-d100-f300")
        page.select_option("#inner", "acrylic-d100-f120")
        swapped = _wait_full(page, raised["frame"], outer="acrylic-d100-f300",
                             inner="acrylic-d100-f120")
        assert swapped["request"]["outer"] == "acrylic-d100-f300"
        assert swapped["request"]["inner"] == "acrylic-d100-f120"
        assert page.inner_text("#lens-note") != length_before
        assert page.locator("#error").is_hidden()

        # Save this view.
        page.fill("#save-name", "from-the-page")
        page.click("#save")
        page.wait_for_function("document.getElementById('save-result').textContent"
                               ".startsWith('Saved')", timeout=60_000)
        assert (out / "from-the-page" / "cloaked.png").is_file()
        saved = json.loads((out / "from-the-page" / "metrics.json").read_text())
        assert saved["lenses"] == {"outer": "acrylic-d100-f300", "inner": "acrylic-d100-f120"}
        assert "acrylic-d100-f300" in page.inner_text("#save-entry")
        assert problems == []

        # A typed eye point inside the device is refused on the page, the frame kept.
        page.fill("#distance", "-40")
        page.press("#distance", "Enter")
        page.wait_for_function("!document.getElementById('error').hidden")
        assert page.inner_text("#error").startswith("distance_mm")
        assert len(problems) == 1 and "400" in problems[0]  # the browser logs the refusal
        context.close()
