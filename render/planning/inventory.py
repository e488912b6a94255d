"""Lens inventories: the lenses a planner can buy, as a CSV file of our own format.

Columns: ``id, focal_length_mm, diameter_mm, center_thickness_mm, shape, material,
price, quantity``; optional ``r1_mm, r2_mm`` (then the radii define the lens and the
focal length is checked against them) and ``edge_thickness_mm`` (checked).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

from cloakview.optics.errors import InputError
from cloakview.optics.lenses import ThickLens, lens_with_thickness
from cloakview.optics.materials import material_by_name
from cloakview.optics.system import PlacedLens
from cloakview.render.files import read_text

REQUIRED = ("id", "focal_length_mm", "diameter_mm", "center_thickness_mm", "shape",
            "material", "price", "quantity")
OPTIONAL = ("r1_mm", "r2_mm", "edge_thickness_mm")


@dataclass(frozen=True)
class Item:
    """One line of the inventory: a lens type, its price and how many are available."""

    id: str
    lens: ThickLens
    price: float
    quantity: int

    @property
    def focal_length_mm(self) -> float:
        """Effective focal length at 587.6 nm [mm], from the lens as described."""
        return PlacedLens(self.lens, 0.0).cardinal_points().efl_mm


def _number(text, where, column, positive=True):
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise InputError(f"{where}, column {column}", text, "must be a number") from None
    if not math.isfinite(value) or (positive and value <= 0) or value < 0:
        raise InputError(f"{where}, column {column}", text,
                         "must be a finite number greater than 0" if positive else
                         "must be a finite number, 0 or more")
    return value


def _radius(text, where: str, column: str) -> float:
    """A face radius [mm], or ``flat``.

    The usual signs: negative when the centre of curvature lies on the visitor's side, so a
    biconvex lens has r1 > 0 > r2 (E. Hecht, Optics, 5th ed., sec. 5.2.3).
    """
    word = (text or "").strip().lower()
    if word in ("flat", "inf", "plane"):
        return math.inf
    try:
        value = float(word)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value == 0:
        raise InputError(f"{where}, column {column}", text, "must be a non-zero radius in mm "
                         "(negative when its centre lies on the visitor's side) or flat")
    return value


def load_inventory(path) -> list[Item]:
    """Read and check an inventory CSV; errors name the line and column."""
    path = Path(path)
    text = read_text(path, "inventory", "inventory file")
    with io.StringIO(text, newline="") as handle:
        reader = csv.DictReader(handle)
        columns = reader.fieldnames or []
        missing = [c for c in REQUIRED if c not in columns]
        if missing:
            raise InputError(f"{path}:1", ",".join(columns), f"missing column(s) "
                             f"{', '.join(missing)}")
        unknown = [c for c in columns if c not in REQUIRED + OPTIONAL]
        if unknown:
            raise InputError(f"{path}:1, column {unknown[0]}", unknown[0], "unknown column; "
                             f"known: {', '.join(REQUIRED + OPTIONAL)}")
        items, seen = [], set()
        for line, row in enumerate(reader, start=2):
            where = f"{path}:{line}"
            if None in row:
                raise InputError(where, ",".join(row[None]), f"has more values than the "
                                 f"{len(columns)} columns of the first line")
            items.append(_item(row, where))
            if items[-1].id in seen:
                raise InputError(f"{where}, column id", items[-1].id, "ids must be unique")
            seen.add(items[-1].id)
    if not items:
        raise InputError("inventory", str(path), "has no lenses")
    return items


def _item(row: dict, where: str) -> Item:
    ident = (row.get("id") or "").strip()
    if not ident:
        raise InputError(f"{where}, column id", ident, "must not be empty")
    f = _number(row["focal_length_mm"], where, "focal_length_mm")
    diameter = _number(row["diameter_mm"], where, "diameter_mm")
    thickness = _number(row["center_thickness_mm"], where, "center_thickness_mm")
    price = _number(row["price"], where, "price", positive=False)
    quantity = _number(row["quantity"], where, "quantity", positive=False)
    if quantity != int(quantity):
        raise InputError(f"{where}, column quantity", row["quantity"], "must be a whole number")
    radii = None
    if row.get("r1_mm") and row.get("r2_mm"):
        radii = [_radius(row[k], where, k) for k in ("r1_mm", "r2_mm")]
    try:
        material = material_by_name(row["material"], "material")
        if radii is not None:
            lens = ThickLens(radii[0], radii[1], thickness, diameter, material)
        else:
            lens = lens_with_thickness(f, diameter, material, row["shape"], thickness)
    except InputError as error:
        raise InputError(f"{where}, column {error.key.split('.')[-1]}", error.value,
                         error.rule) from None
    efl = PlacedLens(lens, 0.0).cardinal_points().efl_mm
    if abs(efl - f) > 0.02 * f:
        raise InputError(f"{where}, column focal_length_mm", f, f"the radii give "
                         f"f = {efl:.1f} mm; check the radii or the focal length")
    edge = row.get("edge_thickness_mm")
    if edge and abs(_number(edge, where, "edge_thickness_mm", False) - lens.edge_thickness_mm) \
            > 0.5:
        raise InputError(f"{where}, column edge_thickness_mm", edge, f"the lens as described "
                         f"has an edge of {lens.edge_thickness_mm:.2f} mm")
    return Item(ident, lens, price, int(quantity))
