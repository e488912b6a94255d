"""The same exhibit with its device rebuilt from two other lenses (e.g. from an inventory)."""

from __future__ import annotations

import dataclasses

from cloakview.optics.cloak import design_from_lenses
from cloakview.optics.errors import InputError
from cloakview.render.scene.model import Scene, glass_extent


def scene_with_lenses(scene: Scene, outer, inner) -> Scene:
    """The scene with its device rebuilt from two given lenses (e.g. from an inventory).

    Raises
    ------
    InputError
        If the scene's layers or housing no longer fit the new device.
    """
    design = design_from_lenses(outer, inner, scene.system.coated)
    system = design.system
    housing = scene.housing
    first = glass_extent(system.lenses[0])[0]
    last = glass_extent(system.lenses[-1])[1]
    gap = glass_extent(scene.system.lenses[0])[0] - housing.panel_z_mm
    extension = housing.tube_end_mm - glass_extent(scene.system.lenses[-1])[1]
    housing = dataclasses.replace(housing, panel_z_mm=first - gap, tube_end_mm=last + extension)
    if max(p.lens.diameter_mm for p in system.lenses) / 2 > housing.tube_radius_mm:
        raise InputError("--outer/--inner", f"{outer.diameter_mm:g} mm",
                         "the lenses are wider than the scene's tube", str(scene.path))
    for layer in scene.layers:
        for placed in system.lenses:
            lo, hi = glass_extent(placed)
            if lo <= layer.z_mm <= hi:
                raise InputError(f"layer '{layer.name}'", layer.z_mm, f"now lies inside "
                                 f"{placed.label}; move it in the scene file", str(scene.path))
        if layer.role == "background" and layer.z_mm <= housing.tube_end_mm:
            raise InputError(f"layer '{layer.name}'", layer.z_mm, "now stands inside the "
                             "longer device; move it back in the scene file", str(scene.path))
    return dataclasses.replace(scene, system=system, design=design, housing=housing)
