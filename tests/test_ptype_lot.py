"""A p-type (Si:B) lot qualified end to end: the verdicts come out as designed.

The lot is synthetic: four fictional wafers of the fictional supplier "Kestrel Ridge Wafers",
three temperature runs simulated with ``freezeout.api.simulate`` (boron 45 meV, 1 %
compensating donors) plus seeded 2 % noise, and one single room-temperature point, written
into tmp_path. Nothing here is a measurement.

Designed verdicts (by hand, from the simulated truth):

* W01: N_A = 1.00e15, N_D = 1e13 -> N_A - N_D = 0.99e15 cm^-3; ASTM F723 (boron) gives about
  13.4 ohm cm. Inside both windows (net doping 0.85e15 to 1.15e15 cm^-3, resistivity 11 to
  16 ohm cm) by many expanded uncertainties: accept.
* W02: N_A = 1.05e15 -> 1.04e15 cm^-3, about 12.8 ohm cm: accept.
* W03: N_A = 2.00e15 -> 1.98e15 cm^-3, about 6.9 ohm cm: outside both windows: reject.
* W04: a single point p = 1.0e15 +- 1e13 cm^-3 at 296.15 K (boron more than 99 % ionized
  there, the tool's own model): accept.

Before the net-doping sign was one rule, every p-type temperature run came out
"indeterminate" (the fit's |N_D - N_A| was read as the wrong sign for a p-type run).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import freezeout
from freezeout.api import simulate

LOT = """\
# synthetic p-type test lot (fictional supplier)
supplier = "Kestrel Ridge Wafers"
lot = "KRW-PTYPE-01"
date = 2026-12-01

[decision]
rule = "guarded"
coverage_factor = 2

[[claim]]
quantity = "type"
value = "p"

[[claim]]
quantity = "resistivity"
min = 11.0
max = 16.0
unit = "ohm cm"
dopant = "boron"
temperature_K = 296.15

[[claim]]
quantity = "net_doping"
nominal = 1e15
tolerance = "15%"
unit = "cm^-3"
"""

#: wafer id -> boron concentration of its simulated temperature run [cm^-3]
RUNS = {"W01": 1.00e15, "W02": 1.05e15, "W03": 2.00e15}
DESIGNED = {"W01": "accept", "W02": "accept", "W03": "reject", "W04": "accept"}


def write_temperature_run(path: Path, n_a: float, seed: int) -> Path:
    """A simulated Si:B run with seeded 2 % noise (p and p_err columns)."""
    sim = simulate(material="Si", acceptors=[(n_a, 0.045)], donors=[(n_a / 100, None)],
                   temperatures=(40, 400, 30))
    rng = np.random.default_rng(seed)
    p = sim.p * (1.0 + 0.02 * rng.standard_normal(sim.p.size))
    lines = ["# data: SYNTHETIC (freezeout simulate plus 2 % noise), not a measurement",
             "# material: Si", "T [K],p [cm^-3],p_err [cm^-3]"]
    lines += [f"{float(t)!r},{float(v)!r},{0.02 * float(v)!r}"
              for t, v in zip(sim.temperature, p, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def outcome(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("ptype")
    (tmp / "runs").mkdir()
    text = LOT
    for i, (wid, n_a) in enumerate(RUNS.items()):
        write_temperature_run(tmp / "runs" / f"{wid.lower()}.csv", n_a, seed=11 + i)
        text += f'\n[[wafer]]\nid = "{wid}"\nmaterial = "Si"\nrun = "runs/{wid.lower()}.csv"\n'
    (tmp / "runs" / "w04.csv").write_text(
        "# data: SYNTHETIC single point, not a measurement\n"
        "T [K],p [cm^-3],p_err [cm^-3]\n296.15,1.0e15,1.0e13\n")
    text += '\n[[wafer]]\nid = "W04"\nmaterial = "Si"\nrun = "runs/w04.csv"\n'
    (tmp / "lot.toml").write_text(text)
    return freezeout.qualify_lot(tmp / "lot.toml", out=tmp / "report", workers=1,
                                 db=f"sqlite:///{tmp / 'history.sqlite'}")


def test_wafer_verdicts_as_designed(outcome):
    got = {w.wafer_id: w.verdict for w in outcome.qualification.verdict.wafers}
    assert got == DESIGNED
    assert outcome.verdict == "reject" and outcome.exit_code == 3


def test_no_p_type_claim_is_indeterminate(outcome):
    for w in outcome.qualification.verdict.wafers:
        for c in w.claims:
            assert c.verdict != "indeterminate", (w.wafer_id, c.claim_key, c.sentence)


def test_fit_and_single_point_give_the_same_sign(outcome):
    # one rule: N_D - N_A is signed, negative for a p-type wafer, from a fit as from a point
    doc = outcome.to_dict()
    for w in doc["wafers"]:
        measured = w["input"]
        assert measured["how"] in ("fit", "single room-temperature result")
    for wid in DESIGNED:
        claims = {c.claim_key: c for c in next(
            w for w in outcome.qualification.verdict.wafers if w.wafer_id == wid).claims}
        # the claims compare the magnitude |N_D - N_A| with the window (positive)
        assert claims["claim[3]"].measured > 0
    w01 = next(w for w in outcome.qualification.verdict.wafers if w.wafer_id == "W01")
    net = {c.claim_key: c for c in w01.claims}["claim[3]"]
    # fitted N_A - N_D within 5 % of the simulated 0.99e15 cm^-3 (2 % noise, 30 points)
    assert net.measured == pytest.approx(0.99e15, rel=0.05)
    rho = {c.claim_key: c for c in w01.claims}["claim[2]"]
    assert rho.method.startswith("ASTM F723 (boron)")
