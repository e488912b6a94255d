"""Tolerance analysis: how precisely the lenses must be placed, by Monte Carlo over builds.

Each build moves every lens along the axis, decenters and tilts it, and changes its
focal length, each error drawn uniformly within plus or minus its tolerance (our own
choice of distribution: a fabricator's "within +-x"), from a seeded generator so a run
can be repeated. Each build is rendered from the scene's design viewer and measured;
it *passes* when the effect works there (at least 90 % of the object hidden, median
background shift at most 2 arcminutes). Builds are jobs on the sweep map.

Focal-length errors scale both radii of a thick lens (its thickness kept), which scales
its focal length by very nearly the same factor (thin-lens lensmaker's equation,
Hecht, Optics, ch. 6); an ideal lens's focal length is scaled directly.
"""

from __future__ import annotations

import dataclasses
import json
from dataclasses import dataclass

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import ThickLens, ThinLens
from cloakview.optics.system import LensSystem
from cloakview.render.frame.views import render_viewer
from cloakview.render.sweeps.jobs import run_jobs

#: Default render size of one tolerance build [pixels].
BUILD_SIZE_PX = (128, 72)
#: Default builds per tolerance setting: the fewest for which the 95 % interval of a yield
#: near 50 % (the widest case) is at most +-10 %: 1.96 sqrt(0.25 / 97) = 0.0995 (normal
#: approximation of the binomial; Wilson 1927 gives a similar width there).
DEFAULT_BUILDS = 97

KEYS = ("axial_mm", "decenter_mm", "tilt_deg", "focal_pct")
LABELS = {"axial_mm": "axial position [mm]", "decenter_mm": "decenter [mm]",
          "tilt_deg": "tilt [deg]", "focal_pct": "focal length [%]"}
SCAN = (0.25, 0.5, 1.0, 2.0, 4.0)
TARGET_YIELD = 0.95


@dataclass(frozen=True)
class Tolerances:
    """Plus-or-minus limits of each lens's placement and focal-length error."""

    axial_mm: float = 0.0
    decenter_mm: float = 0.0
    tilt_deg: float = 0.0
    focal_pct: float = 0.0


def _scaled(lens, factor: float):
    if isinstance(lens, ThinLens):
        return dataclasses.replace(lens, focal_length_mm=lens.focal_length_mm * factor)
    assert isinstance(lens, ThickLens)
    return dataclasses.replace(lens, r1_mm=lens.r1_mm * factor, r2_mm=lens.r2_mm * factor)


def perturbation(system: LensSystem, tol: Tolerances,
                 rng: np.random.Generator) -> tuple[LensSystem, dict]:
    """The system as one build might come out, and each lens's sampled errors.

    The errors are keyed ``L<n>_axial_mm``, ``L<n>_decenter_x_mm``, ``L<n>_decenter_y_mm``,
    ``L<n>_tilt_x_deg``, ``L<n>_tilt_y_deg`` and ``L<n>_focal_pct``.
    """
    lenses, errors = [], {}
    for number, placed in enumerate(system.lenses, start=1):
        u = rng.uniform(-1.0, 1.0, 6)
        angle = np.pi * u[1]
        radius = tol.decenter_mm * abs(u[2])
        focal_pct = tol.focal_pct * float(u[5])
        decenter = ((float(radius * np.cos(angle)), float(radius * np.sin(angle)))
                    if radius else (0.0, 0.0))
        tilt = ((float(tol.tilt_deg * u[3]), float(tol.tilt_deg * u[4]))
                if tol.tilt_deg else (0.0, 0.0))
        axial = tol.axial_mm * float(u[0])
        errors.update({f"L{number}_axial_mm": axial, f"L{number}_decenter_x_mm": decenter[0],
                       f"L{number}_decenter_y_mm": decenter[1],
                       f"L{number}_tilt_x_deg": tilt[0], f"L{number}_tilt_y_deg": tilt[1],
                       f"L{number}_focal_pct": focal_pct})
        lenses.append(dataclasses.replace(
            placed, lens=_scaled(placed.lens, 1.0 + focal_pct / 100.0),
            z_mm=placed.z_mm + axial, decenter_mm=decenter, tilt_deg=tilt))
    return dataclasses.replace(system, lenses=tuple(lenses)), errors


def perturbed(system: LensSystem, tol: Tolerances, rng: np.random.Generator) -> LensSystem:
    """The system as one build might come out (see :func:`perturbation`)."""
    return perturbation(system, tol, rng)[0]


def wilson_interval(passes: int, builds: int, z: float = 1.959964) -> tuple[float, float]:
    """95 % score interval of a yield of ``passes`` out of ``builds`` (Wilson [1]).

    References
    ----------
    .. [1] E. B. Wilson, "Probable inference, the law of succession, and statistical
       inference", J. Am. Stat. Assoc. 22(158), 209-212 (1927).
    """
    p = passes / builds
    scale = 1.0 + z * z / builds
    centre = (p + z * z / (2 * builds)) / scale
    half = z / scale * np.sqrt(p * (1 - p) / builds + z * z / (4 * builds * builds))
    return max(0.0, float(centre - half)), min(1.0, float(centre + half))


def build_job(state, job: dict) -> dict:
    """Sweep job: render one build from the design viewer."""
    scene, pyramids = state
    tol = Tolerances(**job["tol"])
    rng = np.random.default_rng(job["seed"])
    try:
        system, errors = perturbation(scene.system, tol, rng)
    except InputError as error:  # e.g. a focal-length error no lens of that thickness has
        return {"seed": job["seed"], **job["tol"], "hidden_fraction": None,
                "replaced_fraction": None, "shift_median_arcmin": None,
                "verdict": f"no such lens: {error.rule}", "passes": False}
    built = dataclasses.replace(scene, system=system)
    viewer = dataclasses.replace(scene.viewers[0], width_px=job["size"][0],
                                 height_px=job["size"][1])
    m = render_viewer(built, viewer, pyramids, views=(), supersample=1).metrics
    shift = m["background_shift_arcmin"]
    return {"seed": job["seed"], **job["tol"], "hidden_fraction": m["hidden_fraction"],
            "replaced_fraction": m["replaced_fraction"],
            "shift_median_arcmin": shift and shift["median"], "verdict": m["verdict"],
            "passes": m["verdict_class"] == "works", **errors}


def jobs_for(tol: Tolerances, builds: int, seed: int, size) -> list[dict]:
    """Seeded jobs for ``builds`` builds at ``tol``."""
    return [{"tol": dataclasses.asdict(tol), "seed": seed * 100_003 + i, "size": list(size)}
            for i in range(builds)]


def plan(tol: Tolerances, builds: int, seed: int, size) -> dict[str, list[dict]]:
    """All job groups of an analysis.

    The build as specified, and each tolerance alone scaled by :data:`SCAN`.
    """
    groups = {"all": jobs_for(tol, builds, seed, size)}
    for key in KEYS:
        value = getattr(tol, key)
        if value <= 0:
            continue
        for factor in SCAN:
            alone = Tolerances(**{key: value * factor})
            groups[f"{key}x{factor:g}"] = jobs_for(alone, builds, seed, size)
    return groups


def summarise(tol: Tolerances, groups: dict[str, list[dict]]) -> dict:
    """Yield, sensitivity ranking and the tolerances that keep 95 % yield."""
    def share(rows):
        return sum(r["passes"] for r in rows) / len(rows)

    sensitivity, keep = [], {}
    for key in KEYS:
        value = getattr(tol, key)
        if value <= 0:
            continue
        alone = share(groups[f"{key}x1"])
        sensitivity.append({"tolerance": key, "label": LABELS[key], "value": value,
                            "yield_alone": alone})
        ok = [value * f for f in SCAN if share(groups[f"{key}x{f:g}"]) >= TARGET_YIELD]
        keep[key] = {"largest_tested_with_95_yield": max(ok) if ok else None,
                     "smallest_tested": value * SCAN[0], "scan": {
                         f"{value * f:g}": share(groups[f"{key}x{f:g}"]) for f in SCAN}}
    sensitivity.sort(key=lambda s: s["yield_alone"])
    builds = groups["all"]
    return {"tolerances": dataclasses.asdict(tol), "builds": len(builds),
            "yield": share(builds),
            "yield_interval_95": wilson_interval(sum(r["passes"] for r in builds), len(builds)),
            "sensitivity": sensitivity, "for_95_yield": keep}


def analyse(tol: Tolerances, builds: int, seed: int, size, setup, setup_args=(), *,
            context: str, workers=None, progress=None,
            fresh: bool = False, files=(),
            scheduler: str | None = None) -> tuple[dict, list, int]:
    """Run every build group of :func:`plan` on the job map.

    ``setup(*setup_args)`` gives the worker state (scene, texture pyramids); ``context``
    fingerprints the scene and options behind it (see
    :func:`cloakview.render.sweeps.jobs.fingerprint`). Builds that two groups share run
    once. ``files`` and ``scheduler`` are as for
    :func:`cloakview.render.sweeps.jobs.run_jobs`. Returns (summary, the builds at ``tol``,
    how many results were reused).
    """
    groups = plan(tol, builds, seed, size)
    unique = {}
    for jobs in groups.values():
        for job in jobs:
            unique.setdefault(json.dumps(job, sort_keys=True), job)
    jobs = list(unique.values())
    if progress:
        progress.total = len(jobs)
    results, reused = run_jobs(build_job, jobs, "tolerance", setup, setup_args,
                               context=context, workers=workers, progress=progress,
                               fresh=fresh, files=files,
                               scheduler=scheduler)
    by_job = {json.dumps(j, sort_keys=True): r for j, r in zip(jobs, results, strict=True)}
    rows = {name: [by_job[json.dumps(j, sort_keys=True)] for j in group]
            for name, group in groups.items()}
    return summarise(tol, rows), rows["all"], reused
