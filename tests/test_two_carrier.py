"""The two-carrier fit of R_H(T) and rho(T): physics, recovery, coverage, CLI and report.

Synthetic runs are made by freezeout's own forward model (``simulate`` with the minority
carrier's lattice term), in the fictional Harrowgate lab's scenario: a p-type Ge wafer whose
Hall sign turns negative when intrinsic electrons take over.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from cli_runner import cli
from freezeout import api
from freezeout.fitting.two_carrier import fit_run_two_carrier
from freezeout.physics.constants import Q
from freezeout.physics.transport import hall_coefficient, hall_sign_change_temperature
from freezeout.records.run import RunData

TRUTH = {"N_A": 5e13, "E_A": 0.011, "N_D": 1e13}
HOLE = (1900.0, 2.33)  # Ge holes, 300 K lattice term (S. M. Sze, Physics of Semiconductor
ELECTRON = (3900.0, 1.66)  # Devices, 2nd ed., App. G; from memory)
MECHANISMS = "lattice+brooks-herring"


def _simulate(t):
    return api.simulate(material="Ge", acceptors=[(TRUTH["N_A"], TRUTH["E_A"], None)],
                        donors=[(TRUTH["N_D"], None, None)], temperatures=np.asarray(t),
                        mobility=MECHANISMS, lattice_mu300=HOLE[0], lattice_exponent=HOLE[1],
                        minority_mu300=ELECTRON[0], minority_exponent=ELECTRON[1]).transport


def _true_reversal() -> float:
    return hall_sign_change_temperature(lambda t: _simulate(t).hall_coefficient,
                                        np.linspace(200.0, 450.0, 51))


def _run(seed: int, n: int = 40, u_r: float = 0.02, u_rho: float = 0.01) -> RunData:
    """A noisy run with stated uncertainties: R_H to u_r (relative, with a floor near the
    reversal), rho to u_rho."""
    rng = np.random.default_rng(seed)
    t = np.linspace(30.0, 450.0, n)  # a sweep linear in T, as a cryostat run is
    tr = _simulate(t)
    floor = 0.05 * tr.resistivity * np.median(np.abs(tr.hall_coefficient) / tr.resistivity)
    s_r = u_r * np.sqrt(tr.hall_coefficient**2 + floor**2)
    rh = tr.hall_coefficient + s_r * rng.standard_normal(n)
    rho = tr.resistivity * np.exp(u_rho * rng.standard_normal(n))
    return RunData(f"harrowgate-ge-{seed}.csv", "0" * 64, t, 1.0 / (Q * np.abs(rh)), None, "p",
                   tuple("p" if r > 0 else "n" for r in rh), resistivity=rho,
                   resistivity_err=u_rho * rho, hall_coefficient=rh, hall_coefficient_err=s_r)


def test_forward_model_matches_the_two_carrier_formula():
    # R_H of the forward model = the published two-carrier form with its own n, p, mu, r
    # (E. H. Putley, The Hall Effect and Semiconductor Physics, 1968, ch. 4; from memory)
    t = np.array([100.0, 300.0, 400.0])
    tr = _simulate(t)
    expect = hall_coefficient(tr.n, tr.p, tr.electron.drift, tr.hole.drift,
                              tr.electron.hall_factor, tr.hole.hall_factor)
    assert np.allclose(tr.hall_coefficient, expect, rtol=1e-12)
    # cold: holes alone, R_H -> r_p / (q p) (same source)
    assert tr.hall_coefficient[0] == pytest.approx(tr.hole.hall_factor[0] / (Q * tr.p[0]),
                                                   rel=1e-9)
    assert tr.hall_coefficient[-1] < 0 < tr.hall_coefficient[0]


def test_largest_negative_hall_coefficient_of_a_p_type_sample():
    # With constant mobilities (b = mu_n / mu_p), r = 1 and p - n = N, R_H(n) has its most
    # negative value -(b - 1)^2 / (4 b q N) at n = N / (b - 1) (derived here from the
    # two-carrier formula: d/dn of (p - b^2 n) / (q (p + b n)^2) = 0 with p = n + N)
    b, big_n = 2.0, 1e13
    n = np.geomspace(1e10, 1e16, 200001)
    r = hall_coefficient(n, n + big_n, b * 1000.0, 1000.0)
    assert r.min() == pytest.approx(-(b - 1) ** 2 / (4 * b * Q * big_n), rel=1e-6)
    assert n[np.argmin(r)] == pytest.approx(big_n / (b - 1), rel=1e-3)


def test_recovers_net_doping_and_reversal_of_a_p_type_run():
    run = _run(7)
    assert run.mixed.sum() >= 3  # the run really goes through the sign reversal
    res = fit_run_two_carrier(run, api.load_material("Ge"), mobility=MECHANISMS)
    d = res.to_dict()
    net = d["net_doping_cm3"]
    truth = TRUTH["N_A"] - TRUTH["N_D"]
    # within 3 standard errors on this replicate (coverage is the next test's)
    assert abs(net["value"] - truth) < 3 * net["stderr"] < 0.05 * truth
    t_rev = _true_reversal()
    rev = d["two_carrier"]["hall_sign_reversal"]
    assert d["hall_sign_reversal_K"] == rev["value"]
    assert abs(rev["value"] - t_rev) < 3 * rev["stderr"] < 5.0
    hole = d["mobility"]["hole"]["lattice_mu300_cm2_per_Vs"]
    assert abs(hole["value"] - HOLE[0]) < 3 * hole["stderr"]
    assert d["two_carrier"]["sigma_from"] == {"hall": "stated", "resistivity": "stated"}
    assert not any("misses the data" in w for w in d["warnings"])


def test_intervals_cover_on_replicates():
    # Wald intervals of the net doping, N_A and the reversal temperature cover the truth on
    # 30 replicates (95 % nominal; 30 replicates: at least 25 expected with probability
    # > 0.98 under binomial(30, 0.95); project choice, no source)
    t_rev = _true_reversal()
    mat = api.load_material("Ge")
    hits = {"net": 0, "N_A": 0, "reversal": 0}
    for seed in range(30):
        d = fit_run_two_carrier(_run(100 + seed, n=30), mat, mobility=MECHANISMS).to_dict()
        lo, hi = d["net_doping_cm3"]["ci95"]
        hits["net"] += lo <= TRUTH["N_A"] - TRUTH["N_D"] <= hi
        lo, hi = d["levels"][0]["concentration_cm3"]["ci95"]
        hits["N_A"] += lo <= TRUTH["N_A"] <= hi
        lo, hi = d["two_carrier"]["hall_sign_reversal"]["ci95"]
        hits["reversal"] += lo <= t_rev <= hi
    assert all(v >= 25 for v in hits.values()), hits


def test_no_reversal_gives_null(tmp_path, monkeypatch, capsys):
    # an extrinsic Si run, cold: R_H keeps its sign, the JSON says null (noise-free)
    sim = api.simulate(material="Si", acceptors=[(1e16, 0.045, None)], donors=[(1e15, None,
                                                                                 None)],
                       temperatures=(60.0, 300.0, 24), mobility=MECHANISMS,
                       lattice_mu300=470.0, lattice_exponent=2.2, minority_mu300=1400.0,
                       minority_exponent=2.4)
    tr = sim.transport
    path = tmp_path / "harrowgate_si_p.csv"
    lines = ["# material: Si", "T [K],R_H [cm^3/C],rho [ohm cm]"]
    lines += [f"{t:.10g},{r:.10g},{p:.10g}" for t, r, p in zip(sim.temperature, tr.hall_coefficient,
                                                      tr.resistivity, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    code, out, _ = cli(monkeypatch, capsys, "fit", path, "--carriers", "both", "--json",
                       "--no-history")
    assert code == 0
    d = json.loads(out)
    # the electrons never conduct in 60-300 K: their mobility is not set, so neither is any
    # reversal the model would put beyond the measured range
    assert d["hall_sign_reversal_K"] is None
    assert d["two_carrier"]["hall_sign_reversal"] is None
    assert any("no Hall sign reversal" in w or "no reversal temperature is reported" in w
               for w in d["warnings"])
    mu_n = d["mobility"]["electron"]["lattice_mu300_cm2_per_Vs"]
    assert mu_n["stderr"] is None  # not set by the data: no standard error
    assert mu_n["ci95"] == [1.0, 1e6]  # the interval is the whole allowed range
    assert math.isclose(d["net_doping_cm3"]["value"], 9e15, rel_tol=0.05)


def _write_run(path, run: RunData):
    lines = ["# material: Ge", "# sample: harrowgate-ge-w3",
             "T [K],R_H [cm^3/C],R_H_err [cm^3/C],rho [ohm cm],rho_err [ohm cm]"]
    lines += [f"{t:.10g},{r:.10g},{u:.10g},{p:.10g},{e:.10g}" for t, r, u, p, e in zip(
        run.temperature, run.hall_coefficient, run.hall_coefficient_err, run.resistivity,
        run.resistivity_err, strict=True)]
    path.write_text("\n".join(lines) + "\n")


def test_cli_json_and_report(tmp_path, monkeypatch, capsys):
    path = tmp_path / "harrowgate_ge_w3.csv"
    _write_run(path, _run(3))
    out_dir = tmp_path / "report"
    code, out, err = cli(monkeypatch, capsys, "fit", path, "--carriers", "both", "--no-history",
                         "-o", out_dir)
    assert code == 0, err
    assert "Hall sign reversal" in out
    d = json.loads((out_dir / "fit.json").read_text())
    assert set(d["mobility"]) == {"electron", "hole"}
    for block in d["mobility"].values():
        assert block["models"] == ["lattice", "brooks-herring"]
        assert set(block["lattice_mu300_cm2_per_Vs"]) >= {"value", "stderr", "ci95"}
        assert set(block["lattice_exponent"]) >= {"value", "stderr", "ci95"}
    assert 250.0 < d["hall_sign_reversal_K"] < 350.0
    assert d["provenance"]["options"]["carriers"] == "both"
    assert (out_dir / "hall_sign.png").stat().st_size > 10_000
    page = (out_dir / "report.html").read_text()
    assert "Two-carrier fit of R_H(T)" in page and "hall_sign" not in page.split("<h2>")[0]


def test_cli_refuses_what_it_cannot_fit(tmp_path, monkeypatch, capsys):
    path = tmp_path / "harrowgate_density_only.csv"
    path.write_text("# material: Ge\nT [K],p [cm^-3]\n" + "".join(
        f"{t},{4e13}\n" for t in range(40, 300, 20)))
    code, _, err = cli(monkeypatch, capsys, "fit", path, "--carriers", "both", "--no-history",
                       "--json")
    assert code == 2
    assert "signed Hall coefficient" in err and "harrowgate_density_only.csv" in err
    code, _, err = cli(monkeypatch, capsys, "fit", path, "--carriers", "three", "--no-history",
                       "--json")
    assert code == 2 and "valid: majority, both" in err


def test_common_thickness_uncertainty_widens_the_concentrations_only():
    # a 5 % thickness uncertainty scales R_H and rho alike: it moves every concentration
    # (1/(q R_H)) by 5 % and no mobility (R_H/rho) (common practice, no source)
    from dataclasses import replace

    mat = api.load_material("Ge")
    run = _run(11)
    plain = fit_run_two_carrier(run, mat, mobility=MECHANISMS)
    thick = fit_run_two_carrier(replace(run, scale_uncertainty=0.05), mat, mobility=MECHANISMS)
    net0, net1 = plain.net_doping, thick.net_doping
    assert net1.stderr == pytest.approx(math.hypot(net0.stderr, 0.05 * net0.value), rel=1e-6)
    n0, n1 = plain.levels[0].concentration, thick.levels[0].concentration
    assert n1.stderr > n0.stderr and n1.stderr >= 0.05 * n1.value * 0.99
    mu0 = plain.two_carrier.hole.lattice_mu300
    mu1 = thick.two_carrier.hole.lattice_mu300
    assert mu1.stderr == pytest.approx(mu0.stderr, rel=1e-9)


def test_start_scan_keeps_the_net_doping_and_spans_the_compensation():
    # n(T) sets the net doping and often not the compensation (common practice, no source):
    # every start row of the scan keeps the density fit's net doping, spans K = 1e-4 ... 0.9
    # and doubles or halves the majority energy (the two limits of the freeze-out slope).
    from freezeout.fitting.model import CarrierModel
    from freezeout.fitting.two_carrier import _level_grid

    model = CarrierModel(api.load_material("Ge"), np.linspace(30.0, 450.0, 20), "p", 1, True)
    start = {"log10_N_A1": math.log10(3.4e15), "E_A1": 0.003, "log10_N_D": math.log10(3.35e15)}
    rows = _level_grid(model, start, fixed={})
    n_a, n_d = 10.0 ** rows["log10_N_A1"], 10.0 ** rows["log10_N_D"]
    assert np.allclose(n_a - n_d, 3.4e15 - 3.35e15, rtol=1e-9)
    k = n_d / n_a
    assert k[0] == pytest.approx(3.35 / 3.4)  # the density fit's own point comes first
    assert np.min(k[1:]) == pytest.approx(1e-4) and np.max(k[1:]) == pytest.approx(0.9)
    assert set(np.round(rows["E_A1"] / 0.003, 9)) == {0.5, 1.0, 2.0}
    assert _level_grid(model, start, fixed={"log10_N_D": start["log10_N_D"]}) == {}


def test_start_scan_finds_the_light_compensation_basin():
    # The density-only fit of this run sits in the heavily compensated basin (N_A ~ 3e15,
    # N_D ~ 3e15 for a true 5e13 / 1e13); the two-carrier fit must still land on the truth,
    # and in few iterations (it took 40 function evaluations from that basin before the scan
    # kept the net doping; project choice, no source, for the bound of 15).
    import scipy.optimize as so

    from freezeout.fitting import two_carrier as tc

    calls = []
    real = so.least_squares

    def counted(*args, **kw):
        out = real(*args, **kw)
        calls.append(out.nfev)
        return out

    run = _run(5, n=50)
    tc.optimize.least_squares = counted
    try:
        res = fit_run_two_carrier(run, api.load_material("Ge"), mobility=MECHANISMS)
    finally:
        tc.optimize.least_squares = real
    d = res.to_dict()
    n_a = next(lv for lv in d["levels"] if lv["name"].startswith("A"))["concentration_cm3"]
    assert abs(math.log10(n_a["value"] / TRUTH["N_A"])) < 0.1
    assert max(calls) <= 15


def test_start_only_density_fit_is_a_start_not_a_result():
    # project choice, no source: the start of the two-carrier fit follows no flat valley to
    # its end, makes no profile intervals or alternatives, and makes no convergence
    # statement (the two-carrier fit refits every level and states its own)
    from freezeout.fitting import fit as fit_module

    run = _run(3)
    ge = api.load_material("Ge")
    seen = []
    real = fit_module.polish

    def counted(problem, starts, fermi, max_nfev, *args, **kw):
        seen.append(max_nfev)
        return real(problem, starts, fermi, max_nfev, *args, **kw)

    fit_module.polish = counted
    try:
        start = fit_module.fit_run(run, ge, start_only=True)
    finally:
        fit_module.polish = real
    assert seen and set(seen) == {fit_module.START_EVALUATIONS}
    assert start.alternatives == ()
    assert all(lv.concentration.method.startswith("wald") for lv in start.levels)
    assert not any(w.startswith("the optimizer did not converge") for w in start.warnings)
