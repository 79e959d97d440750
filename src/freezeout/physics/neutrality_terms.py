"""The levels of a charge-neutrality solve in units of kT, the bracket of its root, log-sums.

The log-sums (:func:`log_sum`) and the band terms (:func:`log_band`) are
those of the residual of the solve; :func:`ionized_fractions` reads the ionized fractions
off its last evaluation.

The bracket's ends are where holes (below E_v) or electrons (above E_c) alone outnumber
every level: the band density grows at least like eta^(3/2) past its edge [1].

References
----------
.. [1] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), App. C (the
   degenerate limit F_1/2(eta) -> (4 / (3 sqrt(pi))) eta^(3/2)).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from freezeout.physics.excited_states import log_effective_degeneracy
from freezeout.physics.fermi import log_fermi_dirac_half_ratio

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
        Summed concentrations of the fully ionized donors and acceptors, numbers or arrays
        broadcasting to ``shape``. [cm^-3]
    """

    shape: tuple[int, ...]
    donors: tuple[tuple[np.ndarray, np.ndarray], ...]
    acceptors: tuple[tuple[np.ndarray, np.ndarray], ...]
    fixed_pos: float | np.ndarray
    fixed_neg: float | np.ndarray


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
    shapes = {_shape(lv.concentration) for lv in (*donors, *acceptors)}
    shapes |= {_shape(lv.energy) for lv in (*donors, *acceptors) if lv.energy is not None}
    shapes -= {(), kt.shape}
    # numpy's broadcast_shapes costs microseconds; scalar levels on the grid need none
    shape = np.broadcast_shapes(kt.shape, *shapes) if shapes else kt.shape
    fixed_pos = fixed_neg = 0.0
    d_terms = []
    a_terms = []
    for lv in donors:
        if lv.energy is None:
            fixed_pos = fixed_pos + lv.concentration
        else:
            log_g, energy = _level_g_and_energy(lv, kt)
            d_terms.append((_log_concentration(lv.concentration),
                            log_g - (bands.band_gap - energy) / kt))
    for lv in acceptors:
        if lv.energy is None:
            fixed_neg = fixed_neg + lv.concentration
        else:
            log_g, energy = _level_g_and_energy(lv, kt)
            a_terms.append((_log_concentration(lv.concentration), log_g + energy / kt))
    return LevelTerms(shape, tuple(d_terms), tuple(a_terms), fixed_pos, fixed_neg)


def _log_concentration(c):
    """ln max(c, 1e-300) of a level's concentration (math.log for a number: no numpy call)."""
    if isinstance(c, float | int):
        return math.log(max(c, 1e-300))
    return np.log(np.maximum(c, 1e-300))


def _shape(x) -> tuple[int, ...]:
    """np.shape of a level parameter, () for a Python number without asking numpy."""
    return () if isinstance(x, float | int) else np.shape(x)


def _level_g_and_energy(lv: DopantLevel, kt: np.ndarray):
    """ln g (g_eff(T) with excited states) and the energy (its E(N) model when set)."""
    if not lv.excited and lv.lowering is None:
        return math.log(lv.degeneracy), lv.energy
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
        gap_kt = bands.gap_kt
    hi = gap_kt + np.log(m_c) + 2.0 * np.cbrt(m_c * m_c) + 10.0
    return lo, hi


def extrinsic_start(bands: BandState, terms: LevelTerms) -> np.ndarray:
    """A cold start of the solve, (E_F - E_v)/kT, from the majority carriers' freeze-out.

    Boltzmann statistics and no minority carriers. For an n-type set (N_D > N_A) each
    partially ionized donor level i alone, with the compensation C_i that its shallower
    levels leave over (every acceptor ionized), gives n (n + C_i) = n_1i (N_i - C_i - n),
    n_1i = N_c exp(-E_i/kT) / g_i [1]; the start is the largest of these n (or
    N_D,fixed - N_A, or N_D - N_A when no level exceeds its C_i): the shallowest
    uncompensated level sets n in freeze-out. A p-type set mirrors it with holes and
    acceptors; mid-gap where N_D = N_A. From mid-gap the residual is flat wherever the
    levels are all ionized and the bands empty, so the solve would bisect for several
    iterations before Newton takes hold; the bracket still bounds every step.

    References
    ----------
    .. [1] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), Ch. 3 (the
       compensated single-level neutrality equation; from memory).
    """
    n_d = terms.fixed_pos + sum(np.exp(t[0]) for t in terms.donors)
    n_a = terms.fixed_neg + sum(np.exp(t[0]) for t in terms.acceptors)
    net = n_d - n_a
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # ln n_1 of a donor: ln N_c - off - E_g/kT; of an acceptor (for holes): ln N_v - off
        n = _frozen_majority(terms.donors, terms.fixed_pos, n_a, net,
                             [bands.log_nc - off - bands.gap_kt for _, off in terms.donors])
        p = _frozen_majority(terms.acceptors, terms.fixed_neg, n_d, -net,
                             [bands.log_nv - off for _, off in terms.acceptors])
        n_type = bands.gap_kt + np.log(n) - bands.log_nc
        p_type = bands.log_nv - np.log(p)
    return np.where(net > 0, n_type, np.where(net < 0, p_type, 0.5 * bands.gap_kt))


def _frozen_majority(levels, fixed, compensation, net, log_n1) -> np.ndarray:
    """Largest single-level freeze-out density of the majority levels (see above). [cm^-3]

    The compensation a level sees is what its shallower levels (larger n_1, element by
    element) have not taken up: electrons leave the shallowest donors for the acceptors
    first, so a level deeper than those that hold the whole compensation sees none.
    """
    best = np.maximum(fixed - compensation, 0.0)
    conc = [np.exp(ln_n) for ln_n, _ in levels]
    for i, ln1 in enumerate(log_n1):
        n1 = np.exp(ln1)
        shallower = sum((c * (lj > ln1) for j, (c, lj) in enumerate(zip(conc, log_n1, strict=True))
                         if j != i), 0.0)
        seen = np.maximum(compensation - shallower, 0.0)
        excess = conc[i] - seen
        b = seen + n1
        c = n1 * excess
        # the positive root 2c / (b + sqrt(b^2 + 4c)), without cancellation
        root = np.where(excess > 0, 2.0 * c / (b + np.sqrt(b * b + 4.0 * c)), 0.0)
        best = np.maximum(best, root)
    return np.where(best > 0, best, np.maximum(net, 1e-300))


def log_sum(terms: list, const) -> tuple[np.ndarray, np.ndarray]:
    """ln sum_i exp(t_i) and sum_i exp(t_i) s_i / sum_i exp(t_i) of (t_i, s_i) pairs.

    ``const`` is one more term of slope 0, or None. The sum is built by numpy's logaddexp
    (ln(e^a + e^b) = max + ln(1 + e^-|a - b|): nothing overflows), the slope from the
    weights exp(t_i - total); fewer array operations than taking the largest term out by
    hand, which a warm solve of one or two iterations notices.
    """
    if const is None and len(terms) == 1:
        return terms[0]
    total = terms[0][0]
    for t, _ in terms[1:]:
        total = np.logaddexp(total, t)
    if const is not None:
        total = np.logaddexp(total, const)
    moment = None
    for t, s in terms:
        w = np.subtract(t, total)
        np.exp(w, out=w)
        w *= s
        if moment is None:
            moment = w
        else:
            moment += w
    return total, moment


def log_band(eta: np.ndarray, fermi_dirac: bool) -> tuple[np.ndarray, np.ndarray]:
    """ln F_1/2(eta) and d ln F_1/2 / d eta = F_-1/2/F_1/2."""
    if not fermi_dirac or float(eta.max()) <= -39.2:
        # Boltzmann, or so far below the band that the first term of the series is exact
        # to 1e-17 (what log_fermi_dirac_half_ratio returns there)
        return eta, 1.0
    return log_fermi_dirac_half_ratio(eta)


def ionized_fractions(levels: Sequence[DopantLevel], log_fractions: list,
                      shape: tuple[int, ...]) -> list:
    """Ionized fraction of each level, from the last residual's ln(ionized fraction).

    exp(log_expit(-x)) = 1 / (1 + e^x) for a partially ionized level (``log_fractions``,
    in level order); 1 for a fully ionized level (a read-only array, shared between solves
    of one shape).
    """
    out = []
    ai = iter(log_fractions)
    for lv in levels:
        out.append(_ones(shape) if lv.energy is None else np.exp(next(ai)))
    return out


@functools.lru_cache(maxsize=64)
def _ones(shape: tuple[int, ...]) -> np.ndarray:
    """A read-only array of ones, one per shape."""
    ones = np.ones(shape)
    ones.flags.writeable = False
    return ones


def log_fixed(total) -> float | np.ndarray | None:
    """ln of a summed fully ionized concentration, None when it is 0 everywhere.

    A number (every level scalar) goes through math.log: numpy's scalar calls cost
    microseconds, which a warm solve of a few iterations notices.
    """
    if isinstance(total, float):
        return math.log(total) if total > 0 else None
    if not (total > 0).any():
        return None
    with np.errstate(divide="ignore"):
        return np.log(total)


def on_shape(a: np.ndarray, shape: tuple[int, ...]) -> np.ndarray:
    """``a`` broadcast to ``shape`` (itself when it has that shape already)."""
    return a if a.shape == shape else np.broadcast_to(a, shape)
