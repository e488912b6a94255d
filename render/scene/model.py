"""What a loaded exhibit is: layers, viewers, placement in the room, settings, the scene.

Room frame: x to the visitor's right, y up from the floor, z along the device axis
toward the background, millimetres. The device frame has its origin on the axis at the
viewer-side vertex of the first lens.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
from cloakview.optics.cloak import CloakDesign
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import ThinLens, sag
from cloakview.optics.materials import nearest_to_d_line
from cloakview.optics.surfaces import Housing
from cloakview.optics.system import LensSystem, PlacedLens

ROLES = ("background", "hidden", "foreground")


@dataclass(frozen=True)
class Layer:
    """A flat picture perpendicular to the axis (device frame, mm).

    Attributes
    ----------
    texture : ndarray
        Premultiplied linear RGBA, (H, W, 4) float32.
    center_x_mm, center_y_mm : float
        Centre offset from the axis [mm] (y up).
    z_mm : float
        Axial position [mm].
    width_mm, height_mm : float
        Physical size [mm].
    image_path : Path, optional
        The picture file the texture was read from.
    """

    name: str
    role: str
    texture: np.ndarray = field(repr=False)
    center_x_mm: float
    center_y_mm: float
    z_mm: float
    width_mm: float
    height_mm: float
    opacity: float = 1.0
    image_path: Path | None = None


@dataclass(frozen=True)
class Viewer:
    """A visitor's eye (room frame, mm) and the picture it makes."""

    name: str
    eye_mm: tuple[float, float, float]
    look_at_mm: tuple[float, float, float]
    fov_deg: float
    width_px: int
    height_px: int
    pupil_mm: float = 0.0
    pupil_samples: int = 1


@dataclass(frozen=True)
class Placement:
    """Where the device stands: axis height, vertex position [x, z] and heading [deg]."""

    axis_height_mm: float
    x_mm: float
    z_mm: float
    heading_deg: float

    def axes(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Device origin and unit axes (x, y, z) in room coordinates."""
        h = math.radians(self.heading_deg)
        origin = np.array([self.x_mm, self.axis_height_mm, self.z_mm])
        ez = np.array([math.sin(h), 0.0, math.cos(h)])
        ex = np.array([math.cos(h), 0.0, -math.sin(h)])
        return origin, ex, np.array([0.0, 1.0, 0.0]), ez

    def to_device(self, points_room: np.ndarray) -> np.ndarray:
        """Room points (..., 3) to device-frame points [mm]."""
        origin, ex, ey, ez = self.axes()
        d = np.asarray(points_room, float) - origin
        return np.stack([d @ ex, d @ ey, d @ ez], axis=-1)

    def directions_to_device(self, directions_room: np.ndarray) -> np.ndarray:
        """Room directions (..., 3) to device-frame directions."""
        _, ex, ey, ez = self.axes()
        d = np.asarray(directions_room, float)
        return np.stack([d @ ex, d @ ey, d @ ez], axis=-1)


@dataclass(frozen=True)
class Settings:
    """How to render: wavelengths [nm], supersampling, ideal lenses, room colour (linear RGB)."""

    wavelengths_nm: tuple[float, ...]
    supersample: int
    ideal: bool
    backdrop_rgb: np.ndarray = field(repr=False)


@dataclass(frozen=True)
class Scene:
    """A loaded, checked exhibit."""

    path: Path
    title: str
    system: LensSystem
    design: CloakDesign | None
    housing: Housing
    placement: Placement
    layers: tuple[Layer, ...]
    viewers: tuple[Viewer, ...]
    settings: Settings
    tube_rgb: np.ndarray = field(repr=False)
    panel_rgb: np.ndarray = field(repr=False)
    #: Every file the scene was read from (the scene file and its pictures).
    sources: tuple[Path, ...] = ()

    def fingerprint(self) -> dict:
        """The SHA-256 of each file the scene was read from, by path."""
        return {str(p): hashlib.sha256(Path(p).read_bytes()).hexdigest() for p in self.sources}

    def at_design_wavelength(self) -> Scene:
        """The same scene traced at one wavelength (the one nearest 587.6 nm), for sweeps."""
        design = nearest_to_d_line(self.settings.wavelengths_nm)
        return replace(self, settings=replace(self.settings, wavelengths_nm=(design,)))

    def viewer(self, name: str) -> Viewer:
        """The viewer called ``name``."""
        for v in self.viewers:
            if v.name == name:
                return v
        names = ", ".join(v.name for v in self.viewers)
        raise InputError("--viewer", name, f"no such viewer in the scene; choose one of {names}",
                         str(self.path))


def glass_extent(placed: PlacedLens) -> tuple[float, float]:
    """Axial extent of a lens's glass including the rim [mm] (meniscus rims stick out)."""
    lens = placed.lens
    if isinstance(lens, ThinLens):
        return placed.z_mm, placed.z_mm
    h = lens.diameter_mm / 2
    front = placed.z_mm + float(sag(h, lens.c1))
    back = placed.back_z_mm + float(sag(h, lens.c2))
    return min(placed.z_mm, front), max(placed.back_z_mm, back)


def opaque_radii_mm(layer: Layer) -> tuple[float, float]:
    """Nearest and farthest distance from the axis of any visible pixel of ``layer`` [mm].

    Each visible pixel counts with its whole square (its corner farthest out and its
    point nearest the axis).
    """
    rows, cols = np.nonzero(layer.texture[..., 3] > 1.0 / 255.0)
    if rows.size == 0:
        return 0.0, 0.0
    h, w = layer.texture.shape[:2]
    x0 = layer.center_x_mm - layer.width_mm / 2 + cols / w * layer.width_mm
    x1 = x0 + layer.width_mm / w
    y1 = layer.center_y_mm + layer.height_mm / 2 - rows / h * layer.height_mm
    y0 = y1 - layer.height_mm / h
    far = np.hypot(np.maximum(np.abs(x0), np.abs(x1)), np.maximum(np.abs(y0), np.abs(y1)))
    near = np.hypot(np.clip(0.0, x0, x1), np.clip(0.0, y0, y1))
    return float(near.min()), float(far.max())
