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
f_i = 1 / (1 + exp((E_i - u_F) / kT) / g), neutrality n = sum N_i (1 - f_i) - N_comp gives
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
fewer than 5 temperatures), which a fit across would only bridge. A peak is an interior
maximum of a defined stretch whose prominence is at least 10 % of the largest defined signal
(project choice). Intrinsic conduction at the hot end raises n without a level: a rise at the
end of the spectrum there is not a level.

References
----------
.. [1] H. J. Hoffmann, "Defect-level analysis of semiconductors by a new differential
   evaluation of n(1/T)-characteristics", Appl. Phys. 19, 307-312 (1979). Title and the
   method's statement (Delta n / Delta E_F as the level concentration within Delta E_F)
   checked against the stored abstract; volume and pages from memory; the normalisation
   kT dn/dE_F and relations (3)-(6) derived here, not checked against the paper's text.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

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
#: A peak's prominence, as a fraction of the largest defined signal (project choice).
MIN_PROMINENCE = 0.1


@dataclass(frozen=True)
class SpectrumPeak:
    """One peak of the spectrum, read as a level.

    Attributes
    ----------
    energy
        Ionization energy from the majority band edge, path-corrected, Eq. (5). [eV]
    concentration
        Level concentration, path-corrected, Eq. (6). [cm^-3]
    temperature
        Temperature at the peak. [K]
    fermi_level
        u_F at the peak: E_c - E_F (n-type) or E_F - E_v (p-type). [eV]
    height
        S at the peak. [cm^-3]
    raw_energy, raw_concentration
        The plain reading u_F,peak - kT ln g and 4 S_peak. [eV], [cm^-3]
    """

    energy: float
    concentration: float
    temperature: float
    fermi_level: float
    height: float
    raw_energy: float
    raw_concentration: float

    def to_dict(self) -> dict:
        """JSON form, canonical units in the keys."""
        return {"energy_eV": finite_or_none(self.energy),
                "concentration_cm3": finite_or_none(self.concentration),
                "temperature_K": finite_or_none(self.temperature),
                "fermi_level_eV": finite_or_none(self.fermi_level),
                "height_cm3": finite_or_none(self.height),
                "raw_energy_eV": finite_or_none(self.raw_energy),
                "raw_concentration_cm3": finite_or_none(self.raw_concentration)}


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

    def to_dict(self) -> dict:
        """The ``spectroscopy`` member of the fit JSON."""
        return {"method": self.method, "reference": self.reference,
                "carrier": self.carrier, "degeneracy": self.degeneracy,
                "smoothing": {"half_width_lnT": self.half_width,
                              "min_points": self.min_points}, "signal_unit": "cm^-3",
                "temperature_K": [finite_or_none(x) for x in self.temperature],
                "energy_eV": [finite_or_none(x) for x in self.energy],
                "signal": [finite_or_none(x) for x in self.signal],
                "peaks": [p.to_dict() for p in self.peaks],
                "notes": list(self.notes)}


def _local_quadratic(x: np.ndarray, y: np.ndarray, x0: np.ndarray, half_width: float,
                     min_points: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Value, slope and half the curvature at each x0 of quadratics in x over its neighbours.

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
    return tuple(np.einsum("jkl,jk->lj", vt, ub))


def _log_slope(func, t: np.ndarray, h: float = 1e-4) -> np.ndarray:
    """d ln func / d ln T by a central difference in ln T."""
    return (np.log(func(t * (1 + h))) - np.log(func(t * (1 - h)))) / np.log((1 + h) / (1 - h))


def _solve_offset(kt: float, ln_g: float, d: float, d_prime: float) -> float | None:
    """u of Eq. (5) by bisection between kT ln g - 12 kT and kT ln g; None without a root."""
    def h(u: float) -> float:
        return np.tanh((u / kt - ln_g) / 2) + kt * (1 / d - u * d_prime / d**2) / (1 - u / d)**2

    hi = kt * ln_g
    lo = min(hi - 12 * kt, 0.99 * d)
    if not (h(lo) < 0 < h(hi)):
        return None
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if h(mid) > 0:
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)


def _read_peak(i: int, u: np.ndarray, s: np.ndarray, t: np.ndarray, d: np.ndarray,
               dp: np.ndarray, g: float) -> tuple[SpectrumPeak, bool]:
    """The peak at grid index i: vertex of the parabola through three points, then (5)-(6)."""
    du = u[i + 1] - u[i - 1]
    den = s[i - 1] - 2 * s[i] + s[i + 1]
    shift = 0.0 if den >= 0 or du <= 0 else 0.5 * (s[i - 1] - s[i + 1]) / den
    shift = float(np.clip(shift, -1.0, 1.0))
    k = i + 1 if shift > 0 else i - 1
    w = abs(shift)

    def at(a):
        return (1 - w) * a[i] + w * a[k]

    u_pk, t_pk, d_pk, dp_pk = at(u), at(t), at(d), at(dp)
    s_pk = s[i] - 0.25 * (s[i - 1] - s[i + 1]) * shift
    kt = K_B_EV * t_pk
    ln_g = float(np.log(g))
    raw_e, raw_n = u_pk - kt * ln_g, 4.0 * s_pk
    off = _solve_offset(kt, ln_g, d_pk, dp_pk)
    if off is None:
        return SpectrumPeak(raw_e, raw_n, t_pk, u_pk, s_pk, raw_e, raw_n), False
    z = off / kt - ln_g
    conc = s_pk / (0.25 / np.cosh(z / 2) ** 2 * (1 - off / d_pk))
    return SpectrumPeak(u_pk - off, float(conc), t_pk, u_pk, s_pk, raw_e, raw_n), True


def _prominent_maxima(x: np.ndarray, floor: float) -> list[int]:
    """Interior local maxima of ``x`` whose topographic prominence is at least ``floor``.

    The rule of ``scipy.signal.find_peaks(x, prominence=floor)`` (same peaks, checked against
    it in the tests), written out because scipy.signal costs a command ~0.06 s to import: a
    flat top counts once, at its middle (the lower middle of an even run); a peak's
    prominence is its height above the higher of the lowest points on either side before
    the signal rises above the peak (or ends).
    """
    n = len(x)
    found = []
    i = 1
    while i < n - 1:
        if x[i - 1] < x[i]:
            ahead = i + 1
            while ahead < n - 1 and x[ahead] == x[i]:
                ahead += 1
            if x[ahead] < x[i]:
                peak = (i + ahead - 1) // 2
                sides = []
                for step in (-1, 1):
                    j, low = peak, x[peak]
                    while 0 <= j < n and x[j] <= x[peak]:
                        low = min(low, x[j])
                        j += step
                    sides.append(low)
                if x[peak] - max(sides) >= floor:
                    found.append(peak)
                i = ahead
        i += 1
    return found


def _peak_indices(signal: np.ndarray) -> list[int]:
    """Interior maxima of each defined stretch with the prominence rule."""
    ok = np.isfinite(signal)
    if not ok.any():
        return []
    floor = MIN_PROMINENCE * float(np.nanmax(signal))
    if not floor > 0:
        return []
    found = []
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(int), [0]])))
    for start, stop in zip(edges[::2], edges[1::2], strict=True):
        idx = _prominent_maxima(signal[start:stop], floor)
        found.extend(int(start + i) for i in idx if signal[start + i] > 0)
    return found


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
    ln_n, slope, half_curv = np.full((3, grid_t.size), np.nan)
    for seg in np.split(np.arange(t.size), cuts):
        lo_t, hi_t = t[seg[0]], t[seg[-1]]
        if np.unique(t[seg]).size < min_points:
            where = (f"at {lo_t:.4g} K" if lo_t == hi_t
                     else f"from {lo_t:.4g} K to {hi_t:.4g} K")
            notes.append(f"spectrum undefined {where}: fewer than {min_points} temperatures "
                         "between gaps")
            continue
        on = (grid_t >= lo_t) & (grid_t <= hi_t)
        ln_n[on], slope[on], half_curv[on] = _local_quadratic(
            x[seg], np.log(n[seg]), grid_x[on], half_width, min_points)
    kt = thermal_energy(grid_t)
    s_dos = _log_slope(band_dos, grid_t)
    u_f = kt * (np.log(band_dos(grid_t)) - ln_n)          # Eq. (1)
    e_a = -K_B_EV * slope
    d = u_f + s_dos * kt - e_a                            # Eq. (3)
    with np.errstate(divide="ignore", invalid="ignore"):
        signal = np.exp(ln_n) * e_a / d                   # Eq. (3)
        d_prime = 1 + (s_dos * kt - 2 * K_B_EV * half_curv * grid_x) / d
    signal = np.where(d >= MIN_SWEEP_KT * kt, signal, np.nan)
    if not np.isfinite(signal).any():
        notes.append("the Fermi level does not sweep (T dE_F/dT < 2 kT everywhere): "
                     "no spectrum")
    peaks = []
    for i in _peak_indices(signal):
        peak, corrected = _read_peak(i, u_f, signal, grid_t, d, d_prime, g)
        peaks.append(peak)
        if not corrected:
            notes.append(f"peak at {peak.temperature:.4g} K: the path correction has no "
                         "solution; the plain reading is given")
    peaks.sort(key=lambda p: p.energy)
    return LevelSpectrum(carrier, g, half_width, min_points, grid_t, u_f, signal, tuple(peaks),
                         tuple(notes))


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
