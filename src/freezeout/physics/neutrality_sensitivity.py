"""How the carrier densities of a neutrality solution move with the level parameters.

Implicit differentiation of the neutrality condition (no extra solve): with
u = (E_F - E_v)/kT and R(u; theta) = ln P - ln N, P = p + sum_i N_Di f_i + N_D,fixed and
N = n + sum_j N_Aj g_j + N_A,fixed (f, g the ionized fractions), R = 0 at the solution, so

    du/dtheta = -(dR/dtheta) / (dR/du),

    dR/du = [-p r_p - sum_i N_Di f_i (1 - f_i)] / P - [n r_n + sum_j N_Aj g_j (1 - g_j)] / N,

with r = F_-1/2 / F_1/2 of each band (1 in Boltzmann statistics), and

    dR/d ln N_Di = N_Di f_i / P,            dR/dE_Di = -N_Di f_i (1 - f_i) / (kT P),
    dR/d ln N_Aj = -N_Aj g_j / N,           dR/dE_Aj = +N_Aj g_j (1 - g_j) / (kT N),

(E_D measured below E_c, E_A above E_v; a fully ionized level has f = 1 and no energy).
Then d ln n/dtheta = r_n du/dtheta and d ln p/dtheta = -r_p du/dtheta. The implicit
function theorem; the ionized-fraction and band-density forms are those of
:mod:`freezeout.physics.neutrality` (S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*,
3rd ed. (2007), ch. 1, from memory). tests/test_neutrality_sensitivity.py checks every
derivative against central differences of fresh solves.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from freezeout.physics.fermi import log_fermi_dirac_half_ratio
from freezeout.physics.neutrality import BandState, DopantLevel, NeutralityResult


class LevelSensitivity(NamedTuple):
    """d ln n and d ln p by one level's ln N and E, on the solution's shape.

    ``d_log_n_d_energy`` and ``d_log_p_d_energy`` are None for a fully ionized level.
    Energies in eV.
    """

    d_log_n_d_log_conc: np.ndarray
    d_log_p_d_log_conc: np.ndarray
    d_log_n_d_energy: np.ndarray | None
    d_log_p_d_energy: np.ndarray | None


def _lowering_chain(lv: DopantLevel):
    """(dE/dE_0, dE/d ln N) of a level with an E(N) model; None without one."""
    if lv.energy is None or lv.lowering is None:
        return None
    return (lv.lowering.scale(lv.concentration),
            lv.lowering.slope(lv.energy, lv.concentration))


def _chained(dn_c, dp_c, dn_e, dp_e, chain):
    """Derivatives by the level's E (at E) mapped onto E_0 and ln N of its E(N) model."""
    if chain is None:
        return dn_c, dp_c, dn_e, dp_e
    scale, slope = chain  # dE/dE_0, dE/d ln N
    return dn_c + dn_e * slope, dp_c + dp_e * slope, dn_e * scale, dp_e * scale


def sensitivities(bands: BandState, donors: Sequence[DopantLevel],
                  acceptors: Sequence[DopantLevel], result: NeutralityResult,
                  statistics: str = "fermi-dirac"
                  ) -> tuple[list[LevelSensitivity], list[LevelSensitivity]]:
    """d ln n / d theta and d ln p / d theta for every level of a solved neutrality.

    Parameters
    ----------
    bands
        The band state the solution was solved on.
    donors, acceptors
        The levels it was solved for (concentrations and energies broadcast as there).
    result
        The solution (:func:`freezeout.physics.neutrality.solve_levels`).
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``, as solved.

    Returns
    -------
    tuple of lists
        One :class:`LevelSensitivity` per donor, then per acceptor, in their order.
    """
    kt = bands.kt
    u = result.fermi_level / kt
    if statistics == "fermi-dirac":
        _, r_p = log_fermi_dirac_half_ratio(-u)
        _, r_n = log_fermi_dirac_half_ratio(u - bands.gap_kt)
    else:
        r_p = r_n = np.ones_like(u)
    p, n = np.exp(result.log_p), np.exp(result.log_n)
    pos, neg = p.copy(), n.copy()
    slope_pos, slope_neg = -p * r_p, n * r_n
    d_charge = []  # (N f, N f (1 - f), has energy) of each donor, then each acceptor
    for lv, f in zip(donors, result.donor_ionized, strict=True):
        nf = lv.concentration * f
        curv = nf * (1.0 - f)
        pos = pos + nf
        slope_pos = slope_pos - curv
        d_charge.append((nf, curv, lv.energy is not None, _lowering_chain(lv)))
    a_charge = []
    for lv, g in zip(acceptors, result.acceptor_ionized, strict=True):
        ng = lv.concentration * g
        curv = ng * (1.0 - g)
        neg = neg + ng
        slope_neg = slope_neg + curv
        a_charge.append((ng, curv, lv.energy is not None, _lowering_chain(lv)))
    d_r_du = slope_pos / pos - slope_neg / neg  # < 0: the residual decreases in u

    def moved(d_r):
        du = -d_r / d_r_du
        return r_n * du, -r_p * du

    out_d = []
    for nf, curv, has_e, chain in d_charge:
        dn_c, dp_c = moved(nf / pos)
        dn_e, dp_e = moved(-curv / (kt * pos)) if has_e else (None, None)
        out_d.append(LevelSensitivity(*_chained(dn_c, dp_c, dn_e, dp_e, chain)))
    out_a = []
    for ng, curv, has_e, chain in a_charge:
        dn_c, dp_c = moved(-ng / neg)
        dn_e, dp_e = moved(curv / (kt * neg)) if has_e else (None, None)
        out_a.append(LevelSensitivity(*_chained(dn_c, dp_c, dn_e, dp_e, chain)))
    return out_d, out_a
