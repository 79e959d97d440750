"""The level-spectrum figure: Hoffmann's S = kT dn/du_F against the Fermi-level depth u_F.

The spectrum is drawn against u_F (the Fermi level's depth below E_c, or above E_v for a
p-type run); each peak read from it is marked with its corrected level energy and
concentration, and the fitted levels' energies are vertical dashed lines labelled E_D1, ...
so the fit-free reading and the fit can be compared at a glance. A peak of a level of
degeneracy g sits about kT ln g beyond the level itself (the grey tick at each peak).
"""

from __future__ import annotations

import math

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figure_output import power_of_ten  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, MUTED, STYLE  # noqa: E402

CAPTION = ("Level spectrum without a fit (Hoffmann's differential evaluation of n(1/T)): "
           "S = kT dn/du_F against the Fermi-level depth u_F from the majority band edge, "
           "u_F = kT ln(N/n). Each level gives a bell of height about N/4 a little beyond "
           "its energy; the triangles are the levels read from the peaks (path-corrected "
           "energy, concentration in the label), drawn at the peak's height, and the grey "
           "tick under each marks the peak itself (about kT ln g beyond the level, more for "
           "g = 4 and at high temperature); the dashed lines are the fitted level "
           "energies; the shaded band is two standard errors of S from the run's scatter. "
           "Gaps in the curve: where the Fermi level barely moves with T, the spectrum is "
           "undefined.")


def caption(result: FitResult) -> str:
    """The caption, followed by the spectrum's notes (weak maxima, cut-off edges...)."""
    spec = result.spectroscopy
    notes = list(spec.notes) if spec is not None else []
    return CAPTION + ("" if not notes else " Notes: " + "; ".join(notes) + ".")


def _edge_word(carrier: str) -> str:
    return "E_c − E_F" if carrier == "n" else "E_F − E_v"


def spectroscopy_figure(result: FitResult) -> Figure | None:
    """The spectrum with its peaks and the fitted levels; None without a spectrum."""
    spec = result.spectroscopy
    if spec is None or spec.signal.size == 0 or not np.isfinite(spec.signal).any():
        return None
    ok = np.isfinite(spec.signal)
    u, s = spec.energy, np.where(ok, spec.signal, np.nan)
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(8.6, 4.8), layout="constrained")
        ax = fig.subplots()
        # where intrinsic generation matters (minority carriers above 1 % of the majority,
        # p = n_i^2 / n with n from u_F), the rise of S is not a level: shaded, and the axis
        # scaled to the extrinsic part (project choice, no source)
        kt = 8.617333262e-5 * spec.temperature
        edge = (result.material.nc(spec.temperature) if spec.carrier == "n"
                else result.material.nv(spec.temperature))
        with np.errstate(over="ignore", under="ignore"):
            majority = edge * np.exp(-spec.energy / kt)
            intrinsic = (result.material.intrinsic_density(spec.temperature) / majority) ** 2 > 0.01
        extrinsic = ok & ~intrinsic
        top = float(np.nanmax(s[extrinsic])) if extrinsic.any() else float(np.nanmax(s))
        # S in a unit of a power of ten, named on the axis (no offset text over the axis)
        power = math.floor(math.log10(top)) if np.isfinite(top) and top > 0 else 0
        unit = 10.0 ** power
        s, top = s / unit, top / unit
        if spec.signal_se is not None and np.isfinite(spec.signal_se).any():
            band = 2.0 * np.where(ok, spec.signal_se, np.nan) / unit
            ax.fill_between(u, s - band, s + band, color=INK, alpha=0.12, lw=0,
                            label="± 2 standard errors (the run's scatter)")
        ax.plot(u, s, "-", lw=2.0, color=INK, label="S = kT dn/du_F")
        if (intrinsic & ok).any():
            ax.axvspan(float(np.nanmin(u[intrinsic & ok])), float(np.nanmax(u[ok])) * 1.05,
                       color=MUTED, alpha=0.15, lw=0,
                       label="intrinsic generation (minority > 1 % of majority): not a level")
        for i, pk in enumerate(spec.peaks):
            # one colour for the peaks: the fitted levels' colours go by the fit's order,
            # which need not be the peaks' (project choice)
            height = pk.height / unit
            ax.plot([pk.energy], [height], "v", ms=9, mfc="white", mec=INK, mew=1.6,
                    zorder=5, label=f"peak {i + 1}: {pk.energy:.4f} eV, "
                    f"{pk.concentration:.2e} cm⁻³ (at {pk.temperature:.0f} K)")
            ax.plot([pk.fermi_level, pk.fermi_level], [0.93 * height, height],
                    "-", color=MUTED, lw=1.2)
        # (colour index, level) of the fitted levels with an energy, shallowest first; the
        # colours are those of the levels in the other figures (their order in the fit)
        fitted = sorted(((j, lv) for j, lv in enumerate(result.levels)
                         if lv.energy is not None and np.isfinite(lv.energy.value)),
                        key=lambda item: item[1].energy.value)
        lo = float(np.nanmin(u[ok]))
        hi = float(np.nanmax(u[ok]))
        if fitted:
            lo = min(lo, fitted[0][1].energy.value)
            hi = max(hi, fitted[-1][1].energy.value)
        # the fitted levels' labels in rows: a label goes to the lowest row where it clears
        # the one before it (a label is about an eighth of the axis wide at this size)
        width, row_ends, rows = 0.13 * (hi - lo), [], []
        for _, lv in fitted:
            e = lv.energy.value
            row = next((r for r, end in enumerate(row_ends) if e > end), len(row_ends))
            if row == len(row_ends):
                row_ends.append(e + width)
            else:
                row_ends[row] = e + width
            rows.append(row)
        for (j, lv), row in zip(fitted, rows, strict=True):
            e = lv.energy.value
            ax.axvline(e, color=LEVEL_COLOURS[j % 6], lw=1.2, ls="--", alpha=0.9)
            ax.annotate(f"E_{lv.name} (fit)\n{e:.4f} eV", (e, (1.07 + 0.17 * row) * top),
                        xytext=(4, 0), textcoords="offset points", ha="left", va="bottom",
                        fontsize=9, color=LEVEL_COLOURS[j % 6])
        pad = 0.04 * (hi - lo)
        ax.set_xlim(lo - pad, hi + pad)
        bottom = min(0.0, float(np.nanmin(s)))
        ax.set_ylim(bottom, (1.3 + 0.17 * max(rows, default=0)) * top)
        ax.axhline(0.0, color=MUTED, lw=0.8)
        ax.set_xlabel(f"Fermi-level depth u_F = {_edge_word(spec.carrier)} (eV)")
        ax.set_ylabel(f"S = kT dn/du_F ({power_of_ten(power)} cm⁻³)")
        ax.set_title(f"Level spectrum (g = {spec.degeneracy:g}); fitted levels dashed")
        ax.legend(loc="upper right", fontsize=8.5, frameon=False)
    return fig
