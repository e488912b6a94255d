"""Scene files: load a TOML exhibit description, check every key, build the device.

A scene describes one exhibit: the lens device and where it stands, its housing, the
picture layers (background wall, objects to hide, foreground signs) and the visitors'
eye points (see :mod:`cloakview.render.scene.model` for the frames).

Layers are placed in the device frame: ``center_mm = [right, height]`` gives the
sideways offset from the axis and the height above the floor; ``z_mm`` the distance
along the axis from the first lens.
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
from cloakview.optics.cloak import LensChoice, design_cloak
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import ThickLens, ThinLens
from cloakview.optics.materials import C_LINE_NM, D_LINE_NM, F_LINE_NM, material_by_name
from cloakview.optics.surfaces import Housing
from cloakview.optics.system import LensSystem, PlacedLens
from cloakview.render.color import hex_color_linear
from cloakview.render.files import check_path_text, read_text
from cloakview.render.scene.keys import KeyReader
from cloakview.render.scene.model import (
    ROLES,
    Layer,
    Placement,
    Scene,
    Settings,
    Viewer,
    glass_extent,
    opaque_radii_mm,
)
from cloakview.render.scene.pictures import read_texture

MAX_IMAGE_SIDE_PX = 8192
#: A viewer's name becomes a folder name in the output: a plain, portable file name.
_VIEWER_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9 ._-]{0,63}")
_RESERVED_NAMES = {"metrics.json", "metrics.csv", "run.json"}
DEFAULT_WAVELENGTHS_NM = (F_LINE_NM, D_LINE_NM, C_LINE_NM)


def _radius(table: KeyReader, name: str) -> float:
    value = table.get(name)
    if isinstance(value, str) and value.strip().lower() in ("flat", "plane", "inf"):
        return math.inf
    table.used.discard(name)
    number = table.number(name, required=True)
    if number == 0:
        raise table.error(name, value, "radius must be non-zero; write \"flat\" for a plane face")
    return number


def _explicit_lenses(items, source: str) -> LensSystem:
    if not isinstance(items, list) or not items:
        raise InputError("device.lens", items, "must be a non-empty list of lens tables", source)
    placed = []
    for i, item in enumerate(items):
        t = KeyReader(item, f"device.lens[{i}]", source)
        z = t.number("z_mm", required=True)
        diameter = t.number("diameter_mm", required=True, positive=True)
        try:
            if t.has("focal_length_mm"):
                lens = ThinLens(t.number("focal_length_mm", required=True, positive=True),
                                diameter)
            else:
                material = material_by_name(t.string("material", "soda-lime"),
                                            t.key("material"))
                lens = ThickLens(_radius(t, "r1_mm"), _radius(t, "r2_mm"),
                                 t.number("center_thickness_mm", required=True, positive=True),
                                 diameter, material)
        except InputError as error:
            raise InputError(t.key(error.key) if "." not in error.key else error.key,
                             error.value, error.rule, source) from None
        t.finish()
        placed.append(PlacedLens(lens, z, f"L{i + 1}"))
    for a, b in zip(placed, placed[1:], strict=False):
        if b.z_mm < a.back_z_mm:
            raise InputError(f"device.lens[{placed.index(b)}].z_mm", b.z_mm,
                             f"overlaps the lens before it (which ends at {a.back_z_mm:g} mm); "
                             "lenses must be listed viewer side first without overlapping",
                             source)
    return tuple(placed)


def _device(t: KeyReader, ideal: bool, source: str):
    coated = t.boolean("coated", False)
    if t.has("lens"):
        for name in ("f_outer_mm", "f_inner_mm"):
            if t.has(name):
                raise t.error(name, t.get(name), "give either f_outer_mm/f_inner_mm or a "
                              "[[device.lens]] list, not both")
        if ideal:
            raise InputError("render.ideal", True, "ideal lenses need a device given by "
                             "f_outer_mm and f_inner_mm, not an explicit lens list", source)
        return LensSystem(_explicit_lenses(t.get("lens"), source), coated=coated), None
    diameter = t.number("diameter_mm", 50.8, positive=True)
    choice = LensChoice(
        ideal=ideal,
        material=_wrap(lambda: material_by_name(t.string("material", "soda-lime"),
                                                t.key("material")), source),
        shape=t.get("shape", "biconvex"),
        outer_diameter_mm=t.number("outer_diameter_mm", diameter, positive=True),
        inner_diameter_mm=t.number("inner_diameter_mm", diameter, positive=True),
        min_edge_mm=t.number("min_edge_mm", 2.0, low=0.0, high=1000.0),
    )
    f_outer = t.number("f_outer_mm", required=True)
    f_inner = t.number("f_inner_mm", required=True)

    def build():
        try:
            return design_cloak(f_outer, f_inner, choice, coated=coated)
        except InputError as error:
            key = {"f_outer": "f_outer_mm", "f_inner": "f_inner_mm", "shape": "shape",
                   "outer_diameter": "outer_diameter_mm",
                   "inner_diameter": "inner_diameter_mm"}.get(error.key, error.key)
            raise InputError(t.key(key), error.value, error.rule, source) from None

    design = build()
    return design.system, design


def _wrap(fn, source):
    try:
        return fn()
    except InputError as error:
        raise error.with_source(source) from None


def _housing(t: KeyReader, system: LensSystem) -> tuple[Housing, np.ndarray, np.ndarray]:
    largest = max(p.lens.diameter_mm for p in system.lenses)
    tube_d = t.number("tube_diameter_mm", largest + 20.0, positive=True)
    if tube_d < largest:
        raise t.error("tube_diameter_mm", tube_d, f"must be at least the largest lens "
                      f"diameter, {largest:g} mm")
    hole_d = t.number("hole_diameter_mm", system.lenses[0].lens.diameter_mm, positive=True)
    if hole_d > tube_d:
        raise t.error("hole_diameter_mm", hole_d, f"must not exceed the tube diameter "
                      f"{tube_d:g} mm")
    width = t.number("panel_width_mm", 2.5 * tube_d, positive=True)
    height = t.number("panel_height_mm", 2.5 * tube_d, positive=True)
    if min(width, height) < tube_d:
        raise t.error("panel_width_mm" if width < tube_d else "panel_height_mm",
                      min(width, height), f"the panel must cover the tube ({tube_d:g} mm)")
    gap = t.number("panel_gap_mm", 10.0, low=0.0, high=10000.0)
    extension = t.number("tube_extension_mm", 10.0, low=0.0, high=10000.0)
    first = glass_extent(system.lenses[0])[0]
    last = glass_extent(system.lenses[-1])[1]
    housing = Housing(panel_z_mm=first - gap, hole_radius_mm=hole_d / 2,
                      panel_half_width_mm=width / 2, panel_half_height_mm=height / 2,
                      tube_radius_mm=tube_d / 2, tube_end_mm=last + extension)
    tube = hex_color_linear(t.string("tube_color", "#2f2c2a"), t.key("tube_color"), t.source)
    panel = hex_color_linear(t.string("panel_color", "#4a4f57"), t.key("panel_color"),
                              t.source)
    return housing, tube, panel


def _resolve_image(text: str, key: str, folder: Path, source: str, allow_outside: bool) -> Path:
    path = check_path_text(text, key, source)
    candidate = (path if path.is_absolute() else folder / path).resolve()
    if not allow_outside:
        if path.is_absolute():
            raise InputError(key, text, "image paths must be relative to the scene folder "
                             "(pass --allow-outside-paths to permit absolute paths)", source)
        if not candidate.is_relative_to(folder.resolve()):
            raise InputError(key, text, "image path climbs out of the scene folder "
                             "(pass --allow-outside-paths to permit this)", source)
    return candidate


def _layer(t: KeyReader, folder: Path, source: str, allow_outside: bool, axis_height: float,
           system: LensSystem, housing: Housing) -> Layer:
    name = t.string("name", required=True)
    role = t.string("role", required=True)
    if role not in ROLES:
        raise t.error("role", role, f"must be one of {', '.join(ROLES)}")
    image_text = t.string("image", required=True)
    image_path = _resolve_image(image_text, t.key("image"), folder, source, allow_outside)
    texture = read_texture(image_path, t.key("image"), source)
    aspect = texture.shape[1] / texture.shape[0]
    width = t.number("width_mm", positive=True)
    height = t.number("height_mm", positive=True)
    if width is None and height is None:
        raise t.error("width_mm", None, "give width_mm or height_mm (or both)")
    width = width if width is not None else height * aspect
    height = height if height is not None else width / aspect
    cx, cy_floor = t.vector("center_mm", 2, required=True)
    z = t.number("z_mm", required=True)
    opacity = t.number("opacity", 1.0, low=0.0, high=1.0)
    t.finish()
    layer = Layer(name, role, texture, cx, cy_floor - axis_height, z, width, height, opacity,
                  image_path)
    _check_layer_place(layer, t, system, housing)
    return layer


def _check_layer_place(layer: Layer, t: KeyReader, system: LensSystem, housing: Housing):
    for placed in system.lenses:
        lo, hi = glass_extent(placed)
        if lo - 1e-9 <= layer.z_mm <= hi + 1e-9:
            raise t.error("z_mm", layer.z_mm, f"lies inside lens {placed.label} "
                          f"({lo:.1f} to {hi:.1f} mm); move the layer into an air gap")
    if layer.role == "hidden":
        if not housing.panel_z_mm < layer.z_mm < housing.tube_end_mm:
            raise t.error("z_mm", layer.z_mm, f"a hidden object must be inside the device "
                          f"({housing.panel_z_mm:.0f} to {housing.tube_end_mm:.0f} mm)")
        reach = opaque_radii_mm(layer)[1]
        if reach > housing.tube_radius_mm:
            raise t.error("width_mm", layer.width_mm, f"the hidden object reaches "
                          f"{reach:.1f} mm from the axis, beyond the tube radius "
                          f"{housing.tube_radius_mm:.1f} mm; make it smaller or move it")
    elif layer.role == "background" and layer.z_mm <= housing.tube_end_mm:
        raise t.error("z_mm", layer.z_mm, f"a background must stand beyond the device's far "
                      f"end at {housing.tube_end_mm:.0f} mm")
    elif layer.role == "foreground" and layer.z_mm >= housing.panel_z_mm:
        raise t.error("z_mm", layer.z_mm, f"a foreground layer must stand in front of the "
                      f"panel at {housing.panel_z_mm:.0f} mm")


def _viewer(t: KeyReader, placement: Placement, housing: Housing, layers) -> Viewer:
    name = t.string("name", required=True)
    if (not _VIEWER_NAME.fullmatch(name) or name.endswith(".")
            or name.lower() in _RESERVED_NAMES):
        raise t.error("name", name[:60], "a viewer's name becomes a folder name: 1 to 64 "
                      "letters, digits, spaces, '.', '_' or '-', starting with a letter or "
                      "digit, not ending with '.', and not metrics.json, metrics.csv or run.json")
    eye = t.vector("eye_mm", 3, required=True)
    origin = placement.axes()[0]
    look = t.vector("look_at_mm", 3, tuple(origin))
    fov = t.number("fov_deg", 12.0, low=0.1, high=120.0)
    size = t.get("size", [640, 360])
    if (not isinstance(size, list) or len(size) != 2
            or not all(isinstance(s, int) and not isinstance(s, bool) for s in size)
            or not all(16 <= s <= MAX_IMAGE_SIDE_PX for s in size)):
        raise t.error("size", size, f"must be [width, height] in whole pixels, each 16 to "
                      f"{MAX_IMAGE_SIDE_PX}")
    pupil = t.number("pupil_mm", 0.0, low=0.0, high=10.0)
    samples = t.integer("pupil_samples", 8 if pupil > 0 else 1, 1, 64)
    t.finish()
    device_eye = placement.to_device(np.array(eye))
    if device_eye[2] >= housing.panel_z_mm:
        raise t.error("eye_mm", list(eye), "the eye must be in front of the device's front "
                      f"panel (device z {device_eye[2]:.0f} mm is not before "
                      f"{housing.panel_z_mm:.0f} mm)")
    for layer in layers:
        if layer.role == "foreground" and layer.z_mm <= device_eye[2]:
            raise t.error("eye_mm", list(eye), f"the eye is beyond foreground layer "
                          f"'{layer.name}'")
    if np.allclose(eye, look):
        raise t.error("look_at_mm", list(look), "must differ from eye_mm")
    return Viewer(name, eye, look, fov, size[0], size[1], pupil, samples)


def _settings(t: KeyReader) -> Settings:
    wavelengths = t.get("wavelengths_nm", list(DEFAULT_WAVELENGTHS_NM))
    if (not isinstance(wavelengths, list) or not 1 <= len(wavelengths) <= 16
            or not all(isinstance(w, (int, float)) and not isinstance(w, bool)
                       and 380.0 <= w <= 780.0 for w in wavelengths)):
        raise t.error("wavelengths_nm", wavelengths, "must be a list of 1 to 16 visible "
                      "wavelengths, 380 to 780 nm")
    return Settings(
        wavelengths_nm=tuple(sorted(float(w) for w in wavelengths)),
        supersample=t.integer("supersample", 2, 1, 8),
        ideal=t.boolean("ideal", False),
        backdrop_rgb=hex_color_linear(t.string("backdrop_color", "#d9d4ca"),
                                       t.key("backdrop_color"), t.source),
    )


def load_scene(path, allow_outside_paths: bool = False, ideal: bool | None = None) -> Scene:
    """Load and check a scene file.

    Parameters
    ----------
    path : str or Path
        The TOML file.
    allow_outside_paths : bool
        Allow image paths that are absolute or leave the scene folder.
    ideal : bool, optional
        Override ``render.ideal``.

    Raises
    ------
    InputError
        For every malformed or impossible value, naming the file and the key.
    """
    path = Path(path)
    source = str(path)
    text = read_text(path, "scene", "scene file")
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError) as error:  # ValueError: over-long integers
        raise InputError("scene", source, f"not valid TOML ({str(error)[:120]})") from None
    root = KeyReader(data, "", source)
    render = KeyReader(root.get("render", {}), "render", source)
    settings = _settings(render)
    if ideal is not None:
        settings = replace(settings, ideal=ideal)
    render.finish()
    device = KeyReader(root.get("device"), "device", source) if root.has("device") else None
    if device is None:
        raise InputError("device", None, "the scene needs a [device] table", source)
    system, design = _device(device, settings.ideal, source)
    placement = Placement(
        axis_height_mm=device.number("axis_height_mm", 1250.0, low=0.0, high=5000.0),
        x_mm=device.vector("position_mm", 2, (0.0, 0.0))[0],
        z_mm=device.vector("position_mm", 2, (0.0, 0.0))[1],
        heading_deg=device.number("heading_deg", 0.0, low=-180.0, high=180.0),
    )
    device.finish()
    housing_table = KeyReader(root.get("housing", {}), "housing", source)
    housing, tube_rgb, panel_rgb = _housing(housing_table, system)
    housing_table.finish()
    layer_items = root.get("layer", [])
    if not isinstance(layer_items, list):
        raise InputError("layer", layer_items, "write layers as [[layer]] tables", source)
    layers = []
    for i, item in enumerate(layer_items):
        layer = _layer(KeyReader(item, f"layer[{i}]", source), path.parent, source,
                       allow_outside_paths, placement.axis_height_mm, system, housing)
        if any(other.name == layer.name for other in layers):
            raise InputError(f"layer[{i}].name", layer.name, "layer names must be unique",
                             source)
        layers.append(layer)
    if not any(layer.role == "background" for layer in layers):
        raise InputError("layer", None, "the scene needs at least one background layer",
                         source)
    viewer_items = root.get("viewer", [])
    if not isinstance(viewer_items, list) or not viewer_items:
        raise InputError("viewer", viewer_items, "the scene needs at least one [[viewer]]",
                         source)
    viewers = []
    for i, item in enumerate(viewer_items):
        viewer = _viewer(KeyReader(item, f"viewer[{i}]", source), placement, housing, layers)
        if any(other.name == viewer.name for other in viewers):
            raise InputError(f"viewer[{i}].name", viewer.name, "viewer names must be unique",
                             source)
        viewers.append(viewer)
    title = root.string("title", path.stem)
    root.finish()
    layers.sort(key=lambda layer: layer.z_mm)
    sources = (path.resolve(), *sorted({layer.image_path for layer in layers}))
    return Scene(path, title, system, design, housing, placement, tuple(layers),
                 tuple(viewers), settings, tube_rgb, panel_rgb, sources)
