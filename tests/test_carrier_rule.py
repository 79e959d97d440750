"""One carrier-type rule: a raw file fitted directly and its reduced CSV read back agree.

The run is p-type with intrinsic electrons at the hot end, so the Hall coefficient turns
negative there. More points are hot than cold, so the type of most points would be n; the
colder half says p, and that is the rule (:func:`freezeout.records.run.run_carrier`, common
practice, no source) both paths must use: the ``# carrier`` line and the density column
that ``reduce`` writes, and the run that a fit of the raw file takes.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from freezeout.api import simulate
from freezeout.fitting.fit import fit_run
from freezeout.io.raw_reader import read_raw
from freezeout.io.reduced_csv_reader import read_reduced_csv
from freezeout.io.reduced_csv_writer import write_reduced_csv
from freezeout.physics.constants import Q
from freezeout.physics.materials import get_material
from freezeout.records.run import run_carrier
from freezeout.reduction import readings_from_table, reduce_readings, run_from_reduction
from test_hall_reduction import synth_rows
from test_raw_io import raw_text

THICKNESS_CM = 0.035  # 350 um, written as "350 um +- 5 um"
THICKNESS_ERR_CM = 0.0005
# 7 set points in the freeze-out range (holes), 8 in the intrinsic range (Hall sign of the
# electrons): 8 of 15 points are n, but 7 of the 8 coldest are p.
COLD = (50.0, 60.0, 70.0, 80.0, 100.0, 125.0, 150.0)
HOT = (560.0, 600.0, 640.0, 680.0, 720.0, 760.0, 800.0, 840.0)


def _transport(temperature):
    """Resistivity [ohm cm] and Hall coefficient [cm^3/C] of a p-type silicon sample.

    Carrier densities from freezeout's neutrality model (N_A = 1e15 cm^-3 at 45 meV,
    degeneracy 4, 1e13 cm^-3 fully ionized donors); mobilities mu_p = 450 (T/300)^-2.2 and
    mu_n = 1400 (T/300)^-2.4 cm^2/(V s) (from memory, for the shape only); two-band Hall
    coefficient at low field R_H = (p mu_p^2 - n mu_n^2) / (q (p mu_p + n mu_n)^2) and
    rho = 1 / (q (p mu_p + n mu_n)) (E. H. Putley, The Hall Effect and Related Phenomena,
    1960, ch. 3, from memory).
    """
    t = np.asarray(temperature, dtype=float)
    sim = simulate("Si", donors=[(1e13, None)], acceptors=[(1e15, 0.045, 4)], temperatures=t)
    mu_p = 450.0 * (t / 300.0) ** -2.2
    mu_n = 1400.0 * (t / 300.0) ** -2.4
    sigma = Q * (sim.p * mu_p + sim.n * mu_n)
    r_h = Q * (sim.p * mu_p**2 - sim.n * mu_n**2) / sigma**2
    return 1.0 / sigma, r_h


@pytest.fixture(scope="module")
def raw_file(tmp_path_factory):
    temps = COLD + HOT
    rho, r_h = _transport(temps)
    # a square van der Pauw sample: R_A = R_B = R_s ln 2 / pi (van der Pauw, Philips Res.
    # Rep. 13, 1 (1958)); Hall slope k = R_H / t in ohm/T with t in m (1e4 cm^2/m^2).
    r_char = dict(zip(temps, rho / THICKNESS_CM * math.log(2.0) / math.pi, strict=True))
    slope = dict(zip(temps, r_h / (1e4 * THICKNESS_CM), strict=True))
    rows = synth_rows(temperatures=temps, r_a=r_char.get, r_b=r_char.get, k=slope.get,
                      misalignment=0.05, emf=(2e-7, -1e-7, 1e-7, 0.0), repeats=2,
                      noise=1e-9, seed=11)
    path = tmp_path_factory.mktemp("carrier") / "p_with_hot_electrons.csv"
    path.write_text(raw_text(rows, meta={"thickness": "350 um +- 5 um", "material": "Si"}),
                    encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def both_paths(raw_file, tmp_path_factory):
    reduced = reduce_readings(readings_from_table(read_raw(raw_file)))
    direct = run_from_reduction(raw_file, reduced)
    csv_path = tmp_path_factory.mktemp("reduced") / "reduced.csv"
    write_reduced_csv(reduced, csv_path, raw_source=raw_file)
    back = read_reduced_csv(csv_path)
    return reduced, direct, back, csv_path


def test_the_case_is_the_one_where_the_rules_differ(both_paths):
    reduced, _, _, _ = both_paths
    types = list(reduced.carrier)
    assert types.count("n") > types.count("p")  # the type of most points would be n
    cold = [c for c, t in zip(types, reduced.temperature, strict=True)
            if t <= np.median(reduced.temperature)]
    assert cold.count("p") > cold.count("n")
    assert run_carrier(reduced.carrier, reduced.temperature) == "p"


def test_reduced_csv_and_direct_run_say_p(both_paths):
    reduced, direct, back, csv_path = both_paths
    text = csv_path.read_text(encoding="utf-8")
    assert "# carrier: p\n" in text
    assert "p [cm^-3],p_err [cm^-3]" in text
    assert reduced.majority_carrier == direct.carrier == back.carrier == "p"
    assert direct.point_carrier == back.point_carrier == tuple(reduced.carrier)
    assert direct.mixed.tolist() == back.mixed.tolist() == [t in HOT for t in COLD + HOT]


def test_both_runs_hold_the_same_arrays(both_paths):
    _, direct, back, _ = both_paths
    # the reduced CSV keeps ten significant digits (project choice, no source)
    for name in ("temperature", "temperature_err", "density", "resistivity",
                 "resistivity_err", "mobility", "mobility_err", "hall_coefficient",
                 "hall_coefficient_err"):
        a, b = getattr(direct, name), getattr(back, name)
        assert a is not None and b is not None, name
        np.testing.assert_allclose(b, a, rtol=1e-9, err_msg=name)
    scale = THICKNESS_ERR_CM / THICKNESS_CM
    assert direct.scale_uncertainty == pytest.approx(scale, rel=1e-12)
    assert back.scale_uncertainty == pytest.approx(scale, rel=1e-12)
    # the CSV holds the total density uncertainty (point-to-point and thickness parts in
    # quadrature, JCGM 100:2008 Eq. 10); the point-to-point part is taken back out of it
    np.testing.assert_allclose(np.hypot(back.density_err, scale * back.density),
                               np.hypot(direct.density_err, scale * direct.density), rtol=1e-9)
    # and the point-to-point part comes back as far as ten digits of the total allow: the
    # squared relative part is total^2 - scale^2, each cell rounded to 5e-10 relative, so
    # it moves by at most about 2e-9 of the total squared (computed here, no source)
    rel_d = direct.density_err / direct.density
    rel_b = back.density_err / back.density
    assert np.all(np.abs(rel_b**2 - rel_d**2) <= 1e-8 * (rel_d**2 + scale**2))
    assert direct.severe.tolist() == back.severe.tolist()
    assert [f.replace("!", "") for f in back.flags] == list(direct.flags)
    assert direct.hall_factor == back.hall_factor == 1.0


def test_both_runs_fit_alike(both_paths):
    _, direct, back, _ = both_paths
    si = get_material("Si")
    a = fit_run(direct, si, donors=1, acceptors=1).to_dict()
    b = fit_run(back, si, donors=1, acceptors=1).to_dict()
    assert a["carrier"] == b["carrier"] == "p"
    assert a["data"]["used"] == b["data"]["used"]
    assert sum(a["data"]["used"]) == len(COLD)  # the hot electrons are left out
    for la, lb in zip(a["levels"], b["levels"], strict=True):
        assert la["kind"] == lb["kind"]
        for key in ("concentration_cm3", "energy_eV"):
            if la[key] is None:
                assert lb[key] is None
                continue
            assert lb[key]["value"] == pytest.approx(la[key]["value"], rel=1e-6)
