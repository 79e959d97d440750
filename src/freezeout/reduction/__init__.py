"""Reduction of raw van der Pauw and Hall readings to a reduced temperature run.

The pipeline, all on numpy arrays in canonical units (K, T, A, V, cm, ohm cm, cm^3/C,
cm^-3, cm^2/(V s)):

1. :func:`readings_from_arrays` validates the readings and groups them by temperature set
   point (:func:`group_temperatures`) into a :class:`RawReadings`; the file reader
   :func:`freezeout.io.raw.read_raw` builds one from a raw CSV.
2. :func:`reduce_readings` reduces each set point: per configuration a straight line
   ``V = R I + V_0`` through all readings (both current directions, every current), whose
   slope is free of thermoelectric offsets; van der Pauw's equation for the sheet
   resistance (:mod:`.vanderpauw`); the field-reversed slopes of both Hall diagonals for
   the Hall coefficient (:mod:`.hall`); data-quality findings (:mod:`.quality`).

Uncertainty rule: the standard uncertainty of a configuration's resistance is the standard
error of the fitted slope (for repeated readings at one current this is the standard
uncertainty of the mean, std/sqrt(n)). When any configuration entering a combined value
was read only once per current direction (no spread of its own), the combined value's
uncertainty is instead the standard uncertainty of the mean of its equivalent
configurations, ``|R - R'| / 2`` for the two reciprocal resistances or the two Hall
diagonals. Uncertainties of the thickness (and, for a Hall bar, of width and spacing) and
of the mean field are added in quadrature, and all are propagated to first order
(JCGM 100:2008, Eq. 10). The Hall mobility does not depend on the thickness, so its
uncertainty does not either.

References
----------
.. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
   discs of arbitrary shape", Philips Res. Rep. 13, 1-9 (1958).
.. [2] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement (GUM).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from freezeout.errors import InputError
from freezeout.reduction import hall, quality, vanderpauw
from freezeout.reduction.hall import (
    carrier_type,
    field_reversed_slope,
    hall_coefficient,
    hall_density,
    hall_mobility,
    sheet_density,
)
from freezeout.reduction.quality import Finding, QualityThresholds
from freezeout.reduction.vanderpauw import (
    GEOMETRIES,
    classify_configurations,
    configuration_label,
    correction_factor,
    hall_bar_sheet_resistance,
    members,
    resistivity,
    sheet_resistance,
    sheet_resistance_gradient,
    sheet_resistance_uncertainty,
)

__all__ = [
    "CURRENT_LEVEL_TOLERANCE",
    "DEFAULT_TEMPERATURE_TOLERANCE",
    "ZERO_FIELD",
    "Finding",
    "QualityThresholds",
    "RawReadings",
    "SEVERE_MARK",
    "ReducedRun",
    "carrier_type",
    "classify_configurations",
    "configuration_label",
    "correction_factor",
    "field_reversed_slope",
    "group_temperatures",
    "hall",
    "hall_bar_sheet_resistance",
    "hall_coefficient",
    "hall_density",
    "hall_mobility",
    "quality",
    "readings_from_arrays",
    "reduce_readings",
    "reduced_columns",
    "resistivity",
    "sheet_density",
    "sheet_resistance",
    "sheet_resistance_gradient",
    "sheet_resistance_uncertainty",
    "validate_configurations",
    "vanderpauw",
]

#: Default grouping tolerance of temperature set points: a reading joins a set point when
#: it is within this many kelvin of the set point's running mean. [K]
DEFAULT_TEMPERATURE_TOLERANCE = 0.5

#: Fields of smaller magnitude count as zero field. [T]
ZERO_FIELD = 1.0e-3

#: Currents whose magnitudes differ by less than this fraction are the same current. [1]
CURRENT_LEVEL_TOLERANCE = 0.02

#: Mark appended to the code of a severe finding in the reduced-CSV ``flags`` column.
SEVERE_MARK = "!"

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
        """The carrier type of most points (``"n"`` on a tie)."""
        n_p = sum(c == "p" for c in self.carrier)
        return "p" if n_p > len(self.carrier) - n_p else "n"

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


def reduced_columns(run: ReducedRun) -> dict[str, list]:
    """The reduced run as named columns, pandas-free, in the reduced-CSV layout.

    Parameters
    ----------
    run
        A reduced run.

    Returns
    -------
    dict
        Column header -> list of values, in the order ``T [K]``, ``T_err [K]`` (the set
        point's spread over sqrt(12)), ``rho [ohm cm]``,
        ``rho_err [ohm cm]``, ``R_H [cm^3/C]``, ``R_H_err [cm^3/C]``, ``n [cm^-3]`` or
        ``p [cm^-3]`` (the run's majority carrier; unsigned), its ``_err``, ``mu_H
        [cm^2/(V s)]``, ``mu_H_err [cm^2/(V s)]``, ``flags`` (codes joined by ``;``, the
        codes of severe findings followed by :data:`SEVERE_MARK`).
    """
    c = run.majority_carrier
    flags = []
    for i in range(run.n_points):
        codes = {}
        for f in run.findings_at(i):
            mark = SEVERE_MARK if f.severity == "severe" else ""
            codes[f.code] = codes.get(f.code, "") or mark
        flags.append(";".join(code + mark for code, mark in codes.items()))
    return {
        "T [K]": run.temperature.tolist(),
        "T_err [K]": run.temperature_err.tolist(),
        "rho [ohm cm]": run.resistivity.tolist(),
        "rho_err [ohm cm]": run.resistivity_err.tolist(),
        "R_H [cm^3/C]": run.hall_coefficient.tolist(),
        "R_H_err [cm^3/C]": run.hall_coefficient_err.tolist(),
        f"{c} [cm^-3]": run.density.tolist(),
        f"{c}_err [cm^-3]": run.density_err.tolist(),
        "mu_H [cm^2/(V s)]": run.mobility.tolist(),
        "mu_H_err [cm^2/(V s)]": run.mobility_err.tolist(),
        "flags": flags,
    }


def group_temperatures(temperature, tolerance: float = DEFAULT_TEMPERATURE_TOLERANCE):
    """Group readings into temperature set points.

    Readings are taken in order; each joins the set point whose running mean temperature is
    nearest, if within ``tolerance``, else it starts a new set point. Set points visited
    twice (a run that returns to a temperature) are therefore merged.

    Parameters
    ----------
    temperature
        Temperature of each reading, in file order. [K]
    tolerance
        Largest distance from a set point's running mean. [K]

    Returns
    -------
    ndarray of int
        Set-point index per reading, numbered in order of first appearance.
    """
    t = np.asarray(temperature, dtype=float)
    if not (tolerance > 0 and math.isfinite(tolerance)):
        raise ValueError("temperature tolerance must be positive and finite")
    sums: list[float] = []
    counts: list[int] = []
    labels = np.empty(t.size, dtype=int)
    for i, value in enumerate(t):
        best, best_dist = -1, math.inf
        for g, (s, n) in enumerate(zip(sums, counts, strict=True)):
            dist = abs(value - s / n)
            if dist <= tolerance and dist < best_dist:
                best, best_dist = g, dist
        if best < 0:
            sums.append(float(value))
            counts.append(1)
            labels[i] = len(sums) - 1
        else:
            sums[best] += float(value)
            counts[best] += 1
            labels[i] = best
    return labels


def _fail(readings: RawReadings, message: str, row: int | None = None, role: str | None = None):
    line = int(readings.line[row]) if row is not None else None
    column = readings.columns.get(role) if role is not None else None
    return InputError(message, file=readings.source, line=line, column=column)


def readings_from_arrays(
    temperature,
    field,
    current,
    i_plus,
    i_minus,
    v_plus,
    v_minus,
    voltage,
    *,
    thickness: float,
    thickness_err: float = 0.0,
    geometry: str = "van-der-pauw",
    width: float | None = None,
    width_err: float = 0.0,
    spacing: float | None = None,
    spacing_err: float = 0.0,
    temperature_tolerance: float = DEFAULT_TEMPERATURE_TOLERANCE,
    source: str = "<arrays>",
    lines=None,
    metadata: Mapping[str, str] | None = None,
    columns: Mapping[str, str] | None = None,
) -> RawReadings:
    """Validate raw readings, group them by set point and check every configuration is there.

    Parameters
    ----------
    temperature
        Temperature per reading. [K]
    field
        Field per reading, signed. [T]
    current
        Current into ``i_plus``, out of ``i_minus``. [A]
    i_plus, i_minus, v_plus, v_minus
        Contact numbers per reading.
    voltage
        V(v_plus) - V(v_minus) per reading. [V]
    thickness
        Thickness of the conducting layer. [cm]
    thickness_err
        Standard uncertainty of the thickness. [cm]
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.
    width, width_err
        Hall bar width and uncertainty. [cm]
    spacing, spacing_err
        Hall bar voltage-contact spacing and uncertainty. [cm]
    temperature_tolerance
        Grouping tolerance, see :func:`group_temperatures`. [K]
    source
        Name of the origin, for error messages.
    lines
        1-based file line per reading (default 1, 2, ...).
    metadata
        Metadata to carry along.
    columns
        Column names for error messages, by role (see ``DEFAULT_COLUMNS``).

    Returns
    -------
    RawReadings
        The grouped readings.

    Raises
    ------
    InputError
        Naming file, line and column: non-finite values, non-positive temperature, zero
        current, unknown contact labels, contacts that form no configuration, missing
        configurations, a single current or field direction. (Duplicate rows are a
        property of files and are caught by the file reader.)
    """
    arrays = {
        "temperature": np.asarray(temperature, dtype=float).ravel(),
        "field": np.asarray(field, dtype=float).ravel(),
        "current": np.asarray(current, dtype=float).ravel(),
        "voltage": np.asarray(voltage, dtype=float).ravel(),
    }
    contacts = {}
    for role, values in (("i_plus", i_plus), ("i_minus", i_minus), ("v_plus", v_plus),
                         ("v_minus", v_minus)):
        raw = np.asarray(values).ravel()
        contacts[role] = raw
    n = arrays["temperature"].size
    line = np.arange(1, n + 1) if lines is None else np.asarray(lines, dtype=int).ravel()
    cols = dict(DEFAULT_COLUMNS)
    if columns:
        cols.update(columns)
    if geometry not in GEOMETRIES:
        raise InputError(f"unknown geometry {geometry!r} (known: {', '.join(GEOMETRIES)})",
                         file=source)
    n_contacts = GEOMETRIES[geometry][1]
    provisional = RawReadings(
        source=source, line=line, group=np.zeros(n, dtype=int), thickness=float("nan"),
        i_plus=np.zeros(n, dtype=int), i_minus=np.zeros(n, dtype=int),
        v_plus=np.zeros(n, dtype=int), v_minus=np.zeros(n, dtype=int), columns=cols,
        **arrays,
    )
    if n == 0:
        raise InputError("no readings", file=source)
    for role, values in list(arrays.items()) + list(contacts.items()):
        if values.size != n or line.size != n:
            raise InputError(f"{cols[role]} has {values.size} values for {n} readings",
                             file=source)
    for role, values in arrays.items():
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise _fail(provisional, "value is not a finite number", int(bad[0]), role)
    bad = np.flatnonzero(arrays["temperature"] <= 0.0)
    if bad.size:
        raise _fail(provisional, f"temperature {arrays['temperature'][bad[0]]:g} K is not "
                    "above absolute zero", int(bad[0]), "temperature")
    bad = np.flatnonzero(arrays["current"] == 0.0)
    if bad.size:
        raise _fail(provisional, "current is zero; a reading needs a non-zero current",
                    int(bad[0]), "current")
    labels = {}
    for role, values in contacts.items():
        out = np.empty(n, dtype=int)
        for i, v in enumerate(values):
            try:
                fv = float(v)
                ok = fv.is_integer() and 1 <= fv <= n_contacts
            except (TypeError, ValueError):
                ok = False
            if not ok:
                shown = repr(str(v)) if isinstance(v, str) else repr(v)
                raise _fail(provisional, f"unknown contact label {shown}: contacts are numbered "
                            f"1 to {n_contacts} for {geometry} geometry", i, role)
            out[i] = int(fv)
        labels[role] = out
    geom = RawReadings(
        source=source, line=line, group=np.zeros(n, dtype=int), thickness=float("nan"),
        columns=cols, **arrays, **labels,
    )
    _check_contacts(geom, geometry)
    for name, value, err in (("thickness", thickness, thickness_err),
                             ("width", width, width_err), ("spacing", spacing, spacing_err)):
        if name != "thickness" and geometry != "hall-bar":
            continue
        if value is None or not math.isfinite(value) or value <= 0:
            raise InputError(f"{name} must be a positive length (got {value!r})", file=source)
        if not math.isfinite(err) or err < 0:
            raise InputError(f"{name} uncertainty must be a non-negative length", file=source)
    group = group_temperatures(arrays["temperature"], temperature_tolerance)
    readings = RawReadings(
        source=source, line=line, group=group, thickness=float(thickness),
        thickness_err=float(thickness_err), geometry=geometry,
        width=None if geometry != "hall-bar" else float(width),
        width_err=float(width_err) if geometry == "hall-bar" else 0.0,
        spacing=None if geometry != "hall-bar" else float(spacing),
        spacing_err=float(spacing_err) if geometry == "hall-bar" else 0.0,
        metadata=dict(metadata or {}), columns=cols, **arrays, **labels,
    )
    validate_configurations(readings)
    return readings


def _check_contacts(r: RawReadings, geometry: str) -> None:
    for i in range(r.n_readings):
        a, b, c, d = int(r.i_plus[i]), int(r.i_minus[i]), int(r.v_plus[i]), int(r.v_minus[i])
        if a == b:
            raise _fail(r, f"I+ and I- are the same contact ({a})", i, "i_minus")
        if c == d:
            raise _fail(r, f"V+ and V- are the same contact ({c})", i, "v_minus")
        if {c, d} & {a, b}:
            raise _fail(r, "a voltage contact is also a current contact; only four-terminal "
                        "readings are reduced", i, "v_plus")
    member, _, _ = classify_configurations(r.i_plus, r.i_minus, r.v_plus, r.v_minus, geometry)
    bad = np.flatnonzero(member < 0)
    if bad.size:
        i = int(bad[0])
        raise _fail(r, f"contacts I+ {r.i_plus[i]}, I- {r.i_minus[i]}, V+ {r.v_plus[i]}, "
                    f"V- {r.v_minus[i]} form no configuration of the {geometry} geometry", i,
                    "i_plus")


def _field_class(b: np.ndarray) -> np.ndarray:
    return np.where(b > ZERO_FIELD, 1, np.where(b < -ZERO_FIELD, -1, 0))


def _t_label(r: RawReadings, rows: np.ndarray) -> str:
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
    fclass = _field_class(r.field)
    all_members = members(r.geometry)
    table = GEOMETRIES[r.geometry][0]
    csign = isign * np.sign(r.current).astype(int)
    for g in range(r.n_groups):
        rows = np.flatnonzero(r.group == g)
        where = _t_label(r, rows)
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
                        raise _fail(r, f"{where}: {configuration_label(m)} has readings at "
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
                        raise _fail(r, f"{where}: {configuration_label(m)} has readings for "
                                    "only one current direction; current reversal is needed "
                                    "to cancel thermoelectric offsets", int(crow[0]), "current")
                present.append(m)
            need_all = r.geometry == "van-der-pauw"
            missing = [m for m in role_members if m not in present]
            if (need_all and missing) or not present:
                what = ", ".join(configuration_label(m) for m in (missing or role_members))
                extra = " at +B and -B" if role == "H" else ""
                raise _fail(r, f"{where}: missing configuration {what}{extra} (lines "
                            f"{int(r.line[rows].min())}-{int(r.line[rows].max())})", first)


@dataclass(frozen=True)
class _Line:
    """Straight-line fit V = slope I + intercept of one configuration at one field class."""

    slope: float
    slope_err: float  # NaN when the configuration has no spread of its own
    intercept: float
    field: float
    field_err: float
    fewest: int
    asymmetry: float
    nonlinearity: float
    rows: np.ndarray


def _current_levels(magnitude: np.ndarray) -> np.ndarray:
    order = np.argsort(magnitude)
    level = np.empty(magnitude.size, dtype=int)
    current_level, ref = -1, -math.inf
    for i in order:
        if magnitude[i] > ref * (1.0 + CURRENT_LEVEL_TOLERANCE):
            current_level += 1
            ref = magnitude[i]
        level[i] = current_level
    return level


def _fit_line(i_c: np.ndarray, v_c: np.ndarray, b: np.ndarray, rows: np.ndarray) -> _Line:
    n = i_c.size
    design = np.column_stack([i_c, np.ones(n)])
    (slope, intercept), *_ = np.linalg.lstsq(design, v_c, rcond=None)
    n_pos = int(np.sum(i_c > 0))
    n_neg = int(np.sum(i_c < 0))
    fewest = min(n_pos, n_neg)
    if max(n_pos, n_neg) >= 2 and n > 2:
        residual = v_c - design @ np.array([slope, intercept])
        sxx = float(np.sum((i_c - i_c.mean()) ** 2))
        slope_err = math.sqrt(float(np.sum(residual**2)) / (n - 2) / sxx)
    else:
        slope_err = math.nan
    levels = _current_levels(np.abs(i_c))
    asym = []
    for lev in range(int(levels.max()) + 1):
        at = levels == lev
        pos = at & (i_c > 0)
        neg = at & (i_c < 0)
        if pos.any() and neg.any():
            r_pos = float(np.mean(v_c[pos] / i_c[pos]))
            r_neg = float(np.mean(v_c[neg] / i_c[neg]))
            asym.append(float(quality.relative_difference(r_pos, r_neg)))
    nonlin = quality.linear_nonlinearity(i_c, v_c) if levels.max() >= 1 else math.nan
    field_err = float(np.std(b, ddof=1) / math.sqrt(n)) if n > 1 else 0.0
    return _Line(float(slope), slope_err, float(intercept), float(np.mean(b)), field_err,
                 fewest, max(asym) if asym else math.nan, nonlin, rows)


def _combine(values: Sequence[float], errs: Sequence[float]) -> tuple[float, float]:
    """Mean of equivalent estimates and its uncertainty by the module's rule."""
    v = np.asarray(values, dtype=float)
    e = np.asarray(errs, dtype=float)
    mean = float(np.mean(v))
    if np.all(np.isfinite(e)):
        return mean, float(np.sqrt(np.sum(e**2)) / v.size)
    if v.size >= 2:
        return mean, float(np.std(v, ddof=1) / math.sqrt(v.size))
    return mean, math.nan


def _rel(err: float, value: float) -> float:
    return abs(err / value) if value != 0 else math.inf


def _reduce_group(r: RawReadings, rows: np.ndarray, member, i_c, v_c, fclass,
                  th: QualityThresholds, hall_factor: float) -> dict:
    all_members = members(r.geometry)
    table = GEOMETRIES[r.geometry][0]
    where = _t_label(r, rows)
    fits: dict[tuple[tuple[int, int, int, int], int], _Line] = {}
    for m in all_members:
        k = all_members.index(m)
        mrows = rows[member[rows] == k]
        for c in (-1, 0, 1):
            crow = mrows[fclass[mrows] == c]
            if crow.size and np.any(i_c[crow] > 0) and np.any(i_c[crow] < 0):
                fits[(m, c)] = _fit_line(i_c[crow], v_c[crow], r.field[crow], crow)

    # resistance configurations: zero field if measured, else the mean over +B and -B
    resistance: dict[tuple[int, int, int, int], tuple[float, float]] = {}
    used: list[tuple[str, _Line]] = []
    resistance_labels: set[str] = set()
    for m in table["A"] + table.get("B", ()):
        if (m, 0) in fits:
            chosen = [fits[(m, 0)]]
        else:
            chosen = [fits[(m, c)] for c in (1, -1) if (m, c) in fits]
        if not chosen:
            continue
        resistance[m] = _combine([f.slope for f in chosen], [f.slope_err for f in chosen])
        if not np.all(np.isfinite([f.slope_err for f in chosen])):
            resistance[m] = (resistance[m][0], math.nan)
        used.extend((configuration_label(m), f) for f in chosen)
        resistance_labels.add(configuration_label(m))
        if resistance[m][0] <= 0:
            raise _fail(r, f"{where}: {configuration_label(m)} gives a resistance of "
                        f"{resistance[m][0]:.4g} ohm, not positive: the contacts are not "
                        "numbered in order around the edge, or V+ and V- are swapped",
                        int(chosen[0].rows[0]), "v_plus")

    def role_value(role: str) -> tuple[float, float]:
        ms = [m for m in table.get(role, ()) if m in resistance]
        return _combine([resistance[m][0] for m in ms], [resistance[m][1] for m in ms])

    findings: list[Finding] = []
    t_mean = float(np.mean(r.temperature[rows]))
    if r.geometry == "van-der-pauw":
        r_a, r_a_err = role_value("A")
        r_b, r_b_err = role_value("B")
        r_s, r_s_err = (float(x) for x in sheet_resistance_uncertainty(r_a, r_b, r_a_err,
                                                                      r_b_err))
        pairs = {}
        for m1, m2 in (table["A"], table["B"]):
            pairs[f"R_{m1[0]}{m1[1]},{m1[2]}{m1[3]} / R_{m2[0]}{m2[1]},{m2[2]}{m2[3]}"] = (
                resistance[m1][0], resistance[m2][0])
        findings.append(quality.check_reciprocity(t_mean, pairs, th))
        findings.append(quality.check_ratio(t_mean, r_a, r_b, th))
    else:
        side_a, side_b = table["A"]
        r_a, r_a_err = resistance.get(side_a, (math.nan, math.nan))
        r_b, r_b_err = resistance.get(side_b, (math.nan, math.nan))
        r_xx, r_xx_err = role_value("A")
        w, L = float(r.width), float(r.spacing)
        r_s = float(hall_bar_sheet_resistance(r_xx, w, L))
        r_s_err = abs(r_s) * math.sqrt(_rel(r_xx_err, r_xx) ** 2 + (r.width_err / w) ** 2
                                       + (r.spacing_err / L) ** 2)
        if side_a in resistance and side_b in resistance:
            findings.append(quality.check_ratio(t_mean, r_a, r_b, th,
                                                labels=("R_xx(2-3)", "R_xx(6-5)")))

    # Hall: field-reversed slope of each diagonal (or pair), then their mean
    slopes, slope_errs, field_errs = [], [], []
    pos_r, pos_b, neg_r, neg_b = [], [], [], []
    hall_rows = []
    zero_based = []
    for m in table["H"]:
        if (m, 1) not in fits or (m, -1) not in fits:
            continue
        fp, fn = fits[(m, 1)], fits[(m, -1)]
        d_b = fp.field - fn.field
        k = float(field_reversed_slope(fp.slope, fn.slope, fp.field, fn.field))
        slopes.append(k)
        slope_errs.append(math.hypot(fp.slope_err, fn.slope_err) / d_b)
        field_errs.append(abs(k) * math.hypot(fp.field_err, fn.field_err) / d_b)
        pos_r.append(fp.slope)
        pos_b.append(fp.field)
        neg_r.append(fn.slope)
        neg_b.append(fn.field)
        hall_rows.extend([fp.rows, fn.rows])
        used.extend((configuration_label(m) + s, f) for s, f in ((" +B", fp), (" -B", fn)))
        if (m, 0) in fits:
            f0 = fits[(m, 0)]
            zero_based.append(((fp.slope - f0.slope) / fp.field, (fn.slope - f0.slope) / fn.field))
    k, k_stat = _combine(slopes, slope_errs)
    k_err = math.hypot(k_stat, float(np.sqrt(np.sum(np.square(field_errs)))) / len(slopes))
    h_rows = np.concatenate(hall_rows)
    b_mag = float(np.mean(np.abs(r.field[h_rows])))
    i_mag = float(np.mean(np.abs(i_c[h_rows])))
    v_hall = k * b_mag * i_mag
    non_hall = v_c[h_rows] - k * r.field[h_rows] * i_c[h_rows]
    findings.append(quality.check_hall_offset(t_mean, v_hall, float(np.mean(np.abs(non_hall))),
                                              th))
    if r.geometry == "van-der-pauw":
        k_pos = float(np.mean(pos_r) / np.mean(pos_b))
        k_neg = float(np.mean(neg_r) / np.mean(neg_b))
        findings.append(quality.check_field_reversal(t_mean, k_pos, k_neg, th))
    elif zero_based:
        k_pos = float(np.mean([z[0] for z in zero_based]))
        k_neg = float(np.mean([z[1] for z in zero_based]))
        findings.append(quality.check_field_reversal(t_mean, k_pos, k_neg, th))

    resist_fits = [(label, f) for label, f in used if label in resistance_labels]
    findings.append(quality.check_current_reversal(
        t_mean, {label: f.asymmetry for label, f in resist_fits}, th))
    findings.append(quality.check_nonlinearity(
        t_mean, {label: f.nonlinearity for label, f in resist_fits}, th))
    findings.append(quality.check_temperature_drift(r.temperature[rows], th))
    findings.append(quality.check_repeats(t_mean, {label: f.fewest for label, f in used}, th))

    t, t_err = r.thickness, r.thickness_err
    rho = float(resistivity(r_s, t))
    rho_err = abs(rho) * math.hypot(_rel(r_s_err, r_s), t_err / t)
    r_h = float(hall_coefficient(k, t))
    r_h_err = abs(r_h) * math.hypot(_rel(k_err, k), t_err / t)
    dens = float(hall_density(r_h, hall_factor))
    dens_err = dens * _rel(r_h_err, r_h) if math.isfinite(dens) else math.nan
    mob = float(hall_mobility(r_h, rho))
    mob_err = mob * math.hypot(_rel(k_err, k), _rel(r_s_err, r_s))
    return {
        "temperature": t_mean,
        "temperature_spread": float(np.ptp(r.temperature[rows])),
        "r_a": r_a, "r_a_err": r_a_err, "r_b": r_b, "r_b_err": r_b_err,
        "sheet_resistance": r_s, "sheet_resistance_err": r_s_err,
        "resistivity": rho, "resistivity_err": rho_err,
        "hall_coefficient": r_h, "hall_coefficient_err": r_h_err,
        "density": dens, "density_err": dens_err,
        "mobility": mob, "mobility_err": mob_err,
        "sheet_density": dens * t, "hall_voltage": v_hall,
        "n_readings": int(rows.size),
        "findings": tuple(f for f in findings if f is not None),
    }


def reduce_readings(
    readings: RawReadings,
    *,
    hall_factor: float = 1.0,
    thresholds: QualityThresholds | None = None,
) -> ReducedRun:
    """Reduce grouped raw readings to one resistivity and Hall point per set point.

    Parameters
    ----------
    readings
        Validated, grouped readings (:func:`readings_from_arrays` or
        :func:`freezeout.io.raw.read_raw`).
    hall_factor
        Hall scattering factor r_H for the density r_H / (q |R_H|). [1]
    thresholds
        Quality thresholds; defaults if None.

    Returns
    -------
    ReducedRun
        Points in ascending temperature with findings, flags and severe marks.

    Raises
    ------
    InputError
        If a set point lacks a configuration, or a resistance comes out negative
        (contacts numbered out of order).

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958).
    """
    if not (hall_factor > 0 and math.isfinite(hall_factor)):
        raise ValueError("hall_factor must be positive and finite")
    th = thresholds or QualityThresholds()
    validate_configurations(readings)
    r = readings
    member, isign, vsign = classify_configurations(r.i_plus, r.i_minus, r.v_plus, r.v_minus,
                                                   r.geometry)
    i_c = isign * r.current
    v_c = vsign * r.voltage
    fclass = _field_class(r.field)
    points = [
        _reduce_group(r, np.flatnonzero(r.group == g), member, i_c, v_c, fclass, th,
                      hall_factor)
        for g in range(r.n_groups)
    ]
    points.sort(key=lambda p: p["temperature"])
    arr = {key: np.array([p[key] for p in points], dtype=float)
           for key in points[0] if key not in ("findings", "n_readings")}
    findings = tuple(f for p in points for f in p["findings"])
    flags = tuple(";".join(dict.fromkeys(f.code for f in p["findings"])) for p in points)
    severe = np.array([any(f.severity == "severe" for f in p["findings"]) for p in points])
    metadata = dict(r.metadata)
    metadata.setdefault("reduced_from", r.source)
    metadata["hall_factor"] = f"{hall_factor:g}"
    metadata["geometry"] = r.geometry
    return ReducedRun(
        **arr,
        carrier=carrier_type(arr["hall_coefficient"]),
        flags=flags,
        severe=severe,
        findings=findings,
        metadata=metadata,
        n_readings=np.array([p["n_readings"] for p in points], dtype=int),
        thickness=r.thickness,
        thickness_err=r.thickness_err,
        hall_factor=float(hall_factor),
        geometry=r.geometry,
    )
