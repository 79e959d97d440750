"""Units at the edge of the package: parsing column headers and converting to canonical units.

Canonical units inside freezeout: K, eV, cm^-3, cm^2/(V s), ohm cm, S/cm, cm^3/C, T, A, V,
cm.
This is the only module that knows about other units; readers call :func:`parse_unit`.

Case carries meaning. The SI prefixes are read exactly as written (``m`` milli, ``M`` mega;
``p`` pico, ``P`` peta; BIPM, The International System of Units, SI Brochure, 9th ed., 2019,
Table 7), ``u`` standing for ``µ``; so are the one-letter unit symbols (``K`` kelvin, ``T``
tesla, ``G`` gauss, ``A`` ampere, ``V`` volt, ``C`` coulomb, ``m`` metre). The name ``ohm``
may be written ``ohm``, ``Ohm`` or ``Ω``. A spelling that only matches after folding the case
(``OHM CM``, ``k``) is accepted when the folding leaves a single reading in the quantity's
units, and refused, naming the readings, when it leaves more (``mk``: mK or MK? ``MOHM CM``:
mohm cm or Mohm cm?). Each quantity accepts the prefixes a measurement is written in
(:data:`ACCEPTED`); any other SI prefix on its units is refused with the reason (``MK`` is the
megakelvin, 1e6 K: refused as absurd), not guessed at.

Why a table of our own and not a general units library (measured with pint 0.25.3, 2026):
pint does not read 7 of 21 spellings the trade writes (``1/cm3``, ``cm-3``, ``Ohm-cm``,
``Ohm cm``, ``cm^2/Vs``, ``cm2/Vs``, ``cm3/C``), reads ``k`` and ``mk`` as the Boltzmann
constant and a thousandth of it instead of refusing them, and accepts ``MK``; it took 2.7 s
to parse and convert 10,000 unit strings (2.2 s to parse only, 0.8 s to load its registry)
where this module takes 0.6 s without its cache and 17 ms with it.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

#: SI prefixes: symbol -> (name, power of ten). BIPM, The International System of Units (SI
#: Brochure), 9th edition (2019), Table 7. ``u`` is the usual ASCII stand-in for ``µ``.
SI_PREFIXES: dict[str, tuple[str, int]] = {
    "Y": ("yotta", 24), "Z": ("zetta", 21), "E": ("exa", 18), "P": ("peta", 15),
    "T": ("tera", 12), "G": ("giga", 9), "M": ("mega", 6), "k": ("kilo", 3),
    "h": ("hecto", 2), "da": ("deca", 1), "d": ("deci", -1), "c": ("centi", -2),
    "m": ("milli", -3), "u": ("micro", -6), "n": ("nano", -9), "p": ("pico", -12),
    "f": ("femto", -15), "a": ("atto", -18), "z": ("zepto", -21), "y": ("yocto", -24),
}


@dataclass(frozen=True)
class _Base:
    """A unit that takes prefixes: ``symbol`` as cleaned, ``shown`` as printed."""

    symbol: str
    shown: str
    name: str
    exponent: int           # one of it is 10^exponent of the canonical unit
    offset: float = 0.0
    power: int = 1          # the prefix's factor is raised to this power (cm^-3: -3)
    prefixed: bool = True   # False: takes no prefix at all (degC)
    variants: tuple[str, ...] = ()  # other exact spellings of the symbol (Ohm)


_BASES: dict[str, tuple[_Base, ...]] = {
    "temperature": (_Base("K", "K", "kelvin", 0),
                    _Base("degC", "degC", "degree Celsius", 0, 273.15, prefixed=False),
                    _Base("C", "C (degC)", "degree Celsius", 0, 273.15, prefixed=False)),
    "density": (_Base("m^-3", "m^-3", "metre^-3", -6, power=-3),),
    "hall_coefficient": (_Base("m^3/C", "m^3/C", "metre^3 per coulomb", 6, power=3),),
    "mobility": (_Base("m^2/(Vs)", "m^2/(V s)", "metre^2 per volt second", 4, power=2),),
    "resistivity": (_Base("ohmcm", "ohm cm", "ohm centimetre", 0, variants=("Ohmcm",)),
                    _Base("ohmm", "ohm m", "ohm metre", 2, variants=("Ohmm",))),
    "conductivity": (_Base("S/cm", "S/cm", "siemens per centimetre", 0),
                     _Base("S/m", "S/m", "siemens per metre", -2)),
    "field": (_Base("T", "T", "tesla", 0), _Base("G", "G", "gauss", -4)),
    "current": (_Base("A", "A", "ampere", 0),),
    "voltage": (_Base("V", "V", "volt", 0),),
    "length": (_Base("m", "m", "metre", 2),),
    "energy": (_Base("eV", "eV", "electronvolt", 0),),
    "dimensionless": (_Base("", "", "one", 0, prefixed=False),
                      _Base("1", "1", "one", 0, prefixed=False),
                      _Base("%", "%", "percent", -2, prefixed=False)),
}

#: Prefixes each quantity's units accept, by base symbol (project choice, no source: the
#: prefixes measurements and certificates are written in; 1 G = 1e-4 T and 0 degC =
#: 273.15 K are the definitions). Any other SI prefix is refused with the reason.
ACCEPTED: dict[str, str | tuple[str, ...]] = {
    "K": ("m", "u"), "m^-3": ("c", "m", "u", "n"), "m^3/C": ("c",), "m^2/(Vs)": ("c",),
    "ohmcm": ("u", "m", "k", "M", "G"), "ohmm": ("u", "m", "k", "M", "G"),
    "S/cm": ("n", "u", "m", "k"), "S/m": ("n", "u", "m", "k"),
    "T": ("m", "u"), "G": ("k",), "A": ("m", "u", "n", "p"), "V": ("m", "u", "n"),
    "m": ("d", "c", "m", "u", "n"), "eV": ("m",),
}

CANONICAL = {
    "temperature": "K",
    "density": "cm^-3",
    "hall_coefficient": "cm^3/C",
    "mobility": "cm^2/(V s)",
    "resistivity": "ohm cm",
    "conductivity": "S/cm",
    "field": "T",
    "current": "A",
    "voltage": "V",
    "length": "cm",
    "energy": "eV",
    "dimensionless": "",
}


@dataclass(frozen=True)
class _Entry:
    """One exact spelling of a quantity's unit: accepted (scale, offset) or refused (reason)."""

    shown: str
    scale: float = 1.0
    offset: float = 0.0
    refused: str | None = None
    prefix: str = ""


def _shown(prefix: str, base: _Base) -> str:
    return prefix + base.shown


def _entries(dimension: str) -> dict[str, _Entry]:
    """Every exact spelling of the quantity's units, accepted and refused."""
    out: dict[str, _Entry] = {}
    what = dimension.replace("_", " ")
    for base in _BASES[dimension]:
        symbols = (base.symbol, *base.variants)
        for s in symbols:
            out[s] = _Entry(base.shown, 10.0 ** base.exponent, base.offset)
        if not base.prefixed:
            continue
        accepted = ACCEPTED.get(base.symbol, ())
        powers = [SI_PREFIXES[p][1] * base.power for p in accepted] + [0]
        article = "an" if what[0] in "aeiou" else "a"
        for prefix, (pname, exp) in SI_PREFIXES.items():
            shown = _shown(prefix, base)
            if prefix in accepted:
                entry = _Entry(shown, 10.0 ** (base.exponent + exp * base.power),
                               prefix=prefix)
            else:
                size = ("too large" if exp * base.power > max(powers) else "too small"
                        if exp * base.power < min(powers) else "not one it is written in")
                reason = (f"{shown} is the {pname}{base.name} (SI prefix {prefix} = "
                          f"1e{exp}): a unit {size} for {article} {what}; refused rather "
                          "than read")
                other = prefix.swapcase()
                if other in accepted:
                    reason += (f"; did you mean {_shown(other, base)} "
                               f"({SI_PREFIXES[other][0]}{base.name})?")
                entry = _Entry(shown, refused=reason, prefix=prefix)
            for s in symbols:
                key = prefix + s
                assert key not in out, f"{dimension}: {key!r} has two readings"
                out[key] = entry
    return out


_TABLES = {d: _entries(d) for d in _BASES}

_WORDS = (  # case-insensitive names -> the symbol
    (r"°\s*c|deg\s*c|celsius", "degC"), (r"kelvin", "K"), (r"tesla", "T"), (r"gauss", "G"),
)


def normalize_unit(unit: str) -> str:
    """Fold the usual spellings of a unit into one key, keeping the case of every symbol.

    ``"cm-3"``, ``"cm^-3"``, ``"1/cm3"``, ``"cm⁻³"`` all become ``"cm^-3"``; ``"Ω·cm"``,
    ``"ohm*cm"``, ``"Ohm-cm"`` become ``"ohmcm"`` (``"Ohm"`` is kept as ``"Ohmcm"``);
    ``"µA"`` becomes ``"uA"``; ``"°C"`` becomes ``"degC"``; ``"m^3 C^-1"`` becomes
    ``"m^3/C"``; ``"1/(ohm cm)"``, ``"(Ohm cm)^-1"``, ``"ohm^-1 cm^-1"`` and ``"S cm^-1"``
    become ``"S/cm"``.
    """
    u = unit.strip()
    u = u.replace("⁻", "-").replace("³", "3").replace("²", "2").replace("¹", "1")
    u = u.replace("µ", "u").replace("μ", "u").replace("Ω", "ohm").replace("ω", "ohm")
    for pattern, symbol in _WORDS:
        u = re.sub(pattern, symbol, u, flags=re.IGNORECASE)
    u = re.sub(r"(ohm)s", r"\1", u, flags=re.IGNORECASE)  # the case of "ohm" is kept
    u = re.sub(r"(?<=[A-Za-z])-(?=[A-Za-z])", "", u)  # Ohm-cm
    u = u.replace("·", "").replace("*", "").replace(".", "").replace(" ", "")
    # 1/cm3, /cm3 -> cm^-3
    m = re.fullmatch(r"1?/(\w*[mM])\^?3", u, flags=re.ASCII)
    if m:
        return f"{m.group(1)}^-3"
    u = re.sub(r"^(\w*[mM])\^?\(?-3\)?$", r"\1^-3", u, flags=re.ASCII)
    u = re.sub(r"^(\w*[mM])\^?3(?:/([Cc])|([Cc])\^?-1)$",
               lambda m: f"{m.group(1)}^3/{m.group(2) or m.group(3)}", u, flags=re.ASCII)
    # conductivity: 1/(ohm cm), (ohm cm)^-1, ohm^-1 cm^-1 -> S/cm; S cm^-1 -> S/cm
    u = re.sub(r"^(?:1?/\(?[Oo]hm(c?m)\)?|\([Oo]hm(c?m)\)\^?-1|[Oo]hm\^?-1(c?m)\^?-1)$",
               lambda m: "S/" + next(g for g in m.groups() if g is not None), u,
               flags=re.ASCII)
    u = re.sub(r"^([a-zA-Z]?S)(c?m)\^?-1$", r"\1/\2", u, flags=re.ASCII)
    # mobility spellings: cm2/Vs, cm^2/(V s), cm2V-1s-1, cm^2 V^-1 s^-1
    m = re.fullmatch(r"(\w*[mM])\^?2(?:/\(?([Vv])([Ss])\)?|/([Vv])/([Ss])|([Vv])\^?-1([Ss])\^?-1)",
                     u, flags=re.ASCII)
    if m:
        v, s = (g for g in m.groups()[1:] if g)
        return f"{m.group(1)}^2/({v}{s})"
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


def _known(dimension: str) -> str:
    table = _TABLES[dimension]
    seen = dict.fromkeys(e.shown for e in table.values() if e.refused is None and e.shown)
    return ", ".join(seen)


def _folded(unit: str, key: str, table: dict[str, _Entry], what: str) -> _Entry | None:
    """The one reading of a spelling that matches only with its case folded, or None.

    The writer's case is then not to be trusted: two readings (``mk``: mK or MK) are refused
    as ambiguous, and so is one whose SI prefix is written in the other case (``NA`` is not
    nA, ``KOHM CM`` not kohm cm); only the unit symbol may be folded (``OHM CM``, ``k``),
    and ``CM`` in capitals stands for cm.
    """
    folded = {e.shown: e for k, e in table.items() if k.lower() == key.lower()}
    if len(folded) > 1:
        readings = " or ".join(f"{s} ({'refused' if e.refused else 'accepted'})"
                               for s, e in folded.items())
        raise ValueError(f"unit {unit!r} for {what} is ambiguous in this case: {readings}; "
                         "write the SI prefix in its own case (m milli, M mega; SI "
                         "Brochure, 9th ed., Table 7)")
    entry = next(iter(folded.values()), None)
    if entry is None or not entry.prefix:
        return entry
    p = entry.prefix
    if key.startswith(p) or (p == "c" and key.startswith("CM")):
        return entry
    name = SI_PREFIXES[p][0]
    raise ValueError(f"unit {unit!r} for {what}: the SI prefix is written in the wrong case; "
                     f"{name} is {p} (SI Brochure, 9th ed., Table 7): write {entry.shown}")


def parse_unit(unit: str, dimension: str) -> Unit:
    """Recognise ``unit`` as a unit of ``dimension``, reading its case as written.

    Parameters
    ----------
    unit
        The unit as written (``"mK"``, ``"Mohm cm"``, ``"OHM CM"``, ``"cm^-3"``).
    dimension
        A key of :data:`CANONICAL`.

    Returns
    -------
    Unit
        With the factor (and offset) to the canonical unit.

    Raises
    ------
    ValueError
        If the unit is not a unit of that dimension (the message lists the known ones), is
        an SI prefix the quantity is never written in (``MK``: too large, refused), or is
        written in a case that leaves two readings (``mk``: mK or MK).
    """
    return _parse_unit(unit, dimension)


@functools.lru_cache(maxsize=4096)
def _parse_unit(unit: str, dimension: str) -> Unit:
    """:func:`parse_unit`, remembered: a file repeats its spellings (a ``Unit`` is frozen)."""
    table = _TABLES[dimension]
    what = dimension.replace("_", " ")
    key = normalize_unit(unit)
    entry = table.get(key)
    if entry is None:
        entry = _folded(unit, key, table, what)
    if entry is None:
        raise ValueError(f"unknown unit {unit!r} for {what} (known: {_known(dimension)})")
    if entry.refused is not None:
        raise ValueError(f"unit {unit!r} for {what}: {entry.refused}")
    if not (math.isfinite(entry.scale) and entry.scale > 0):  # pragma: no cover - table bug
        raise ValueError(f"unit {unit!r}: no usable factor")
    return Unit(dimension, unit, entry.scale, entry.offset)


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
