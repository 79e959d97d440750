"""Hall reduction: R_H, carrier type, density, mobility and their uncertainties.

The synthetic readings below are built from the stated contact convention alone (and the
linearity and reciprocity of a four-terminal measurement), not from the package's own
configuration tables, so a round trip through the reduction is a real check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from freezeout.reduction import (
    carrier_type,
    field_reversed_slope,
    hall_coefficient,
    hall_density,
    hall_mobility,
    readings_from_arrays,
    reduce_readings,
    sheet_density,
)

#: Elementary charge, exact in the SI (BIPM, The International System of Units, 9th ed. 2019).
Q_SI = 1.602176634e-19  # [C]

# ---------------------------------------------------------------------------------------
# synthetic readings (shared with test_vanderpauw.py, test_quality.py, test_raw_io.py)
# ---------------------------------------------------------------------------------------

# Canonical transresistances R(a, b, c, d) = (V(c) - V(d)) / I(a -> b) of a van der Pauw
# sample with contacts 1..4 counter-clockwise (positive field towards the viewer):
# R_12,43 and its reciprocal R_43,12 are R_A; R_23,14 and R_14,23 are R_B (van der Pauw,
# Philips Res. Rep. 13, 1 (1958): R_AB,CD = R_CD,AB); the Hall diagonals are
# R(1,3,2,4) = k B + m and R(2,4,3,1) = k B - m (project convention, no source: current 1 -> 3,
# positive field, V2 - V4 > 0 for holes; the second diagonal is the first turned by one
# contact; reciprocity R_AB,CD(B) = R_CD,AB(-B) makes the misalignment m change sign).
RESISTANCE_CONFIGS = ((1, 2, 4, 3), (4, 3, 1, 2), (2, 3, 1, 4), (1, 4, 2, 3))
HALL_CONFIGS = ((1, 3, 2, 4), (2, 4, 3, 1))


def transresistance(config, *, r_a, r_b, k, field, m1, m2):
    """Canonical transresistance of one configuration. [ohm]."""
    table = {
        (1, 2, 4, 3): r_a, (4, 3, 1, 2): r_a, (2, 3, 1, 4): r_b, (1, 4, 2, 3): r_b,
        (1, 3, 2, 4): k * field + m1, (2, 4, 3, 1): k * field + m2,
    }
    return table[config]


def synth_rows(
    *,
    temperatures=(300.0,),
    r_a=10.0,
    r_b=12.0,
    k=2.0,
    misalignment=0.0,
    misalignment_2=None,
    emf=(0.0, 0.0, 0.0, 0.0),
    currents=(1e-4,),
    field=0.5,
    field_neg=None,
    repeats=2,
    noise=0.0,
    seed=0,
    swap_leads=False,
    reverse_by_sign=False,
    distort=None,
    t_of_reading=None,
):
    """Raw readings as rows (T, B, I, I+, I-, V+, V-, V).

    ``emf`` is a thermoelectric EMF per contact (V(c) - V(d) gains emf[c] - emf[d]);
    ``misalignment`` is m of the first diagonal (the second gets ``misalignment_2``,
    default -m as reciprocity requires). ``distort(row_dict) -> factor`` multiplies a
    reading's voltage (to make bad contacts). ``swap_leads`` writes the voltage leads of
    every other configuration the other way round; ``reverse_by_sign`` writes current
    reversal as a negative current instead of swapped I+/I-.
    """
    rng = np.random.default_rng(seed)
    field_neg = -field if field_neg is None else field_neg
    m2 = -misalignment if misalignment_2 is None else misalignment_2
    if callable(r_a):
        ra_of, rb_of, k_of = r_a, r_b, k
    else:
        ra_of, rb_of, k_of = (lambda t: r_a), (lambda t: r_b), (lambda t: k)
    rows = []
    plan = [(c, 0.0) for c in RESISTANCE_CONFIGS]
    plan += [(c, b) for c in HALL_CONFIGS for b in (field, field_neg)]
    for t in temperatures:
        count = 0
        for current in currents:
            for n_cfg, (config, b) in enumerate(plan):
                a, bb, c, d = config
                if swap_leads and n_cfg % 2:
                    c, d, lead_sign = d, c, -1.0
                else:
                    lead_sign = 1.0
                r = lead_sign * transresistance(config, r_a=ra_of(t), r_b=rb_of(t), k=k_of(t),
                                                field=b, m1=misalignment, m2=m2)
                for forward in (True, False):
                    if forward:
                        ip, im, i_value, i_phys = a, bb, current, current
                    elif reverse_by_sign:
                        ip, im, i_value, i_phys = a, bb, -current, -current
                    else:
                        ip, im, i_value, i_phys = bb, a, current, -current
                    for _ in range(repeats):
                        v = r * i_phys + (emf[c - 1] - emf[d - 1])
                        row = {"T": t, "B": b, "I": i_value, "I+": ip, "I-": im, "V+": c,
                               "V-": d}
                        if distort is not None:
                            v *= distort(row)
                        if noise:
                            v += rng.normal(0.0, noise)
                        t_read = t if t_of_reading is None else t_of_reading(t, count)
                        rows.append((t_read, b, i_value, ip, im, c, d, v))
                        count += 1
    return np.array(rows, dtype=float)


def reduce_rows(rows, *, thickness=0.035, thickness_err=0.0, tolerance=0.5, **kwargs):
    """Group and reduce synthetic rows."""
    readings = readings_from_arrays(
        rows[:, 0], rows[:, 1], rows[:, 2], rows[:, 3].astype(int), rows[:, 4].astype(int),
        rows[:, 5].astype(int), rows[:, 6].astype(int), rows[:, 7], thickness=thickness,
        thickness_err=thickness_err, temperature_tolerance=tolerance,
    )
    return reduce_readings(readings, **kwargs)


# ---------------------------------------------------------------------------------------
# sign convention
# ---------------------------------------------------------------------------------------


def test_convention_matches_lorentz_force():
    """Holes driven 1 -> 3 with +B towards the viewer are pushed towards contact 2.

    Lorentz force F = q v x B (any electromagnetism text; from memory). Contacts placed
    counter-clockwise on a circle, viewer on +z: this is why V2 - V4 > 0 for holes.
    """
    angles = np.deg2rad([180.0, 270.0, 0.0, 90.0])  # contacts 1, 2, 3, 4: counter-clockwise
    pos = np.column_stack([np.cos(angles), np.sin(angles), np.zeros(4)])
    velocity = pos[2] - pos[0]  # holes drift with the current, 1 -> 3
    force = np.cross(velocity, [0.0, 0.0, 1.0])  # q > 0, B along +z (towards viewer)
    toward = pos @ force
    assert np.argmax(toward) == 1  # contact 2 collects holes: V2 > V4
    assert np.argmin(toward) == 3
    # second diagonal, current 2 -> 4: holes pushed towards contact 3, so V3 - V1 > 0
    force2 = np.cross(pos[3] - pos[1], [0.0, 0.0, 1.0])
    assert np.argmax(pos @ force2) == 2


def test_holes_and_electrons_signs():
    holes = reduce_rows(synth_rows(k=+2.0))
    electrons = reduce_rows(synth_rows(k=-2.0))
    assert holes.hall_coefficient[0] > 0 and holes.carrier == ("p",)
    assert electrons.hall_coefficient[0] < 0 and electrons.carrier == ("n",)
    assert holes.majority_carrier == "p" and electrons.majority_carrier == "n"
    assert carrier_type([-1.0, 2.0]) == ("n", "p")


# ---------------------------------------------------------------------------------------
# worked numbers
# ---------------------------------------------------------------------------------------


def test_hall_density_uses_the_exact_si_charge():
    """n = r_H / (q |R_H|), q = 1.602176634e-19 C exactly (BIPM, The International System of
    Units, 9th ed. 2019): R_H = -1 cm^3/C is 6.2415e18 electrons per cm^3."""
    assert hall_density(-1.0) == pytest.approx(1.0 / Q_SI, rel=1e-15)
    assert hall_density(-1.0) == pytest.approx(6.241509074e18, rel=1e-9)
    assert hall_density(2.0, hall_factor=1.18) == pytest.approx(1.18 / (2.0 * Q_SI), rel=1e-15)


def test_sheet_density_worked_number():
    """I = 1 mA, B = 0.5 T, V_H = 3.12 mV -> n_s = I B / (q V_H) = 1.000e14 cm^-2.

    Value computed here from the formula of the Hall effect in a thin layer,
    n_s = I B / (q V_H) (van der Pauw 1958, Hall section).
    """
    n_s = sheet_density(1e-3, 0.5, 3.12e-3)
    assert n_s == pytest.approx(1.000e14, rel=5e-4)
    assert n_s == pytest.approx(1e-3 * 0.5 / (1.602176634e-19 * 3.12e-3) * 1e-4, rel=1e-12)
    assert sheet_density(1e-3, 0.5, 3.12e-3, hall_factor=1.18) == pytest.approx(1.18 * n_s)


def test_hall_coefficient_units():
    """R_H = t V_H / (I B) in SI, converted to cm^3/C (1 m^3 = 1e6 cm^3).

    t = 0.5 mm, V_H = 1 mV, I = 1 mA, B = 0.5 T: R_H = 5e-4 m * 1e-3 V / (1e-3 A * 0.5 T)
    = 1e-3 m^3/C = 1000 cm^3/C (arithmetic on the definition, van der Pauw 1958).
    """
    slope = 1e-3 / (1e-3 * 0.5)  # V_H / (I B) [ohm/T]
    assert hall_coefficient(slope, 0.05) == pytest.approx(1000.0, rel=1e-14)
    # density 1/(q R_H): 1000 cm^3/C -> 6.2415e15 cm^-3 (1/q = 6.241509e18 C^-1, SI value)
    assert hall_density(1000.0) == pytest.approx(6.241509074e15, rel=1e-9)
    assert hall_density(-1000.0, hall_factor=2.0) == pytest.approx(2 * 6.241509074e15,
                                                                    rel=1e-9)
    # mobility |R_H| / rho: 1000 cm^3/C / 2 ohm cm = 500 cm^2/(V s)
    assert hall_mobility(-1000.0, 2.0) == pytest.approx(500.0)


def test_field_reversed_slope_cancels_even_part_for_unequal_fields():
    """R(B) = m + k B: (R(+B) - R(-B)) / (B+ - B-) = k for any m and any B+, B- (algebra)."""
    k, m = 3.7, -12.5
    assert field_reversed_slope(m + k * 0.52, m + k * (-0.47), 0.52, -0.47) == pytest.approx(k)


# ---------------------------------------------------------------------------------------
# synthetic round trips
# ---------------------------------------------------------------------------------------


def test_round_trip_known_hall_coefficient_and_density():
    """Readings made from R_H = 1e4 t k reduce back within rounding; density = 1/(q R_H)."""
    t = 0.035
    r_h_true = 3209.0  # cm^3/C
    k = r_h_true / (1e4 * t)
    run = reduce_rows(synth_rows(k=k, misalignment=0.3, emf=(3e-6, -1e-6, 2e-6, 0.0)),
                      thickness=t)
    assert run.hall_coefficient[0] == pytest.approx(r_h_true, rel=1e-10)
    assert run.density[0] == pytest.approx(1.0 / (Q_SI * r_h_true), rel=1e-10)
    assert run.sheet_density[0] == pytest.approx(run.density[0] * t, rel=1e-12)
    assert run.mobility[0] == pytest.approx(r_h_true / run.resistivity[0], rel=1e-12)
    # V_H at the mean current and field: k B I
    assert run.hall_voltage[0] == pytest.approx(k * 0.5 * 1e-4, rel=1e-10)


def test_hall_voltage_equals_eight_reading_average():
    """V_H from the eight field- and current-reversed readings of both diagonals.

    V_H = [V24(+B,I13) - V24(-B,I13) - V24(+B,I31) + V24(-B,I31)
           + V31(+B,I24) - V31(-B,I24) - V31(+B,I42) + V31(-B,I42)] / 8
    (field and current reversal, van der Pauw 1958; the eight-reading average is common
    practice, no source). Computed here by hand from the rows.
    """
    rows = synth_rows(k=-5.0, misalignment=0.8, emf=(4e-6, -3e-6, 1e-6, 2e-6), repeats=1,
                      noise=2e-8, seed=3)

    def v(ip, im, vp, vm, b):
        sel = ((rows[:, 3] == ip) & (rows[:, 4] == im) & (rows[:, 5] == vp)
               & (rows[:, 6] == vm) & (np.sign(rows[:, 1]) == np.sign(b)))
        assert sel.sum() == 1
        return rows[sel, 7][0]

    by_hand = (v(1, 3, 2, 4, 1) - v(1, 3, 2, 4, -1) - v(3, 1, 2, 4, 1) + v(3, 1, 2, 4, -1)
               + v(2, 4, 3, 1, 1) - v(2, 4, 3, 1, -1) - v(4, 2, 3, 1, 1) + v(4, 2, 3, 1, -1)
               ) / 8.0
    run = reduce_rows(rows)
    assert run.hall_voltage[0] == pytest.approx(by_hand, rel=1e-9)
    assert run.hall_coefficient[0] < 0


@settings(max_examples=40, deadline=None)
@given(
    emf=st.lists(st.floats(-1e-3, 1e-3), min_size=4, max_size=4),
    misalignment=st.floats(-50.0, 50.0),
    b_pos=st.floats(0.1, 2.0),
    b_neg=st.floats(-2.0, -0.1),
    k=st.floats(0.01, 100.0) | st.floats(-100.0, -0.01),
)
def test_offsets_and_misalignment_leave_r_h_unchanged(emf, misalignment, b_pos, b_neg, k):
    """Any constant offsets and any misalignment voltage (proportional to I) cancel.

    The offset-cancelling property of current and field reversal (van der Pauw 1958).
    """
    clean = reduce_rows(synth_rows(k=k, field=b_pos, field_neg=b_neg))
    dirty = reduce_rows(synth_rows(k=k, field=b_pos, field_neg=b_neg, emf=tuple(emf),
                                   misalignment=misalignment))
    scale = abs(k) + abs(misalignment) / min(b_pos, -b_neg) + max(map(abs, emf)) / 1e-4
    assert abs(dirty.hall_coefficient[0] - clean.hall_coefficient[0]) <= (
        1e-9 * 1e4 * 0.035 * scale)
    assert dirty.resistivity[0] == pytest.approx(clean.resistivity[0], rel=1e-8, abs=1e-12)


def test_orientation_of_leads_and_current_sign_does_not_matter():
    """Swapped voltage leads and reversal written as a negative current give the same run."""
    base = reduce_rows(synth_rows(k=1.5, misalignment=0.2, emf=(1e-6, 0, -2e-6, 0)))
    swapped = reduce_rows(synth_rows(k=1.5, misalignment=0.2, emf=(1e-6, 0, -2e-6, 0),
                                     swap_leads=True, reverse_by_sign=True))
    assert swapped.hall_coefficient[0] == pytest.approx(base.hall_coefficient[0], rel=1e-10)
    assert swapped.resistivity[0] == pytest.approx(base.resistivity[0], rel=1e-10)


def test_hall_factor_scales_density_only():
    run1 = reduce_rows(synth_rows())
    run2 = reduce_rows(synth_rows(), hall_factor=1.18)
    assert run2.density[0] == pytest.approx(1.18 * run1.density[0], rel=1e-12)
    assert run2.hall_coefficient[0] == run1.hall_coefficient[0]
    assert run2.metadata["hall_factor"] == "1.18"
    with pytest.raises(ValueError):
        reduce_rows(synth_rows(), hall_factor=0.0)


# ---------------------------------------------------------------------------------------
# uncertainties
# ---------------------------------------------------------------------------------------


def test_thickness_uncertainty_propagates_but_not_to_mobility():
    """rho and R_H scale with t, mobility |R_H|/rho does not (t cancels).

    First-order propagation, JCGM 100:2008 (GUM) Eq. (10). Noise-free readings with
    repeats have zero spread, so the only uncertainty left is the thickness's.
    """
    run = reduce_rows(synth_rows(repeats=3), thickness=0.035, thickness_err=0.0007)
    assert run.resistivity_err[0] / run.resistivity[0] == pytest.approx(0.02, rel=1e-6)
    assert run.hall_coefficient_err[0] / run.hall_coefficient[0] == pytest.approx(0.02,
                                                                                 rel=1e-6)
    assert run.density_err[0] / run.density[0] == pytest.approx(0.02, rel=1e-6)
    assert run.mobility_err[0] / run.mobility[0] < 1e-9


def test_uncertainties_cover_the_truth_at_the_stated_rate():
    """Standard uncertainties from repeated readings are calibrated: z-scores have std ~ 1.

    GUM (JCGM 100:2008) standard uncertainty of a mean; 60 independent set points.
    """
    temps = tuple(10.0 + 5.0 * i for i in range(60))
    rows = synth_rows(temperatures=temps, r_a=9.0, r_b=9.0, k=1.0, misalignment=0.5,
                      repeats=4, noise=2e-6, seed=11, emf=(5e-6, -5e-6, 2e-6, 0))
    run = reduce_rows(rows)
    rho_true = 9.0 * math.pi / math.log(2.0) * 0.035
    z_rho = (run.resistivity - rho_true) / run.resistivity_err
    z_rh = (run.hall_coefficient - 1e4 * 0.035 * 1.0) / run.hall_coefficient_err
    assert 0.7 < np.std(z_rho) < 1.35
    assert 0.7 < np.std(z_rh) < 1.35
    assert abs(np.mean(z_rh)) < 0.5


def test_single_readings_take_the_spread_of_equivalent_configurations():
    """With one reading per direction, u(R_A) = |R_12,43 - R_43,12| / 2 (module's rule)."""
    def distort(row):
        return 1.02 if (row["I+"], row["I-"]) in ((4, 3), (3, 4)) else 1.0

    run = reduce_rows(synth_rows(repeats=1, r_a=10.0, distort=distort))
    assert run.r_a[0] == pytest.approx(10.1, rel=1e-12)
    assert run.r_a_err[0] == pytest.approx(0.1, rel=1e-9)
    assert run.r_b_err[0] == pytest.approx(0.0, abs=1e-12)
    assert "single-reading" in run.flags[0]
