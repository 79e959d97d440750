"""Plain data of the reduction, shared by io and reduction.

Raw readings as read from a file, validated raw readings grouped by set point, the reduced
run and its data-quality findings. All values are in canonical units (K, T, A, V, cm,
ohm cm, cm^3/C, cm^-3, cm^2/(V s)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from freezeout.records.run import run_carrier

__all__ = ["DEFAULT_COLUMNS", "SEVERITIES", "Finding", "RawReadings", "RawTable",
           "ReducedRun"]

#: Severities, mildest first.
SEVERITIES = ("info", "warning", "severe")

@dataclass(frozen=True)
class Finding:
    """One data-quality finding at one temperature set point.

    Attributes
    ----------
    code
        Short kebab-case code, one of :data:`freezeout.reduction.quality.CODES`.
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


#: Default column names used in error messages for readings built from arrays.
DEFAULT_COLUMNS: dict[str, str] = {
    "temperature": "T",
    "field": "B",
    "current": "I",
    "i_plus": "I+",
    "i_minus": "I-",
    "v_plus": "V+",
    "v_minus": "V-",
    "voltage": "V",
}


@dataclass(frozen=True, eq=False)
class RawTable:
    """The readings of a raw-readings file as read: converted, not yet checked or grouped.

    A file reader (:func:`freezeout.io.raw_reader.read_raw`) fills it;
    :func:`freezeout.reduction.readings_from_table` checks it and groups it into
    :class:`RawReadings`.

    Attributes
    ----------
    source
        The file, for messages.
    temperature, field, current, voltage
        One value per reading, converted to canonical units. [K], [T], [A], [V]
    i_plus, i_minus, v_plus, v_minus
        Contact labels as written in the file (text).
    line
        1-based file line of each reading.
    thickness, thickness_err
        Thickness of the conducting layer and its standard uncertainty. [cm]
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.
    width, width_err, spacing, spacing_err
        Hall bar width and voltage-contact spacing with uncertainties; None and 0 for a
        van der Pauw sample. [cm]
    metadata
        ``key: value`` metadata of the file, with ``thickness``, ``thickness_source`` and
        ``raw_sha256`` (SHA-256 of the file's bytes) set by the reader.
    columns
        Column names of the file, by role, for messages.
    """

    source: str
    temperature: np.ndarray
    field: np.ndarray
    current: np.ndarray
    voltage: np.ndarray
    i_plus: np.ndarray
    i_minus: np.ndarray
    v_plus: np.ndarray
    v_minus: np.ndarray
    line: np.ndarray
    thickness: float
    thickness_err: float = 0.0
    geometry: str = "van-der-pauw"
    width: float | None = None
    width_err: float = 0.0
    spacing: float | None = None
    spacing_err: float = 0.0
    metadata: dict = field(default_factory=dict)
    columns: dict = field(default_factory=lambda: dict(DEFAULT_COLUMNS))


@dataclass(frozen=True, eq=False)
class RawReadings:
    """Validated raw readings grouped by temperature set point, in canonical units.

    Attributes
    ----------
    source
        Where the readings came from (a file path, or a label), for messages.
    temperature
        Temperature of each reading. [K]
    field
        Magnetic field of each reading, signed (positive towards the viewer). [T]
    current
        Current into ``i_plus`` and out of ``i_minus``; a negative value flows the other
        way. [A]
    voltage
        V(v_plus) - V(v_minus). [V]
    i_plus, i_minus, v_plus, v_minus
        Contact numbers (1 to 4, or 1 to 6 for a Hall bar).
    line
        1-based line of each reading in its file.
    group
        Set-point index of each reading (0, 1, ... in order of first appearance).
    thickness
        Thickness of the conducting layer. [cm]
    thickness_err
        Standard uncertainty of the thickness. [cm]
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.
    width, width_err
        Hall bar width and its uncertainty, else None and 0. [cm]
    spacing, spacing_err
        Hall bar voltage-contact spacing and its uncertainty, else None and 0. [cm]
    metadata
        ``key: value`` metadata (sample, thickness as written, ...).
    columns
        Column names used in error messages, by role.
    """

    source: str
    temperature: np.ndarray
    field: np.ndarray
    current: np.ndarray
    voltage: np.ndarray
    i_plus: np.ndarray
    i_minus: np.ndarray
    v_plus: np.ndarray
    v_minus: np.ndarray
    line: np.ndarray
    group: np.ndarray
    thickness: float
    thickness_err: float = 0.0
    geometry: str = "van-der-pauw"
    width: float | None = None
    width_err: float = 0.0
    spacing: float | None = None
    spacing_err: float = 0.0
    metadata: dict = field(default_factory=dict)
    columns: dict = field(default_factory=lambda: dict(DEFAULT_COLUMNS))

    @property
    def n_readings(self) -> int:
        """Number of readings."""
        return int(self.temperature.size)

    @property
    def n_groups(self) -> int:
        """Number of temperature set points."""
        return int(self.group.max()) + 1 if self.group.size else 0


@dataclass(frozen=True, eq=False)
class ReducedRun:
    """A reduced temperature run, one point per set point, ascending temperature.

    Attributes
    ----------
    temperature
        Mean temperature of each set point. [K]
    temperature_spread
        Peak-to-peak temperature of the readings of each set point. [K]
    r_a, r_a_err
        Characteristic resistance R_A (mean of R_12,43 and R_43,12) and uncertainty; for a
        Hall bar the longitudinal resistance of the lower side (V2 - V3), NaN if not
        measured. [ohm]
    r_b, r_b_err
        R_B (mean of R_23,14 and R_14,23) and uncertainty; for a Hall bar the upper side
        (V6 - V5), NaN if not measured. [ohm]
    sheet_resistance, sheet_resistance_err
        Sheet resistance and uncertainty. [ohm]
    resistivity, resistivity_err
        Resistivity and uncertainty. [ohm cm]
    hall_coefficient, hall_coefficient_err
        Hall coefficient (positive for holes) and uncertainty. [cm^3/C]
    density, density_err
        Hall density r_H / (q |R_H|) and uncertainty (unsigned). [cm^-3]
    mobility, mobility_err
        Hall mobility |R_H| / rho and uncertainty. [cm^2/(V s)]
    sheet_density
        Hall sheet density, density times thickness. [cm^-2]
    hall_voltage
        Hall voltage at the mean current and field magnitude of the Hall readings. [V]
    carrier
        ``"n"`` or ``"p"`` per point, from the sign of R_H.
    flags
        Finding codes per point joined by ``";"``; empty string when clean.
    severe
        True where a severe finding was made.
    findings
        All findings, by temperature.
    metadata
        Provenance and sample metadata (``key: value`` strings).
    n_readings
        Number of readings per set point.
    thickness, thickness_err
        Thickness used and its uncertainty. [cm]
    hall_factor
        Hall scattering factor r_H applied to the density. [1]
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.
    """

    temperature: np.ndarray
    temperature_spread: np.ndarray
    r_a: np.ndarray
    r_a_err: np.ndarray
    r_b: np.ndarray
    r_b_err: np.ndarray
    sheet_resistance: np.ndarray
    sheet_resistance_err: np.ndarray
    resistivity: np.ndarray
    resistivity_err: np.ndarray
    hall_coefficient: np.ndarray
    hall_coefficient_err: np.ndarray
    density: np.ndarray
    density_err: np.ndarray
    mobility: np.ndarray
    mobility_err: np.ndarray
    sheet_density: np.ndarray
    hall_voltage: np.ndarray
    carrier: tuple[str, ...]
    flags: tuple[str, ...]
    severe: np.ndarray
    findings: tuple[Finding, ...]
    metadata: dict
    n_readings: np.ndarray
    thickness: float
    thickness_err: float
    hall_factor: float
    geometry: str

    @property
    def temperature_err(self) -> np.ndarray:
        """Standard uncertainty of each set-point temperature. [K]

        The readings spread over ``temperature_spread``, taken as a rectangular
        distribution of that width: width/sqrt(12) (GUM, JCGM 100:2008, 4.3.7).
        """
        return self.temperature_spread / np.sqrt(12.0)

    @property
    def n_points(self) -> int:
        """Number of temperature points."""
        return int(self.temperature.size)

    @property
    def majority_carrier(self) -> str:
        """The run's carrier type, by the one rule of :func:`~freezeout.records.run.run_carrier`.

        That is the type of most points in the colder half of the run.
        """
        return run_carrier(self.carrier, self.temperature)

    def findings_at(self, index: int) -> tuple[Finding, ...]:
        """Findings of one point.

        Parameters
        ----------
        index
            Point index.

        Returns
        -------
        tuple of Finding
            The findings whose temperature is that point's.
        """
        t = float(self.temperature[index])
        return tuple(f for f in self.findings if f.temperature == t)

    def to_dict(self) -> dict:
        """Plain-Python form: lists of floats, strings and bools, findings as dicts.

        Returns
        -------
        dict
            Every attribute, arrays as lists.
        """
        out: dict = {}
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if isinstance(value, np.ndarray):
                out[name] = value.tolist()
            elif name == "findings":
                out[name] = [f.to_dict() for f in value]
            elif isinstance(value, tuple):
                out[name] = list(value)
            elif isinstance(value, dict):
                out[name] = dict(value)
            else:
                out[name] = value
        return out

