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

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

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

#: Severities, mildest first.
SEVERITIES = ("info", "warning", "severe")

#: Finding code -> (threshold attribute prefix, plain description).
CODES: dict[str, tuple[str, str]] = {
    "reciprocity": ("reciprocity", "reciprocal resistances disagree"),
    "current-reversal": ("current_reversal", "current-reversal asymmetry (non-ohmic contacts)"),
    "ratio": ("ratio", "R_A/R_B ratio far from 1 (geometry or inhomogeneity)"),
    "hall-offset": ("hall_offset", "Hall voltage small against its offset"),
    "field-reversal": ("field_reversal", "field-reversal asymmetry of the Hall signal"),
    "temperature-drift": ("temperature_drift", "temperature drift within a set point"),
    "non-linearity": ("nonlinearity", "voltage not proportional to current"),
    "single-reading": ("min_repeats", "single readings, uncertainty from equivalent configs"),
}


@dataclass(frozen=True)
class Finding:
    """One data-quality finding at one temperature set point.

    Attributes
    ----------
    code
        Short kebab-case code, one of :data:`CODES`.
    severity
        ``"info"``, ``"warning"`` or ``"severe"``.
    message
        What was found, in plain words.
    temperature
        Mean temperature of the set point. [K]
    values
        The values that tripped the check (metric and its inputs), by name.
    threshold
        The threshold that was crossed (in the units of the metric).
    """

    code: str
    severity: str
    message: str
    temperature: float
    values: dict = field(default_factory=dict)
    threshold: float = math.nan

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}, not {self.severity!r}")

    def __hash__(self) -> int:
        return hash((self.code, self.severity, self.message, self.temperature, self.threshold))

    def to_dict(self) -> dict:
        """Plain-Python form (JSON-serialisable when the values are numbers or strings).

        Returns
        -------
        dict
            Keys ``code``, ``severity``, ``message``, ``temperature``, ``values``,
            ``threshold``.
        """
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "temperature": float(self.temperature),
            "values": {k: _plain(v) for k, v in self.values.items()},
            "threshold": float(self.threshold),
        }


def _plain(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, tuple | list):
        return [_plain(v) for v in value]
    return value


@dataclass(frozen=True)
class QualityThresholds:
    """Thresholds of the data-quality checks; every default can be overridden.

    Relative quantities are fractions (0.03 = 3 %). A check is graded ``severe`` past its
    severe threshold, else ``warning`` past its warning threshold; set a threshold to
    ``math.inf`` (``0`` for ``hall_offset_*``) to switch that grade off. All defaults are
    common practice, no source.

    Attributes
    ----------
    reciprocity_warning, reciprocity_severe
        Relative difference of reciprocal resistances, |R - R'| / mean. Defaults 0.03, 0.10.
    current_reversal_warning, current_reversal_severe
        Relative difference of the resistance at the two current directions, per
        configuration and current. Defaults 0.03, 0.10.
    ratio_warning, ratio_severe
        R_max/R_min of the two characteristic resistances. Defaults 2.0 and inf (van der
        Pauw's equation holds for any ratio, so a large one alone is not severe).
    hall_offset_warning, hall_offset_severe
        Lower bounds of |V_H| / offset voltage, the offset being the mean magnitude of the
        non-Hall part of the Hall readings. Defaults 0.1, 0.01.
    field_reversal_warning, field_reversal_severe
        Relative difference of the Hall slope from +B alone and from -B alone.
        Defaults 0.05, 0.20.
    temperature_drift_warning, temperature_drift_severe
        Peak-to-peak temperature within a set point relative to its mean. Defaults 0.01,
        0.05.
    nonlinearity_warning, nonlinearity_severe
        Largest residual of a straight-line fit of V against I, relative to the fitted
        |R| times the largest |I|; checked only where two or more currents were used.
        Defaults 0.01, 0.05.
    min_repeats
        Readings per configuration and current direction below which an ``info`` finding
        says the uncertainty came from equivalent configurations. Default 2.
    """

    reciprocity_warning: float = 0.03
    reciprocity_severe: float = 0.10
    current_reversal_warning: float = 0.03
    current_reversal_severe: float = 0.10
    ratio_warning: float = 2.0
    ratio_severe: float = math.inf
    hall_offset_warning: float = 0.1
    hall_offset_severe: float = 0.01
    field_reversal_warning: float = 0.05
    field_reversal_severe: float = 0.20
    temperature_drift_warning: float = 0.01
    temperature_drift_severe: float = 0.05
    nonlinearity_warning: float = 0.01
    nonlinearity_severe: float = 0.05
    min_repeats: int = 2

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            value = getattr(self, f.name)
            if not isinstance(value, int | float) or math.isnan(value) or value < 0:
                raise ValueError(f"threshold {f.name} must be a non-negative number, not {value!r}")
        for prefix in ("reciprocity", "current_reversal", "ratio", "field_reversal",
                       "temperature_drift", "nonlinearity"):
            if getattr(self, f"{prefix}_severe") < getattr(self, f"{prefix}_warning"):
                raise ValueError(f"{prefix}_severe must not be below {prefix}_warning")
        if self.hall_offset_severe > self.hall_offset_warning:
            raise ValueError("hall_offset_severe must not be above hall_offset_warning")

    @classmethod
    def from_overrides(cls, overrides: Mapping[str, float]) -> QualityThresholds:
        """Defaults with some thresholds replaced.

        Parameters
        ----------
        overrides
            Threshold name -> value; names may use ``-`` for ``_``
            (``"reciprocity-warning"``).

        Returns
        -------
        QualityThresholds
            The thresholds.

        Raises
        ------
        ValueError
            For an unknown name or an invalid value.
        """
        names = {f.name for f in dataclasses.fields(cls)}
        clean = {}
        for key, value in overrides.items():
            name = key.strip().replace("-", "_")
            if name not in names:
                raise ValueError(f"unknown threshold {key!r} (known: {', '.join(sorted(names))})")
            clean[name] = int(value) if name == "min_repeats" else float(value)
        return cls(**clean)


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


def relative_difference(a, b):
    """Relative difference ``|a - b| / |(a + b) / 2|``.

    Parameters
    ----------
    a, b
        Two estimates of the same quantity (any unit, the same for both).

    Returns
    -------
    ndarray
        The relative difference. [1]
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(a - b) / np.abs(0.5 * (a + b))


def linear_nonlinearity(current, voltage):
    """Departure of V(I) from a straight line, relative to the signal.

    Fits ``V = R I + V_0`` by least squares and returns
    ``max |residual| / (|R| max |I|)``.

    Parameters
    ----------
    current
        Signed currents of one configuration (canonical orientation). [A]
    voltage
        Voltages at those currents. [V]

    Returns
    -------
    float
        The relative non-linearity; NaN with fewer than three readings. [1]
    """
    i = np.asarray(current, dtype=float)
    v = np.asarray(voltage, dtype=float)
    if i.size < 3:
        return math.nan
    design = np.column_stack([i, np.ones_like(i)])
    coef, *_ = np.linalg.lstsq(design, v, rcond=None)
    residual = v - design @ coef
    scale = abs(coef[0]) * np.max(np.abs(i))
    if scale == 0.0:
        return math.inf
    return float(np.max(np.abs(residual)) / scale)


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
