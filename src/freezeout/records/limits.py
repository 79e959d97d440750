"""Limits and defaults that several layers check against: one value each.

Each says where it comes from; "project choice" marks our own.
"""

from __future__ import annotations

from freezeout.errors import InputError

#: Range of a Hall scattering factor r_H the tool accepts (a value outside it is a typo or
#: a unit slip: published factors for common hosts lie near 1 to 2; project choice). [1]
HALL_FACTOR_RANGE = (0.1, 10.0)

#: Readings within this many kelvin of each other form one set point (project choice,
#: common practice for a stabilised cryostat, no source). [K]
DEFAULT_GROUPING_TOLERANCE_K = 0.5


def check_hall_factor(value: float, what: str = "Hall factor", **where) -> float:
    """``value`` as a float if it lies in :data:`HALL_FACTOR_RANGE`, else an InputError.

    ``where`` is passed to :class:`InputError` (``file``, ``line``, ``column``).
    """
    lo, hi = HALL_FACTOR_RANGE
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{what} must be a number, got {value!r}", **where) from None
    if not lo <= v <= hi:
        raise InputError(f"{what} must be between {lo:g} and {hi:g}, got {value!r}", **where)
    return v
