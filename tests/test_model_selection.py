"""Model selection of an 'auto' level count (fitting/model_selection.py).

Scenario (fictional): the Harrowgate Cryo Lab receives Si wafers from a new supplier and
does not know how many donor levels they hold; its runs are made here with freezeout's own
simulate, with 2 % log-normal noise stated as the density errors (seeded). BIC: G. Schwarz,
Ann. Statist. 6, 461 (1978); the delta-BIC-2 threshold: R. E. Kass, A. E. Raftery, J. Am.
Stat. Assoc. 90, 773 (1995) (from memory).
"""

from __future__ import annotations

import json
import math
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest

import freezeout
from cli_runner import cli
from freezeout.api.simulation import simulation_metadata
from freezeout.errors import FitError, InputError
from freezeout.fitting import model_selection as ms
from freezeout.fitting.result import Estimate, LevelEstimate
from freezeout.io.writers import format_csv

# P in Si, 0.045 eV (Sze, Physics of Semiconductor Devices; from memory); the 0.15 eV second
# donor is the scenario's own deeper level, well apart from the first (project choice).
SHALLOW, DEEP = 0.045, 0.15


def _write_run(folder, name, donors, acceptors, t_min, t_max, n, seed, noise=0.02):
    """A simulated Si run with log-normal noise of ``noise``, stated as n_err, as a CSV."""
    sim = freezeout.simulate("Si", donors=donors, acceptors=acceptors,
                             temperatures=(t_min, t_max, n))
    rng = np.random.default_rng(seed)
    dens = sim.n * np.exp(rng.normal(0.0, noise, sim.n.size))
    meta = {**simulation_metadata(sim, "fermi-dirac"), "sample": f"Harrowgate {name}"}
    path = folder / f"{name}.csv"
    path.write_text(format_csv({"T [K]": sim.temperature, "n [cm^-3]": dens,
                                "n_err [cm^-3]": noise * dens}, meta))
    return path


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("harrowgate")
    return {
        # one donor level, compensated 20 %
        "one_comp": _write_run(folder, "HG-101", [(1e16, SHALLOW)], [(2e15, None)], 25, 400,
                               24, seed=11),
        # one donor level, no compensating acceptor at all
        "one_bare": _write_run(folder, "HG-102", [(1e16, SHALLOW)], [], 25, 400, 24, seed=12),
        # two donor levels well apart, light compensation
        "two": _write_run(folder, "HG-201", [(1e16, SHALLOW), (5e15, DEEP)], [(1e14, None)],
                          25, 500, 28, seed=13),
    }


@pytest.fixture(scope="module")
def one_comp(runs):
    return freezeout.fit_file(runs["one_comp"], donors="auto", acceptors="auto")


def _labels(result):
    return [c.label for c in result.model_selection.candidates]


def test_one_compensated_donor_level_is_chosen(one_comp):
    """Truth: one donor level and a compensating acceptor (recovery; common practice)."""
    sel = one_comp.model_selection
    assert sel.chosen == "1 donor level + compensating acceptor"
    donor, acceptor = one_comp.levels
    assert donor.energy.ci95[0] < SHALLOW < donor.energy.ci95[1]
    assert acceptor.concentration.ci95[0] < 2e15 < acceptor.concentration.ci95[1]
    # 2 and 3 levels fail to lower the BIC by more than 2: the search stops before 4
    assert max(c.majority_levels for c in sel.candidates) == 3
    assert len(sel.candidates) == 6 and "stopped after 3 levels" in sel.stopped
    # the extra levels are refused: their concentrations reach the floor, and the species
    # named is the candidate's emptiest (the real donor's interval may reach it too)
    for c in sel.candidates:
        if c.majority_levels > 1:
            assert not c.kept and "floor" in c.reason
            emptiest = min(c.result.levels, key=lambda lv: lv.concentration.value)
            assert c.reason.startswith(f"the 95 % interval of N_{emptiest.name} ")


def test_one_uncompensated_donor_level_is_chosen(runs):
    res = freezeout.fit_file(runs["one_bare"], donors="auto", acceptors="auto")
    assert res.model_selection.chosen == "1 donor level"
    assert len(res.levels) == 1
    comp = next(c for c in res.model_selection.candidates
                if c.majority_levels == 1 and c.compensated)
    assert not comp.kept and "N_A" in comp.reason and "floor" in comp.reason


def test_two_separated_donor_levels_are_chosen(runs):
    res = freezeout.fit_file(runs["two"], donors="auto", acceptors="auto")
    sel = res.model_selection
    assert sel.chosen == "2 donor levels + compensating acceptor"
    energies = sorted((lv.energy for lv in res.levels if lv.energy is not None),
                      key=lambda e: e.value)
    assert energies[0].ci95[0] < SHALLOW < energies[0].ci95[1]
    assert energies[1].ci95[0] < DEEP < energies[1].ci95[1]
    # 2 levels lowered the BIC, 3 and 4 did not: every count was tried, 8 candidates
    assert len(sel.candidates) == 8 and sel.stopped == "tried 1 to 4 majority levels"
    one = next(c for c in sel.candidates if c.label == "1 donor level + compensating acceptor")
    assert one.kept and one.delta_bic > 100  # kept, but far worse than two levels


def test_p_type_acceptors_auto_from_arrays():
    """A p-type GaN-like run (Mg acceptor about 0.17 eV: from memory), compensated 20 %,
    fitted from arrays: the roles swap, acceptor levels with a compensating donor."""
    sim = freezeout.simulate("GaN", acceptors=[(5e18, 0.17)], donors=[(1e18, None)],
                             temperatures=(150, 600, 20))
    rng = np.random.default_rng(3)
    dens = sim.p * np.exp(rng.normal(0.0, 0.02, sim.p.size))
    res = freezeout.api.fit_arrays(sim.temperature, dens, 0.02 * dens, carrier="p",
                                   material="GaN", acceptors="auto", donors="auto")
    sel = res.model_selection
    assert sel.chosen == "1 acceptor level + compensating donor"
    assert _labels(res)[:2] == ["1 acceptor level", "1 acceptor level + compensating donor"]
    acceptor = res.levels[0]
    assert acceptor.kind == "acceptor" and acceptor.energy.ci95[0] < 0.17 < acceptor.energy.ci95[1]


def test_every_candidate_bic_is_its_own_over_the_same_points(one_comp):
    """BIC = chi^2 + k ln N with stated errors (Schwarz 1978), N the same for all."""
    fitted = [c for c in one_comp.model_selection.candidates if c.result is not None]
    assert {c.result.n_points for c in fitted} == {one_comp.n_points}
    for c in fitted:
        assert c.bic == pytest.approx(c.chi2 + c.n_parameters * math.log(one_comp.n_points))
        assert c.bic == c.result.bic and c.aic == c.result.aic
    chosen = next(c for c in fitted if c.label == one_comp.model_selection.chosen)
    assert one_comp.bic == chosen.bic and one_comp.levels == chosen.result.levels


def test_minority_auto_alone(runs):
    """--donors 1 --acceptors auto on an n-type run: one level, with and without N_A."""
    res = freezeout.fit_file(runs["one_comp"], donors=1, acceptors="auto")
    sel = res.model_selection
    assert [(c.majority_levels, c.compensated) for c in sel.candidates] == [(1, False),
                                                                             (1, True)]
    assert sel.chosen == "1 donor level + compensating acceptor"
    assert sel.stopped == "majority levels held at 1"


def test_a_given_minority_count_is_held(runs):
    res = freezeout.fit_file(runs["one_comp"], donors="auto", acceptors=1)
    assert all(c.compensated for c in res.model_selection.candidates)
    assert res.model_selection.chosen == "1 donor level + compensating acceptor"


def test_json_block(one_comp):
    doc = json.loads(json.dumps(one_comp.to_dict(), allow_nan=False))
    block = doc["model_selection"]
    assert block["chosen"] == "1 donor level + compensating acceptor"
    assert "BIC" in block["rule"] and "delta BIC 2" in block["rule"]
    assert "2 times in a row" in block["stop_rule"]
    keys = {"label", "majority_levels", "compensated", "chi2", "aic", "bic", "n_parameters",
            "delta_bic", "kept", "reason"}
    assert all(set(c) == keys for c in block["candidates"])
    chosen = [c for c in block["candidates"] if c["label"] == block["chosen"]]
    assert len(chosen) == 1 and chosen[0]["kept"] and chosen[0]["reason"] == "chosen"
    assert chosen[0]["bic"] == doc["statistics"]["bic"]
    assert min(c["delta_bic"] for c in block["candidates"] if c["kept"]) == 0.0
    assert doc["provenance"]["options"]["donors"] == "auto"
    # a fit with given counts has no block
    assert "model_selection" not in freezeout.fit_file(
        doc["provenance"]["input_path"]).to_dict()


# --- the rule's pieces on their own (project choices stated in the module) ---------------

def test_choose_takes_the_simplest_within_delta_bic_2():
    # best 97.5; 99.0 is within 2 and has fewer parameters: chosen (Kass and Raftery 1995)
    assert ms.choose([100.0, 99.0, 97.5], [2, 3, 5], [True] * 3) == 1
    # 99.6 is 2.1 above the best: not within, the best is chosen
    assert ms.choose([99.6, 97.5], [3, 5], [True, True]) == 1
    # exactly 2 counts as within (project choice, no source)
    assert ms.choose([99.5, 97.5], [3, 5], [True, True]) == 0
    # ties in the parameter count go to the lower BIC
    assert ms.choose([50.0, 49.5, 60.0], [3, 3, 2], [True, True, True]) == 1
    # a refused candidate is neither chosen nor the reference of delta BIC
    assert ms.choose([10.0, 50.0, 51.5], [5, 3, 2], [False, True, True]) == 2
    with pytest.raises(ValueError):
        ms.choose([1.0, math.nan], [2, 3], [False, True])


def _level(name, conc, lo, hi=None, energy=None, kind="donor"):
    c = Estimate(conc, math.nan, (lo, hi if hi is not None else conc * 2), "profile")
    return LevelEstimate(kind, c, energy, 2.0 if energy else None, name)


def test_refusal_at_the_concentration_floor():
    floor = 10.0 ** ms.LOG10_CONCENTRATION_BOUNDS[0]
    assert ms.concentration_at_floor([_level("D1", 1e16, 9e15)]) is None
    assert "N_A" in ms.concentration_at_floor([_level("D1", 1e16, 9e15),
                                               _level("A", 1e13, floor, kind="acceptor")])
    assert ms.concentration_at_floor([_level("D1", 1e10, 1.1 * floor)]) is not None
    assert ms.concentration_at_floor([_level("D1", 1e10, 2.0 * floor)]) is None
    assert "not determined" in ms.concentration_at_floor([_level("D1", 1e16, None)])
    assert ms.concentration_at_floor([_level("D1", 1e16, 0.0)]) is not None
    # a held concentration has no interval and is not refused
    assert ms.concentration_at_floor([_level("D1", 1e16, None)], fixed={"N_D1": 1e16}) is None


def _energy(value, lo, hi):
    return Estimate(value, math.nan, (lo, hi), "profile")


def test_refusal_of_coinciding_energies():
    apart = [_level("D1", 1e16, 9e15, energy=_energy(0.045, 0.044, 0.046)),
             _level("D2", 5e15, 4e15, energy=_energy(0.15, 0.14, 0.16))]
    assert ms.coinciding_energies(apart) is None
    close = [apart[0], _level("D2", 5e15, 4e15, energy=_energy(0.047, 0.0455, 0.06))]
    assert "E_D1" in ms.coinciding_energies(close) and "E_D2" in ms.coinciding_energies(close)
    open_end = [apart[0], _level("D2", 5e15, 4e15, energy=_energy(0.2, None, 0.5))]
    assert ms.coinciding_energies(open_end) is not None
    # a fully ionized species has no energy to compare
    assert ms.coinciding_energies([apart[0], _level("A", 1e14, 5e13, kind="acceptor")]) is None


def test_refusal_of_a_fit_that_did_not_converge():
    levels = [_level("D1", 1e16, 9e15, energy=_energy(0.045, 0.044, 0.046))]
    stalled = SimpleNamespace(raw=SimpleNamespace(success=False, aborted=False),
                              optimizer_message="too many evaluations", levels=levels,
                              fixed={})
    assert "did not converge" in ms.refusal(stalled)
    assert ms.refusal(replace_raw(stalled, success=True)) is None


def replace_raw(obj, **raw):
    return SimpleNamespace(**{**vars(obj), "raw": SimpleNamespace(aborted=False, **raw)})


@pytest.fixture(scope="module")
def base(one_comp):
    """A real fit whose levels the rule keeps, to dress up as fake candidates."""
    return one_comp.model_selection.candidates[1].result


def _fake_fits(monkeypatch, base, bic, fail=()):
    """fit_run replaced: the BIC of (majority levels, compensated) from ``bic``."""
    calls = []

    def fake(run, material, *, donors, acceptors, **options):
        calls.append((donors, bool(acceptors)))
        if (donors, bool(acceptors)) in fail:
            raise FitError("no starting point converged")
        return replace(base, bic=bic[donors], n_parameters=2 * donors + int(acceptors))

    monkeypatch.setattr(ms, "fit_run", fake)
    return calls


def _run():
    return SimpleNamespace(carrier="n")


def test_the_search_stops_after_two_misses_in_a_row(monkeypatch, base):
    calls = _fake_fits(monkeypatch, base, {1: 100.0, 2: 99.0, 3: 98.5, 4: 0.0})
    res = ms.select_model(_run(), None, donors="auto", acceptors=1)
    assert [k for k, _ in calls] == [1, 2, 3]  # 4 never fitted
    assert "stopped after 3 levels" in res.model_selection.stopped
    # 98.5 is the lowest; 1 level (100.0) is 1.5 above and simplest: chosen
    assert res.model_selection.chosen == "1 donor level + compensating acceptor"


def test_a_miss_then_a_drop_goes_on(monkeypatch, base):
    calls = _fake_fits(monkeypatch, base, {1: 100.0, 2: 99.0, 3: 90.0, 4: 89.5})
    res = ms.select_model(_run(), None, donors="auto", acceptors=1)
    assert [k for k, _ in calls] == [1, 2, 3, 4]
    assert res.model_selection.chosen == "3 donor levels + compensating acceptor"
    assert res.bic == 90.0
    four = res.model_selection.candidates[3]
    assert four.kept and four.reason == "within delta BIC 2, but not the simplest"


def test_a_failed_candidate_is_refused_with_its_reason(monkeypatch, base):
    _fake_fits(monkeypatch, base, {1: 100.0, 2: 80.0, 3: 79.0, 4: 78.0}, fail={(2, True)})
    res = ms.select_model(_run(), None, donors="auto", acceptors=1)
    two = res.model_selection.candidates[1]
    assert not two.kept and two.reason.startswith("the fit failed")
    assert two.to_dict()["bic"] is None and two.to_dict()["delta_bic"] is None
    # the failed level counts as a miss; 3 then lowers by more than 2 -> 4 tried
    assert len(res.model_selection.candidates) == 4


def test_every_candidate_refused_is_a_fit_error(monkeypatch, base):
    _fake_fits(monkeypatch, base, {1: 1.0}, fail={(1, False), (1, True)})
    with pytest.raises(FitError, match="refused every candidate"):
        ms.select_model(_run(), None, donors=1, acceptors="auto")


def test_level_count_words():
    assert ms.level_count("AUTO", "--donors") == "auto"
    assert ms.level_count(" 2 ", "--donors") == 2 and ms.level_count(3, "--donors") == 3
    for bad in ("many", True, 1.5, None):
        with pytest.raises(InputError, match="'auto'"):
            ms.level_count(bad, "--donors")


def test_api_refuses_a_bad_word(runs):
    with pytest.raises(InputError, match="--acceptors: expected a number of levels or 'auto'"):
        freezeout.fit_file(runs["one_comp"], donors=1, acceptors="several")


# --- the command line -------------------------------------------------------------------

def test_cli_donors_auto_end_to_end(runs, tmp_path, monkeypatch, capsys):
    out = tmp_path / "report"
    code, stdout, err = cli(monkeypatch, capsys, "fit", runs["one_comp"], "--donors", "auto",
                            "--no-history", "--out", out)
    assert code == 0, err
    assert "model selection: 1 donor level + compensating acceptor" in stdout
    doc = json.loads((out / "fit.json").read_text())
    assert doc["model_selection"]["chosen"] == "1 donor level + compensating acceptor"
    assert all(c["compensated"] for c in doc["model_selection"]["candidates"])
    page = (out / "report.html").read_text()
    assert "<h2>Model selection</h2>" in page and "selection.png" in page
    assert (out / "selection.png").read_bytes()[:4] == b"\x89PNG"


def test_cli_refuses_a_bad_word(runs, tmp_path, monkeypatch, capsys):
    code, _, err = cli(monkeypatch, capsys, "fit", runs["one_comp"], "--donors", "many",
                       "--no-history", "--out", tmp_path / "x")
    assert code == 2
    assert "--donors: expected a number of levels or 'auto', got 'many'" in err
    assert not (tmp_path / "x").exists()


def test_the_floor_reason_names_the_emptiest_of_the_species_at_the_floor():
    """A real level whose interval reaches the floor only because an empty one can take its
    place is not the species named (project choice, no source)."""
    floor = 10.0 ** ms.LOG10_CONCENTRATION_BOUNDS[0]
    real = _level("D1", 1.0e16, floor, energy=Estimate(0.045, 0.001, (0.043, 0.047)))
    empty = _level("D2", 1.2 * floor, floor, energy=Estimate(1.05, math.nan, (0.5, 1.1)))
    reason = ms.concentration_at_floor([real, empty])
    assert reason.startswith("the 95 % interval of N_D2 (fitted 1.2e+08 cm^-3)")
    assert "of N_D1 reaches the floor too" in reason
    # one species at the floor: named alone
    only = ms.concentration_at_floor([_level("D1", 1e16, 9e15), empty])
    assert "N_D2" in only and "N_D1" not in only
