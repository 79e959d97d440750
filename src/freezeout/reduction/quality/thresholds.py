"""The data-quality finding codes and their thresholds (defaults: common practice, no source)."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass

__all__ = ["CODES", "QualityThresholds"]

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
