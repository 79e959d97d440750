"""The levels of a charge-neutrality solve in units of kT, the bracket of its root, log-sums.

The log-sums (:func:`log_sum`, :func:`softplus`) are those of the residual of the solve.

The bracket's ends are where holes (below E_v) or electrons (above E_c) alone outnumber
every level: the band density grows at least like eta^(3/2) past its edge [1].

References
----------
.. [1] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), App. C (the
   degenerate limit F_1/2(eta) -> (4 / (3 sqrt(pi))) eta^(3/2)).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from freezeout.physics.excited_states import log_effective_degeneracy

if TYPE_CHECKING:
    from freezeout.physics.neutrality import BandState, DopantLevel


class LevelTerms(NamedTuple):
    """The levels of one solve in reduced units, on its broadcast shape.

    Attributes
    ----------
    shape
        Broadcast shape of the temperature grid and the level parameters.
    donors
        (ln N, ln g - (E_g - E)/kT) of each partially ionized donor. [1]
    acceptors
        (ln N, ln g + E/kT) of each partially ionized acceptor. [1]
    fixed_pos, fixed_neg
        Summed concentrations of the fully ionized donors and acceptors. [cm^-3]
    """

    shape: tuple[int, ...]
    donors: tuple[tuple[np.ndarray, np.ndarray], ...]
    acceptors: tuple[tuple[np.ndarray, np.ndarray], ...]
    fixed_pos: np.ndarray
    fixed_neg: np.ndarray


def level_terms(bands: BandState, donors: Sequence[DopantLevel],
                acceptors: Sequence[DopantLevel]) -> LevelTerms:
    """Split levels into partially and fully ionized ones, in units of kT.

    Parameters
    ----------
    bands
        Band state of the solve.
    donors, acceptors
        Levels; concentrations and energies broadcast with the temperature grid.

    Returns
    -------
    LevelTerms
    """
    kt = bands.kt
    shape = np.broadcast_shapes(kt.shape, *(np.shape(lv.concentration) for lv in donors),
                                *(np.shape(lv.concentration) for lv in acceptors),
                                *(np.shape(lv.energy) for lv in (*donors, *acceptors)
                                  if lv.energy is not None))
    fixed_pos = np.zeros(shape)
    fixed_neg = np.zeros(shape)
    d_terms = []
    a_terms = []
    for lv in donors:
        if lv.energy is None:
            fixed_pos = fixed_pos + lv.concentration
        else:
            log_g, energy = _level_g_and_energy(lv, kt)
            d_terms.append((np.log(np.maximum(lv.concentration, 1e-300)),
                            log_g - (bands.band_gap - energy) / kt))
    for lv in acceptors:
        if lv.energy is None:
            fixed_neg = fixed_neg + lv.concentration
        else:
            log_g, energy = _level_g_and_energy(lv, kt)
            a_terms.append((np.log(np.maximum(lv.concentration, 1e-300)),
                            log_g + energy / kt))
    return LevelTerms(shape, tuple(d_terms), tuple(a_terms), fixed_pos, fixed_neg)


def _level_g_and_energy(lv: DopantLevel, kt: np.ndarray):
    """ln g (g_eff(T) with excited states) and the energy (its E(N) model when set)."""
    if not lv.excited and lv.lowering is None:
        return np.log(lv.degeneracy), lv.energy
    log_g = (log_effective_degeneracy(kt, lv.degeneracy, lv.excited) if lv.excited
             else np.log(lv.degeneracy))
    energy = (lv.energy if lv.lowering is None
              else lv.lowering.energy(lv.energy, lv.concentration))
    return log_g, energy


def fermi_bracket(bands: BandState, terms: LevelTerms,
                  gap_kt: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Ends (E_F - E_v)/kT between which the neutrality residual changes sign.

    Far below E_v holes outnumber every acceptor, far above E_c electrons every donor:
    F_1/2(eta) >= (4 / (3 sqrt(pi))) eta^(3/2) for eta > 0, so at eta = 2 r^(2/3) the band
    holds more than twice r times its density of states (exp(eta) in the Boltzmann case
    grows faster still); levels do not change the signs there.

    Parameters
    ----------
    bands
        Band state of the solve.
    terms
        The levels, from :func:`level_terms`.
    gap_kt
        E_g/kT if already at hand (else worked out from ``bands``). [1]

    Returns
    -------
    tuple of numpy.ndarray
        (lo, hi), broadcasting to ``terms.shape``; the residual is positive at lo,
        negative at hi. [1]
    """
    total = terms.fixed_pos + terms.fixed_neg + sum(
        np.exp(t[0]) for t in (*terms.donors, *terms.acceptors))
    total = np.maximum(total, 1.0)
    r_v = total / np.exp(bands.log_nv)
    r_c = total / np.exp(bands.log_nc)
    # max(r, 1)^(2/3) as a cube root of the square (cheaper than a power)
    m_v, m_c = np.maximum(r_v, 1.0), np.maximum(r_c, 1.0)
    lo = -(np.log(m_v) + 2.0 * np.cbrt(m_v * m_v) + 10.0)
    if gap_kt is None:
        gap_kt = bands.band_gap / bands.kt
    hi = gap_kt + np.log(m_c) + 2.0 * np.cbrt(m_c * m_c) + 10.0
    return lo, hi


def softplus(x: np.ndarray) -> np.ndarray:
    """ln(1 + e^x), without overflow: max(x, 0) + ln(1 + e^-|x|). [1]"""
    a = np.abs(x)
    np.negative(a, out=a)
    np.exp(a, out=a)
    np.log1p(a, out=a)
    a += np.maximum(x, 0.0)
    return a


def log_sum(terms: list, const) -> tuple[np.ndarray, np.ndarray]:
    """ln sum_i exp(t_i) and sum_i exp(t_i) s_i / sum_i exp(t_i) of (t_i, s_i) pairs.

    ``const`` is one more term of slope 0, or None. The largest term is taken out first,
    so nothing overflows.
    """
    if const is None and len(terms) == 1:
        return terms[0]
    top = terms[0][0]
    for t, _ in terms[1:]:
        top = np.maximum(top, t)
    if const is not None:
        top = np.maximum(top, const)
    total = moment = None
    for t, s in terms:
        w = np.subtract(t, top)
        np.exp(w, out=w)
        if total is None:
            total, moment = w, w * s
        else:
            moment += w * s
            total += w
    if const is not None:
        total += np.exp(const - top)
    moment /= total
    np.log(total, out=total)
    total += top
    return total, moment
