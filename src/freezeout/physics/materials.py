"""Host materials: band gap, density-of-states and conductivity masses, permittivity, sources.

The library lives in ``freezeout/data/materials.toml`` (value and citation per entry). A user
material is a flat mapping with the keys of :data:`MATERIAL_KEYS`; unknown or missing required
keys are an error. The permittivity and the conductivity masses are optional in a user file; a
model that needs one it lacks raises InputError naming the key
(:meth:`Material.conductivity_mass`).
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cache
from importlib import resources

import numpy as np

from freezeout.errors import InputError
from freezeout.physics.bands import (
    effective_density_of_states,
    intrinsic_density,
    varshni_band_gap,
)
from freezeout.physics.dos_mass import DOS_MASS_MODELS, TEMPERATURE_DOS_MASSES, polynomial_dos_mass
from freezeout.physics.dos_mass import SOURCE as DOS_MASS_SOURCE

#: Keys of a material description; the first six are required, the rest optional.
MATERIAL_KEYS = (
    "name",
    "band_gap_0K_eV",
    "varshni_alpha_eV_per_K",
    "varshni_beta_K",
    "electron_dos_mass",
    "hole_dos_mass",
    "relative_permittivity",
    "electron_conductivity_mass",
    "hole_conductivity_mass",
)
_REQUIRED = MATERIAL_KEYS[:6]


@dataclass(frozen=True)
class Material:
    """A semiconductor host.

    Attributes
    ----------
    name
        Short name, e.g. ``"Si"``.
    band_gap_0k
        Band gap at 0 K. [eV]
    varshni_alpha
        Varshni alpha. [eV/K]
    varshni_beta
        Varshni beta. [K]
    electron_dos_mass
        Conduction-band density-of-states mass, valleys included. [m0]
    hole_dos_mass
        Valence-band density-of-states mass. [m0]
    relative_permittivity
        Static relative permittivity, or None if not given. [1]
    electron_conductivity_mass, hole_conductivity_mass
        Conductivity effective masses (electrons: of one valley, the harmonic mean over
        directions; holes: heavy and light together), or None if not given. [m0]
    description
        Plain-language name.
    sources
        Citation of each parameter, keyed like :data:`MATERIAL_KEYS`.
    dos_mass_polynomials
        None (constant masses), or (electron, hole) coefficients (a0, a1, a2) of
        temperature-dependent masses m/m0 = a0 + a1 T + a2 T^2
        (:func:`freezeout.physics.dos_mass.polynomial_dos_mass`), which then replace the
        constant ones in N_c and N_v; see :meth:`with_dos_mass_model`.
    """

    name: str
    band_gap_0k: float
    varshni_alpha: float
    varshni_beta: float
    electron_dos_mass: float
    hole_dos_mass: float
    relative_permittivity: float | None = None
    electron_conductivity_mass: float | None = None
    hole_conductivity_mass: float | None = None
    description: str = ""
    sources: Mapping[str, str] = field(default_factory=dict)
    dos_mass_polynomials: tuple | None = None

    def band_gap(self, temperature):
        """Band gap at ``temperature`` [K] from Varshni's relation. [eV]"""
        return varshni_band_gap(temperature, self.band_gap_0k, self.varshni_alpha,
                                self.varshni_beta)

    def _dos_mass(self, band: int, temperature):
        """Density-of-states mass of the band (0 electrons, 1 holes) at ``temperature``. [m0]"""
        if self.dos_mass_polynomials is None:
            return (self.electron_dos_mass, self.hole_dos_mass)[band]
        return polynomial_dos_mass(temperature, self.dos_mass_polynomials[band])

    def nc(self, temperature):
        """Conduction-band effective density of states at ``temperature`` [K]. [cm^-3]"""
        return effective_density_of_states(temperature, self._dos_mass(0, temperature))

    def nv(self, temperature):
        """Valence-band effective density of states at ``temperature`` [K]. [cm^-3]"""
        return effective_density_of_states(temperature, self._dos_mass(1, temperature))

    @property
    def dos_mass_model(self) -> str:
        """``"constant"`` or ``"temperature"`` (the masses N_c and N_v use)."""
        return "constant" if self.dos_mass_polynomials is None else "temperature"

    def with_dos_mass_model(self, model: str) -> Material:
        """The material with ``"constant"`` or ``"temperature"``-dependent DOS masses.

        Raises
        ------
        InputError
            For an unknown model, or ``"temperature"`` on a material without a set
            (:data:`freezeout.physics.dos_mass.TEMPERATURE_DOS_MASSES`: Si).
        """
        if model not in DOS_MASS_MODELS:
            raise InputError(f"unknown density-of-states mass model {model!r}; valid: "
                             f"{', '.join(DOS_MASS_MODELS)}")
        if model == "constant":
            return replace(self, dos_mass_polynomials=None)
        if self.name not in TEMPERATURE_DOS_MASSES:
            raise InputError(f"no temperature-dependent density-of-states masses for "
                             f"material {self.name!r} (known: "
                             f"{', '.join(TEMPERATURE_DOS_MASSES)})")
        return replace(self, dos_mass_polynomials=TEMPERATURE_DOS_MASSES[self.name])

    def intrinsic_density(self, temperature):
        """Non-degenerate intrinsic density at ``temperature`` [K]. [cm^-3]"""
        return intrinsic_density(temperature, self.band_gap(temperature), self.nc(temperature),
                                 self.nv(temperature))

    def conductivity_mass(self, carrier: str) -> float:
        """Conductivity effective mass of electrons (``"n"``) or holes (``"p"``). [m0]

        Raises
        ------
        InputError
            When the material does not give it (the message names the missing key).
        """
        key = "electron_conductivity_mass" if carrier == "n" else "hole_conductivity_mass"
        value = getattr(self, key)
        if value is None:
            raise InputError(f"material {self.name!r} has no {key}: add it to the material "
                             "file (conductivity effective mass in units of m0)", column=key)
        return value

    def to_dict(self) -> dict:
        """Parameters under the keys of :data:`MATERIAL_KEYS`, plus description and sources."""
        return {
            "name": self.name,
            "band_gap_0K_eV": self.band_gap_0k,
            "varshni_alpha_eV_per_K": self.varshni_alpha,
            "varshni_beta_K": self.varshni_beta,
            "electron_dos_mass": self.electron_dos_mass,
            "hole_dos_mass": self.hole_dos_mass,
            "relative_permittivity": self.relative_permittivity,
            "electron_conductivity_mass": self.electron_conductivity_mass,
            "hole_conductivity_mass": self.hole_conductivity_mass,
            "description": self.description,
            "sources": dict(self.sources),
        } | ({} if self.dos_mass_polynomials is None else {
            "dos_mass_model": "temperature",
            "dos_mass_polynomials": [list(c) for c in self.dos_mass_polynomials],
            "dos_mass_source": DOS_MASS_SOURCE})


_LIMITS = {
    "band_gap_0K_eV": (0.0, 10.0),
    "varshni_alpha_eV_per_K": (0.0, 1e-2),
    "varshni_beta_K": (0.0, 1e4),
    "electron_dos_mass": (1e-3, 100.0),
    "hole_dos_mass": (1e-3, 100.0),
    "relative_permittivity": (1.0, 1000.0),
    "electron_conductivity_mass": (1e-3, 100.0),
    "hole_conductivity_mass": (1e-3, 100.0),
}


def material_from_mapping(data: Mapping, *, file: str | None = None,
                          description: str = "", sources: Mapping[str, str] | None = None
                          ) -> Material:
    """Build a :class:`Material` from a flat mapping, checking keys, types and ranges.

    Parameters
    ----------
    data
        Mapping with the keys of :data:`MATERIAL_KEYS` (numbers in the units the key names).
    file
        File the mapping came from, for error messages.

    Raises
    ------
    InputError
        Unknown or missing key, a non-number, or a value outside its physical range.
    """
    unknown = sorted(set(data) - set(MATERIAL_KEYS))
    if unknown:
        raise InputError(f"unknown material key(s) {', '.join(unknown)}; "
                         f"allowed: {', '.join(MATERIAL_KEYS)}", file=file, column=unknown[0])
    missing = [k for k in _REQUIRED if k not in data]
    if missing:
        raise InputError(f"missing material key(s): {', '.join(missing)}", file=file,
                         column=missing[0])
    name = data["name"]
    if not isinstance(name, str) or not name.strip():
        raise InputError("material 'name' must be a non-empty string", file=file, column="name")
    values = {}
    for key, (lo, hi) in _LIMITS.items():
        if key not in data:
            continue
        v = data[key]
        if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v):
            raise InputError(f"{key} must be a finite number, got {v!r}", file=file, column=key)
        if not lo <= v <= hi or (key.endswith("mass") and v <= 0):
            raise InputError(f"{key} = {v!r} is outside the plausible range [{lo:g}, {hi:g}]",
                             file=file, column=key)
        values[key] = float(v)
    return Material(
        name=name.strip(),
        band_gap_0k=values["band_gap_0K_eV"],
        varshni_alpha=values["varshni_alpha_eV_per_K"],
        varshni_beta=values["varshni_beta_K"],
        electron_dos_mass=values["electron_dos_mass"],
        hole_dos_mass=values["hole_dos_mass"],
        relative_permittivity=values.get("relative_permittivity"),
        electron_conductivity_mass=values.get("electron_conductivity_mass"),
        hole_conductivity_mass=values.get("hole_conductivity_mass"),
        description=description,
        sources=dict(sources or {}),
    )


@cache
def library() -> dict[str, Material]:
    """The bundled materials, keyed by name (Si, Ge, GaAs, 4H-SiC, GaN, InP)."""
    text = resources.files("freezeout.data").joinpath("materials.toml").read_text()
    raw = tomllib.loads(text)
    out = {}
    for name, entry in raw.items():
        flat = {"name": name}
        sources = {}
        for key, item in entry.items():
            if key == "description":
                continue
            flat[key] = item["value"]
            sources[key] = item["source"]
        out[name] = material_from_mapping(flat, file="materials.toml",
                                          description=entry.get("description", ""),
                                          sources=sources)
    return out


def get_material(name: str, *, other: str = "--material-file FILE.toml") -> Material:
    """Look up a bundled material by name, case-insensitively.

    Raises
    ------
    InputError
        If no bundled material has that name; the message lists the known ones and says
        how to give another (``other``: the command's option by default).
    """
    lib = library()
    for key, mat in lib.items():
        if key.lower() == name.strip().lower():
            return mat
    raise InputError(f"unknown material {name!r}; known: {', '.join(lib)} (or give {other})")
