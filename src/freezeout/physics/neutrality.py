"""Charge neutrality with any number of donor and acceptor levels.

Solves p + sum_i N_D,i+ = n + sum_j N_A,j- for the Fermi level, with

    n = N_c F_1/2((E_F - E_c)/kT),  p = N_v F_1/2((E_v - E_F)/kT)        (Fermi-Dirac)
    n = N_c exp((E_F - E_c)/kT),    p = N_v exp((E_v - E_F)/kT)          (Boltzmann)
    N_D+ = N_D / (1 + g_D exp((E_F - E_D)/kT)),  E_D = E_c - (donor ionization energy)
    N_A- = N_A / (1 + g_A exp((E_A - E_F)/kT)),  E_A = E_v + (acceptor ionization energy)

A level whose ionization energy is None is fully ionized at every temperature (a compensating
species). The equation is solved in the logarithmic form ln(positive) - ln(negative) = 0, which
is strictly decreasing in E_F and never overflows or underflows, by Newton's method safeguarded
with a bracket (bisection whenever a Newton step leaves it, from the 20th iteration also when
it does not halve the step before last, and always after the 40th), within a proven iteration
bound, vectorized over temperature and over any batch of parameter sets that broadcasts with
it.

References
----------
.. [1] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), Ch. 3.
.. [2] S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed. (Wiley, 2007),
   Sec. 1.4.3, Eqs. (1.30)-(1.32).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import expit, log_expit

from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import Material
from freezeout.physics.neutrality_kernel import active_kernel, compiled_solution
from freezeout.physics.neutrality_terms import (
    LevelTerms,
    extrinsic_start,
    fermi_bracket,
    ionized_fractions,
    level_terms,
    log_band,
    log_fixed,
    log_sum,
    on_shape,
)
from freezeout.physics.safeguarded_newton import iteration_cap, solve_decreasing

STATISTICS = ("fermi-dirac", "boltzmann")

#: Default tolerance on (E_F - E_v)/kT. [1]
TOLERANCE = 1e-11

#: Iteration cap over the documented range (see :func:`solve_levels`, Notes).
MAX_ITERATIONS_DOCUMENTED = 99

#: Ground-state degeneracy defaults (common practice, no source): spin for donors, spin and
#: the two degenerate valence bands at the zone centre for acceptors.
DEFAULT_DONOR_DEGENERACY = 2.0
DEFAULT_ACCEPTOR_DEGENERACY = 4.0


@dataclass(frozen=True)
class DopantLevel:
    """One donor or acceptor level.

    Attributes
    ----------
    kind
        ``"donor"`` or ``"acceptor"``.
    concentration
        Concentration of the level, scalar or array broadcastable with temperature. [cm^-3]
    energy
        Ionization energy from its band edge (below E_c for a donor, above E_v for an
        acceptor), or None for a level that is fully ionized at every temperature. [eV]
    degeneracy
        Ground-state degeneracy factor g; None for the default (2 donors, 4 acceptors). [1]
    excited
        ``(E_0 - E_i [eV], g_i)`` of the level's excited states; g becomes g_eff(T) of
        :func:`freezeout.physics.excited_states.log_effective_degeneracy` (none: g). [1]
    lowering
        An energy-versus-density model of :mod:`freezeout.physics.level_energy`
        (Pearson-Bardeen, Altermatt's form): the level sits at
        ``lowering.energy(energy, concentration)``; None: at ``energy``.
    """

    kind: str
    concentration: float | np.ndarray
    energy: float | np.ndarray | None = None
    degeneracy: float | None = None
    excited: tuple[tuple[float, float], ...] = ()
    lowering: object | None = None

    def __post_init__(self) -> None:
        if self.kind not in ("donor", "acceptor"):
            raise ValueError(f"level kind must be 'donor' or 'acceptor', got {self.kind!r}")
        if self.degeneracy is None:
            default = (DEFAULT_DONOR_DEGENERACY if self.kind == "donor"
                       else DEFAULT_ACCEPTOR_DEGENERACY)
            object.__setattr__(self, "degeneracy", default)
        if not (math.isfinite(self.degeneracy) and self.degeneracy > 0):
            raise ValueError(f"degeneracy must be > 0, got {self.degeneracy!r}")
        c = self.concentration
        if not (math.isfinite(c) and c >= 0 if isinstance(c, float | int) else (
                np.isfinite(c := np.asarray(c, dtype=float)).all() and (c >= 0).all())):
            raise ValueError(f"{self.kind} concentration must be finite and >= 0, got {c}")
        if self.lowering is not None and not hasattr(self.lowering, "energy"):
            raise ValueError(f"lowering must be an energy model, got {self.lowering!r}")
        for delta, g in self.excited:
            if not (math.isfinite(delta) and math.isfinite(g) and g > 0):
                raise ValueError(f"excited state ({delta!r}, {g!r}) needs a finite splitting "
                                 "and a degeneracy > 0")
        e = self.energy
        if e is not None and not (math.isfinite(e) if isinstance(e, float | int)
                                  else np.isfinite(e).all()):
            raise ValueError(f"{self.kind} energy must be finite, got {self.energy}")


@dataclass(frozen=True)
class BandState:
    """Temperature-dependent band quantities, computed once per temperature grid.

    Attributes
    ----------
    temperature
        Temperatures. [K]
    kt
        Thermal energy. [eV]
    band_gap
        Band gap. [eV]
    log_nc, log_nv
        Natural logs of the effective densities of states (cm^-3). [1]
    """

    temperature: np.ndarray
    kt: np.ndarray
    band_gap: np.ndarray
    log_nc: np.ndarray
    log_nv: np.ndarray

    @functools.cached_property
    def gap_kt(self) -> np.ndarray:
        """E_g/kT, worked out once for every solve on this state. [1]"""
        return self.band_gap / self.kt

    @classmethod
    def from_material(cls, material: Material, temperature) -> BandState:
        """Evaluate a material's gap and densities of states on a temperature grid [K]."""
        t = np.asarray(temperature, dtype=float)
        if t.size == 0:
            raise ValueError("no temperatures given")
        if not np.all(np.isfinite(t)) or np.any(t <= 0):
            raise ValueError(f"temperatures must be finite and > 0 K, got min {np.min(t)!r}")
        return cls(t, thermal_energy(t), material.band_gap(t), np.log(material.nc(t)),
                   np.log(material.nv(t)))


@dataclass(frozen=True)
class NeutralityResult:
    """Equilibrium solution at each temperature.

    Attributes
    ----------
    temperature
        Temperatures. [K]
    fermi_level
        E_F - E_v. [eV]
    band_gap
        E_c - E_v. [eV]
    log_n, log_p
        Natural logs of the electron and hole densities in cm^-3 (finite even where the
        densities underflow). [1]
    donor_ionized, acceptor_ionized
        Ionized fraction of each level, one array per level, in level order. [1]
    iterations
        Newton/bisection iterations used.
    """

    temperature: np.ndarray
    fermi_level: np.ndarray
    band_gap: np.ndarray
    log_n: np.ndarray
    log_p: np.ndarray
    donor_ionized: tuple[np.ndarray, ...]
    acceptor_ionized: tuple[np.ndarray, ...]
    iterations: int

    @property
    def n(self) -> np.ndarray:
        """Electron density. [cm^-3]"""
        return np.exp(self.log_n)

    @property
    def p(self) -> np.ndarray:
        """Hole density. [cm^-3]"""
        return np.exp(self.log_p)


def donor_ionized_fraction(fermi_level, donor_level, kt, degeneracy=DEFAULT_DONOR_DEGENERACY):
    """N_D+/N_D = 1 / (1 + g exp((E_F - E_D)/kT)).

    Parameters
    ----------
    fermi_level
        E_F, on any energy scale. [eV]
    donor_level
        E_D, on the same scale. [eV]
    kt
        Thermal energy. [eV]
    degeneracy
        Ground-state degeneracy g. [1]

    References
    ----------
    [2], Eq. (1.30).
    """
    x = np.log(degeneracy) + (np.asarray(fermi_level) - donor_level) / kt
    return expit(-x)


def acceptor_ionized_fraction(fermi_level, acceptor_level, kt,
                              degeneracy=DEFAULT_ACCEPTOR_DEGENERACY):
    """N_A-/N_A = 1 / (1 + g exp((E_A - E_F)/kT)).

    Parameters
    ----------
    fermi_level
        E_F, on any energy scale. [eV]
    acceptor_level
        E_A, on the same scale. [eV]
    kt
        Thermal energy. [eV]
    degeneracy
        Ground-state degeneracy g. [1]

    References
    ----------
    [2], Eq. (1.31).
    """
    x = np.log(degeneracy) + (acceptor_level - np.asarray(fermi_level)) / kt
    return expit(-x)


def iteration_bound(bands: BandState, donors: Sequence[DopantLevel],
                    acceptors: Sequence[DopantLevel], tolerance: float = TOLERANCE) -> int:
    """Most iterations :func:`solve_levels` can take for these levels on these bands.

    N_max = NEWTON_ITERATIONS + ceil(log2(W / tol)) + 2 for the widest initial bracket W
    in (E_F - E_v)/kT (:func:`freezeout.physics.safeguarded_newton.iteration_cap`), plus
    one: a warm start is first evaluated where it stands, which may be outside the bracket.

    Parameters
    ----------
    bands
        Band state of the solve.
    donors, acceptors
        Levels of the solve.
    tolerance
        Tolerance on (E_F - E_v)/kT. [1]

    Returns
    -------
    int
        The iteration cap of that solve.
    """
    lo, hi = fermi_bracket(bands, level_terms(bands, donors, acceptors))
    return iteration_cap(hi - lo, tolerance) + 1


def solve_levels(
    bands: BandState,
    donors: Sequence[DopantLevel],
    acceptors: Sequence[DopantLevel],
    statistics: str = "fermi-dirac",
    initial_fermi_level=None,
    *,
    tolerance: float = TOLERANCE,
) -> NeutralityResult:
    """Solve charge neutrality for the Fermi level on a precomputed band state.

    Parameters
    ----------
    bands
        Gap, kT and densities of states on the temperature grid.
    donors, acceptors
        Levels; their concentrations and energies broadcast with the temperature grid.
    statistics
        ``"fermi-dirac"`` (default) or ``"boltzmann"`` for the carrier densities.
    initial_fermi_level
        Optional starting E_F - E_v (e.g. a previous solution). [eV]
    tolerance
        Convergence tolerance on (E_F - E_v)/kT; 1e-11 keeps n and p within about 1e-11
        relative of the exact root. [1]

    Returns
    -------
    NeutralityResult

    Notes
    -----
    The residual ln(positive charge) - ln(negative charge) is strictly decreasing in E_F and
    changes sign on the bracket of :func:`freezeout.physics.neutrality_terms.fermi_bracket`,
    of width W in units of kT. The iteration
    (:func:`freezeout.physics.safeguarded_newton.solve_decreasing`) takes Newton steps that
    stay inside the bracket (from iteration 20 on only those at most half the step before
    last) and bisects otherwise; after 40 iterations it only bisects, and bisection halves
    the bracket at every step. So it ends on every well-posed point within
    N_max = 40 + ceil(log2(W / tol)) + 2 iterations, the loop's cap, and one more for a
    warm start: that is first evaluated where it stands (a root already when it comes from
    a nearby solution: no bracket is then worked out), which may lie outside the bracket
    (:func:`iteration_bound`). Over the documented range (2 K to 1500 K, a total level
    concentration up to 1e22 cm^-3, density-of-states masses of at least 0.05 m0, gaps up
    to 3.6 eV) W is below 7e5 (6.7e5 at 2 K with the lightest masses), so with tol = 1e-11
    N_max + 1 <= 40 + 56 + 2 + 1 = 99 (:data:`MAX_ITERATIONS_DOCUMENTED`). An infinite
    warm start is clipped into the bracket first (a NaN one raises). A cold start is the
    majority density's compensated single-level freeze-out estimate (Boltzmann;
    :func:`freezeout.physics.neutrality_terms.extrinsic_start`). In practice a cold or far
    start takes 5 to 20 iterations, one from a nearby previous solution 1 to 3.
    """
    if statistics not in STATISTICS:
        raise ValueError(f"unknown statistics {statistics!r}; valid: {', '.join(STATISTICS)}")
    fd = statistics == "fermi-dirac"
    kt = bands.kt
    terms = level_terms(bands, donors, acceptors)
    shape = terms.shape
    start = (None if initial_fermi_level is None
             else np.asarray(initial_fermi_level, dtype=float) / kt)
    solve = compiled_solution if active_kernel() == "compiled" else _numpy_solution
    u, lp, ln_, log_d, log_a, iterations = solve(bands, terms, fd, start, tolerance)
    # ionized fractions 1 / (1 + e^x) = exp(-ln(1 + e^x)), from the last residual
    donor_ion = ionized_fractions(donors, log_d, shape)
    acc_ion = ionized_fractions(acceptors, log_a, shape)
    return NeutralityResult(
        temperature=on_shape(bands.temperature, shape),
        fermi_level=u * kt,
        band_gap=on_shape(bands.band_gap, shape),
        log_n=ln_,
        log_p=lp,
        donor_ionized=tuple(donor_ion),
        acceptor_ionized=tuple(acc_ion),
        iterations=iterations,
    )


def solve_charge_neutrality(
    temperature,
    material: Material,
    donors: Sequence[DopantLevel] = (),
    acceptors: Sequence[DopantLevel] = (),
    statistics: str = "fermi-dirac",
    initial_fermi_level=None,
) -> NeutralityResult:
    """Equilibrium Fermi level, carrier densities and ionized fractions versus temperature.

    Parameters
    ----------
    temperature
        Temperatures, scalar or array, each > 0. [K]
    material
        Host material (gap, densities of states).
    donors, acceptors
        Dopant levels (any number, including none: the intrinsic case).
    statistics
        ``"fermi-dirac"`` (default) or ``"boltzmann"``.
    initial_fermi_level
        Optional starting E_F - E_v. [eV]

    Returns
    -------
    NeutralityResult

    Notes
    -----
    Tested from 2 K to 1500 K and for level concentrations from 1e10 to 1e21 cm^-3; the
    residual p + N_D+ - n - N_A- is below 1e-10 of the largest term there.
    """
    for lv in donors:
        if lv.kind != "donor":
            raise ValueError("a level in 'donors' is not a donor")
    for lv in acceptors:
        if lv.kind != "acceptor":
            raise ValueError("a level in 'acceptors' is not an acceptor")
    bands = BandState.from_material(material, temperature)
    return solve_levels(bands, donors, acceptors, statistics, initial_fermi_level)


def _numpy_solution(bands: BandState, terms: LevelTerms, fd: bool, start, tolerance: float):
    """The solve in numpy, vectorized: (u, ln p, ln n, ln ionized fractions, iterations).

    ``start`` is a warm start u = (E_F - E_v)/kT, or None for a cold one.
    """
    shape = terms.shape
    # Per-level terms in reduced units: donors ln N + log_expit(-(ln g + u - a)),
    # acceptors ln N + log_expit(-(ln g + b - u)), u = (E_F - E_v)/kT.
    d_terms, a_terms = terms.donors, terms.acceptors
    log_nc, log_nv = bands.log_nc, bands.log_nv  # broadcast with u in the residual
    gap_kt = bands.gap_kt
    # fully ionized species are constants of the sums; a side without any leaves them out
    const_pos, const_neg = log_fixed(terms.fixed_pos), log_fixed(terms.fixed_neg)

    # ln(ionized fraction) = log_expit(-x): donors x = off + u, acceptors x = off - u
    d_offs = [(ln_n, -off) for ln_n, off in d_terms]

    def residual(u):
        # positive side: holes, ionized donors, fixed donors; negative: electrons, ionized
        # acceptors, fixed acceptors. Each side is ln(sum of exp(term)) (log_sum); its
        # slope is the exp(term)-weighted mean of the slopes.
        lp, dlp = log_band(-u, fd)
        lp = lp + log_nv
        pos = [(lp, -dlp)]
        log_d, log_a = [], []
        for ln_n, neg_off in d_offs:
            # ln N_D+ = ln N + log_expit(-x), d/du = -expit(x) = expm1(log_expit(-x))
            le = log_expit(neg_off - u)
            log_d.append(le)
            pos.append((ln_n + le, np.expm1(le)))
        ln_, dln = log_band(u - gap_kt, fd)
        ln_ += log_nc
        neg = [(ln_, dln)]
        for ln_a, off in a_terms:
            # ln N_A- = ln N + log_expit(-x), d/du = expit(x) = -expm1(log_expit(-x))
            le = log_expit(u - off)
            log_a.append(le)
            neg.append((ln_a + le, -np.expm1(le)))
        log_pos, slope_pos = log_sum(pos, const_pos)
        log_neg, slope_neg = log_sum(neg, const_neg)
        # (not in place: a side of one term is that term, lp or ln_ itself)
        return log_pos - log_neg, slope_pos - slope_neg, lp, ln_, log_d, log_a

    name = "charge-neutrality residual"
    if start is None:
        lo, hi = fermi_bracket(bands, terms, gap_kt)
        u = np.array(on_shape(extrinsic_start(bands, terms), shape))
        u, (_, _, lp, ln_, log_d, log_a), iterations = solve_decreasing(
            residual, lo, hi, u, tolerance, name=name)
    else:
        # a warm start: the bracket is worked out only if the start is not a root already
        u = start
        if u.shape != shape:
            u = np.array(np.broadcast_to(u, shape))
        u, (_, _, lp, ln_, log_d, log_a), iterations = solve_decreasing(
            residual, None, None, u, tolerance, name=name,
            bracket=lambda: fermi_bracket(bands, terms, gap_kt))
    return u, lp, ln_, log_d, log_a, iterations
