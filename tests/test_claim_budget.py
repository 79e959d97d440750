"""The uncertainty budget of a claim: claim temperature, Hall factor, sign and ionization.

Measured quantities here are invented numbers (synthetic), passed to
:func:`freezeout.claims.evaluate.evaluate_claim` as the Measurement it consumes; the lot is a
synthetic one of the fictional supplier "Kestrel Ridge Wafers". Every expected number is
worked by hand in the comment beside it.
"""

from __future__ import annotations

import math
import textwrap

import pytest

from freezeout.claims import silicon
from freezeout.claims.budget import RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K, temperature_term
from freezeout.claims.dopants import claim_dopant
from freezeout.claims.evaluate import evaluate_claim, evaluate_wafer
from freezeout.claims.lot_reader import load_lot
from freezeout.records.measurement import (
    HallFactorUsed,
    IonizationCheck,
    Measurement,
    ResistivityPoint,
)

LOT = """\
supplier = "Kestrel Ridge Wafers"
lot = "KRW-TEST-B"
date = 2026-11-03

[decision]
rule = "guarded"

[[claim]]
quantity = "resistivity"
min = 8.0
max = 12.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = {t_claim}

[[claim]]
quantity = "net_doping"
min = 4.5e14
max = 5.5e14
unit = "cm^-3"
temperature_K = {t_claim}

[[wafer]]
id = "W01"
material = "Si"
run = "w01.csv"
"""


def lot_at(tmp_path, t_claim=296.15, extra=""):
    (tmp_path / "w01.csv").write_text("# synthetic placeholder\n")
    p = tmp_path / "lot.toml"
    p.write_text(textwrap.dedent(LOT.format(t_claim=t_claim)) + extra)
    return load_lot(p)


def measured(n=5.0e14, u=5.0e12, carrier="n", rho=None, hall=None, ionization=None):
    """A synthetic Measurement; ``rho``, ``hall`` and ``ionization`` as plain dicts."""
    points = [] if rho is None else [rho] if isinstance(rho, dict) else rho
    return Measurement(
        material="Si", carrier=carrier, net_doping=n, net_doping_stderr=u,
        resistivity=tuple(ResistivityPoint(**p) for p in points),
        hall_factor=None if hall is None else HallFactorUsed(**hall),
        ionization=None if ionization is None else {
            k: IonizationCheck(**v) for k, v in ionization.items()})


# ---------------------------------------------------------------------------------------------
# claim temperature


def test_temperature_term_is_rectangular():
    # c_T = 0.008 /K for lightly doped Si near 300 K (from memory: lattice mobility ~T^-2.4,
    # C. Jacoboni et al., Solid-State Electron. 20, 77 (1977), from memory; 2.4/300 = 0.008).
    assert RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K == 0.008
    # rectangular half-width a -> a / sqrt(3) (JCGM 100:2008, 4.3.7; from memory):
    # 3.85 K x 0.008 /K = 0.0308; / 1.7320508 = 0.0177824 (by hand)
    assert temperature_term(3.85) == pytest.approx(0.0177824, rel=1e-5)
    assert temperature_term(-3.85) == temperature_term(3.85)
    assert temperature_term(0.0) == 0.0


def test_f723_claim_away_from_23_degc_carries_the_temperature_term(tmp_path):
    at_ref = lot_at(tmp_path)
    warm = lot_at(tmp_path, 300.0)  # parsed at once, so the file may be rewritten
    v0 = evaluate_claim(at_ref.claims[0], measured(5.0e14, 1.0e13), at_ref.decision)
    v1 = evaluate_claim(warm.claims[0], measured(5.0e14, 1.0e13), warm.decision)
    # the same converted value (no correction is applied)
    assert v1.measured == v0.measured == pytest.approx(8.787, abs=5e-4)
    # ASTM F723 eq. (5), (6) at 5e14 +- 2 %: u_rel = hypot(0.98 * 2 %, 4.5 %) = 0.04908
    # (see tests/test_lotfile.py); at 300 K: dT = 300 - 296.15 = 3.85 K, term 0.0177824;
    # hypot(0.04908, 0.017782) = 0.05220 (by hand)
    assert v0.stderr / v0.measured == pytest.approx(0.04908, abs=2e-4)
    assert v1.stderr / v1.measured == pytest.approx(0.05220, abs=2e-4)
    assert v1.stderr == pytest.approx(math.hypot(v0.stderr, v0.measured * 0.0177824),
                                      rel=1e-5)
    note = next(n for n in v1.notes if "no temperature correction" in n)
    assert "296.15 K" in note and "300.00 K" in note and "1.78 %" in note
    # none at the reference temperature itself
    assert not any("temperature correction" in n for n in v0.notes)


def test_measured_resistivity_carries_the_offset_of_its_point(tmp_path):
    lot = lot_at(tmp_path)
    pt = {"temperature_K": 296.65, "value": 10.0, "stderr": 0.1}
    v = evaluate_claim(lot.claims[0], measured(rho=pt), lot.decision)
    # dT = 0.5 K: 0.5 x 0.008 / sqrt(3) = 2.3094e-3, x 10 ohm cm = 0.023094;
    # u = hypot(0.1, 0.023094) = 0.102632 (by hand)
    assert v.stderr == pytest.approx(0.102632, rel=1e-5)
    assert "measured resistivity at 296.65 K" in v.method
    # a point exactly at the claim temperature is used as it is
    pt["temperature_K"] = 296.15
    v = evaluate_claim(lot.claims[0], measured(rho=pt), lot.decision)
    assert v.stderr == 0.1 and v.notes == ()


def test_fitted_net_doping_has_no_temperature_term(tmp_path):
    # N_D - N_A from a fit does not depend on T: the claim temperature does not enter
    lot = lot_at(tmp_path, 300.0)
    v = evaluate_claim(lot.claims[1], measured(), lot.decision)
    assert (v.measured, v.stderr) == (5.0e14, 5.0e12)
    assert not any("temperature" in n for n in v.notes)


# ---------------------------------------------------------------------------------------------
# Hall factor


def test_hall_factor_uncertainty_adds_to_net_doping_not_to_measured_resistivity(tmp_path):
    lot = lot_at(tmp_path)
    hall = {"value": 1.15, "stderr": 0.05, "source": "lot file measurement.hall_factor"}
    v = evaluate_claim(lot.claims[1], measured(hall=hall), lot.decision)
    # r_H about 1.1-1.2 for electrons in lightly doped Si at 300 K (common practice; from
    # memory, e.g. E. Ohta, M. Sakata, Jpn. J. Appl. Phys. 17, 1795 (1978)).
    # u_rel = hypot(5e12/5e14, 0.05/1.15) = hypot(0.01, 0.0434783) = 0.0446135;
    # u = 2.23068e13, U = 4.46135e13; margin (5.5e14 - 5e14) / 4.46135e13 = 1.1207 (by hand)
    assert v.stderr == pytest.approx(2.23068e13, rel=1e-5)
    assert (v.verdict, v.margin) == ("accept", pytest.approx(1.1207, abs=1e-4))
    assert any("u(r_H)/r_H" in n and "4.35 %" in n for n in v.notes)
    # the same through ASTM F723: the density's 4.46 % goes through the slope
    c = evaluate_claim(lot.claims[0], measured(hall=hall), lot.decision)
    up = silicon.resistivity_from_dopant_density(5e14 * 1.01, "phosphorus")
    dn = silicon.resistivity_from_dopant_density(5e14 / 1.01, "phosphorus")
    slope = math.log(up / dn) / (2 * math.log(1.01))
    assert c.stderr / c.measured == pytest.approx(math.hypot(slope * 0.0446135, 0.045),
                                                  rel=1e-3)
    # a measured resistivity does not involve r_H
    pt = {"temperature_K": 296.15, "value": 10.0, "stderr": 0.1}
    r = evaluate_claim(lot.claims[0], measured(rho=pt, hall=hall), lot.decision)
    assert r.stderr == 0.1
    # no uncertainty stated: none added, and a note says so
    v = evaluate_claim(lot.claims[1], measured(hall={"value": 1.0, "stderr": 0.0,
                                                     "source": "the fit"}), lot.decision)
    assert v.stderr == 5.0e12 and any("no stated uncertainty" in n for n in v.notes)


# ---------------------------------------------------------------------------------------------
# the sign of the net doping, and a single point's ionization check


@pytest.mark.parametrize(("n", "carrier", "words"), [
    (-5.0e14, "n", "sign of a p-type sample"),
    (5.0e14, "p", "sign of a n-type sample"),
    (0.0, "n", "is zero"),
])
def test_net_doping_of_the_wrong_sign_is_not_taken_as_its_magnitude(tmp_path, n, carrier,
                                                                    words):
    lot = lot_at(tmp_path)
    for c in lot.claims:  # net doping, and the ASTM F723 conversion of it
        v = evaluate_claim(c, measured(n=n, carrier=carrier), lot.decision, wafer_id="W01")
        assert v.verdict == "indeterminate" and v.measured is None
        assert words in v.sentence and "contradicts itself" in v.sentence
    # the right sign for a p-type run is compared by magnitude
    v = evaluate_claim(lot.claims[1], measured(n=-5.0e14, carrier="p"), lot.decision)
    assert (v.verdict, v.measured) == ("accept", 5.0e14)


def test_failed_ionization_check_makes_net_doping_claims_indeterminate(tmp_path):
    lot = lot_at(tmp_path)
    reason = ("a single room-temperature point cannot give the net doping here: phosphorus "
              "(45 meV) is only 90.0 % ionized at 296.15 K (synthetic)")
    ion = {"phosphorus": {"dopant": "phosphorus", "material": "Si", "temperature_K": 296.15,
                          "density_cm3": 5e14, "energy_eV": 0.045, "fraction": 0.9,
                          "reason": reason}}
    pt = {"temperature_K": 296.15, "value": 10.0, "stderr": 0.1}
    w = evaluate_wafer("W01", measured(rho=pt, ionization=ion), lot.claims, lot.decision)
    rho_v, net_v = w.claims
    # the net-doping claim takes the lot's dopant (phosphorus, from the resistivity claim)
    assert claim_dopant(lot.claims[1], lot.claims) == "phosphorus"
    assert net_v.verdict == "indeterminate" and "90.0 % ionized" in net_v.sentence
    # a measured resistivity is unaffected
    assert (rho_v.verdict, rho_v.measured) == ("accept", 10.0)
    # without the measured resistivity the conversion of that net doping is indeterminate too
    w = evaluate_wafer("W01", measured(ionization=ion), lot.claims, lot.decision)
    assert [c.verdict for c in w.claims] == ["indeterminate", "indeterminate"]
    # a passed check is noted, and the point used
    ion["phosphorus"].update(fraction=0.9997, reason=None)
    w = evaluate_wafer("W01", measured(ionization=ion), lot.claims, lot.decision)
    assert w.claims[1].verdict == "accept"
    assert any("99.97 % ionized" in n for n in w.claims[1].notes)


def test_claim_dopant_resolution(tmp_path):
    lot = lot_at(tmp_path)
    assert claim_dopant(lot.claims[0], lot.claims) == "phosphorus"
    # its own dopant first; with boron and phosphorus both named, none is assumed
    both = lot_at(tmp_path, extra=textwrap.dedent("""
        [[claim]]
        quantity = "net_doping"
        min = 1e14
        unit = "cm^-3"
        dopant = "boron"
        """))
    assert claim_dopant(both.claims[2], both.claims) == "boron"
    assert claim_dopant(both.claims[1], both.claims) is None
