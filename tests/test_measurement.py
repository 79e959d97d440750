"""A wafer's measured quantities: the typed record, and building it from a fit.

The fits here are the tool's own: a stand-in object with a fit's attributes and invented
(synthetic) numbers, and one real fit of the bundled synthetic sample run (simulated with
freezeout plus noise, not a measurement).
"""

from __future__ import annotations

import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from freezeout.claims.evaluate import evaluate_claim
from freezeout.claims.measured import measurement_from_fit
from freezeout.fitting.result import Estimate
from freezeout.physics.materials import get_material
from freezeout.records.lot import Claim, Decision
from freezeout.records.measurement import (
    HallFactorUsed,
    IonizationCheck,
    Measurement,
    ResistivityPoint,
    signed_net_doping,
)
from freezeout.records.verdicts import SpecWindow

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_RUN = ROOT / "sample_data" / "lot_kestrel_2026-11" / "runs" / "w01_temperature_run.csv"


def fake_fit(material, resistivity=(2.0, 11.0), severe=(False, False)):
    """An object with the attributes of a FitResult that the claims read (synthetic)."""
    data = SimpleNamespace(
        temperature=np.array([100.0, 296.0]),
        resistivity=None if resistivity is None else np.array(resistivity),
        resistivity_err=np.array([0.02, 0.1]), severe=np.array(severe))
    return SimpleNamespace(
        carrier="p", material=material,
        # a fit gives the majority excess |N_D - N_A| (>= 0), whatever the carrier type
        net_doping=Estimate(1.2e15, 3e13, (1.14e15, 1.26e15)),
        compensation_ratio=Estimate(0.05, 0.01, (0.03, 0.07)),
        warnings=("synthetic warning",), hall_factor=1.0,
        provenance={"input": "w01.csv", "sha256": "0" * 64}, data=data)


@pytest.mark.parametrize("material", [get_material("Si"), {"name": "Si"}])
def test_measurement_from_a_fit(material):
    m = measurement_from_fit(fake_fit(material))
    assert (m.material, m.carrier, m.compensation_ratio) == ("Si", "p", 0.05)
    # N_D - N_A signed, negative for a p-type run (project choice, docs/lot_format.md)
    assert (m.net_doping, m.net_doping_stderr) == (-1.2e15, 3e13)
    assert m.net_doping_method == "fitted net doping |N_D - N_A|"
    assert m.resistivity == (ResistivityPoint(100.0, 2.0, 0.02), ResistivityPoint(296.0, 11.0, 0.1))
    assert m.hall_factor == HallFactorUsed(1.0, 0.0, "the fit")
    assert (m.warnings, m.source, m.ionization) == (("synthetic warning",), "w01.csv", None)


def test_points_of_a_fit_that_are_left_out():
    # a point that failed a severe data-quality check is not used
    m = measurement_from_fit(fake_fit({"name": "Si"}, severe=(False, True)))
    assert m.resistivity == (ResistivityPoint(100.0, 2.0, 0.02),)
    # no resistivity column; a non-finite or non-positive resistivity
    assert measurement_from_fit(fake_fit({"name": "Si"}, resistivity=None)).resistivity == ()
    m = measurement_from_fit(fake_fit({"name": "Si"}, resistivity=(math.nan, 0.0)))
    assert m.resistivity == ()


def test_one_sign_rule_for_the_net_doping():
    # project choice, no source: N_D - N_A is positive for n-type, negative for p-type; a
    # negative majority excess (a self-contradicting measurement) keeps the other sign
    assert signed_net_doping(5e14, "n") == 5e14
    assert signed_net_doping(5e14, "p") == -5e14
    assert signed_net_doping(-5e14, "p") == 5e14
    assert signed_net_doping(None, "p") is None
    fit = fake_fit({"name": "Si"})
    fit.carrier = "n"
    assert measurement_from_fit(fit).net_doping == 1.2e15


def test_non_finite_fit_numbers_are_unknown():
    fit = fake_fit({"name": "Si"})
    fit.net_doping = Estimate(1.2e15, math.nan, (math.nan, math.nan))
    fit.compensation_ratio = Estimate(math.nan, math.nan, (math.nan, math.nan))
    m = measurement_from_fit(fit)
    assert (m.net_doping_stderr, m.compensation_ratio) == (None, None)


def test_measurement_from_a_real_fit():
    from freezeout.api import fit_file

    fit = fit_file(SAMPLE_RUN, material="Si", donors=1, acceptors=1, statistics="fermi-dirac")
    m = measurement_from_fit(fit)
    assert (m.material, m.carrier) == ("Si", fit.carrier)
    assert m.net_doping == signed_net_doping(fit.net_doping.value, fit.carrier)
    assert m.net_doping_stderr == fit.net_doping.stderr
    assert m.compensation_ratio == fit.compensation_ratio.value
    assert m.warnings == tuple(fit.warnings) and m.source == SAMPLE_RUN.name
    assert m.hall_factor == HallFactorUsed(fit.hall_factor, 0.0, "the fit")


def test_usable_resistivity_points():
    # project choice, no source: a point needs a finite temperature and a finite value > 0;
    # a non-finite uncertainty is unknown
    assert ResistivityPoint.usable(296.0, 5.0, 0.1) == ResistivityPoint(296.0, 5.0, 0.1)
    assert ResistivityPoint.usable(296.0, 5.0, math.nan) == ResistivityPoint(296.0, 5.0, None)
    for t, v in ((math.nan, 5.0), (296.0, math.inf), (296.0, 0.0), (None, 5.0), (296.0, None)):
        assert ResistivityPoint.usable(t, v, 0.1) is None


def test_plain_json_form():
    ion = IonizationCheck("phosphorus", "Si", 296.15, 5e14, 0.045, 0.9997, None)
    m = Measurement(material="Si", carrier="n", net_doping=5e14, net_doping_stderr=5e12,
                    resistivity=(ResistivityPoint(296.15, 10.0, 0.1),),
                    hall_factor=HallFactorUsed(1.15, 0.05, "lot file measurement.hall_factor"),
                    ionization={"phosphorus": ion}, warnings=("w",), source="r.csv")
    assert m.to_dict() == {
        "material": "Si", "carrier": "n",
        "net_doping_cm3": {"value": 5e14, "stderr": 5e12},
        "net_doping_method": "net doping |N_D - N_A|",
        "resistivity_ohm_cm_at_T": [{"temperature_K": 296.15, "value": 10.0, "stderr": 0.1}],
        "compensation_ratio": None,
        "hall_factor": {"value": 1.15, "stderr": 0.05,
                        "source": "lot file measurement.hall_factor"},
        "ionization": {"phosphorus": ion.to_dict()},
        "warnings": ["w"], "source": "r.csv"}
    assert Measurement().to_dict()["resistivity_ohm_cm_at_T"] is None


def test_a_point_built_by_hand_is_read_by_the_same_rule():
    # a ResistivityPoint made directly with a NaN uncertainty is "unknown", never a number
    claim = Claim("claim[1]", "resistivity", SpecWindow(8.0, 12.0, None, "ohm cm"), "ohm cm",
                  None, 296.15)
    m = Measurement(material="Si", carrier="n",
                    resistivity=(ResistivityPoint(296.15, 10.0, math.nan),))
    v = evaluate_claim(claim, m, Decision("guarded"))
    # guarded rule, unknown uncertainty: conformity cannot be proven (JCGM 106:2012)
    assert (v.verdict, v.stderr, v.measured) == ("indeterminate", None, 10.0)
