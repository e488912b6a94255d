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

import importlib
import sys
import types

#: Where each public name lives. They are imported on first use (PEP 562), so a process
#: that needs one part (a sweep worker: the tracer and the frame) does not pay for the
#: rest (the charts, matplotlib, the page).
_HOMES = {
    "InputError": "cloakview.optics.errors",
    "choose": "cloakview.render.api.planning",
    "copy_samples": "cloakview.render.api.frames",
    "design": "cloakview.render.api.frames",
    "eyes": "cloakview.render.api.frames",
    "load_scene": "cloakview.render.scene.loader",
    "render": "cloakview.render.api.frames",
    "report": "cloakview.render.api.report",
    "sample_scenes": "cloakview.sample_scenes",
    "sightlines": "cloakview.render.api.motion",
    "tolerance": "cloakview.render.api.planning",
    "walk": "cloakview.render.api.motion",
    "zone": "cloakview.render.api.motion",
}
__all__ = sorted(_HOMES)


def _load(name: str):
    module = importlib.import_module(_HOMES[name])
    return module if module.__name__ == f"cloakview.{name}" else getattr(module, name)


def __getattr__(name: str):
    if name not in _HOMES:
        raise AttributeError(f"module 'cloakview' has no attribute {name!r}")
    value = globals()[name] = _load(name)
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *__all__])


class _Package(types.ModuleType):
    """``cloakview.render`` is the function; the sub-package of that name is not shadowed.

    Importing ``cloakview.render.*`` makes Python set the package's attribute ``render``
    to the sub-package; this keeps the name for the public function instead.
    """

    @property
    def render(self):
        return _load("render")

    @render.setter
    def render(self, value):
        pass  # the import system recording the sub-package; ``sys.modules`` still holds it


sys.modules[__name__].__class__ = _Package
