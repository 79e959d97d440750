"""Materials: by library name, from a user TOML file, or the whole library."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.physics.materials import Material


def load_material(material: str | Material | None = None,
                  material_file: str | Path | None = None) -> Material:
    """A material by library name, from a TOML file, or passed through.

    Parameters
    ----------
    material
        Library name (default ``Si``), or a Material, passed through.
    material_file
        A user material file (TOML; see ``freezeout materials``).

    Raises
    ------
    InputError
        Both or an unknown name given, or a bad file.
    """
    from freezeout.physics.materials import Material, get_material

    if isinstance(material, Material):
        return material
    if material is not None and material_file is not None:
        raise InputError("give either a material name or a material file, not both")
    if material_file is not None:
        from freezeout.io.material_file import read_material_file

        return read_material_file(material_file)
    return get_material(material or "Si")


def list_materials() -> dict[str, Material]:
    """The bundled materials library, by name."""
    from freezeout.physics.materials import library

    return library()
