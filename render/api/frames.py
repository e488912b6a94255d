"""Public functions for single views: lay out a device, load a scene, render, both eyes.

Every function takes keyword-only options with the command line's defaults, works on
numbers (millimetres, degrees, pixels), returns data, and writes files only when it is
given an output folder.
"""

from __future__ import annotations

import dataclasses
import shutil
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from cloakview import sample_scenes as samples
from cloakview.optics.cloak import CloakDesign, LensChoice, design_cloak
from cloakview.optics.errors import InputError, require_finite_positive
from cloakview.optics.materials import material_by_name
from cloakview.render import outfolder
from cloakview.render.files import atomic_write, write_json, write_pngs
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.outputs import run_record, write_summary, write_viewer
from cloakview.render.frame.overlays import caption, inset_view, view_caption
from cloakview.render.frame.views import VIEW_NAMES, ViewerRender, render_viewer
from cloakview.render.progress import Progress
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.model import Scene, Viewer
from cloakview.render.sweeps import eyes as both_eyes

#: Interpupillary distance used when none is given [mm] (adult mean, Dodgson 2004).
DEFAULT_IPD_MM = both_eyes.DEFAULT_IPD_MM


def design(f_outer_mm: float, f_inner_mm: float, *, diameter_mm: float = 50.8,
           outer_diameter_mm: float | None = None, inner_diameter_mm: float | None = None,
           material: str = "soda-lime", shape: str = "biconvex", min_edge_mm: float = 2.0,
           ideal: bool = False, coated: bool = False) -> CloakDesign:
    """Lay out four lenses so that the device acts as empty space over its length.

    Parameters
    ----------
    f_outer_mm, f_inner_mm : float
        Focal lengths of the outer and inner lens pairs [mm]; the outer is the longer.
    diameter_mm : float
        Clear diameter of every lens [mm]; ``outer_diameter_mm`` and
        ``inner_diameter_mm`` set the pairs apart.
    material : str
        A named material (``soda-lime``, ``acrylic``, ``fused-silica``,
        ``polycarbonate``) or ``ND/VD`` such as ``1.52/60``.
    shape : str
        ``biconvex``, ``plano-convex``, ``convex-plano``, ``meniscus`` or a shape factor.
    min_edge_mm : float
        Thinnest glass at the lens rim [mm].
    ideal : bool
        Ideal thin lenses instead of real ones.
    coated : bool
        Anti-reflection coating on every surface.

    Returns
    -------
    CloakDesign
        The layout; :func:`cloakview.render.proposal.design_summary.summarise` turns it
        into numbers for people.

    Raises
    ------
    InputError
        For impossible focal lengths, diameters or materials.
    """
    diameter = require_finite_positive("diameter_mm", diameter_mm)
    choice = LensChoice(
        ideal=ideal,
        material=material_by_name(material, "material"),
        shape=shape,
        outer_diameter_mm=require_finite_positive("outer_diameter_mm",
                                                  outer_diameter_mm or diameter),
        inner_diameter_mm=require_finite_positive("inner_diameter_mm",
                                                  inner_diameter_mm or diameter),
        min_edge_mm=min_edge_mm,
    )
    try:
        return design_cloak(f_outer_mm, f_inner_mm, choice, coated=coated)
    except InputError as error:
        given = {"outer_diameter": outer_diameter_mm, "inner_diameter": inner_diameter_mm}
        if error.key in given and given[error.key] is None:
            raise InputError("diameter_mm", error.value, error.rule) from None
        raise


def scene_from(scene: Scene | str | Path, *, allow_outside_paths: bool = False,
               ideal: bool | None = None) -> Scene:
    """``scene`` itself if already loaded, else the scene file at that path, loaded."""
    if isinstance(scene, Scene):
        if ideal is not None and ideal != scene.settings.ideal:
            return load_scene(scene.path, allow_outside_paths=allow_outside_paths, ideal=ideal)
        return scene
    return load_scene(scene, allow_outside_paths=allow_outside_paths, ideal=ideal)


def custom_viewer(scene: Scene, eye_mm, look_at_mm=None, base: Viewer | None = None,
                  key: str = "eye_mm") -> Viewer:
    """A viewer at a typed eye point [mm, room frame], like ``base`` (default the first).

    Raises
    ------
    InputError
        If the eye is not in front of the front panel, or looks at itself.
    """
    base = base or scene.viewers[0]
    eye = tuple(float(v) for v in eye_mm)
    look = tuple(float(v) for v in look_at_mm) if look_at_mm is not None else base.look_at_mm
    if scene.placement.to_device(np.asarray(eye))[2] >= scene.housing.panel_z_mm:
        raise InputError(key, list(eye), "the eye must be in front of the device's front panel",
                         str(scene.path))
    if np.allclose(eye, look):
        raise InputError("look_at_mm", list(look), "must differ from the eye point",
                         str(scene.path))
    return dataclasses.replace(base, name="custom", eye_mm=eye, look_at_mm=look)


def _viewers(scene: Scene, viewer, eye_mm, look_at_mm, size_px) -> list[Viewer]:
    if look_at_mm is not None and eye_mm is None:
        raise InputError("look_at_mm", list(look_at_mm), "needs an eye point too (eye_mm)")
    if eye_mm is not None and viewer is not None:
        raise InputError("eye_mm", list(eye_mm), "give a viewer name or an eye point, not both")
    if eye_mm is not None:
        chosen = [custom_viewer(scene, eye_mm, look_at_mm)]
    elif viewer is not None:
        chosen = [scene.viewer(viewer)]
    else:
        chosen = list(scene.viewers)
    if size_px is not None:
        width, height = size_px
        chosen = [dataclasses.replace(v, width_px=width, height_px=height) for v in chosen]
    return chosen


def render(scene: Scene | str | Path, *, viewer: str | None = None, eye_mm=None,
           look_at_mm=None, size_px: tuple[int, int] | None = None,
           views=VIEW_NAMES, supersample: int | None = None, ideal: bool | None = None,
           allow_outside_paths: bool = False, out: str | Path | None = None,
           captions: bool = False, progress: bool = False) -> list[ViewerRender]:
    """Render what visitors see through the exhibit, with metrics.

    Parameters
    ----------
    scene : Scene or path
        A loaded scene or its TOML file.
    viewer : str, optional
        Render only this viewer of the scene (default: every viewer).
    eye_mm, look_at_mm : sequence of 3 float, optional
        Render from this eye point instead [mm, room frame], looking at this point
        (default the first viewer's look-at point).
    size_px : (int, int), optional
        Image width and height [pixels].
    views : sequence of str
        Which of ``cloaked``, ``reference``, ``naked``, ``difference``, ``vanish`` to return.
    supersample : int, optional
        Samples per pixel along each axis (default the scene's).
    ideal : bool, optional
        Override the scene's choice of ideal lenses.
    out : path, optional
        Folder for one sub-folder of pictures and metrics per viewer, ``metrics.json``,
        ``metrics.csv`` and ``run.json``.
    captions : bool
        Put a caption strip (viewer, eye point, verdict) under every picture and, where the
        viewing hole looks small, an enlarged inset of it with its scale.
    progress : bool
        Show a progress bar on stderr.

    Returns
    -------
    list of ViewerRender
        Per viewer: 8-bit sRGB images by view name and the metrics dictionary.
    """
    started = time.perf_counter()
    scene = scene_from(scene, allow_outside_paths=allow_outside_paths, ideal=ideal)
    unknown = [v for v in views if v not in VIEW_NAMES]
    if unknown:
        raise InputError("views", unknown[0], f"unknown view; choose from {', '.join(VIEW_NAMES)}")
    chosen = _viewers(scene, viewer, eye_mm, look_at_mm, size_px)
    if out is not None:
        outfolder.check(out, scene.sources)  # before the work, not after it
    pyramids = TexturePyramids(scene)
    bar = Progress(3 * len(chosen), "rendering", enabled=progress)
    renders = [render_viewer(scene, v, pyramids, tuple(views), supersample, bar)
               for v in chosen]
    if captions:
        for r in renders:
            r.images = {name: view_caption(inset_view(image, r), r.viewer, r.metrics)
                        for name, image in r.images.items()}
    if out is not None:
        options = {"views": list(views), "viewers": [v.name for v in chosen],
                   "ideal": scene.settings.ideal,
                   "supersample": supersample or scene.settings.supersample,
                   "wavelengths_nm": list(scene.settings.wavelengths_nm)}
        with outfolder.output_folder(out, scene.sources) as folder:
            for result in renders:
                write_viewer(folder, result)
            write_summary(folder, renders, scene.path, options, started)
    return renders


@dataclass
class BothEyes:
    """Left and right eye renders, their red-cyan anaglyph and the verdict for the pair.

    ``overlap`` is the intersection over union of the two through-windows (None when
    neither eye has one); ``statement`` is the binocular verdict in words.
    """

    left: ViewerRender
    right: ViewerRender
    anaglyph: np.ndarray
    overlap: float | None
    statement: str


def eyes(scene: Scene | str | Path, *, viewer: str | None = None,
         ipd_mm: float = DEFAULT_IPD_MM, size_px: tuple[int, int] | None = None,
         ideal: bool | None = None, allow_outside_paths: bool = False,
         out: str | Path | None = None, progress: bool = False) -> BothEyes:
    """Render the left and right eye of a viewer and say whether both see through.

    Parameters
    ----------
    viewer : str, optional
        The scene's viewer (default the first); its eye point is the midpoint.
    ipd_mm : float
        Distance between the pupils [mm], 20 to 90 (default 63, the adult mean).
    out : path, optional
        Folder for ``<viewer>/left.png``, ``right.png``, ``pair.png``,
        ``anaglyph.png``, ``metrics.json`` and ``run.json``.
    """
    started = time.perf_counter()
    scene = scene_from(scene, allow_outside_paths=allow_outside_paths, ideal=ideal)
    base = _viewers(scene, viewer or scene.viewers[0].name, None, None, size_px)[0]
    if not 20.0 <= ipd_mm <= 90.0:
        raise InputError("ipd_mm", ipd_mm, "interpupillary distance must be 20 to 90 mm")
    left, right = both_eyes.eye_pair(base, ipd_mm)
    if out is not None:
        outfolder.check(out, scene.sources)
    pyramids = TexturePyramids(scene)
    bar = Progress(6, "both eyes", enabled=progress)
    renders = [render_viewer(scene, v, pyramids, ("cloaked",), progress=bar)
               for v in (left, right)]
    images = [r.images["cloaked"] for r in renders]
    overlap = both_eyes.window_overlap(renders[0].through, renders[1].through)
    result = BothEyes(renders[0], renders[1], both_eyes.anaglyph(*images), overlap,
                      both_eyes.binocular_verdict(renders[0].metrics, renders[1].metrics,
                                                  overlap))
    if out is not None:
        with outfolder.output_folder(out, scene.sources) as top:
            folder = top / base.name
            write_pngs({
                folder / "left.png": images[0], folder / "right.png": images[1],
                folder / "pair.png": both_eyes.pair_picture(
                    images, [r.metrics["verdict"] for r in renders]),
                folder / "anaglyph.png": caption(result.anaglyph, [
                    "red: left eye (L), cyan: right eye (R)", result.statement])})
            write_json(folder / "metrics.json", {
                "viewer": base.name, "ipd_mm": ipd_mm, "left": renders[0].metrics,
                "right": renders[1].metrics, "window_overlap": overlap,
                "both_eyes": result.statement})
            run_record(top, "eyes", {"scene": str(scene.path), "viewer": base.name,
                                     "ipd_mm": ipd_mm}, started)
    return result


def copy_samples(out: str | Path) -> list[Path]:
    """Copy the bundled sample scenes, their pictures and the lens inventory into ``out``.

    Returns the files written. Each is written to a temporary file and renamed into place.
    """
    written = []
    with outfolder.output_folder(out) as folder:
        for name in samples.files():
            target = folder / name
            source = samples.path(name)
            atomic_write(target, lambda temp, src=source: shutil.copyfile(src, temp))
            written.append(target)
    return written
