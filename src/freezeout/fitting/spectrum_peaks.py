"""Reading the level spectrum's peaks: which maxima count, and the level each one gives.

The equations (5)-(6) are those of :mod:`freezeout.fitting.spectroscopy` (its docstring);
this module holds the peak record, the rule and the readers. A peak is an interior maximum
of a defined stretch whose topographic prominence is at least :data:`PEAK_Z` standard errors
of the signal there (the scatter of the run through the local fits' slopes) and at least
:data:`MIN_PROMINENCE` of the largest defined signal. A maximum that passes neither but rises
at least :data:`WEAK_Z` standard errors and :data:`WEAK_PROMINENCE` of the largest signal is
a weak one, reported in a note with its reading and not as a level: the bells of two levels
a few kT apart merge into one with a shoulder, and noise makes small maxima of its own.
(Project choices, no source. Measured on freezeout's own simulations of five one- and
two-level Si and 4H-SiC runs of 40-80 points with 0.3-3 % scatter, 20 seeds each: two
maxima farther than 3 kT from every level reached 4 standard errors in those 400 runs,
while up to 16 runs in 20 had one above 10 % of the largest signal at 3 % scatter, the
former rule.)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from freezeout.numbers import finite_or_none
from freezeout.physics.constants import K_B_EV

#: A peak's prominence, in standard errors of the signal at the peak, at least.
PEAK_Z = 4.0
#: ... and as a fraction of the largest defined signal, at least.
MIN_PROMINENCE = 0.02
#: A weak maximum's prominence, in standard errors and as a fraction, at least.
WEAK_Z = 2.0
WEAK_PROMINENCE = 0.01


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


def solve_offset(kt: float, ln_g: float, d: float, d_prime: float) -> float | None:
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


def read_peak(i: int, u: np.ndarray, s: np.ndarray, t: np.ndarray, d: np.ndarray,
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
    off = solve_offset(kt, ln_g, d_pk, dp_pk)
    if off is None:
        return SpectrumPeak(raw_e, raw_n, t_pk, u_pk, s_pk, raw_e, raw_n), False
    z = off / kt - ln_g
    conc = s_pk / (0.25 / np.cosh(z / 2) ** 2 * (1 - off / d_pk))
    return SpectrumPeak(u_pk - off, float(conc), t_pk, u_pk, s_pk, raw_e, raw_n), True


def local_maxima(x: np.ndarray) -> list[tuple[int, float]]:
    """Interior local maxima of ``x`` with their topographic prominence, in order.

    The rule of ``scipy.signal.find_peaks`` (same peaks and prominences, checked against it
    in the tests), written out because scipy.signal costs a command ~0.06 s to import: a
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
                found.append((peak, float(x[peak] - max(sides))))
                i = ahead
        i += 1
    return found


def prominent_maxima(x: np.ndarray, floor: float) -> list[int]:
    """Interior local maxima of ``x`` whose prominence is at least ``floor``."""
    return [i for i, prominence in local_maxima(x) if prominence >= floor]


def defined_stretches(signal: np.ndarray) -> list[tuple[int, int]]:
    """(start, stop) of each run of finite values of ``signal``, stop exclusive."""
    ok = np.isfinite(signal)
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(int), [0]])))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2], strict=True)]


def peak_indices(signal: np.ndarray, signal_se: np.ndarray
                 ) -> tuple[list[int], list[tuple[int, float, float]]]:
    """Peaks of the spectrum, and its weak maxima (module docstring).

    Both are interior maxima of a defined stretch with a positive signal. ``signal_se`` is
    the standard error of the signal on the same grid (0 where the run shows no scatter).
    A weak maximum comes as (index, prominence as a fraction of the largest signal,
    prominence in standard errors).
    """
    if not np.isfinite(signal).any():
        return [], []
    top = float(np.nanmax(signal))
    if not top > 0:
        return [], []
    peaks, weak = [], []
    for start, stop in defined_stretches(signal):
        for i, prominence in local_maxima(signal[start:stop]):
            k = start + i
            if not signal[k] > 0:
                continue
            se = float(signal_se[k])
            z = prominence / se if se > 0 else (math.inf if se == 0 else math.nan)
            if z >= PEAK_Z and prominence >= MIN_PROMINENCE * top:
                peaks.append(k)
            elif z >= WEAK_Z and prominence >= WEAK_PROMINENCE * top:
                weak.append((k, prominence / top, z))
    return peaks, weak
