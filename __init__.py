"""cloakview: preview a four-lens "vanishing" exhibit with real lenses, on a laptop CPU.

Four converging lenses on one axis (outer pair f_outer, inner pair f_inner) can be spaced
so that together they act as empty space: the background looks undisturbed while an
object in a ring round the axis, between the outer and inner lenses, drops out of sight.
cloakview lays out such a device from lenses you can buy, renders what a visitor sees
through the real (thick, dispersive, finite) lenses, measures how well the effect works,
and writes pictures, videos, maps and a proposal report.

Every command of the ``cloakview`` program is a function here, with keyword-only options
and the same defaults. Lengths are millimetres, angles degrees, sizes pixels.

Lay out and look
    design          four lenses that act as empty space (returns a ``CloakDesign``)
    load_scene      read and check a scene file (TOML) into a ``Scene``
    render          what each viewer sees, as 8-bit images, with metrics
    eyes            left and right eye, anaglyph, and whether both see through
Visitors in motion
    walk            walk-by video (MP4, GIF, frames, per-frame numbers)
    sightlines      floor-plan and elevation maps of where the effect works
    zone            the cloaked zone and the largest object that fits
Planning a build
    choose          rank designs made from a lens inventory under constraints
    tolerance       Monte Carlo builds: yield and the tolerances that matter
    report          the proposal folder (HTML page, drawing, pictures, JSON)
Samples
    sample_scenes   the bundled exhibits: ``sample_scenes.scene_path("gallery")``
    copy_samples    copy them and the sample inventory into a folder

Bad input raises :class:`InputError` (a ``ValueError``) whose message names the key,
the value and the rule.

Examples
--------
>>> import cloakview
>>> device = cloakview.design(200, 75, ideal=True)
>>> round(device.length_mm)
880
"""

from cloakview import sample_scenes
from cloakview.optics.errors import InputError
from cloakview.render.api.frames import copy_samples, design, eyes, render
from cloakview.render.api.motion import sightlines, walk, zone
from cloakview.render.api.planning import choose, tolerance
from cloakview.render.api.report import report
from cloakview.render.scene.loader import load_scene

__all__ = [
    "InputError",
    "choose",
    "copy_samples",
    "design",
    "eyes",
    "load_scene",
    "render",
    "report",
    "sample_scenes",
    "sightlines",
    "tolerance",
    "walk",
    "zone",
]
