"""The backward ray mapper: which layer each eye ray sees, where on its picture, with what weight.

The mapper asks the tracer (``optics.trace``) to carry the eye rays through the lens
system and the housing; every layer is a probe plane. It then turns crossing
points into texture coordinates and hands the compositor a :class:`RayMap`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from cloakview.optics.surfaces import Probe
from cloakview.optics.trace import TraceResult, trace
from cloakview.render.scene.model import Layer, Scene


@dataclass(frozen=True)
class Setup:
    """Which parts of the exhibit are present in a view."""

    lenses: bool
    housing: bool
    hidden: bool


#: The three traced views; ``difference`` and ``vanish`` are built from them.
SETUPS = {
    "cloaked": Setup(lenses=True, housing=True, hidden=True),
    "naked": Setup(lenses=False, housing=True, hidden=True),
    "reference": Setup(lenses=False, housing=False, hidden=False),
}


@dataclass
class LayerHit:
    """Texture coordinates [pixels] of the rays that cross one layer inside its picture."""

    layer: Layer
    u: np.ndarray
    v: np.ndarray
    throughput: np.ndarray
    x_mm: np.ndarray
    y_mm: np.ndarray


@dataclass
class RayMap:
    """Everything the compositor and the metrics need from one trace."""

    hits: list[LayerHit]
    result: TraceResult

    @property
    def through_device(self) -> np.ndarray:
        """Rays that entered the viewing hole and passed every element."""
        return self.result.entered & self.result.passed


def active_layers(scene: Scene, setup: Setup) -> list[Layer]:
    """Layers present in a view, in z order."""
    return [layer for layer in scene.layers if setup.hidden or layer.role != "hidden"]


def map_rays(scene: Scene, rays, setup: Setup) -> RayMap:
    """Trace device-frame ``rays`` through the view's elements and locate them on each layer."""
    layers = active_layers(scene, setup)
    elements = [Probe(layer.z_mm, layer.name) for layer in layers]
    if setup.lenses:
        elements = list(scene.system.surfaces) + elements
    result = trace(rays, elements, scene.housing if setup.housing else None)
    hits = []
    for layer in layers:
        crossing = result.crossings[layer.name]
        h, w = layer.texture.shape[:2]
        left = layer.center_x_mm - layer.width_mm / 2.0
        top = layer.center_y_mm + layer.height_mm / 2.0
        u = (crossing.x - left) / layer.width_mm * w - 0.5
        v = (top - crossing.y) / layer.height_mm * h - 0.5
        hits.append(LayerHit(layer, u.astype(np.float32), v.astype(np.float32),
                             crossing.throughput, crossing.x, crossing.y))
    return RayMap(hits, result)
