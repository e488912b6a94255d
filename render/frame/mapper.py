"""The backward ray mapper: which layer each eye ray sees, where on its picture, with what weight.

The mapper asks the tracer (``optics.trace``) to carry the eye rays through the lens
system and the housing; every layer is a probe plane. It hands the compositor a
:class:`RayMap`: each layer's crossing points and the frame that turns them into
texture coordinates.
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
    """Where the rays cross one layer's plane [mm] and the power they carry there.

    Rays that never reached the plane have NaN coordinates.
    """

    layer: Layer
    x_mm: np.ndarray
    y_mm: np.ndarray
    throughput: np.ndarray

    @property
    def frame(self) -> np.ndarray:
        """The layer's picture frame as :meth:`texels` and the compiled compositor read it.

        Left and top edge [mm], width and height [mm], width and height [texels] (float64).
        """
        layer = self.layer
        h, w = layer.texture.shape[:2]
        return np.array([layer.center_x_mm - layer.width_mm / 2.0,
                         layer.center_y_mm + layer.height_mm / 2.0,
                         layer.width_mm, layer.height_mm, w, h], float)

    def texels(self) -> tuple[np.ndarray, np.ndarray]:
        """Texture coordinates u, v [texels, float32; 0 is the first texel's centre]."""
        left, top, width_mm, height_mm, w, h = self.frame
        u = (self.x_mm - left) / width_mm * w - 0.5
        v = (top - self.y_mm) / height_mm * h - 0.5
        return u.astype(np.float32), v.astype(np.float32)


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
    hits = [LayerHit(layer, result.crossings[layer.name].x, result.crossings[layer.name].y,
                     result.crossings[layer.name].throughput) for layer in layers]
    return RayMap(hits, result)
