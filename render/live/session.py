"""The resident state of a live preview: one scene, its texture pyramids, lens swaps, frames.

A :class:`LiveSession` loads the scene once and keeps what every frame reuses (the scene,
its texture pyramids, the compiled tracer warmed up, the device re-laid for each lens pair
asked for). Frames are asked for by a visitor's eye point on the floor plan: sideways
offset from the axis, distance in front of the front panel and eye height [mm], the
device's lenses (the scene's own or two inventory ids), a quality and a view:

- ``preview``: the requested view's picture alone, at the design wavelength, without
  supersampling, small, and no numbers (what the page shows while the eye is dragged);
- ``full``: the scene's wavelengths and supersampling at the full picture size, every view
  (what the page shows once the pointer rests, and what a saved view holds).

:class:`FrameDesk` runs the renders on one thread, newest first: a request that arrives
while another waits replaces it (the older one is answered as superseded), and a
full-quality render in progress is abandoned at its next traced view when a newer request
arrives, so the picture never lags behind the pointer.
"""

from __future__ import annotations

import base64
import dataclasses
import itertools
import json
import math
import re
import threading
import time
from collections import OrderedDict
from concurrent.futures import Future
from dataclasses import dataclass
from pathlib import Path

import cv2
import numba
import numpy as np
from cloakview.optics.errors import InputError
from cloakview.optics.materials import nearest_to_d_line
from cloakview.render import outfolder
from cloakview.render.api.frames import custom_viewer, scene_from
from cloakview.render.cautions import CAUTIONS
from cloakview.render.files import read_text, require_file, write_text
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.metrics import CLASSES, WORKS_DEFINITION
from cloakview.render.frame.outputs import write_viewer
from cloakview.render.frame.views import VIEW_NAMES, render_picture, render_viewer
from cloakview.render.planning.inventory import Item, load_inventory
from cloakview.render.proposal.charts import CLASS_COLOURS, CLASS_MEANING
from cloakview.render.scene.model import Scene, Viewer, glass_extent
from cloakview.render.scene.relayout import scene_with_lenses
from cloakview.render.sweeps.sightlines import EYE_HEIGHTS_MM, eye_point

QUALITIES = ("preview", "full")
#: Bounds of an eye point [mm]: the same as the sight-line grids' (sideways, distance from
#: the panel, height above the floor).
LATERAL_LIMIT_MM = 20_000.0
DISTANCE_LIMIT_MM = 100_000.0
HEIGHT_LIMIT_MM = 5_000.0
#: The scene's own lenses, in a request's ``outer`` and ``inner``.
SCENE_LENSES = "scene"
#: Renders kept for their pictures (the page asks for a view of a render by its number).
KEPT_RENDERS = 12
#: JPEG quality of the frames sent to the page (OpenCV's 0-100 scale; our own choice: no
#: visible blocking on the sample pictures at about 40 kB per 640 x 360 frame).
JPEG_QUALITY = 88
_SAVED_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,47}")
#: The file in ``--out`` that collects the saved views as scene-file viewer entries.
VIEWERS_FILE = "viewers.toml"


class Superseded(Exception):
    """A frame request that a newer one replaced before it was finished."""


@dataclass(frozen=True)
class FrameRequest:
    """One frame the page asks for (see the module docstring for the fields)."""

    lateral_mm: float
    distance_mm: float
    height_mm: float
    outer: str = SCENE_LENSES
    inner: str = SCENE_LENSES
    quality: str = "preview"
    view: str = "cloaked"


@dataclass
class LiveFrame:
    """A finished render: its number, request, viewer, pictures (8-bit sRGB), numbers.

    ``metrics`` is None for a preview (a picture only, made as fast as it can be).
    """

    number: int
    request: FrameRequest
    viewer: Viewer
    images: dict[str, np.ndarray]
    metrics: dict | None
    seconds: float
    jpegs: dict[str, bytes] = dataclasses.field(default_factory=dict)


def _number(data: dict, key: str, low: float, high: float, *, above: bool = False) -> float:
    value = data.get(key)
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(key, value, "must be a number [mm]")
    value = float(value)
    if not math.isfinite(value) or not (low < value if above else low <= value) or \
            value > high:
        side = "greater than" if above else "from"
        raise InputError(key, value, f"must be a finite number {side} {low:g} to {high:g} mm")
    return value


def parse_request(data, lens_ids) -> FrameRequest:
    """A :class:`FrameRequest` from the page's JSON, every field checked.

    Raises
    ------
    InputError
        Naming the field, its value and the rule it breaks.
    """
    if not isinstance(data, dict):
        raise InputError("request", data, "must be a JSON object")
    unknown = sorted(set(data) - {f.name for f in dataclasses.fields(FrameRequest)})
    if unknown:
        raise InputError(unknown[0], data[unknown[0]], "is not a field of a frame request")
    lenses = {}
    for key in ("outer", "inner"):
        value = data.get(key, SCENE_LENSES)
        if value != SCENE_LENSES and value not in lens_ids:
            known = ", ".join(sorted(lens_ids)) or "none (start with --inventory FILE)"
            raise InputError(key, value, f"unknown lens id; the inventory holds {known}")
        lenses[key] = value
    if (lenses["outer"] == SCENE_LENSES) != (lenses["inner"] == SCENE_LENSES):
        raise InputError("inner" if lenses["outer"] != SCENE_LENSES else "outer",
                         SCENE_LENSES, "choose both lenses from the inventory, or neither")
    quality = data.get("quality", "preview")
    if quality not in QUALITIES:
        raise InputError("quality", quality, f"must be one of {', '.join(QUALITIES)}")
    view = data.get("view", "cloaked")
    if view not in VIEW_NAMES:
        raise InputError("view", view, f"must be one of {', '.join(VIEW_NAMES)}")
    distance = data.get("distance_mm")
    if isinstance(distance, int | float) and not isinstance(distance, bool) and distance <= 0:
        raise InputError("distance_mm", distance, "the eye must stand in front of the device's "
                         "front panel: a distance greater than 0 mm")
    return FrameRequest(
        _number(data, "lateral_mm", -LATERAL_LIMIT_MM, LATERAL_LIMIT_MM),
        _number(data, "distance_mm", 0.0, DISTANCE_LIMIT_MM, above=True),
        _number(data, "height_mm", 0.0, HEIGHT_LIMIT_MM),
        lenses["outer"], lenses["inner"], quality, view)


def jpeg_bytes(image_uint8: np.ndarray) -> bytes:
    """An 8-bit RGB image as JPEG bytes (OpenCV's encoder, :data:`JPEG_QUALITY`)."""
    ok, encoded = cv2.imencode(".jpg", np.ascontiguousarray(image_uint8[..., ::-1]),
                               [cv2.IMWRITE_JPEG_QUALITY, JPEG_QUALITY])
    if not ok:
        raise ValueError("could not encode the frame as JPEG")
    return encoded.tobytes()


def floor_position(scene: Scene, eye_mm) -> dict:
    """Sideways offset, distance from the front panel and height [mm] of a room point."""
    device = scene.placement.to_device(np.asarray(eye_mm, float))
    return {"lateral_mm": float(device[0]), "distance_mm":
            float(scene.housing.panel_z_mm - device[2]), "height_mm": float(eye_mm[1])}


def plan_geometry(scene: Scene) -> dict:
    """What the floor plan draws, in the device frame [mm]: x sideways, z along the axis."""
    housing = scene.housing
    lenses = []
    for placed in scene.system.lenses:
        front, back = glass_extent(placed)
        lenses.append({"label": placed.label, "front_z_mm": front, "back_z_mm": back,
                       "radius_mm": placed.lens.diameter_mm / 2})
    layers = [{"name": layer.name, "role": layer.role, "z_mm": layer.z_mm,
               "left_mm": layer.center_x_mm - layer.width_mm / 2,
               "right_mm": layer.center_x_mm + layer.width_mm / 2} for layer in scene.layers]
    return {"panel_z_mm": housing.panel_z_mm, "hole_radius_mm": housing.hole_radius_mm,
            "panel_half_width_mm": housing.panel_half_width_mm,
            "tube_radius_mm": housing.tube_radius_mm, "tube_end_mm": housing.tube_end_mm,
            "length_mm": housing.tube_end_mm - housing.panel_z_mm,
            "lenses": lenses, "layers": layers}


def sight_line_zone(folder, scene: Scene) -> dict:
    """The floor points of a ``cloakview sightlines`` output folder, for the floor plan.

    Returns the heights [mm] by name, each floor point's sideways offset, distance, height
    and class, the grid steps, and the scene file the map was computed for (``matches``
    says whether that is this scene's file).

    Raises
    ------
    InputError
        If the folder holds no readable ``sightlines.json``.
    """
    folder = Path(folder)
    path = require_file(folder / "sightlines.json", "sight_lines", "sight-line results "
                        "(written by cloakview sightlines)")
    try:
        result = json.loads(read_text(path, "sight_lines", "sight-line results"))
        heights = {str(k): float(v) for k, v in result["heights_mm"].items()}
        points = [{"x": float(p["x"]), "d": float(p["d"]), "h": float(p["h"]),
                   "class": str(p["class"])} for p in result["points"]
                  if float(p["h"]) in heights.values()]
    except (ValueError, KeyError, TypeError, AttributeError):
        raise InputError("sight_lines", str(path), "is not a sight-line result of "
                         "cloakview sightlines") from None
    source = None
    run = folder / "run.json"
    if run.is_file():
        try:
            source = json.loads(run.read_text(encoding="utf-8"))["options"]["scene"]
        except (ValueError, KeyError, TypeError):
            source = None
    matches = source is not None and Path(source).resolve() == Path(scene.path).resolve()

    def step(values):
        values = sorted(set(values))
        return min(np.diff(values)) if len(values) > 1 else 0.0

    return {"heights_mm": heights, "points": points, "computed_for": source,
            "matches": matches, "step_x_mm": float(step(p["x"] for p in points)),
            "step_d_mm": float(step(p["d"] for p in points))}


class LiveSession:
    """One scene held in memory for a live preview.

    Parameters
    ----------
    scene : path or Scene
        The scene file.
    inventory : path, optional
        A lens inventory (CSV) whose lenses the page may swap in.
    sight_lines : path, optional
        A ``cloakview sightlines`` output folder whose "works" zone the plan shows.
    viewer : str, optional
        The scene viewer whose field of view, picture size and look-at point every frame
        uses (default the first).
    full_size_px, preview_size_px : (int, int), optional
        Picture sizes at rest (default the viewer's) and while dragging (default 400 x 225,
        or the viewer's aspect at 400 pixels wide).
    out : path
        Folder for saved views.
    """

    def __init__(self, scene, *, inventory=None, sight_lines=None, viewer: str | None = None,
                 full_size_px=None, preview_size_px=None, out="cloakview-live",
                 ideal: bool | None = None, allow_outside_paths: bool = False):
        self.scene = scene_from(scene, allow_outside_paths=allow_outside_paths, ideal=ideal)
        self.base = self.scene.viewer(viewer) if viewer else self.scene.viewers[0]
        width, height = full_size_px or (self.base.width_px, self.base.height_px)
        self.full_size_px = (width, height)
        self.preview_size_px = preview_size_px or (400, max(16, round(400 * height / width)))
        self.items: dict[str, Item] = {}
        inputs = list(self.scene.sources)
        if inventory is not None:
            self.items = {item.id: item for item in load_inventory(inventory)}
            inputs.append(Path(inventory))
        self.zone = sight_line_zone(sight_lines, self.scene) if sight_lines else None
        self.out = outfolder.check(out, inputs)
        self.inputs = tuple(inputs)
        self.pyramids = TexturePyramids(self.scene)
        self._layouts: dict[tuple[str, str], Scene] = {}
        self._frames: OrderedDict[int, LiveFrame] = OrderedDict()
        self._numbers = itertools.count(1)
        self._lock = threading.Lock()
        self._save_lock = threading.Lock()

    # -- the device and the page's first answer -------------------------------------------
    def layout(self, outer: str, inner: str) -> Scene:
        """The scene with its device built from two inventory lenses (or its own)."""
        key = (outer, inner)
        with self._lock:
            if key not in self._layouts:
                if outer == SCENE_LENSES:
                    self._layouts[key] = self.scene
                else:
                    try:
                        self._layouts[key] = scene_with_lenses(
                            self.scene, self.items[outer].lens, self.items[inner].lens)
                    except InputError as error:
                        raise InputError("outer, inner", f"{outer}, {inner}", "these lenses "
                                         f"make no device for this scene: {error}") from None
            return self._layouts[key]

    def describe(self) -> dict:
        """Everything the page needs before its first frame (JSON-ready)."""
        scene = self.scene
        viewers = [{"name": v.name, **floor_position(scene, v.eye_mm)} for v in scene.viewers]
        items = [{"id": item.id, "focal_length_mm": round(item.focal_length_mm, 1),
                  "diameter_mm": item.lens.diameter_mm, "quantity": item.quantity}
                 for item in self.items.values()]
        return {"title": scene.title, "scene_file": str(scene.path),
                "base_viewer": {"name": self.base.name, "fov_deg": self.base.fov_deg,
                                **floor_position(scene, self.base.eye_mm)},
                "full_size_px": list(self.full_size_px),
                "preview_size_px": list(self.preview_size_px),
                "wavelengths_nm": list(scene.settings.wavelengths_nm),
                "supersample": scene.settings.supersample,
                "axis_height_mm": scene.placement.axis_height_mm,
                "viewers": viewers, "standard_heights_mm": EYE_HEIGHTS_MM,
                "limits_mm": {"lateral": LATERAL_LIMIT_MM, "distance": DISTANCE_LIMIT_MM,
                              "height": HEIGHT_LIMIT_MM},
                "plan": plan_geometry(scene), "inventory": items,
                "sight_lines": self.zone, "views": list(VIEW_NAMES),
                "classes": {c: {"colour": CLASS_COLOURS[c], "meaning": CLASS_MEANING[c]}
                            for c in CLASSES},
                "works_definition": WORKS_DEFINITION, "cautions": list(CAUTIONS),
                "out": str(self.out)}

    def plan(self, outer: str, inner: str) -> dict:
        """The floor plan's geometry with the device re-laid from two lenses."""
        return plan_geometry(self.layout(outer, inner))

    # -- frames ---------------------------------------------------------------------------
    def viewer_for(self, request: FrameRequest) -> tuple[Scene, Viewer, int]:
        """The scene, viewer and supersampling a request is rendered with."""
        scene = self.layout(request.outer, request.inner)
        eye = eye_point(scene, request.lateral_mm, request.distance_mm, request.height_mm)
        viewer = dataclasses.replace(custom_viewer(scene, eye, self.base.look_at_mm, self.base,
                                                   key="distance_mm"), name="visitor")
        if request.quality == "preview":
            width, height = self.preview_size_px
            return (scene.at_design_wavelength(),
                    dataclasses.replace(viewer, width_px=width, height_px=height), 1)
        width, height = self.full_size_px
        return (scene, dataclasses.replace(viewer, width_px=width, height_px=height),
                scene.settings.supersample)

    def render(self, request: FrameRequest, abandon=None) -> LiveFrame:
        """Render a request; ``abandon()`` true between traced views stops it (Superseded).

        A preview is the requested view's picture alone, traced with one compiled thread
        fewer than the machine has, so the browser keeps a core to draw with; a full frame
        is every view with its metrics, on every thread.
        """
        started = time.perf_counter()
        scene, viewer, supersample = self.viewer_for(request)
        if request.quality == "preview":
            numba.set_num_threads(max(1, numba.config.NUMBA_NUM_THREADS - 1))
            images = {request.view: render_picture(scene, viewer, self.pyramids,
                                                   request.view, supersample)}
            metrics = None
        else:
            def between_views(_label):
                if abandon is not None and abandon():
                    raise Superseded()

            numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
            result = render_viewer(scene, viewer, self.pyramids, VIEW_NAMES, supersample,
                                   progress=between_views)
            images, metrics = result.images, result.metrics
        frame = LiveFrame(next(self._numbers), request, viewer, images, metrics,
                          time.perf_counter() - started)
        with self._lock:
            self._frames[frame.number] = frame
            while len(self._frames) > KEPT_RENDERS:
                self._frames.popitem(last=False)
        return frame

    def jpeg(self, number: int, view: str) -> bytes | None:
        """The JPEG of one view of a kept render (None if it is gone or lacks that view)."""
        with self._lock:
            frame = self._frames.get(number)
        if frame is None or view not in frame.images:
            return None
        if view not in frame.jpegs:
            frame.jpegs[view] = jpeg_bytes(frame.images[view])
        return frame.jpegs[view]

    def answer(self, frame: LiveFrame) -> dict:
        """A finished frame as the page's JSON: number, views, eye, numbers, picture.

        The requested view's JPEG comes inline (a data URL), so the page needs no second
        request before it shows.
        """
        view = frame.request.view
        picture = base64.b64encode(self.jpeg(frame.number, view)).decode("ascii")
        scene = self.layout(frame.request.outer, frame.request.inner)
        return {"frame": frame.number, "quality": frame.request.quality,
                "views": list(frame.images), "request": dataclasses.asdict(frame.request),
                "picture": f"data:image/jpeg;base64,{picture}",
                "eye_mm": list(frame.viewer.eye_mm),
                "size_px": [frame.viewer.width_px, frame.viewer.height_px],
                "seconds": round(frame.seconds, 4),
                "wavelengths_nm": ([nearest_to_d_line(scene.settings.wavelengths_nm)]
                                   if frame.request.quality == "preview"
                                   else list(scene.settings.wavelengths_nm)),
                "metrics": None if frame.metrics is None else {
                    key: value for key, value in frame.metrics.items()
                    if key not in ("eye_mm", "wavelengths_nm")}}

    def warm_up(self) -> None:
        """Render the base viewer once at each quality, so the first frame is not slow."""
        place = floor_position(self.scene, self.base.eye_mm)
        for quality in QUALITIES:
            self.render(FrameRequest(**place, quality=quality))

    # -- saving ---------------------------------------------------------------------------
    def _free_name(self, wanted: str | None) -> str:
        if wanted:
            if not _SAVED_NAME.fullmatch(wanted) or wanted in (VIEWERS_FILE,):
                raise InputError("name", wanted, "use letters, digits, '.', '_' or '-', at "
                                 "most 48, starting with a letter or digit")
            if (self.out / wanted).exists():
                raise InputError("name", wanted, f"a saved view of that name exists in "
                                 f"{self.out}; choose another")
            return wanted
        for n in itertools.count(1):
            name = f"view-{n:03d}"
            if not (self.out / name).exists():
                return name
        raise AssertionError("unreachable")

    def save(self, request: FrameRequest, name: str | None = None) -> dict:
        """Render ``request`` at full quality and write it into the output folder.

        Writes ``<name>/`` with every view's PNG and ``metrics.json`` (the numbers, the eye
        point and the lenses), and appends a ``[[viewer]]`` entry for the scene file to
        ``viewers.toml``. Returns the written paths and the entry.
        """
        request = dataclasses.replace(request, quality="full")
        with self._save_lock:
            name = self._free_name(name)
            scene, viewer, supersample = self.viewer_for(request)
            numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
            result = render_viewer(scene, dataclasses.replace(viewer, name=name),
                                   self.pyramids, VIEW_NAMES, supersample)
            lenses = ({"outer": request.outer, "inner": request.inner}
                      if request.outer != SCENE_LENSES else "the scene file's own")
            entry = self.viewer_entry(result.viewer, lenses)
            result.metrics = {**result.metrics, "viewer": name,
                              "scene_file": str(self.scene.path),
                              "floor_position_mm": {"lateral": request.lateral_mm,
                                                    "distance": request.distance_mm,
                                                    "height": request.height_mm},
                              "lenses": lenses}
            with outfolder.output_folder(self.out, self.inputs, keep_previous=True) as folder:
                written = write_viewer(folder, result)
                toml = folder / VIEWERS_FILE
                before = toml.read_text(encoding="utf-8") if toml.is_file() else (
                    f"# Views saved by cloakview live for {self.scene.path.name}; paste an "
                    "entry into the scene file's viewers.\n")
                write_text(toml, before + "\n" + entry)
                written.append(toml)
        return {"name": name, "folder": str(folder / name),
                "written": [str(p) for p in written], "viewer_entry": entry,
                "verdict": result.metrics["verdict"]}

    def viewer_entry(self, viewer: Viewer, lenses) -> str:
        """A ``[[viewer]]`` table for the scene file (TOML) of a saved view."""
        def point(values):
            return "[" + ", ".join(f"{v:.1f}" for v in values) + "]"

        note = ("" if isinstance(lenses, str) else
                f"# seen with outer lens {lenses['outer']} and inner lens {lenses['inner']} "
                "from the inventory, not the scene's [device]\n")
        return (f"{note}[[viewer]]\nname = \"{viewer.name}\"\neye_mm = {point(viewer.eye_mm)}\n"
                f"look_at_mm = {point(viewer.look_at_mm)}\nfov_deg = {viewer.fov_deg:g}\n"
                f"size = [{viewer.width_px}, {viewer.height_px}]\n")


class FrameDesk:
    """Runs frame requests on one thread, newest first (see the module docstring).

    ``render(request, abandon)`` does the work; :meth:`submit` returns a future that holds
    its :class:`LiveFrame`, or raises :class:`Superseded` if a newer request replaced it.
    """

    def __init__(self, render):
        self._render = render
        self._ready = threading.Condition()
        self._waiting: tuple[FrameRequest, Future] | None = None
        self._closed = False
        self._thread = threading.Thread(target=self._run, name="cloakview-frames",
                                        daemon=True)
        self._thread.start()

    def submit(self, request: FrameRequest) -> Future:
        """Queue a request in place of any that waits; return its future."""
        future: Future = Future()
        with self._ready:
            if self._waiting is not None:
                self._waiting[1].set_exception(Superseded())
            self._waiting = (request, future)
            self._ready.notify()
        return future

    def _newer_waits(self, quality: str) -> bool:
        # Only a full-quality render is abandoned: previews are short, and abandoning them
        # too could starve the page of frames while the pointer moves.
        return quality == "full" and self._waiting is not None

    def _run(self) -> None:
        while True:
            with self._ready:
                while self._waiting is None and not self._closed:
                    self._ready.wait()
                if self._closed:
                    return
                (request, future), self._waiting = self._waiting, None
            if not future.set_running_or_notify_cancel():
                continue
            try:
                future.set_result(self._render(
                    request, lambda q=request.quality: self._newer_waits(q)))
            except BaseException as error:  # handed to the waiting request, not lost
                future.set_exception(error)

    def close(self) -> None:
        """Stop the thread once the current render ends; a waiting request is superseded."""
        with self._ready:
            self._closed = True
            if self._waiting is not None:
                self._waiting[1].set_exception(Superseded())
                self._waiting = None
            self._ready.notify()
        self._thread.join(timeout=60)
