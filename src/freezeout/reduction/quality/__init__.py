"""Data-quality checks of a reduction, one temperature set point at a time.

Checks return :class:`Finding` objects (or None when the data pass), never exceptions: a
poor point is kept, marked, and left for the user (and ``fit``) to judge. Each check has a
warning and a severe threshold in :class:`QualityThresholds`; a finding records the
threshold it crossed and the values that crossed it.

Finding codes (defaults in :class:`QualityThresholds`; all defaults are common practice,
no source):

``reciprocity``
    Reciprocal resistances (R_12,43 vs R_43,12, R_23,14 vs R_14,23) differ; the
    reciprocity theorem makes them equal for ohmic contacts on a homogeneous sample.
``current-reversal``
    The resistance with the current one way differs from the other way: non-ohmic
    (rectifying) contacts, or a thermoelectric offset comparable to the signal.
``ratio``
    R_A/R_B (or, for a Hall bar, the ratio of the two sides) far from 1: sample shape or
    contact placement far from symmetric, or an inhomogeneous sample.
``hall-offset``
    The Hall voltage is small against the offset (misalignment and thermoelectric) voltage
    it is extracted from.
``field-reversal``
    The Hall coefficient from the positive field alone differs from that from the negative
    field alone (each with both diagonals, which cancels the misalignment for a reciprocal
    sample): a remanent field, a field-dependent offset or non-reciprocal contacts.
``temperature-drift``
    Temperature drifted within a set point (peak-to-peak relative to the mean).
``non-linearity``
    When several currents were used, V is not proportional to I.
``single-reading``
    A configuration was read only once per current direction; uncertainties came from the
    spread between equivalent configurations instead (severity ``info``).

References
----------
.. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958) (reciprocity, R_A and R_B).
"""

from freezeout.records.readings import SEVERITIES, Finding
from freezeout.reduction.quality.checks import (
    check_current_reversal,
    check_field_reversal,
    check_hall_offset,
    check_nonlinearity,
    check_ratio,
    check_reciprocity,
    check_repeats,
    check_temperature_drift,
)
from freezeout.reduction.quality.metrics import linear_nonlinearity, relative_difference
from freezeout.reduction.quality.thresholds import CODES, QualityThresholds

__all__ = [
    "CODES",
    "SEVERITIES",
    "Finding",
    "QualityThresholds",
    "check_current_reversal",
    "check_field_reversal",
    "check_hall_offset",
    "check_nonlinearity",
    "check_ratio",
    "check_reciprocity",
    "check_repeats",
    "check_temperature_drift",
    "linear_nonlinearity",
    "relative_difference",
]
