"""Units at the edge of the package: parsing column headers and converting to canonical units.

Canonical units inside freezeout: K, eV, cm^-3, cm^2/(V s), ohm cm, cm^3/C, T, A, V, cm.
This is the only module that knows about other units; readers call :func:`to_canonical`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

# Each dimension maps normalized unit spellings to (scale, offset) such that
# canonical = value * scale + offset.
_DIMENSIONS: dict[str, dict[str, tuple[float, float]]] = {
    "temperature": {"k": (1.0, 0.0), "mk": (1e-3, 0.0), "degc": (1.0, 273.15), "c": (1.0, 273.15)},
    "density": {"cm^-3": (1.0, 0.0), "m^-3": (1e-6, 0.0)},
    "hall_coefficient": {"cm^3/c": (1.0, 0.0), "m^3/c": (1e6, 0.0)},
    "mobility": {"cm^2/(vs)": (1.0, 0.0), "m^2/(vs)": (1e4, 0.0)},
    "resistivity": {
        "ohmcm": (1.0, 0.0),
        "ohmm": (100.0, 0.0),
        "mohmcm": (1e-3, 0.0),
        "kohmcm": (1e3, 0.0),
    },
    "field": {"t": (1.0, 0.0), "mt": (1e-3, 0.0), "g": (1e-4, 0.0), "kg": (0.1, 0.0)},
    "current": {"a": (1.0, 0.0), "ma": (1e-3, 0.0), "ua": (1e-6, 0.0), "na": (1e-9, 0.0)},
    "voltage": {"v": (1.0, 0.0), "mv": (1e-3, 0.0), "uv": (1e-6, 0.0), "nv": (1e-9, 0.0)},
    "length": {
        "cm": (1.0, 0.0),
        "m": (100.0, 0.0),
        "mm": (0.1, 0.0),
        "um": (1e-4, 0.0),
        "nm": (1e-7, 0.0),
    },
    "energy": {"ev": (1.0, 0.0), "mev": (1e-3, 0.0)},
    "dimensionless": {"": (1.0, 0.0), "1": (1.0, 0.0), "%": (0.01, 0.0)},
}

# how each normalized key is written back to a person
_SPELLING = {
    "k": "K", "mk": "mK", "degc": "degC", "c": "C (degC)", "cm^-3": "cm^-3", "m^-3": "m^-3",
    "cm^3/c": "cm^3/C", "m^3/c": "m^3/C", "cm^2/(vs)": "cm^2/(V s)", "m^2/(vs)": "m^2/(V s)",
    "ohmcm": "ohm cm", "ohmm": "ohm m", "mohmcm": "mohm cm", "kohmcm": "kohm cm", "t": "T",
    "mt": "mT", "g": "G", "kg": "kG", "a": "A", "ma": "mA", "ua": "uA", "na": "nA", "v": "V",
    "mv": "mV", "uv": "uV", "nv": "nV", "cm": "cm", "m": "m", "mm": "mm", "um": "um",
    "nm": "nm", "ev": "eV", "mev": "meV", "1": "1", "%": "%",
}

CANONICAL = {
    "temperature": "K",
    "density": "cm^-3",
    "hall_coefficient": "cm^3/C",
    "mobility": "cm^2/(V s)",
    "resistivity": "ohm cm",
    "field": "T",
    "current": "A",
    "voltage": "V",
    "length": "cm",
    "energy": "eV",
    "dimensionless": "",
}


def normalize_unit(unit: str) -> str:
    """Fold the usual spellings of a unit into one key.

    ``"cm-3"``, ``"cm^-3"``, ``"1/cm3"``, ``"cm⁻³"`` all become ``"cm^-3"``;
    ``"Ω·cm"``, ``"Ohm cm"``, ``"ohm*cm"`` become ``"ohmcm"``; ``"µA"`` becomes ``"ua"``;
    ``"°C"`` becomes ``"degc"``.
    """
    u = unit.strip().lower()
    u = u.replace("⁻", "-").replace("³", "3").replace("²", "2").replace("¹", "1")
    u = u.replace("µ", "u").replace("μ", "u").replace("ω", "ohm").replace("Ω".lower(), "ohm")
    u = u.replace("°c", "degc").replace("deg c", "degc").replace("celsius", "degc")
    u = u.replace("kelvin", "k").replace("tesla", "t").replace("gauss", "g")
    u = u.replace("ohms", "ohm").replace("·", "").replace("*", "").replace(".", "")
    u = u.replace(" ", "")
    # 1/cm3, /cm3 -> cm^-3
    m = re.fullmatch(r"1?/(c?m)\^?3", u)
    if m:
        return f"{m.group(1)}^-3"
    u = re.sub(r"^(c?m)\^?-3$", r"\1^-3", u)
    u = re.sub(r"^(c?m)\^?3/c$", r"\1^3/c", u)
    # mobility spellings: cm2/Vs, cm^2/(V s), cm2V-1s-1, cm^2 V^-1 s^-1
    m = re.fullmatch(r"(c?m)\^?2(?:/\(?vs\)?|/v/s|v\^?-1s\^?-1)", u)
    if m:
        return f"{m.group(1)}^2/(vs)"
    return u


@dataclass(frozen=True)
class Unit:
    """A recognised unit: its dimension and the affine map to the canonical unit."""

    dimension: str
    spelling: str
    scale: float
    offset: float

    def to_canonical(self, value):
        """Convert a value (or array) in this unit to the canonical unit of its dimension."""
        return value * self.scale + self.offset

    def scale_uncertainty(self, value):
        """Convert an uncertainty (a difference, so no offset) to the canonical unit."""
        return value * self.scale


def parse_unit(unit: str, dimension: str) -> Unit:
    """Recognise ``unit`` as a unit of ``dimension``.

    Raises
    ------
    ValueError
        If the unit is not a known unit of that dimension; the message lists the known ones.
    """
    table = _DIMENSIONS[dimension]
    key = normalize_unit(unit)
    if key not in table:
        known = ", ".join(_SPELLING.get(k, k) for k in table if k)
        what = dimension.replace("_", " ")
        raise ValueError(f"unknown unit {unit!r} for {what} (known: {known})")
    scale, offset = table[key]
    return Unit(dimension, unit, scale, offset)


def split_header(header: str) -> tuple[str, str | None]:
    """Split a column header into its name and unit.

    Accepts ``"T [K]"``, ``"T (K)"``, ``"Temperature_K"``, ``"n [cm^-3]"``, ``"n (cm-3)"``,
    ``"carrier density (m^-3)"``, ``"mu_H [cm^2/(V s)]"``. Returns ``(name, None)`` when the
    header carries no bracketed unit; a trailing ``_UNIT`` suffix is left for the caller to try.
    """
    h = header.strip()
    # bracketed unit at the end, allowing one level of nested parentheses inside
    for open_, close in (("[", "]"), ("(", ")")):
        if h.endswith(close):
            depth = 0
            for i in range(len(h) - 1, -1, -1):
                if h[i] == close:
                    depth += 1
                elif h[i] == open_:
                    depth -= 1
                    if depth == 0:
                        return h[:i].strip(), h[i + 1 : -1].strip()
    return h, None
