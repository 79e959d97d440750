"""The columns of a reduced run: the trade's names, their units, which the fit uses.

A header names a quantity (``T``, ``n``, ``R_H``, ``rho``, ``sigma``, ...), perhaps an
uncertainty (``_err``, ``_sigma``, ...) and a unit (in brackets, in parentheses, after a final
underscore, or on a units row below the header). The fit needs the temperature and the
carrier density or Hall coefficient (and their uncertainties): a problem with their units
stops the read. The transport columns (resistivity, conductivity, mobility) only go into the
report: a unit there that cannot be read leaves the column out, with the reason.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from freezeout.errors import InputError
from freezeout.numbers.units import Unit, parse_unit, split_header

__all__ = ["FIT_QUANTITIES", "NAMES", "RANGES", "ColumnPlan", "classify", "header_names_run",
           "name_key", "plan_columns"]

#: Quantity -> header names, compared without case, blanks, ``_ - . /``.
NAMES: dict[str, set[str]] = {
    "temperature": {"t", "temperature", "temp"},
    "density": {"n", "p", "carrierdensity", "density", "nh", "ph", "halldensity",
                "carrierconcentration", "concentration", "bulkconcentration"},
    "hall_coefficient": {"rh", "hallcoefficient", "hallcoef"},
    "mobility": {"mu", "muh", "mobility", "hallmobility", "μ", "μh"},
    "resistivity": {"rho", "resistivity"},
    "conductivity": {"sigma", "conductivity"},
}
_ERR_SUFFIXES = ("err", "error", "unc", "uncertainty", "sigma", "std", "stderr")

#: Quantities whose columns the fit needs; a unit problem there is an error.
FIT_QUANTITIES = ("temperature", "density", "density_p", "hall_coefficient")

#: Plausible range of each quantity in canonical units (K, cm^-3, cm^3/C for |R_H|,
#: cm^2/(V s), ohm cm, S/cm); project choice, no source. The temperature range (0.1 K to
#: 5000 K) is that of cryostats and furnaces; a value outside it is a unit slip.
RANGES: dict[str, tuple[float, float]] = {
    "temperature": (0.1, 5000.0),
    "density": (0.0, 1e24),
    "density_p": (0.0, 1e24),
    "hall_coefficient": (1e-8, 1e30),
    "mobility": (0.0, 1e8),
    "resistivity": (0.0, 1e16),
    "conductivity": (1e-16, 1e16),
}


def name_key(name: str) -> str:
    """A header name compared without case, blanks and ``_ - . /``."""
    return re.sub(r"[\s_\-./]", "", name.strip().lower())


def classify(header: str) -> tuple[str, bool, str | None, str] | None:
    """``(quantity, is_error, unit, name key)`` of a column header, or None if not one of ours.

    Parameters
    ----------
    header
        The column title (with its unit, if any).
    """
    name, unit = split_header(header)
    raw = name.strip()
    lowered = raw.lower()
    is_err = False
    for suffix in _ERR_SUFFIXES:
        for sep in ("_", " ", "-"):
            if lowered.endswith(sep + suffix):
                raw = raw[: -(len(suffix) + 1)]
                lowered = raw.lower()
                is_err = True
                break
        if is_err:
            break
    key = name_key(raw)
    for quantity, names in NAMES.items():
        if key in names:
            return quantity, is_err, unit, key
    # unit after a final underscore: Temperature_K, n_cm-3
    if unit is None and "_" in raw:
        base, _, tail = raw.rpartition("_")
        bkey = name_key(base)
        for quantity, names in NAMES.items():
            if bkey in names:
                return quantity, is_err, tail, bkey
    return None


def header_names_run(cells: list[str]) -> bool:
    """Whether a row is a reduced run's header: it names a temperature and a quantity."""
    kinds = {c[0] for c in map(classify, cells) if c is not None and not c[1]}
    return "temperature" in kinds and bool(kinds & {"density", "hall_coefficient"})


def _is_forward_model_column(header: str) -> bool:
    """Columns that ``freezeout simulate`` writes besides the densities (E_F, fractions)."""
    name = header.strip().lower()
    return name.startswith(("e_f", "ionized ", "ionised "))


@dataclass
class ColumnPlan:
    """Which column holds what, and which are left out and why.

    Attributes
    ----------
    cols
        ``(quantity, is_error) -> (column index, Unit, header)``.
    base_names
        Quantity -> the name key of its value column (``n``, ``p``, ``rh``, ...).
    flag_col
        Index of the ``flags`` column, or None.
    unrecognised
        Headers that name no quantity we know (forward-model columns excepted).
    unused
        ``(header, reason)`` of recognised columns left out (a unit that cannot be read).
    """

    cols: dict = field(default_factory=dict)
    base_names: dict = field(default_factory=dict)
    flag_col: int | None = None
    unrecognised: list = field(default_factory=list)
    unused: list = field(default_factory=list)
    ignored: list = field(default_factory=list)


def _unit(quantity: str, unit: str | None) -> Unit:
    dim = "density" if quantity == "density_p" else quantity
    try:
        return parse_unit(unit, dim)
    except ValueError as exc:
        msg = str(exc)
        if quantity == "resistivity":
            try:
                parse_unit(unit, "conductivity")
            except ValueError:
                pass
            else:
                msg += "; that is a conductivity unit: name the column 'sigma'"
        raise ValueError(msg) from None


def plan_columns(header, unit_lines, file: str) -> ColumnPlan:
    """Classify a reduced run's header.

    Parameters
    ----------
    header
        Column titles (a units row already merged in).
    unit_lines
        File line of each column's unit, for messages.
    file
        The file, for messages.

    Raises
    ------
    InputError
        Two columns for one quantity, or a column the fit needs without a readable unit.
    """
    plan = ColumnPlan()
    pending = {}
    left_out = set()
    for j, h in enumerate(header):
        if name_key(h) == "flags":
            plan.flag_col = j
            continue
        c = classify(h)
        if c is None:
            if h:
                plan.ignored.append(h)
                if not _is_forward_model_column(h):
                    plan.unrecognised.append(h)
            continue
        quantity, is_err, unit, key = c
        if quantity == "density" and key in ("p", "ph"):
            quantity = "density_p"  # a hole column may stand beside an electron column
        slot = (quantity, is_err)
        if slot in plan.cols or slot in pending:
            prev = header[(plan.cols.get(slot) or pending[slot])[0]]
            raise InputError(f"two columns give the {quantity.replace('_', ' ')}: {prev!r} "
                             f"and {h!r}", file=file, line=unit_lines[j], column=h)
        needed = quantity in FIT_QUANTITIES
        if unit is None:
            if is_err:
                pending[slot] = (j, None, h)
                continue
            reason = (f"column {h!r} has no unit; write it like 'T [K]', 'n [cm^-3]', or on "
                      "a units row under the header")
            if needed:
                raise InputError(reason, file=file, line=unit_lines[j], column=h)
            plan.unused.append((h, "no unit"))
            left_out.add(quantity)
            continue
        try:
            u = _unit(quantity, unit)
        except ValueError as exc:
            if needed:
                raise InputError(str(exc), file=file, line=unit_lines[j], column=h) from None
            plan.unused.append((h, str(exc)))
            if not is_err:
                left_out.add(quantity)
            continue
        plan.cols[slot] = (j, u, h)
        if not is_err:
            plan.base_names[quantity] = key
    for (quantity, _), (j, _, h) in pending.items():
        if (quantity, False) in plan.cols:
            plan.cols[(quantity, True)] = (j, plan.cols[(quantity, False)][1], h)
        elif quantity in left_out:
            plan.unused.append((h, "its value column is not used"))
        else:
            raise InputError(f"uncertainty column {h!r} has no matching value column",
                             file=file, line=unit_lines[j], column=h)
    for quantity in sorted(left_out):
        if (quantity, True) in plan.cols:
            plan.unused.append((plan.cols.pop((quantity, True))[2],
                                "its value column is not used"))
    if ("density_p", False) in plan.cols and ("density", False) not in plan.cols:
        # only a hole column: it is the density column
        for e in (False, True):
            if ("density_p", e) in plan.cols:
                plan.cols[("density", e)] = plan.cols.pop(("density_p", e))
        plan.base_names["density"] = plan.base_names.pop("density_p")
    if ("resistivity", False) in plan.cols:
        for e in (False, True):
            if ("conductivity", e) in plan.cols:
                h = plan.cols.pop(("conductivity", e))[2]
                plan.unused.append((h, "a resistivity column is given; it is used instead"))
    plan.ignored.extend(h for h, _ in plan.unused)
    return plan
