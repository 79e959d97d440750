"""Checks of raw readings that need the contact configurations.

Four-terminal contacts that form a configuration of the geometry, and, per set point, every
configuration the reduction needs with both current directions (and, for the Hall voltage,
both field directions).

Each failure is an :class:`~freezeout.errors.InputError` naming the file, the line and the
column of the first offending reading.
"""

from __future__ import annotations

import numpy as np

from freezeout.errors import InputError
from freezeout.records.readings import RawReadings
from freezeout.reduction.vanderpauw import (
    GEOMETRIES,
    classify_configurations,
    configuration_label,
    members,
)

__all__ = ["ZERO_FIELD", "check_contacts", "field_class", "input_error", "set_point_label",
           "validate_configurations"]

#: Fields of smaller magnitude count as zero field. [T]
ZERO_FIELD = 1.0e-3


def input_error(readings: RawReadings, message: str, row: int | None = None,
                      role: str | None = None) -> InputError:
    """An InputError at reading ``row`` (its file line) and the column of ``role``."""
    line = int(readings.line[row]) if row is not None else None
    column = readings.columns.get(role) if role is not None else None
    return InputError(message, file=readings.source, line=line, column=column)


def check_contacts(r: RawReadings, geometry: str) -> None:
    """Every reading is four-terminal and its contacts form a configuration of ``geometry``.

    Raises
    ------
    InputError
        At the first reading that is not.
    """
    for i in range(r.n_readings):
        a, b, c, d = int(r.i_plus[i]), int(r.i_minus[i]), int(r.v_plus[i]), int(r.v_minus[i])
        if a == b:
            raise input_error(r, f"I+ and I- are the same contact ({a})", i, "i_minus")
        if c == d:
            raise input_error(r, f"V+ and V- are the same contact ({c})", i, "v_minus")
        if {c, d} & {a, b}:
            raise input_error(r, "a voltage contact is also a current contact; only four-terminal "
                              "readings are reduced", i, "v_plus")
    member, _, _ = classify_configurations(r.i_plus, r.i_minus, r.v_plus, r.v_minus, geometry)
    bad = np.flatnonzero(member < 0)
    if bad.size:
        i = int(bad[0])
        raise input_error(r, f"contacts I+ {r.i_plus[i]}, I- {r.i_minus[i]}, V+ {r.v_plus[i]}, "
                          f"V- {r.v_minus[i]} form no configuration of the {geometry} geometry", i,
                          "i_plus")


def field_class(b: np.ndarray) -> np.ndarray:
    """-1, 0 or +1 per reading: negative, zero (below :data:`ZERO_FIELD`) or positive field."""
    return np.where(b > ZERO_FIELD, 1, np.where(b < -ZERO_FIELD, -1, 0))


def set_point_label(r: RawReadings, rows: np.ndarray) -> str:
    """``"T = 77.3 K"``: the set point of ``rows`` in messages."""
    return f"T = {np.mean(r.temperature[rows]):.4g} K"


def validate_configurations(readings: RawReadings) -> None:
    """Check that every set point has the configurations the reduction needs.

    Van der Pauw geometry: R_12,43, R_43,12, R_23,14 and R_14,23 (at zero field, or at
    +/-B), and both Hall diagonals (current 1->3 with V2 - V4, current 2->4 with V3 - V1)
    at +B and at -B, each with both current directions. Hall bar: at least one side's
    longitudinal configuration and one Hall pair at +B and -B, both current directions.

    Parameters
    ----------
    readings
        Grouped readings.

    Raises
    ------
    InputError
        Naming the file and the first line of the set point (or of the configuration).
    """
    r = readings
    member, isign, _ = classify_configurations(r.i_plus, r.i_minus, r.v_plus, r.v_minus,
                                               r.geometry)
    fclass = field_class(r.field)
    all_members = members(r.geometry)
    table = GEOMETRIES[r.geometry][0]
    csign = isign * np.sign(r.current).astype(int)
    for g in range(r.n_groups):
        rows = np.flatnonzero(r.group == g)
        where = set_point_label(r, rows)
        first = int(rows[0])
        for role, role_members in table.items():
            present = []
            for m in role_members:
                k = all_members.index(m)
                mrows = rows[member[rows] == k]
                if role == "H":
                    classes = {int(c) for c in fclass[mrows]} - {0}
                    if classes == {1} or classes == {-1}:
                        sign = "+B" if classes == {1} else "-B"
                        raise input_error(r, f"{where}: {configuration_label(m)} has readings at "
                                          f"only one field direction ({sign}); the Hall voltage "
                                          "needs both +B and -B", int(mrows[0]), "field")
                    if not classes:
                        continue
                    use = mrows[fclass[mrows] != 0]
                else:
                    if mrows.size == 0:
                        continue
                    zero = mrows[fclass[mrows] == 0]
                    use = zero if zero.size else mrows
                for c in sorted({int(c) for c in fclass[use]}):
                    crow = use[fclass[use] == c]
                    if not (np.any(csign[crow] > 0) and np.any(csign[crow] < 0)):
                        raise input_error(r, f"{where}: {configuration_label(m)} has readings "
                                          "for only one current direction; current reversal is "
                                          "needed to cancel thermoelectric offsets", int(crow[0]),
                                          "current")
                present.append(m)
            need_all = r.geometry == "van-der-pauw"
            missing = [m for m in role_members if m not in present]
            if (need_all and missing) or not present:
                what = ", ".join(configuration_label(m) for m in (missing or role_members))
                extra = " at +B and -B" if role == "H" else ""
                raise input_error(r, f"{where}: missing configuration {what}{extra} (lines "
                                  f"{int(r.line[rows].min())}-{int(r.line[rows].max())})", first)
