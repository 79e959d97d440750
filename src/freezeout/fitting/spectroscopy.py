"""Level spectroscopy without a fit: Hoffmann's differential evaluation of n(1/T).

As the temperature rises the Fermi level of an extrinsic sample moves from near the majority
band edge towards mid-gap and empties the levels it passes one after another; the carriers
gained per step of the Fermi level measure the level concentration there [1]_. This module
turns a run's majority density n(T) into that spectrum and reads its peaks.

Equations (n-type written; p-type the same with holes, N_v and acceptors)
-----------------------------------------------------------------------------
Fermi level from the density (non-degenerate statistics, n << N_c, as in [1]_)::

    u_F(T) = E_c - E_F = kT ln(N_c(T) / n(T))                                     (1)

Spectrum (Hoffmann's ratio Delta n / Delta E_F [1]_, times kT so that it reads in cm^-3)::

    S = kT dn/du_F = kT (dn/dT) / (du_F/dT)                                       (2)

With the local activation energy E_a = -k d ln n / d(1/T) and s = d ln N_c / d ln T (3/2 for
a parabolic band), (2) becomes, exactly (derived here)::

    D = T du_F/dT = u_F + s kT - E_a,        S = n E_a / D                        (3)

For levels i of concentration N_i, depth E_i below E_c and degeneracy g, occupancy
f_i = 1 / (1 + exp((u_F - E_i) / kT) / g), neutrality n = sum N_i (1 - f_i) - N_comp gives
along the measured path (derived here; the isothermal part is [1]_'s relation)::

    S = sum_i N_i f_i (1 - f_i) (1 - (u_F - E_i) / D)                              (4)

Each level gives a bell of width ~3.5 kT centred where f_i = 1/2, u_F = E_i + kT ln g, with
isothermal height N_i / 4. The plain reading of a peak (``raw_*`` below) is therefore
E_i = u_F,peak - kT ln g and N_i = 4 S_peak. The last factor of (4) -- kT changes along the
path -- biases that reading low: for Si:P-like runs by -0.3 to -0.7 kT_peak in energy and
-10 to -20 % in concentration (measured on freezeout's own simulations, tests). Setting
dS/du_F = 0 in (4) for an isolated level gives its exact peak condition (derived here), with
u = u_F,peak - E_i, z = u/kT - ln g, and D' = dD/du_F::

    tanh(z/2) = -kT (1/D - u D'/D^2) / (1 - u/D)^2                                 (5)
    N_i = S_peak / ((1/4) sech^2(z/2) (1 - u/D))                                    (6)

D, D' and kT are measured at the peak, so (5) is one equation in u (solved by bisection);
``energy`` and ``concentration`` are the corrected values. A level that is partly
compensated at the start keeps its full N_i in (6) (the bell height does not depend on
N_comp); the carriers released across it are N_i minus what the compensation took.

Derivatives and validity
------------------------
ln n is smoothed by a local quadratic in 1/T over the points within 0.1 of its centre in ln
T, at least 5 of them (tricube-weighted; project choice), evaluated on a grid even in 1/T. A
fixed width in ln T is a fixed width in u_F: u_F moves by D per unit of ln T, and D is 5-10
kT in freezeout, so the window spans about +-0.5-1 kT of a bell 3.5 kT wide. E_a and D' come from
the quadratic's slope and curvature. Where D < 2 kT the Fermi level barely moves (it turns
round at low T in a compensated sample, where D passes through 0 and S through a pole): the
spectrum is left undefined there (NaN; project choice, no source). A gap of the run wider
than 0.4 in ln T (:data:`MAX_GAP`) splits it into stretches: each local fit takes points of
its own stretch only, and the spectrum is undefined inside the gap (and on a stretch of
fewer than 5 temperatures), which a fit across would only bridge. The peaks and the
rule that picks them are :mod:`freezeout.fitting.spectrum_peaks`: a maximum must rise
above its surroundings by several standard errors of S, which come from the run's own
scatter (:func:`scatter`) through the local fits' slopes, and by 2 % of the largest signal;
weaker maxima, a peak read from a widened window, and a cold end where the sweep rule cuts
a high signal (a level may be cut off there) are reported in the notes. Intrinsic
conduction at the hot end raises n without a level: a rise at the end of the spectrum
there is not a level.

References
----------
.. [1] H. J. Hoffmann, "Defect-level analysis of semiconductors by a new differential
   evaluation of n(1/T)-characteristics", Appl. Phys. 19, 307-312 (1979). Title and the
   method's statement (Delta n / Delta E_F as the level concentration within Delta E_F)
   checked against the stored abstract; volume and pages from memory; the normalisation
   kT dn/dE_F and relations (3)-(6) derived here, not checked against the paper's text.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from freezeout.fitting.spectrum_peaks import (
    MIN_PROMINENCE,
    PEAK_Z,
    SpectrumPeak,
    defined_stretches,
    peak_indices,
    read_peak,
)
from freezeout.numbers import finite_or_none
from freezeout.physics.bands import thermal_energy
from freezeout.physics.constants import K_B_EV
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import (
    DEFAULT_ACCEPTOR_DEGENERACY,
    DEFAULT_DONOR_DEGENERACY,
)

METHOD = "differential evaluation of n(1/T): S = kT dn/d(E_edge - E_F)"
REFERENCE = ("H. J. Hoffmann, Appl. Phys. 19, 307-312 (1979), 'Defect-level analysis of "
             "semiconductors by a new differential evaluation of n(1/T)-characteristics'")

#: Half-width of each local quadratic fit of ln n against 1/T, in ln T (project choice).
DEFAULT_HALF_WIDTH = 0.1
#: Fewest points in one local fit (project choice).
MIN_POINTS = 5
#: Grid points of the spectrum, even in 1/T (project choice).
GRID_POINTS = 300
#: The spectrum is defined where T du_F/dT >= this many kT (project choice, no source).
MIN_SWEEP_KT = 2.0
#: The spectrum is undefined inside a gap of the run wider than this many half-widths in
#: ln T: a level's bell spans about 0.35-0.7 in ln T (3.5 kT of u_F at 5-10 kT per unit of
#: ln T), so a gap that wide can hide one, and the local fits only bridge it (project
#: choice, no source).
MAX_GAP = 4.0
#: Where the spectrum starts at a cut of the sweep rule with a signal at least this fraction
#: of its largest and no peak read within a bell's width (3.5 kT) of that edge, a note says
#: a level may be cut off there (project choice, no source).
EDGE_FRACTION = 0.5
#: Median of chi^2 with one degree of freedom (computed here with scipy.stats.chi2.median).
CHI2_1_MEDIAN = 0.454936423119572
#: A read peak whose local fits reach beyond this many half-widths (too few points near it)
#: gets a note: at the default 0.1 that is a window 0.6 wide in ln T, as wide as a level's
#: bell (0.35-0.7, see MAX_GAP), which it then flattens (project choice, no source).
WIDE_WINDOW = 3.0
#: Weak maxima named in the notes, most prominent first, at most (project choice).
WEAK_NOTES = 2


@dataclass(frozen=True)
class LevelSpectrum:
    """The spectrum of a run and its peaks.

    Attributes
    ----------
    carrier
        ``"n"`` or ``"p"``.
    degeneracy
        Level degeneracy g used to read the peaks. [1]
    half_width, min_points
        Smoothing: each local quadratic takes the points within ``half_width`` in ln T, at
        least ``min_points`` of them. [1], [1]
    temperature
        Grid temperatures, ascending. [K]
    energy
        u_F on the grid: depth of the Fermi level below E_c (n) or above E_v (p). [eV]
    signal
        S = kT dn/du_F on the grid, NaN where undefined (D < 2 kT). [cm^-3]
    signal_se
        Standard error of S from the run's scatter (E_a's share; NaN where undefined).
        [cm^-3]
    scatter
        Standard deviation of the scatter of ln n about a smooth curve (:func:`scatter`).
        [1]
    peaks
        The peaks, shallowest first.
    notes
        Plain-language remarks (too few points, no defined stretch, a peak not corrected).
    """

    carrier: str
    degeneracy: float
    half_width: float
    min_points: int
    temperature: np.ndarray
    energy: np.ndarray
    signal: np.ndarray
    peaks: tuple[SpectrumPeak, ...] = ()
    notes: tuple[str, ...] = ()
    method: str = METHOD
    reference: str = REFERENCE
    signal_se: np.ndarray | None = None
    scatter: float = math.nan

    def to_dict(self) -> dict:
        """The ``spectroscopy`` member of the fit JSON."""
        return {"method": self.method, "reference": self.reference,
                "carrier": self.carrier, "degeneracy": self.degeneracy,
                "smoothing": {"half_width_lnT": self.half_width,
                              "min_points": self.min_points}, "signal_unit": "cm^-3",
                "temperature_K": [finite_or_none(x) for x in self.temperature],
                "energy_eV": [finite_or_none(x) for x in self.energy],
                "signal": [finite_or_none(x) for x in self.signal],
                "signal_stderr": ([] if self.signal_se is None
                                  else [finite_or_none(x) for x in self.signal_se]),
                "scatter_ln_n": finite_or_none(self.scatter),
                "peaks": [p.to_dict() for p in self.peaks],
                "notes": list(self.notes)}


class LocalFits(NamedTuple):
    """The local quadratics of :func:`_local_quadratic` at each centre."""

    value: np.ndarray  # ln n
    slope: np.ndarray  # d ln n / d(1/T)
    half_curv: np.ndarray  # half of d2 ln n / d(1/T)2
    span: np.ndarray  # distance in ln T of the farthest neighbour
    slope_gain: np.ndarray  # standard error of the slope per unit scatter of ln n


def _local_quadratic(x: np.ndarray, y: np.ndarray, x0: np.ndarray, half_width: float,
                     min_points: int) -> LocalFits:
    """Quadratics in x over the neighbours of each x0 (:class:`LocalFits`).

    Value, slope and half the curvature at each x0, the distance in ln x of its farthest
    neighbour, and the slope's standard error for independent scatter of unit standard
    deviation in y.

    The neighbours of x0 are the points within ``half_width`` of it in ln x, or the nearest
    ``min_points`` in ln x where fewer are that close, tricube-weighted in their distance.
    Every x0 is fitted at once: the other points get weight 0, and each weighted least
    squares is solved by its singular value decomposition with the cut-off of
    ``numpy.linalg.lstsq`` (rcond None), so the fits are lstsq's, rank-deficient ones included.
    """
    dist = np.abs(np.log(x)[None, :] - np.log(x0)[:, None])  # (x0, points)
    count = np.maximum(min_points, np.sum(dist <= half_width, axis=1))
    # each point's rank by distance from each centre (ties: in order), as the nearest first
    rank = np.argsort(np.argsort(dist, axis=1, kind="stable"), axis=1, kind="stable")
    near = rank < count[:, None]
    # tricube weights out to 1.2 times the farthest neighbour: the fit moves smoothly
    # as points enter and leave the window
    reach = 1.2 * np.max(np.where(near, dist, 0.0), axis=1) + 1e-300
    w = np.where(near, np.sqrt(np.clip(1 - (dist / reach[:, None]) ** 3, 0.0, None) ** 3),
                 0.0)
    dx = x[None, :] - x0[:, None]
    a = np.stack([np.ones_like(dx), dx, dx * dx], axis=-1) * w[..., None]
    u, sv, vt = np.linalg.svd(a, full_matrices=False)
    kept = sv > np.finfo(float).eps * count[:, None] * sv[:, :1]
    ub = np.einsum("jnk,jn->jk", u, y[None, :] * w) / np.where(kept, sv, 1.0) * kept
    value, slope, half_curv = np.einsum("jkl,jk->lj", vt, ub)
    # the slope is sum_i p_i w_i y_i, p the slope row of the pseudo-inverse V S^-1 U^T
    p_slope = np.einsum("jl,jl,jil->ji", vt[:, :, 1], kept / np.where(kept, sv, 1.0), u)
    gain = np.sqrt(np.sum((p_slope * w) ** 2, axis=1))
    return LocalFits(value, slope, half_curv, np.max(np.where(near, dist, 0.0), axis=1), gain)


def scatter(x: np.ndarray, y: np.ndarray) -> float:
    """Standard deviation of the scatter of y about a smooth curve in x, from the data alone.

    The pseudo-residuals of T. Gasser, L. Sroka and C. Jennen-Steinmetz, Biometrika 73,
    625-633 (1986) (from memory): each point against the line through its two neighbours
    (in order of x), scaled to unit variance. Their estimate is the mean of the squares;
    here it is the median over 0.4549, the median of chi^2 with one degree of freedom, so
    that a few triples across a sharp bend of the curve (or one outlying point) do not
    count as scatter (project choice). Ties in x (no line) are left out; NaN with fewer
    than three distinct x.
    """
    order = np.argsort(x, kind="stable")
    x, y = x[order], y[order]
    if x.size < 3:
        return math.nan
    span = x[2:] - x[:-2]
    ok = span > 0
    a = np.where(ok, (x[2:] - x[1:-1]) / np.where(ok, span, 1.0), 0.0)
    b = 1.0 - a
    e = a * y[:-2] + b * y[2:] - y[1:-1]
    c2 = 1.0 / (a * a + b * b + 1.0)
    return float(math.sqrt(np.median(c2[ok] * e[ok] ** 2) / CHI2_1_MEDIAN)) if ok.any() \
        else math.nan


def _log_slope(func, t: np.ndarray, h: float = 1e-4) -> np.ndarray:
    """d ln func / d ln T by a central difference in ln T."""
    return (np.log(func(t * (1 + h))) - np.log(func(t * (1 - h)))) / np.log((1 + h) / (1 - h))


def level_spectrum(temperature, density, carrier: str, material: Material, *,
                   degeneracy: float | None = None,
                   half_width: float = DEFAULT_HALF_WIDTH, min_points: int = MIN_POINTS,
                   grid_points: int = GRID_POINTS) -> LevelSpectrum:
    """The differential spectrum of a run and the levels its peaks give (module docstring).

    Parameters
    ----------
    temperature
        Temperatures of the points to use. [K]
    density
        Majority carrier density at them (non-positive or non-finite points dropped). [cm^-3]
    carrier
        ``"n"`` (donor levels, N_c) or ``"p"`` (acceptor levels, N_v).
    material
        Host (its N_c(T) or N_v(T)).
    degeneracy
        g of the levels (default 2 for donors, 4 for acceptors, as the fit). [1]
    half_width
        Each local quadratic fit of ln n against 1/T takes the points within this distance
        in ln T of its centre. [1]
    min_points
        ... and at least this many (at least 4).
    grid_points
        Points of the spectrum, even in 1/T.
    """
    if carrier not in ("n", "p"):
        raise ValueError(f"carrier must be 'n' or 'p', got {carrier!r}")
    if min_points < 4:
        raise ValueError("the local quadratic needs at least 4 points")
    g = float(degeneracy if degeneracy is not None else (
        DEFAULT_DONOR_DEGENERACY if carrier == "n" else DEFAULT_ACCEPTOR_DEGENERACY))
    t = np.asarray(temperature, dtype=float)
    n = np.asarray(density, dtype=float)
    keep = np.isfinite(t) & np.isfinite(n) & (t > 0) & (n > 0)
    t, n = t[keep], n[keep]
    order = np.argsort(t)
    t, n = t[order], n[order]
    empty = np.array([])
    if np.unique(t).size < min_points:
        return LevelSpectrum(carrier, g, half_width, min_points, empty, empty, empty, notes=(
            f"spectrum not computed: {np.unique(t).size} distinct temperatures, fewer than "
            f"the {min_points} of one local fit",))
    band_dos = material.nc if carrier == "n" else material.nv
    x = 1.0 / t
    grid_x = np.linspace(x.max(), x.min(), int(grid_points))
    grid_t = 1.0 / grid_x
    # the local fits take their points from one stretch of the run: a gap wider than
    # MAX_GAP half-widths in ln T ends a stretch, and the spectrum is undefined inside it
    gap = MAX_GAP * half_width
    cuts = np.flatnonzero(np.diff(np.log(t)) > gap) + 1
    notes = [f"spectrum undefined from {t[i - 1]:.4g} K to {t[i]:.4g} K: no points there, "
             f"a gap wider than {gap:g} in ln T" for i in cuts]
    ln_n, slope, half_curv, span, gain = np.full((5, grid_t.size), np.nan)
    sigma = scatter(x, np.log(n))
    for seg in np.split(np.arange(t.size), cuts):
        lo_t, hi_t = t[seg[0]], t[seg[-1]]
        if np.unique(t[seg]).size < min_points:
            where = (f"at {lo_t:.4g} K" if lo_t == hi_t
                     else f"from {lo_t:.4g} K to {hi_t:.4g} K")
            notes.append(f"spectrum undefined {where}: fewer than {min_points} temperatures "
                         "between gaps")
            continue
        on = (grid_t >= lo_t) & (grid_t <= hi_t)
        ln_n[on], slope[on], half_curv[on], span[on], gain[on] = _local_quadratic(
            x[seg], np.log(n[seg]), grid_x[on], half_width, min_points)
    kt = thermal_energy(grid_t)
    s_dos = _log_slope(band_dos, grid_t)
    u_f = kt * (np.log(band_dos(grid_t)) - ln_n)          # Eq. (1)
    e_a = -K_B_EV * slope
    d = u_f + s_dos * kt - e_a                            # Eq. (3)
    with np.errstate(divide="ignore", invalid="ignore"):
        signal = np.exp(ln_n) * e_a / d                   # Eq. (3)
        d_prime = 1 + (s_dos * kt - 2 * K_B_EV * half_curv * grid_x) / d
        # the standard error of S from that of E_a (the slope's), dS/dE_a = n (D + E_a)/D^2
        signal_se = np.abs(np.exp(ln_n) * (d + e_a) / d**2) * K_B_EV * sigma * gain
    signal = np.where(d >= MIN_SWEEP_KT * kt, signal, np.nan)
    if not np.isfinite(signal).any():
        notes.append("the Fermi level does not sweep (T dE_F/dT < 2 kT everywhere): "
                     "no spectrum")
    signal_se = np.where(np.isfinite(signal), signal_se, np.nan)
    found, weak = peak_indices(signal, signal_se)
    peaks = []
    for i in found:
        peak, corrected = read_peak(i, u_f, signal, grid_t, d, d_prime, g)
        peaks.append(peak)
        if not corrected:
            notes.append(f"peak at {peak.temperature:.4g} K: the path correction has no "
                         "solution; the plain reading is given")
        if span[i] > WIDE_WINDOW * half_width:
            notes.append(f"peak at {peak.temperature:.4g} K: fewer than {min_points} points "
                         f"lie within {half_width:g} in ln T of it, so its local fits reach "
                         f"{span[i]:.2g}; the wider smoothing flattens the bell, and its "
                         "reading is less certain (denser points there sharpen it)")
    notes += _weak_notes(weak, u_f, signal, grid_t, d, d_prime, g)
    notes += _edge_notes(signal, ln_n, u_f, kt, grid_t, found)
    peaks.sort(key=lambda p: p.energy)
    return LevelSpectrum(carrier, g, half_width, min_points, grid_t, u_f, signal, tuple(peaks),
                         tuple(notes), signal_se=signal_se, scatter=sigma)


def _weak_notes(weak, u_f, signal, grid_t, d, d_prime, g) -> list[str]:
    """Notes on the most prominent weak maxima, with the level each would give."""
    notes = []
    for i, fraction, z in sorted(weak, key=lambda w: -w[1])[:WEAK_NOTES]:
        pk, _ = read_peak(i, u_f, signal, grid_t, d, d_prime, g)
        notes.append(f"a weak maximum at {pk.temperature:.4g} K (read as a level: "
                     f"{pk.energy:.4g} eV, {pk.concentration:.3g} cm^-3) rises "
                     f"{100 * fraction:.2g} % of the largest signal ({z:.2g} standard "
                     f"errors) above its surroundings, short of what a peak needs ({PEAK_Z:g} "
                     f"standard errors and {100 * MIN_PROMINENCE:g} % of the largest): a "
                     "level whose bell merges with a neighbour's, or noise; a fit of the "
                     "levels decides")
    return notes


def _edge_notes(signal, ln_n, u_f, kt, grid_t, found) -> list[str]:
    """Notes where a stretch starts, at the sweep rule's cut, with a high signal and no peak.

    There the Fermi level stops sweeping on the cold side (compensation pins it near a
    level), so the cold half of a level's bell may be cut off and its maximum never formed.
    """
    top = float(np.nanmax(signal)) if np.isfinite(signal).any() else math.nan
    notes = []
    for start, _ in defined_stretches(signal):
        cut = start > 0 and np.isfinite(ln_n[start - 1])
        near = [k for k in found if 0 <= u_f[k] - u_f[start] <= 3.5 * kt[start]]
        if cut and signal[start] >= EDGE_FRACTION * top and not near:
            notes.append(f"the spectrum starts at {grid_t[start]:.4g} K, where the Fermi "
                         "level stops sweeping (T dE_F/dT < 2 kT below it, as where "
                         "compensation pins it near a level), with a signal already "
                         f"{100 * signal[start] / top:.0f} % of its largest: a level near "
                         f"u_F = {u_f[start]:.3g} eV may be cut off there, unread as a peak")
    return notes


def fit_spectrum(result, *, degeneracy: float | None = None) -> LevelSpectrum:
    """:func:`level_spectrum` of the points a fit used (its run's majority density).

    Parameters
    ----------
    result
        A :class:`freezeout.fitting.result.FitResult` (its ``data``, ``carrier`` and
        ``material``).
    degeneracy
        g of the levels, as given to the fit (None: the fit's default). [1]
    """
    data = result.data
    used = np.asarray(data.used, dtype=bool)
    return level_spectrum(np.asarray(data.temperature)[used], np.asarray(data.density)[used],
                          result.carrier, result.material, degeneracy=degeneracy)
