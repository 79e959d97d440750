"""One ``[[claim]]`` of a lot file: its quantity, specification window, unit and dopant.

A claim is a conductivity type (``value = "n"``), or a net doping or resistivity with
``min`` and/or ``max``, or ``nominal`` with ``tolerance`` (a number in ``unit`` or a
percentage ``"10%"``); values are converted to canonical units (cm^-3, ohm cm) here.
"""

from __future__ import annotations

import math
import re

from freezeout.claims import silicon
from freezeout.claims.lot_fields import check_keys, read_number, read_string
from freezeout.claims.lot_locator import LotContext, key_path
from freezeout.errors import InputError
from freezeout.numbers import parse_number_cell
from freezeout.numbers.units import CANONICAL, parse_unit
from freezeout.records.lot import Claim
from freezeout.records.verdicts import SpecWindow

#: The quantities a claim may state.
QUANTITIES = ("net_doping", "resistivity", "type")
_DIMENSION = {"net_doping": "density", "resistivity": "resistivity"}

CLAIM_KEYS = {
    "quantity", "min", "max", "nominal", "tolerance", "unit", "dopant", "temperature_K",
    "value", "note",
}

#: Spellings of boron and phosphorus normalised on a type claim, and on a net-doping claim.
_TYPE_DOPANT_SPELLINGS = ("b", "boron", "p", "phosphorus")
_NET_DOPANT_SPELLINGS = (*_TYPE_DOPANT_SPELLINGS, "phosphorous")

_PERCENT = re.compile(r"\s*([0-9.eE+\-]+)\s*%\s*")

#: Values a claim may state, in canonical units (cm^-3, ohm cm), both ends included. Project
#: choice, no source: wider than any semiconductor wafer's net doping or resistivity, so a value
#: outside is a typing slip (1e300 for 1e13), refused instead of decided.
PLAUSIBLE_RANGE = {"net_doping": (1e8, 1e23), "resistivity": (1e-6, 1e12)}


def _check_plausible(ctx: LotContext, i: int, key: str, quantity: str, value: float,
                     written: float, unit: str, canonical: str) -> None:
    """Refuse a claim value (canonical units) outside :data:`PLAUSIBLE_RANGE`."""
    lo, hi = PLAUSIBLE_RANGE[quantity]
    if lo * (1 - 1e-9) <= value <= hi * (1 + 1e-9):
        return
    what = "net doping" if quantity == "net_doping" else "resistivity"
    shown = f"{written:g} {unit}" + ("" if unit == canonical else f" = {value:g} {canonical}")
    raise ctx.error(f"{key} = {shown} is outside the {what} values a claim may state "
                    f"({lo:g} to {hi:g} {canonical}; freezeout's own plausibility limits): "
                    "check the number and its unit", key_path("claim", i, key), "claim", i, key)


def _dopant_name(raw: str | None, spellings: tuple[str, ...]) -> str | None:
    """A dopant as written (lower case), boron and phosphorus normalised; None if absent."""
    if raw is None:
        return None
    dopant = raw.lower()
    return silicon.normalize_dopant(dopant) if dopant in spellings else dopant


def _percent(text: str) -> float:
    """The number of a percentage like ``"10%"``, or NaN when the text is not one."""
    m = _PERCENT.fullmatch(text)
    try:
        return parse_number_cell(m.group(1)) if m else math.nan
    except InputError:
        return math.nan


def _type_claim(ctx: LotContext, d: dict, i: int, temperature: float, dopant_raw: str | None,
                note: str | None) -> Claim:
    t = "claim"
    for k in ("min", "max", "nominal", "tolerance", "unit"):
        if k in d:
            raise ctx.error(f"a type claim takes value = \"n\" or \"p\", not {k}",
                            key_path(t, i, k), t, i, k)
    value = read_string(ctx, d, "value", t, i, required=True)
    if value not in ("n", "p"):
        raise ctx.error(f"value of a type claim must be \"n\" or \"p\", got {value!r}",
                        key_path(t, i, "value"), t, i, "value")
    return Claim(key_path(t, i), "type", None, None,
                 _dopant_name(dopant_raw, _TYPE_DOPANT_SPELLINGS), temperature, carrier=value,
                 note=note, line=ctx.loc.line(t, i))


def _nominal_window(ctx: LotContext, d: dict, i: int, u, unit: str, nominal: float,
                    canonical: str) -> tuple[SpecWindow, float | None]:
    """The window of ``nominal`` +- ``tolerance``, and the tolerance in percent if so given."""
    t = "claim"
    tol = d["tolerance"]
    col = key_path(t, i, "tolerance")
    if isinstance(tol, str):
        pct = _percent(tol)
        if not math.isfinite(pct):
            raise ctx.error(f"tolerance {tol!r} is neither a number nor a percentage like "
                            "\"10%\"", col, t, i, "tolerance")
        if not pct > 0:
            raise ctx.error(f"tolerance must be > 0, got {tol!r}", col, t, i, "tolerance")
        if not pct < 100:
            raise ctx.error(f"tolerance {tol!r} puts the lower limit at or below zero",
                            col, t, i, "tolerance")
        return SpecWindow.from_nominal(nominal, pct, percent=True, unit=canonical), pct
    tv = read_number(ctx, d, "tolerance", t, i)
    if not tv > 0:
        raise ctx.error(f"tolerance must be > 0, got {tv:g}", col, t, i, "tolerance")
    half = float(u.scale_uncertainty(tv))
    if not half < nominal:
        raise ctx.error(f"tolerance {tv:g} {unit} puts the lower limit at or below zero",
                        col, t, i, "tolerance")
    return SpecWindow.from_nominal(nominal, half, unit=canonical), None


def _resistivity_dopant(ctx: LotContext, d: dict, i: int, dopant_raw: str,
                        window: SpecWindow) -> str:
    """The F723 dopant of a resistivity claim, refused when the window is outside its range."""
    t = "claim"
    try:
        dopant = silicon.normalize_dopant(dopant_raw)
    except InputError as exc:
        raise ctx.error(exc.message + "; omit dopant to compare a measured resistivity",
                        key_path(t, i, "dopant"), t, i, "dopant") from None
    lo_v, hi_v = silicon.RESISTIVITY_RANGE[dopant]
    wlo = window.lower if window.lower is not None else 0.0
    whi = window.upper if window.upper is not None else math.inf
    if whi < lo_v or wlo > hi_v:
        raise ctx.error(
            f"specification {window.describe()} lies wholly outside the ASTM F723 "
            f"{dopant} range {lo_v:g} to {hi_v:g} ohm cm: it cannot be checked through "
            "the conversion; omit dopant to compare a measured resistivity",
            key_path(t, i), t, i, "min" if "min" in d else "max")
    return dopant


def parse_claim(ctx: LotContext, d: dict, i: int) -> Claim:
    """Read the ``i``-th ``[[claim]]`` table (1-based), in canonical units.

    Parameters
    ----------
    ctx
        The lot file being read (for located errors).
    d
        The claim's table.
    i
        Its index in the file, from 1.

    Returns
    -------
    Claim
        The claim; its key is ``"claim[i]"``.

    Raises
    ------
    InputError
        For an unknown or missing key, a wrong type or an impossible specification, naming
        the key path as ``column``.
    """
    t = "claim"
    check_keys(ctx, d, CLAIM_KEYS, t, i)
    key = key_path(t, i)
    quantity = read_string(ctx, d, "quantity", t, i, required=True)
    if quantity not in QUANTITIES:
        raise ctx.error(f"quantity must be one of {', '.join(QUANTITIES)}, got {quantity!r}",
                        key_path(t, i, "quantity"), t, i, "quantity")
    note = read_string(ctx, d, "note", t, i, required=False)
    temperature = read_number(ctx, d, "temperature_K", t, i)
    if temperature is None:
        temperature = 300.0
    if not temperature > 0:
        raise ctx.error(f"temperature_K must be > 0, got {temperature:g}",
                        key_path(t, i, "temperature_K"), t, i, "temperature_K")
    dopant_raw = read_string(ctx, d, "dopant", t, i, required=False)
    if quantity == "type":
        return _type_claim(ctx, d, i, temperature, dopant_raw, note)

    if "value" in d:
        raise ctx.error(f"value is for type claims; a {quantity} claim takes min/max or "
                        "nominal/tolerance", key_path(t, i, "value"), t, i, "value")
    unit = read_string(ctx, d, "unit", t, i, required=True)
    try:
        u = parse_unit(unit, _DIMENSION[quantity])
    except ValueError as exc:
        raise ctx.error(str(exc), key_path(t, i, "unit"), t, i, "unit") from None
    canonical = CANONICAL[_DIMENSION[quantity]]
    what = "resistivity" if quantity == "resistivity" else "net doping (|N_D - N_A|)"

    raw = {k: read_number(ctx, d, k, t, i) for k in ("min", "max", "nominal")}
    for k, v in raw.items():
        if v is not None and not v > 0:
            raise ctx.error(f"{k} = {v:g}: a {what} must be > 0", key_path(t, i, k), t, i, k)
    tolerance_percent = None
    has_limits = raw["min"] is not None or raw["max"] is not None
    has_nominal = raw["nominal"] is not None or "tolerance" in d
    if has_limits and has_nominal:
        k = "nominal" if "nominal" in d else "tolerance"
        raise ctx.error("give either min and/or max, or nominal and tolerance, not both",
                        key_path(t, i, k), t, i, k)
    if has_limits:
        lo = None if raw["min"] is None else float(u.to_canonical(raw["min"]))
        hi = None if raw["max"] is None else float(u.to_canonical(raw["max"]))
        for k, v in (("min", lo), ("max", hi)):
            if v is not None:
                _check_plausible(ctx, i, k, quantity, v, raw[k], unit, canonical)
        if lo is not None and hi is not None and not lo < hi:
            raise ctx.error(f"max ({raw['max']:g}) must be greater than min ({raw['min']:g})",
                            key_path(t, i, "max"), t, i, "max")
        window = SpecWindow(lo, hi, None, canonical)
    elif has_nominal:
        if raw["nominal"] is None:
            raise ctx.error("tolerance given without nominal", key_path(t, i, "nominal"), t, i,
                            "tolerance")
        if "tolerance" not in d:
            raise ctx.error("nominal given without tolerance", key_path(t, i, "tolerance"),
                            t, i, "nominal")
        nominal = float(u.to_canonical(raw["nominal"]))
        _check_plausible(ctx, i, "nominal", quantity, nominal, raw["nominal"], unit, canonical)
        window, tolerance_percent = _nominal_window(ctx, d, i, u, unit, nominal, canonical)
    else:
        raise ctx.error(f"a {quantity} claim needs min and/or max, or nominal and tolerance",
                        key, t, i)

    if dopant_raw is None:
        dopant = None
    elif quantity == "resistivity":
        dopant = _resistivity_dopant(ctx, d, i, dopant_raw, window)
    else:
        dopant = _dopant_name(dopant_raw, _NET_DOPANT_SPELLINGS)
    return Claim(key, quantity, window, unit, dopant, temperature,
                 tolerance_percent=tolerance_percent, note=note, line=ctx.loc.line(t, i))
