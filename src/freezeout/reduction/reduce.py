"""Reduction of grouped raw readings to one resistivity and Hall point per set point.

Per set point: the straight-line fit of each configuration (:mod:`.line_fits`); van der
Pauw's equation for the sheet resistance (:mod:`.vanderpauw`); the field-reversed slopes of
both Hall diagonals for the Hall coefficient (:mod:`.hall`); the data-quality findings
(:mod:`.quality`). Equivalent estimates are combined by the rule of :mod:`.line_fits`.

References
----------
.. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
   discs of arbitrary shape", Philips Res. Rep. 13, 1-9 (1958).
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.records.readings import Finding, RawReadings, ReducedRun
from freezeout.reduction import quality
from freezeout.reduction.hall import (
    carrier_type,
    field_reversed_slope,
    hall_coefficient,
    hall_density,
    hall_mobility,
)
from freezeout.reduction.line_fits import LineFit, combine, fit_line
from freezeout.reduction.line_fits import relative_error as _rel
from freezeout.reduction.quality.thresholds import QualityThresholds
from freezeout.reduction.validation import (
    field_class,
    input_error,
    set_point_label,
    validate_configurations,
)
from freezeout.reduction.vanderpauw import (
    GEOMETRIES,
    classify_configurations,
    configuration_label,
    hall_bar_sheet_resistance,
    members,
    resistivity,
    sheet_resistance_uncertainty,
)

__all__ = ["reduce_readings"]


def _reduce_group(r: RawReadings, rows: np.ndarray, member, i_c, v_c, fclass,
                  th: QualityThresholds, hall_factor: float) -> dict:
    """One set point: resistances, sheet resistance, Hall slope, findings, derived values."""
    all_members = members(r.geometry)
    table = GEOMETRIES[r.geometry][0]
    where = set_point_label(r, rows)
    fits: dict[tuple[tuple[int, int, int, int], int], LineFit] = {}
    for m in all_members:
        k = all_members.index(m)
        mrows = rows[member[rows] == k]
        for c in (-1, 0, 1):
            crow = mrows[fclass[mrows] == c]
            if crow.size and np.any(i_c[crow] > 0) and np.any(i_c[crow] < 0):
                fits[(m, c)] = fit_line(i_c[crow], v_c[crow], r.field[crow], crow)

    # resistance configurations: zero field if measured, else the mean over +B and -B
    resistance: dict[tuple[int, int, int, int], tuple[float, float]] = {}
    used: list[tuple[str, LineFit]] = []
    resistance_labels: set[str] = set()
    for m in table["A"] + table.get("B", ()):
        if (m, 0) in fits:
            chosen = [fits[(m, 0)]]
        else:
            chosen = [fits[(m, c)] for c in (1, -1) if (m, c) in fits]
        if not chosen:
            continue
        resistance[m] = combine([f.slope for f in chosen], [f.slope_err for f in chosen])
        if not np.all(np.isfinite([f.slope_err for f in chosen])):
            resistance[m] = (resistance[m][0], math.nan)
        used.extend((configuration_label(m), f) for f in chosen)
        resistance_labels.add(configuration_label(m))
        if resistance[m][0] <= 0:
            raise input_error(r, f"{where}: {configuration_label(m)} gives a resistance of "
                              f"{resistance[m][0]:.4g} ohm, not positive: the contacts are not "
                              "numbered in order around the edge, or V+ and V- are swapped",
                              int(chosen[0].rows[0]), "v_plus")

    def role_value(role: str) -> tuple[float, float]:
        ms = [m for m in table.get(role, ()) if m in resistance]
        return combine([resistance[m][0] for m in ms], [resistance[m][1] for m in ms])

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
    k, k_stat = combine(slopes, slope_errs)
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
        Validated, grouped readings (:func:`~freezeout.reduction.readings_from_arrays`,
        or :func:`~freezeout.reduction.readings_from_table` for a raw file).
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
    fclass = field_class(r.field)
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
