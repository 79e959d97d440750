"""The data-quality checks of one temperature set point, each graded against its thresholds.

Checks return :class:`~freezeout.records.readings.Finding` objects (or None when the data
pass), never exceptions. The codes and thresholds are in :mod:`.thresholds`.

References
----------
.. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958) (reciprocity, R_A and R_B).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

import numpy as np

from freezeout.records.readings import Finding
from freezeout.reduction.quality.metrics import relative_difference
from freezeout.reduction.quality.thresholds import QualityThresholds

__all__ = [
    "check_current_reversal",
    "check_field_reversal",
    "check_hall_offset",
    "check_nonlinearity",
    "check_ratio",
    "check_reciprocity",
    "check_repeats",
    "check_temperature_drift",
]


def _grade(value: float, warning: float, severe: float, *, below: bool = False):
    """Severity and crossed threshold of a metric, or None if it passes."""
    if math.isnan(value):
        return None
    if below:
        if value < severe:
            return "severe", severe
        if value < warning:
            return "warning", warning
        return None
    if value > severe:
        return "severe", severe
    if value > warning:
        return "warning", warning
    return None


def _pct(x: float) -> str:
    return f"{100.0 * x:.3g}%"


def _worst(metrics: Mapping[str, float]) -> tuple[str, float]:
    finite = {k: v for k, v in metrics.items() if not np.isnan(v)}
    if not finite:
        return "", math.nan
    key = max(finite, key=lambda k: finite[k])
    return key, float(finite[key])


def _finding(code: str, temperature: float, metric: float, warning: float, severe: float,
             describe: Callable[[float], tuple[dict, str]], *, below: bool = False,
             ) -> Finding | None:
    """Finding of ``code`` if ``metric`` crosses a threshold (see :func:`_grade`), else None.

    ``describe(limit)`` gives the finding's values and message for the crossed threshold
    ``limit``; it is called only for a failing metric.
    """
    grade = _grade(metric, warning, severe, below=below)
    if grade is None:
        return None
    severity, limit = grade
    values, message = describe(limit)
    return Finding(code, severity, message, float(temperature), values, float(limit))


def _worst_finding(code: str, temperature: float, metrics: Mapping[str, float], warning: float,
                   severe: float, name: str, message: Callable[[str, float, float], str], *,
                   label: str = "configuration", inputs: Mapping[str, object] | None = None,
                   ) -> Finding | None:
    """:func:`_finding` for the worst of per-configuration metrics (NaN ignored).

    The values are the worst metric as ``name``, its configuration as ``label``, each
    configuration's metric as ``"<configuration> <name>"``, then ``inputs``;
    ``message(key, worst, limit)`` gives the message.
    """
    key, worst = _worst(metrics)

    def describe(limit: float) -> tuple[dict, str]:
        values: dict = {name: worst, label: key}
        values.update({f"{k} {name}": float(v) for k, v in metrics.items()})
        values.update(inputs or {})
        return values, message(key, worst, limit)

    return _finding(code, temperature, worst, warning, severe, describe)


def check_reciprocity(
    temperature: float,
    pairs: Mapping[str, tuple[float, float]],
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """Reciprocal resistances should agree (van der Pauw's reciprocity).

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    pairs
        Label (e.g. ``"R_12,43 / R_43,12"``) -> (resistance, reciprocal resistance). [ohm]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``reciprocity`` finding for the worst pair, or None if all agree.

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958) (reciprocity theorem).
    """
    th = thresholds or QualityThresholds()
    metrics = {k: float(relative_difference(*v)) for k, v in pairs.items()}
    return _worst_finding(
        "reciprocity", temperature, metrics, th.reciprocity_warning, th.reciprocity_severe,
        "mismatch",
        lambda key, worst, limit: (
            f"reciprocal resistances {key} differ by {_pct(worst)} (threshold {_pct(limit)}): "
            "a poor contact or an inhomogeneous sample"),
        label="pair", inputs={f"{k} [ohm]": list(v) for k, v in pairs.items()},
    )


def check_current_reversal(
    temperature: float,
    asymmetries: Mapping[str, float],
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """The resistance should not depend on the current direction.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    asymmetries
        Configuration label -> relative difference of V/I between the two current
        directions (see :func:`relative_difference`). [1]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``current-reversal`` finding for the worst configuration, or None.
    """
    th = thresholds or QualityThresholds()
    return _worst_finding(
        "current-reversal", temperature, asymmetries, th.current_reversal_warning,
        th.current_reversal_severe, "asymmetry",
        lambda key, worst, limit: (
            f"{key}: the resistance differs by {_pct(worst)} between the two current "
            f"directions (threshold {_pct(limit)}): non-ohmic contacts, or an offset "
            "comparable to the signal"),
    )


def check_ratio(
    temperature: float,
    r_a: float,
    r_b: float,
    thresholds: QualityThresholds | None = None,
    labels: tuple[str, str] = ("R_A", "R_B"),
) -> Finding | None:
    """The two characteristic resistances of a near-symmetric sample should be similar.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    r_a
        Characteristic resistance R_A (or one side of a Hall bar). [ohm]
    r_b
        Characteristic resistance R_B (or the other side). [ohm]
    thresholds
        Thresholds; defaults if None.
    labels
        Names of the two resistances in the message.

    Returns
    -------
    Finding or None
        A ``ratio`` finding, or None.

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Fig. 5 (f of the ratio).
    """
    th = thresholds or QualityThresholds()
    lo, hi = sorted((abs(float(r_a)), abs(float(r_b))))
    ratio = hi / lo if lo > 0 else math.inf
    return _finding(
        "ratio", temperature, ratio, th.ratio_warning, th.ratio_severe,
        lambda limit: (
            {"ratio": ratio, f"{labels[0]} [ohm]": float(r_a), f"{labels[1]} [ohm]": float(r_b)},
            f"{labels[0]}/{labels[1]} ratio is {ratio:.3g} (threshold {limit:.3g}): sample or "
            "contact geometry far from symmetric, or an inhomogeneous sample"),
    )


def check_hall_offset(
    temperature: float,
    hall_voltage: float,
    offset_voltage: float,
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """The Hall voltage should not be buried in its offset.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    hall_voltage
        Hall voltage at the mean current and field. [V]
    offset_voltage
        Mean magnitude of the non-Hall part (misalignment plus thermoelectric) of the Hall
        readings. [V]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``hall-offset`` finding, or None.
    """
    th = thresholds or QualityThresholds()
    off = abs(float(offset_voltage))
    ratio = abs(float(hall_voltage)) / off if off > 0 else math.inf
    return _finding(
        "hall-offset", temperature, ratio, th.hall_offset_warning, th.hall_offset_severe,
        lambda limit: (
            {"ratio": ratio, "V_H [V]": float(hall_voltage), "offset [V]": off},
            f"the Hall voltage is {_pct(ratio)} of the offset voltage it is extracted from "
            f"(threshold {_pct(limit)}): raise the current or field, or realign the contacts"),
        below=True,
    )


def check_field_reversal(
    temperature: float,
    slope_pos: float,
    slope_neg: float,
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """The Hall signal at +B and at -B should agree.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    slope_pos
        Hall transresistance per unit field from the positive field alone. [ohm/T]
    slope_neg
        The same from the negative field alone. [ohm/T]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``field-reversal`` finding, or None.
    """
    th = thresholds or QualityThresholds()
    asym = float(relative_difference(slope_pos, slope_neg))
    return _finding(
        "field-reversal", temperature, asym, th.field_reversal_warning, th.field_reversal_severe,
        lambda limit: (
            {"asymmetry": asym, "slope(+B) [ohm/T]": float(slope_pos),
             "slope(-B) [ohm/T]": float(slope_neg)},
            f"the Hall signal differs by {_pct(asym)} between +B and -B (threshold "
            f"{_pct(limit)}): remanent field, field-dependent offset or non-reciprocal contacts"),
    )


def check_temperature_drift(
    temperatures, thresholds: QualityThresholds | None = None
) -> Finding | None:
    """Temperature should be steady within a set point.

    Parameters
    ----------
    temperatures
        Temperatures of the readings of one set point. [K]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``temperature-drift`` finding, or None.
    """
    th = thresholds or QualityThresholds()
    t = np.asarray(temperatures, dtype=float)
    mean = float(np.mean(t))
    spread = float(np.max(t) - np.min(t))
    drift = spread / mean
    return _finding(
        "temperature-drift", mean, drift, th.temperature_drift_warning,
        th.temperature_drift_severe,
        lambda limit: (
            {"drift": drift, "T_min [K]": float(np.min(t)), "T_max [K]": float(np.max(t))},
            f"temperature drifted by {spread:.3g} K ({_pct(drift)} of {mean:.4g} K, threshold "
            f"{_pct(limit)}) during the set point"),
    )


def check_nonlinearity(
    temperature: float,
    nonlinearities: Mapping[str, float],
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """Voltage should be proportional to current when several currents were used.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    nonlinearities
        Configuration label -> :func:`linear_nonlinearity` of its readings. [1]
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        A ``non-linearity`` finding for the worst configuration, or None.
    """
    th = thresholds or QualityThresholds()
    return _worst_finding(
        "non-linearity", temperature, nonlinearities, th.nonlinearity_warning,
        th.nonlinearity_severe, "non-linearity",
        lambda key, worst, limit: (
            f"{key}: V departs from a straight line in I by {_pct(worst)} of the signal "
            f"(threshold {_pct(limit)}): non-ohmic contacts or self-heating"),
    )


def check_repeats(
    temperature: float,
    counts: Mapping[str, int],
    thresholds: QualityThresholds | None = None,
) -> Finding | None:
    """Say when configurations were read too few times to give their own uncertainty.

    Parameters
    ----------
    temperature
        Set-point temperature. [K]
    counts
        Configuration label -> fewest readings at one current direction and field.
    thresholds
        Thresholds; defaults if None.

    Returns
    -------
    Finding or None
        An ``info`` finding ``single-reading`` listing the configurations, or None.
    """
    th = thresholds or QualityThresholds()
    few: Sequence[str] = [k for k, n in counts.items() if n < th.min_repeats]
    if not few:
        return None
    values = {"configurations": list(few), "fewest readings": int(min(counts.values()))}
    msg = (f"{len(few)} configuration(s) read fewer than {th.min_repeats} times per current "
           "direction; uncertainties taken from the spread of equivalent configurations")
    return Finding("single-reading", "info", msg, float(temperature), values,
                   float(th.min_repeats))
