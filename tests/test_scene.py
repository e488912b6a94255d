"""Scene files: every validation rule has its message checked."""

import re

import imageio.v3 as iio
import numpy as np
import pytest
from cloakview.optics.errors import InputError
from cloakview.render.cli.main import main
from cloakview.render.scene.loader import load_scene
from scenes import RING, write_scene


def _load(tmp_path, **kwargs):
    return load_scene(write_scene(tmp_path, **kwargs))


def _edit(tmp_path, old, new, **kwargs):
    path = write_scene(tmp_path, **kwargs)
    text = path.read_text()
    assert old in text, old
    path.write_text(text.replace(old, new, 1))
    return path


def test_valid_scene_loads(tmp_path):
    scene = _load(tmp_path, layers=RING)
    assert [layer.name for layer in scene.layers] == ["ring", "poster"]
    assert scene.design.length_mm == pytest.approx(scene.system.length_mm)
    assert scene.housing.tube_radius_mm == 33
    ring = scene.layers[0]
    assert ring.center_y_mm == 0 and ring.height_mm == pytest.approx(44)


@pytest.mark.parametrize("old, new, match", [
    ("title =", "titel =", r"titel = .*unknown key; did you mean 'title'\?"),
    ("f_outer_mm = 180", "f_outter_mm = 180", r"device.f_outter_mm.*did you mean 'f_outer_mm'"),
    ("fov_deg = 8", 'fov_deg = "wide"', r"viewer\[0\].fov_deg = 'wide': must be a number"),
    ("fov_deg = 8", "fov_deg = nan", r"viewer\[0\].fov_deg = nan: must be a finite number"),
    ("fov_deg = 8", "fov_deg = 170", r"fov_deg = 170.0: must lie between 0.1 and 120"),
    ("f_inner_mm = 60", "f_inner_mm = 250", r"device.f_outer_mm = 180.0: must be longer than"),
    ("f_inner_mm = 60", "f_inner_mm = -60", r"device.f_inner_mm = -60.0: must be greater than 0"),
    ('material = "acrylic"', 'material = "jelly"', r"device.material = 'jelly': unknown"),
    ('shape = "biconvex"', 'shape = "cube"', r"device.shape = 'cube': unknown lens shape"),
    ("diameter_mm = 50", "diameter_mm = 500", r"device.\w*diameter_mm = 500.0: no biconvex lens"),
    ("art/poster.png", "art/missing.png", r"layer\[0\].image = .*missing.png.*file not found"),
    ("art/poster.png", "../outside.png", r"climbs out of the scene folder"),
    ("art/poster.png", "/etc/passwd", r"must be relative to the scene folder"),
    ('role = "background"', 'role = "backdrop"', r"layer\[0\].role = 'backdrop': must be one of"),
    ("width_mm = 600", "", r"layer\[0\].width_mm = None: give width_mm or height_mm"),
    ("z_mm = 1150", "z_mm = 300", r"layer\[0\].z_mm = 300.0: a background must stand beyond"),
    ("z_mm = 1150", "z_mm = 240", r"lies inside lens L2"),
    ("size = [96, 64]", "size = [96, 99999]", r"viewer\[0\].size = \[96, 99999\]: must be"),
    ("size = [96, 64]", "size = [96.5, 64]", r"must be \[width, height\] in whole pixels"),
    ("eye_mm = [0, 1150, -600]", "eye_mm = [0, 1150, 100]", r"in front of the device's front"),
    ("eye_mm = [0, 1150, -600]", "eye_mm = [0, 1150]", r"eye_mm = \[0, 1150\]: must be a list"),
    ("supersample = 1", "supersample = 20", r"render.supersample = 20: must lie between 1 and 8"),
    ("supersample = 1", "supersample = 1\nwavelengths_nm = [200.0]", r"380 to 780 nm"),
    ("tube_diameter_mm = 66", "tube_diameter_mm = 40", r"at least the largest lens diameter"),
    ("tube_diameter_mm = 66", 'tube_diameter_mm = 66\ntube_color = "grey"', r"#rrggbb"),
    ("tube_diameter_mm = 66", "tube_diameter_mm = 66\nhole_diameter_mm = 90",
     r"must not exceed the tube diameter"),
    ("panel_width_mm = 200", "panel_width_mm = 50", r"the panel must cover the tube"),
])
def test_rule_messages(tmp_path, old, new, match):
    path = _edit(tmp_path, old, new)
    with pytest.raises(InputError, match=match) as info:
        load_scene(path)
    assert str(path) in str(info.value)


@pytest.mark.parametrize("layer_text, match", [
    (RING.replace("width_mm = 44", "width_mm = 80"), r"beyond the tube radius 33.0 mm"),
    (RING.replace("z_mm = 222", "z_mm = -50"), r"a hidden object must be inside the device"),
    (RING + RING, r"layer names must be unique"),
    (RING.replace('role = "hidden"', 'role = "foreground"'), r"must stand in front of the panel"),
])
def test_layer_placement_rules(tmp_path, layer_text, match):
    with pytest.raises(InputError, match=match):
        _load(tmp_path, layers=layer_text)


def test_malformed_toml(tmp_path):
    path = write_scene(tmp_path, text="[device\nf_outer_mm = 1")
    with pytest.raises(InputError, match=r"scene = .*scene.toml.*not valid TOML"):
        load_scene(path)


def test_missing_scene_file(tmp_path):
    with pytest.raises(InputError, match="scene file not found"):
        load_scene(tmp_path / "nope.toml")


def test_unreadable_image(tmp_path):
    path = write_scene(tmp_path)
    (tmp_path / "art" / "poster.png").write_bytes(b"this is not a picture")
    with pytest.raises(InputError, match=r"cannot read this image"):
        load_scene(path)


def test_absurdly_large_image(tmp_path):
    path = write_scene(tmp_path)
    iio.imwrite(tmp_path / "art" / "poster.png", np.zeros((1, 16385, 3), np.uint8))
    with pytest.raises(InputError, match=r"16385x1 pixels; each side at most 16384 pixels"):
        load_scene(path)


def test_no_viewer_and_no_background(tmp_path):
    path = write_scene(tmp_path)
    text = path.read_text()
    path.write_text(text[:text.index("[[viewer]]")] + text[text.index("[render]"):])
    with pytest.raises(InputError, match=r"needs at least one \[\[viewer\]\]"):
        load_scene(path)
    path.write_text(text.replace('role = "background"', 'role = "foreground"').replace(
        "z_mm = 1150", "z_mm = -100"))
    with pytest.raises(InputError, match="needs at least one background layer"):
        load_scene(path)


def test_explicit_lens_list(tmp_path):
    device = """
[device]
axis_height_mm = 1150
[[device.lens]]
z_mm = 0
focal_length_mm = 180
diameter_mm = 50
[[device.lens]]
z_mm = 100
r1_mm = 60
r2_mm = "flat"
center_thickness_mm = 8
diameter_mm = 40
material = "fused-silica"
"""
    path = write_scene(tmp_path)
    text = path.read_text()
    start, end = text.index("[device]"), text.index("[housing]")
    path.write_text(text[:start] + device + text[end:])
    scene = load_scene(path)
    assert scene.design is None and len(scene.system.surfaces) == 3
    path.write_text(text[:start] + device.replace("z_mm = 100", "z_mm = -5") + text[end:])
    with pytest.raises(InputError, match=r"device.lens\[1\].z_mm = -5.0: overlaps"):
        load_scene(path)
    both = device.replace("axis_height_mm = 1150", "axis_height_mm = 1150\nf_outer_mm = 1")
    path.write_text(text[:start] + both + text[end:])
    with pytest.raises(InputError, match="not both"):
        load_scene(path)


def test_cli_bad_scene_is_one_line_exit_2_and_writes_nothing(tmp_path, capsys):
    path = _edit(tmp_path, "fov_deg = 8", "fov_deg = -3")
    out = tmp_path / "out"
    assert main(["render", str(path), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert re.search(r"scene.toml: viewer\[0\].fov_deg = -3.0: must lie between", err)
    assert not out.exists()


def test_cli_unknown_viewer(tmp_path, capsys):
    path = write_scene(tmp_path)
    assert main(["render", str(path), "--viewer", "ghost", "--out", str(tmp_path / "o")]) == 2
    assert "no such viewer in the scene; choose one of on-axis" in capsys.readouterr().err
