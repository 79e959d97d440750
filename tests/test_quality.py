"""Quality findings: each one tripped by readings made to trip it, silent on clean data.

The thresholds are defaults of our own (common practice, no source); what is checked here
is that each check measures what it says, grades against its thresholds, and reports the
values that tripped it.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from freezeout.reduction import Finding, QualityThresholds
from freezeout.reduction.quality import (
    CODES,
    check_current_reversal,
    check_field_reversal,
    check_hall_offset,
    check_nonlinearity,
    check_ratio,
    check_reciprocity,
    check_repeats,
    check_temperature_drift,
    linear_nonlinearity,
    relative_difference,
)
from test_hall_reduction import reduce_rows, synth_rows

CLEAN = dict(k=2.0, misalignment=0.2, emf=(1e-7, -2e-7, 1e-7, 0.0), repeats=2, noise=1e-9,
             seed=5)


def codes(run, i=0):
    return {f.code: f for f in run.findings_at(i)}


def test_clean_run_has_no_findings():
    run = reduce_rows(synth_rows(temperatures=(50.0, 150.0, 300.0), **CLEAN))
    assert run.findings == ()
    assert run.flags == ("", "", "")
    assert not run.severe.any()


def test_clean_two_current_run_has_no_findings():
    run = reduce_rows(synth_rows(currents=(1e-4, 2e-5), **CLEAN))
    assert run.findings == ()


@pytest.mark.parametrize(("factor", "severity"), [(1.05, "warning"), (1.2, "severe")])
def test_reciprocity(factor, severity):
    """R_43,12 made 5 % / 20 % larger than R_12,43 (reciprocity theorem: they are equal)."""
    def distort(row):
        return factor if {row["I+"], row["I-"]} == {3, 4} else 1.0

    run = reduce_rows(synth_rows(distort=distort, **CLEAN))
    f = codes(run)["reciprocity"]
    assert f.severity == severity
    assert f.values["mismatch"] == pytest.approx(relative_difference(10.0, 10.0 * factor),
                                                 rel=1e-4)
    assert f.values["pair"] == "R_12,43 / R_43,12"
    assert f.threshold == (0.03 if severity == "warning" else 0.10)
    assert run.severe[0] == (severity == "severe")
    assert set(codes(run)) == {"reciprocity"}


@pytest.mark.parametrize(("factor", "severity"), [(1.04, "warning"), (1.3, "severe")])
def test_current_reversal(factor, severity):
    """V/I of I 1->2, V4-V3 made larger when the current runs 2 -> 1 (a rectifying contact)."""
    def distort(row):
        return factor if (row["I+"], row["I-"]) == (2, 1) else 1.0

    # no thermoelectric offset here: an offset also makes V/I depend on the direction
    run = reduce_rows(synth_rows(distort=distort, **{**CLEAN, "emf": (0, 0, 0, 0)}))
    f = codes(run)["current-reversal"]
    assert f.severity == severity
    assert f.values["configuration"] == "I 1->2, V4-V3"
    assert f.values["asymmetry"] == pytest.approx(relative_difference(1.0, factor), rel=1e-4)


def test_ratio():
    run = reduce_rows(synth_rows(r_a=10.0, r_b=30.0, **CLEAN))
    f = codes(run)["ratio"]
    assert f.severity == "warning"
    assert f.values["ratio"] == pytest.approx(3.0, rel=1e-5)
    assert f.threshold == 2.0
    assert not run.severe[0]  # van der Pauw's equation holds for any ratio
    strict = reduce_rows(synth_rows(r_a=10.0, r_b=30.0, **CLEAN),
                         thresholds=QualityThresholds(ratio_severe=2.5))
    assert codes(strict)["ratio"].severity == "severe"


@pytest.mark.parametrize(("k", "severity"), [(0.05, "warning"), (0.01, "severe")])
def test_hall_offset(k, severity):
    """Hall voltage k B I against a misalignment m I = 1 ohm * I: ratio k B / m."""
    run = reduce_rows(synth_rows(**{**CLEAN, "k": k, "misalignment": 1.0, "noise": 0.0}))
    f = codes(run)["hall-offset"]
    assert f.severity == severity
    assert f.values["ratio"] == pytest.approx(k * 0.5 / 1.0, rel=1e-3)


@pytest.mark.parametrize(("m2", "severity"), [(-0.12, "warning"), (0.2, "severe")])
def test_field_reversal(m2, severity):
    """Misalignments that do not cancel between the diagonals (non-reciprocal contacts).

    With m1 + m2 = s, the Hall slope from +B alone is k + s/(2B) and from -B alone
    k - s/(2B) (algebra on R(B) = k B + m).
    """
    run = reduce_rows(synth_rows(**{**CLEAN, "misalignment": 0.2, "misalignment_2": m2,
                                    "noise": 0.0}))
    f = codes(run)["field-reversal"]
    s = 0.2 + m2
    expected = relative_difference(2.0 + s / (2 * 0.5), 2.0 - s / (2 * 0.5))
    assert f.values["asymmetry"] == pytest.approx(expected, rel=1e-9)
    assert f.severity == severity
    # the Hall coefficient itself still uses the field-reversed difference
    assert run.hall_coefficient[0] == pytest.approx(1e4 * 0.035 * 2.0, rel=1e-9)


@pytest.mark.parametrize(("drift", "severity", "tol"), [(2.0, "warning", 5.0),
                                                        (6.0, "severe", 10.0)])
def test_temperature_drift(drift, severity, tol):
    """Temperature ramps by `drift` K across a 100 K set point (32 readings)."""
    run = reduce_rows(synth_rows(temperatures=(100.0,), **CLEAN,
                                 t_of_reading=lambda t, i: t + drift * i / 31),
                      tolerance=tol)
    assert run.n_points == 1
    f = codes(run)["temperature-drift"]
    assert f.severity == severity
    assert f.values["drift"] == pytest.approx(drift / (100.0 + drift / 2), rel=1e-9)
    assert run.temperature_spread[0] == pytest.approx(drift)


def test_nonlinearity_with_two_currents():
    """V = R I (1 + c|I|): resistance grows with current (self-heating-like)."""
    def distort(row):
        return 1.0 + 1000.0 * abs(row["I"])

    run = reduce_rows(synth_rows(currents=(1e-4, 2.5e-5), distort=distort, **CLEAN))
    f = codes(run)["non-linearity"]
    assert f.severity in ("warning", "severe")
    assert f.values["non-linearity"] > 0.01
    # with one current only, linearity cannot be checked
    single = reduce_rows(synth_rows(currents=(1e-4,), distort=distort, **CLEAN))
    assert "non-linearity" not in codes(single)


def test_single_reading_is_info():
    run = reduce_rows(synth_rows(**{**CLEAN, "repeats": 1}))
    f = codes(run)["single-reading"]
    assert f.severity == "info"
    assert f.values["fewest readings"] == 1
    assert not run.severe[0]
    assert run.flags == ("single-reading",)


def test_flags_and_severe_per_point():
    """Only the tripped set point is flagged; the others stay clean."""
    def distort(row):
        return 1.3 if row["I-"] == 3 and row["T"] == 40.0 else 1.0

    run = reduce_rows(synth_rows(temperatures=(300.0, 40.0, 100.0), distort=distort, **CLEAN))
    assert run.temperature.tolist() == [40.0, 100.0, 300.0]
    assert run.severe.tolist() == [True, False, False]
    assert run.flags[1:] == ("", "")
    assert "current-reversal" in run.flags[0].split(";")
    assert all(f.temperature == 40.0 for f in run.findings)


def test_thresholds_can_be_changed():
    def distort(row):
        return 1.05 if {row["I+"], row["I-"]} == {3, 4} else 1.0

    loose = QualityThresholds.from_overrides({"reciprocity-warning": 0.06,
                                              "reciprocity_severe": 0.2})
    run = reduce_rows(synth_rows(distort=distort, **CLEAN), thresholds=loose)
    assert run.findings == ()
    assert loose.reciprocity_warning == 0.06
    with pytest.raises(ValueError, match="unknown threshold"):
        QualityThresholds.from_overrides({"reciprocity": 0.1})
    with pytest.raises(ValueError):
        QualityThresholds(reciprocity_warning=-1.0)
    with pytest.raises(ValueError):
        QualityThresholds(reciprocity_warning=0.2, reciprocity_severe=0.1)
    with pytest.raises(ValueError):
        QualityThresholds(hall_offset_warning=0.01, hall_offset_severe=0.1)
    off = QualityThresholds(reciprocity_warning=math.inf, reciprocity_severe=math.inf)
    assert check_reciprocity(10.0, {"x": (1.0, 5.0)}, off) is None


def test_check_functions_grade_at_their_thresholds():
    th = QualityThresholds()
    assert check_reciprocity(1.0, {"x": (1.0, 1.02)}, th) is None
    assert check_reciprocity(1.0, {"x": (1.0, 1.04)}, th).severity == "warning"
    assert check_reciprocity(1.0, {"x": (1.0, 1.2)}, th).severity == "severe"
    assert check_current_reversal(1.0, {"c": 0.02}) is None
    assert check_current_reversal(1.0, {"c": 0.02, "d": 0.5}).values["configuration"] == "d"
    assert check_current_reversal(1.0, {"c": math.nan}) is None
    assert check_ratio(1.0, 1.0, 1.9) is None
    assert check_ratio(1.0, 2.1, 1.0).severity == "warning"
    assert check_hall_offset(1.0, 1e-3, 1e-3) is None
    assert check_hall_offset(1.0, 1e-3, 0.0) is None  # no offset at all
    assert check_hall_offset(1.0, 5e-5, 1e-3).severity == "warning"
    assert check_hall_offset(1.0, 5e-6, 1e-3).severity == "severe"
    assert check_field_reversal(1.0, 1.0, 1.04) is None
    assert check_field_reversal(1.0, 1.0, 1.5).severity == "severe"
    assert check_temperature_drift([100.0, 100.5]) is None
    assert check_temperature_drift([100.0, 102.0]).severity == "warning"
    assert check_nonlinearity(1.0, {"c": math.nan}) is None
    assert check_nonlinearity(1.0, {"c": 0.2}).severity == "severe"
    assert check_repeats(1.0, {"c": 2, "d": 3}) is None
    assert check_repeats(1.0, {"c": 1, "d": 3}).values["configurations"] == ["c"]


def test_linear_nonlinearity_metric():
    """A straight line has zero non-linearity; a cubic term shows (least squares)."""
    i = np.array([-2.0, -1.0, 1.0, 2.0])
    assert linear_nonlinearity(i, 3.0 * i + 0.1) == pytest.approx(0.0, abs=1e-14)
    assert linear_nonlinearity(i, 3.0 * i + 0.3 * i**3) > 0.05
    assert math.isnan(linear_nonlinearity(i[:2], i[:2]))


def test_finding_object():
    f = Finding("reciprocity", "warning", "x", 77.0, {"mismatch": np.float64(0.05),
                                                     "pair": "a", "arr": np.array([1.0])},
                0.03)
    d = f.to_dict()
    assert json.loads(json.dumps(d)) == d
    assert d["values"]["mismatch"] == 0.05
    assert hash(f) == hash(Finding("reciprocity", "warning", "x", 77.0, {}, 0.03))
    with pytest.raises(ValueError):
        Finding("reciprocity", "fatal", "x", 1.0)
    assert set(CODES) == {"reciprocity", "current-reversal", "ratio", "hall-offset",
                          "field-reversal", "temperature-drift", "non-linearity",
                          "single-reading"}
