"""Raw readings built and checked, and grouped by temperature set point.

The first step of the reduction, from arrays or from a raw file's table.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from freezeout.errors import InputError
from freezeout.records.limits import DEFAULT_GROUPING_TOLERANCE_K
from freezeout.records.readings import DEFAULT_COLUMNS, RawReadings, RawTable
from freezeout.reduction.validation import check_contacts, input_error, validate_configurations
from freezeout.reduction.vanderpauw import GEOMETRIES

__all__ = ["group_temperatures", "readings_from_arrays", "readings_from_table"]


def group_temperatures(temperature, tolerance: float = DEFAULT_GROUPING_TOLERANCE_K):
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
    temperature_tolerance: float = DEFAULT_GROUPING_TOLERANCE_K,
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
            raise input_error(provisional, "value is not a finite number", int(bad[0]), role)
    bad = np.flatnonzero(arrays["temperature"] <= 0.0)
    if bad.size:
        raise input_error(provisional, f"temperature {arrays['temperature'][bad[0]]:g} K is not "
                          "above absolute zero", int(bad[0]), "temperature")
    bad = np.flatnonzero(arrays["current"] == 0.0)
    if bad.size:
        raise input_error(provisional, "current is zero; a reading needs a non-zero current",
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
                raise input_error(provisional, f"unknown contact label {shown}: contacts are "
                                  f"numbered 1 to {n_contacts} for {geometry} geometry", i,
                                  role)
            out[i] = int(fv)
        labels[role] = out
    geom = RawReadings(
        source=source, line=line, group=np.zeros(n, dtype=int), thickness=float("nan"),
        columns=cols, **arrays, **labels,
    )
    check_contacts(geom, geometry)
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


def readings_from_table(table: RawTable, *,
                        temperature_tolerance: float = DEFAULT_GROUPING_TOLERANCE_K,
                        ) -> RawReadings:
    """Check and group the readings of a raw file (:func:`freezeout.io.raw_reader.read_raw`).

    Parameters
    ----------
    table
        The file's readings as read.
    temperature_tolerance
        Grouping tolerance, see :func:`group_temperatures`. [K]

    Returns
    -------
    RawReadings
        The grouped readings.

    Raises
    ------
    InputError
        As :func:`readings_from_arrays`, naming the file's lines and columns.
    """
    t = table
    return readings_from_arrays(
        t.temperature, t.field, t.current, t.i_plus, t.i_minus, t.v_plus, t.v_minus,
        t.voltage, thickness=t.thickness, thickness_err=t.thickness_err, geometry=t.geometry,
        width=t.width, width_err=t.width_err, spacing=t.spacing, spacing_err=t.spacing_err,
        temperature_tolerance=temperature_tolerance, source=t.source, lines=t.line,
        metadata=t.metadata, columns=t.columns,
    )
