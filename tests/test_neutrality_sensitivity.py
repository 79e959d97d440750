"""The implicit-differentiation derivatives of the carrier densities against fresh solves.

Reference: central differences of two fresh neutrality solves at theta +- h (computed here);
the implicit function theorem gives du/dtheta = -(dR/dtheta)/(dR/du) exactly at the root.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from freezeout import api
from freezeout.physics.neutrality import BandState, DopantLevel, solve_levels
from freezeout.physics.neutrality_sensitivity import sensitivities

CASES = [
    # material, donors (N, E or None), acceptors, statistics, temperatures
    ("Si", [(2e15, 0.045)], [(4e13, None)], "fermi-dirac", (20.0, 700.0)),
    ("Si", [(3e19, 0.045)], [(1e17, None)], "fermi-dirac", (10.0, 400.0)),  # degenerate
    ("Ge", [(1e13, None)], [(5e13, 0.011)], "fermi-dirac", (8.0, 420.0)),
    ("4H-SiC", [(1e16, 0.05), (3e16, 0.1), (1e15, 0.19)], [(2e14, None)], "fermi-dirac",
     (40.0, 900.0)),
    ("GaN", [(1e17, 0.015)], [(3e16, 0.2)], "boltzmann", (60.0, 500.0)),
]


def _solve(material, donors, acceptors, statistics, t):
    bands = BandState.from_material(material, t)
    d = [DopantLevel("donor", n, e) for n, e in donors]
    a = [DopantLevel("acceptor", n, e) for n, e in acceptors]
    return bands, d, a, solve_levels(bands, d, a, statistics)


@pytest.mark.parametrize("case", CASES, ids=[c[0] + "-" + c[3] for c in CASES])
def test_derivatives_match_central_differences(case):
    name, donors, acceptors, statistics, (t0, t1) = case
    material = api.load_material(name)
    t = np.geomspace(t0, t1, 40)
    bands, d, a, res = _solve(material, donors, acceptors, statistics, t)
    sens_d, sens_a = sensitivities(bands, d, a, res, statistics)
    for kind, levels, sens in (("donor", donors, sens_d), ("acceptor", acceptors, sens_a)):
        for i, (_conc, energy) in enumerate(levels):
            for what in ("log_conc", "energy"):
                if what == "energy" and energy is None:
                    assert sens[i].d_log_n_d_energy is None
                    continue
                h = 1e-6 if what == "log_conc" else 1e-7

                def moved(sign, i=i, what=what, kind=kind, h=h):
                    lv = [list(x) for x in (donors if kind == "donor" else acceptors)]
                    if what == "log_conc":
                        lv[i][0] = lv[i][0] * math.exp(sign * h)
                    else:
                        lv[i][1] = lv[i][1] + sign * h
                    dd = lv if kind == "donor" else donors
                    aa = lv if kind == "acceptor" else acceptors
                    return _solve(material, dd, aa, statistics, t)[3]

                up, down = moved(1), moved(-1)
                fd_n = (up.log_n - down.log_n) / (2 * h)
                fd_p = (up.log_p - down.log_p) / (2 * h)
                got_n = getattr(sens[i], f"d_log_n_d_{what}")
                got_p = getattr(sens[i], f"d_log_p_d_{what}")
                scale_n = np.max(np.abs(fd_n)) + 1e-12
                scale_p = np.max(np.abs(fd_p)) + 1e-12
                assert np.max(np.abs(got_n - fd_n)) <= 2e-5 * scale_n, (kind, i, what, "n")
                assert np.max(np.abs(got_p - fd_p)) <= 2e-5 * scale_p, (kind, i, what, "p")


def test_batch_shapes_broadcast():
    # rows of parameter sets, as the fit's batched solves use them
    material = api.load_material("Si")
    t = np.linspace(30.0, 600.0, 25)
    b = BandState.from_material(material, t)
    bands = BandState(b.temperature[None, :], b.kt[None, :], b.band_gap[None, :],
                      b.log_nc[None, :], b.log_nv[None, :])
    conc = np.array([[1e15], [1e16], [1e17]])
    d = [DopantLevel("donor", conc, 0.045)]
    a = [DopantLevel("acceptor", 1e14, None)]
    res = solve_levels(bands, d, a)
    sd, sa = sensitivities(bands, d, a, res)
    assert sd[0].d_log_n_d_log_conc.shape == (3, 25)
    assert sa[0].d_log_n_d_log_conc.shape == (3, 25)
    # an exhausted donor over a small compensation: ln n moves one to one with ln N_D when
    # hot (common practice, no source: n = N_D - N_A in saturation)
    assert sd[0].d_log_n_d_log_conc[0, 10] == pytest.approx(1e15 / (1e15 - 1e14), rel=2e-2)


@pytest.mark.parametrize("with_lowering", [False, True])
def test_derivatives_with_excited_states_and_energy_lowering(with_lowering):
    # Si:P 1s states (A. K. Ramdas, S. Rodriguez, Rep. Prog. Phys. 44, 1297 (1981), values
    # from memory) and Pearson-Bardeen E = E_0 - alpha N^(1/3) (G. L. Pearson, J. Bardeen,
    # Phys. Rev. 75, 865 (1949), alpha from memory): the derivatives are by E_0 and ln N of
    # the model, against central differences of fresh solves (computed here)
    from freezeout.physics.excited_states import get_excited_states
    from freezeout.physics.level_energy import PearsonBardeen

    states = get_excited_states("si-p")
    lowering = PearsonBardeen() if with_lowering else None
    material = api.load_material("Si")
    t = np.geomspace(15.0, 500.0, 40)
    bands = BandState.from_material(material, t)

    def solve(conc, e0):
        d = [DopantLevel("donor", conc, e0, states.ground_degeneracy,
                         excited=states.splittings, lowering=lowering)]
        a = [DopantLevel("acceptor", 4e14, None)]
        return d, a, solve_levels(bands, d, a)

    d, a, res = solve(3e16, 0.0456)
    sens = sensitivities(bands, d, a, res)[0][0]
    for what, h in (("log_conc", 1e-6), ("energy", 1e-7)):
        up = solve(3e16 * math.exp(h), 0.0456)[2] if what == "log_conc" else solve(
            3e16, 0.0456 + h)[2]
        down = solve(3e16 * math.exp(-h), 0.0456)[2] if what == "log_conc" else solve(
            3e16, 0.0456 - h)[2]
        fd = (up.log_n - down.log_n) / (2 * h)
        got = getattr(sens, f"d_log_n_d_{what}")
        assert np.max(np.abs(got - fd)) <= 2e-5 * np.max(np.abs(fd)), what
