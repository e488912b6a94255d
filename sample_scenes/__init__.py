"""Bundled demo exhibits (invented scenarios), a lens inventory, and the script drawing their art.

The files install with the package, so they can be found from an installed copy too.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

#: The bundled exhibits, each a folder with ``scene.toml`` and ``art/``.
SCENES = ("gallery", "tabletop")
#: The bundled lens inventory (invented lenses and prices).
INVENTORY = "inventory.csv"


def path(name: str) -> Path:
    """The installed file or folder ``name`` of the samples (e.g. ``"gallery/scene.toml"``)."""
    return Path(str(resources.files(__name__).joinpath(name)))


def scene_path(name: str = "gallery") -> Path:
    """The scene file of a bundled exhibit (one of :data:`SCENES`)."""
    if name not in SCENES:
        raise ValueError(f"no bundled scene {name!r}; choose one of {', '.join(SCENES)}")
    return path(f"{name}/scene.toml")


def files() -> list[str]:
    """Every bundled sample file, relative to the samples' folder (scenes, art, inventory)."""
    found = [INVENTORY]
    for scene in SCENES:
        found.append(f"{scene}/scene.toml")
        found += sorted(f"{scene}/art/{p.name}" for p in path(f"{scene}/art").iterdir()
                        if p.suffix == ".png")
    return found
