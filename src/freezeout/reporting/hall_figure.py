"""The two-carrier fit's figure: R_H(T) with its sign visible, the reversal marked, and rho(T).

|R_H| is drawn on a log axis (it spans decades); the sign is carried by marker and colour:
filled circles where R_H > 0 (holes dominate), open squares where R_H < 0 (electrons), and
the model line in the colour of its sign on each side of the reversal, which a vertical line
marks with its temperature and interval.
"""

from __future__ import annotations

import html

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, MUTED, STYLE  # noqa: E402

HOLE_COLOUR = LEVEL_COLOURS[1]
ELECTRON_COLOUR = LEVEL_COLOURS[3]


def _temperature_ticks(ax, lo: float, hi: float) -> None:
    from matplotlib.ticker import FixedLocator, NullFormatter

    nice = [v for v in (10, 20, 30, 50, 75, 100, 150, 200, 300, 400, 500, 700, 1000, 1500)
            if lo <= v <= hi]
    ax.set_xscale("log")
    ax.set_xlim(lo, hi)
    ax.xaxis.set_major_locator(FixedLocator(nice))
    ax.set_xticks(nice, [f"{v:g}" for v in nice])
    ax.xaxis.set_minor_formatter(NullFormatter())


def reversal_text(result: FitResult) -> str:
    """The reversal in words, for the figure and the report."""
    two = result.two_carrier
    if two.reversal_K is None:
        return "R_H keeps one sign over the searched range (no reversal)"
    rev = two.reversal
    if rev is not None and np.isfinite(rev.stderr):
        return (f"R_H = 0 at {rev.value:.1f} K (95 %: {rev.ci95[0]:.1f}–{rev.ci95[1]:.1f} K, "
                "delta method)")
    return f"R_H = 0 at {two.reversal_K:.1f} K"


def hall_sign_figure(result: FitResult) -> Figure | None:
    """|R_H| against T with the sign shown, and rho against T; None without two carriers."""
    two = result.two_carrier
    if two is None:
        return None
    t, r, rho = two.temperature, two.hall_coefficient, two.resistivity
    tc, rc, rhoc = two.curve_temperature, two.curve_hall_coefficient, two.curve_resistivity
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(9.2, 6.2), layout="constrained")
        top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
        for sign, colour, word in ((1, HOLE_COLOUR, "holes"), (-1, ELECTRON_COLOUR,
                                                                "electrons")):
            line = np.where(np.sign(rc) == sign, np.abs(rc), np.nan)
            top.plot(tc, line, "-", lw=2.0, color=colour,
                     label=f"model, R_H {'>' if sign > 0 else '<'} 0 ({word} dominate)")
            pts = np.sign(r) == sign
            if pts.any():
                top.plot(t[pts], np.abs(r[pts]), "o" if sign > 0 else "s", ms=5,
                         color=colour, mfc=colour if sign > 0 else "white",
                         label=f"measured, R_H {'>' if sign > 0 else '<'} 0", zorder=4)
        bottom.plot(tc, rhoc, "-", lw=2.0, color=INK, label="model ρ")
        bottom.plot(t, rho, "o", ms=4, color=INK, mfc="white", label="measured ρ", zorder=4)
        if two.reversal_K is not None:
            for ax in (top, bottom):
                ax.axvline(two.reversal_K, color=MUTED, lw=1.0, ls="--")
            if two.reversal is not None and np.all(np.isfinite(two.reversal.ci95)):
                top.axvspan(*two.reversal.ci95, color=MUTED, alpha=0.2, lw=0)
            top.plot([], [], ls="--", color=MUTED, label=reversal_text(result))
        absr = np.abs(np.concatenate([r, rc]))
        absr = absr[np.isfinite(absr) & (absr > 0)]
        top.set_yscale("log")
        top.set_ylim(max(absr.min(), absr.max() * 1e-6) / 2.0, absr.max() * 2.0)
        bottom.set_yscale("log")
        lo = min(float(tc.min()), float(t.min())) / 1.05
        hi = max(float(tc.max()), float(t.max())) * 1.05
        _temperature_ticks(bottom, lo, hi)
        top.set_ylabel("|R_H| [cm³/C]")
        bottom.set_ylabel("resistivity [Ω cm]")
        bottom.set_xlabel("temperature [K]")
        top.set_title("Hall coefficient with electrons and holes: the sign shown by marker "
                      "and colour", fontsize=9, loc="left")
        for ax in (top, bottom):
            ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=8)
    return fig


def two_carrier_html(result: FitResult) -> str:
    """The report's paragraph on the two-carrier fit (empty without one)."""
    two = result.two_carrier
    if two is None:
        return ""
    esc = html.escape
    n_min = int(np.sum(np.sign(two.hall_coefficient) != (1 if result.carrier == "p" else -1)))
    return (f"<p>Two-carrier fit of R_H(T) and ρ(T) ({esc(' + '.join(two.models))}, "
            f"r_H {esc(two.hall_factor_source)}): {two.n_points} points, {n_min} of them of "
            f"the opposite Hall sign, rms misfit R_H {two.rms_percent['hall']:.2g} %, "
            f"ρ {two.rms_percent['resistivity']:.2g} %. {esc(reversal_text(result))}.</p>")
