"""Figures of a fit. Each function draws on a given or new Axes and returns it."""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.curves import ModelCurves  # noqa: E402
from freezeout.fitting.result import FitResult  # noqa: E402

# our own palette: ink, slate, and one accent per level
INK = "#1d2a3a"
MUTED = "#8a94a3"
FLAG = "#c0392b"
LEVEL_COLOURS = ("#2a7f62", "#b5651d", "#6a4c93", "#1f77b4", "#8c564b", "#d4a017")
STYLE = {
    "font.size": 10,
    "axes.titlesize": 11,
    "axes.labelsize": 10,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.alpha": 0.25,
    "legend.fontsize": 8,
    "legend.frameon": False,
}


def new_axes(ax=None, size=(7.0, 4.6)):
    """``ax`` itself, or the Axes of a new Figure of ``size`` (inches) when ``ax`` is None.

    The Figure is not attached to pyplot (no global state, nothing to close).
    """
    if ax is not None:
        return ax
    fig = Figure(figsize=size, layout="constrained")
    return fig.add_subplot()


def level_colour(i: int) -> str:
    """Accent colour of the i-th level (the palette repeats)."""
    return LEVEL_COLOURS[i % len(LEVEL_COLOURS)]


def _points(result: FitResult):
    d = result.data
    return d.temperature, d.density, d.density_err, d.used, d.mixed, d.flagged


_NICE_T = (2, 3, 5, 10, 15, 20, 30, 50, 75, 100, 150, 200, 300, 500, 700, 1000, 1500)


def _log_temperature_xaxis(ax, temperature):
    """Log temperature axis with a few round ticks and no crowded minor labels."""
    from matplotlib.ticker import NullFormatter

    t = np.asarray(temperature, dtype=float)
    t = t[np.isfinite(t) & (t > 0)]
    ax.set_xscale("log")
    lo, hi = t.min() / 1.1, t.max() * 1.1
    ax.set_xlim(lo, hi)
    ticks = [v for v in _NICE_T if lo <= v <= hi]
    # keep ticks at least 12 % of a decade apart in log space
    kept = []
    for v in ticks:
        if not kept or np.log10(v / kept[-1]) > 0.12 * max(np.log10(hi / lo), 1.0):
            kept.append(v)
    ax.set_xticks(kept, [f"{v:g}" for v in kept])
    ax.xaxis.set_minor_formatter(NullFormatter())


def _add_temperature_axis(ax):
    """Secondary top axis in kelvin for a 1000/T bottom axis."""
    def fwd(x):
        with np.errstate(divide="ignore"):
            return 1000.0 / np.asarray(x, dtype=float)

    sec = ax.secondary_xaxis("top", functions=(fwd, fwd))
    lo, hi = sorted(ax.get_xlim())
    ticks, last = [], None
    for t in sorted(_NICE_T, reverse=True):  # left to right on a 1000/T axis
        x = 1000.0 / t
        if lo <= x <= hi and (last is None or x - last >= 0.1 * (hi - lo)):
            ticks.append(t)
            last = x
    sec.set_xticks(ticks, [f"{t:g}" for t in ticks])
    sec.set_xlabel("temperature [K]")
    return sec


def density_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Carrier density versus 1000/T (log axis): data, fit and each contribution."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax)
        t, y, err, used, mixed, flagged = _points(result)
        x = 1000.0 / t
        carrier = "electron" if result.carrier == "n" else "hole"
        minority = "holes" if result.carrier == "n" else "electrons"
        xc = 1000.0 / curves.temperature
        ax.plot(xc, curves.majority, color=INK, lw=2.0, label=f"fit: {carrier} density", zorder=3)
        for i, name in enumerate(curves.level_names):
            col = level_colour(i)
            if np.all(curves.ionized_fraction[i] == 1.0):
                ax.plot(xc, curves.ionized_density[i], color=col, lw=1.2, ls=":",
                        label=f"N_{name} (compensating, fully ionized)")
            else:
                sign = "+" if curves.level_kinds[i] == "donor" else "−"
                ax.plot(xc, curves.ionized_density[i], color=col, lw=1.2, ls="--",
                        label=f"ionized N_{name}{sign}")
        lo = max(np.min(y) / 30.0, 1e-300)
        if np.nanmax(curves.minority) > lo:  # only what shows on the axes gets a legend entry
            ax.plot(xc, curves.minority, color=MUTED, lw=1.2, ls="-.",
                    label=f"intrinsic generation ({minority})")
        if np.nanmax(curves.intrinsic) > lo:
            ax.plot(xc, curves.intrinsic, color=MUTED, lw=0.8, ls=":", label="n_i")
        yerr = None if err is None else err
        ax.errorbar(x[used], y[used], yerr=None if yerr is None else yerr[used], fmt="o",
                    ms=4.5, color=INK, mfc="white", mew=1.2, elinewidth=0.8,
                    label="measured (fitted)", zorder=4)
        if mixed.any():
            ax.plot(x[mixed], y[mixed], "^", ms=5, color=MUTED, mfc="none",
                    label="opposite Hall sign (not fitted)", zorder=4)
        if flagged.any():
            ax.plot(x[flagged], y[flagged], "X", ms=6, color=FLAG,
                    label="failed a severe quality check (not fitted)", zorder=5)
        hi = max(np.max(y), np.max(curves.majority[np.isfinite(curves.majority)])) * 3.0
        ax.set_yscale("log")
        ax.set_ylim(lo, hi)
        x_lo, x_hi = min(xc.min(), x.min()), max(xc.max(), x.max())
        ax.set_xlim(0.95 * x_lo, x_hi + 0.02 * (x_hi - x_lo))
        ax.set_xlabel("1000 / T [1/K]")
        ax.set_ylabel("density [cm$^{-3}$]")
        _add_temperature_axis(ax)
        ax.legend(loc="lower left", ncols=2)
        return ax


def residual_axes(result: FitResult, ax=None):
    """Relative residual (measured/fitted - 1, in %) versus temperature."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax, (7.0, 3.0))
        t, y, err, used, mixed, flagged = _points(result)
        model = result.data.model_density
        r = 100.0 * (y / model - 1.0)
        e = None if err is None else 100.0 * err / model
        ax.axhline(0.0, color=MUTED, lw=1)
        ax.errorbar(t[used], r[used], yerr=None if e is None else e[used], fmt="o", ms=4,
                    color=INK, mfc="white", elinewidth=0.8, label="fitted points")
        if (~used).any():
            ax.plot(t[~used], r[~used], "X", ms=5, color=FLAG, label="not fitted")
            ax.legend(loc="best")
        _log_temperature_xaxis(ax, t)
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel("measured / fit − 1 [%]")
        return ax


def fermi_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Fermi level in the gap versus temperature, with band edges and level energies."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax)
        t = curves.temperature
        ax.plot(t, curves.band_gap, color=INK, lw=1.6, label="E_c")
        ax.plot(t, np.zeros_like(t), color=INK, lw=1.6, ls="-", alpha=0.6, label="E_v")
        for i, name in enumerate(curves.level_names):
            e = curves.level_energy[i]
            if np.all(np.isnan(e)):
                continue
            ax.plot(t, e, color=level_colour(i), lw=1.1, ls="--",
                    label=f"E_{name}")
        ax.plot(t, curves.fermi_level, color=FLAG, lw=2.0, label="E_F")
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel("energy above E_v [eV]")
        ax.set_title("whole gap")
        ax.set_ylim(-0.05 * curves.band_gap.max(), 1.08 * curves.band_gap.max())
        # name the lines at their right ends (a legend box would sit on E_F somewhere)
        for yv, text, col in ((curves.band_gap[-1], "E_c", INK), (0.0, "E_v", INK),
                              (curves.fermi_level[-1], "E_F", FLAG)):
            ax.annotate(text, (t[-1], yv), xytext=(4, 0), textcoords="offset points",
                        va="center", fontsize=9, color=col, annotation_clip=False)
        ax.set_xlim(t[0], t[-1])
        return ax


def edge_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Fermi level and level energies measured from the majority band edge (a zoom)."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax)
        t = curves.temperature
        n_type = result.carrier == "n"
        edge = curves.band_gap if n_type else np.zeros_like(t)
        sign = 1.0 if n_type else -1.0  # distance from the edge, positive into the gap
        tops = [0.0]
        for i, name in enumerate(curves.level_names):
            e = curves.level_energy[i]
            if np.all(np.isnan(e)):
                continue
            d = sign * (edge - e)
            tops.append(float(np.nanmax(d)))
            ax.plot(t, d, color=level_colour(i), lw=1.1, ls="--",
                    label=f"E_{name}")
        d_f = sign * (edge - curves.fermi_level)
        ax.plot(t, d_f, color=FLAG, lw=2.0, label="E_F")
        ax.axhline(0.0, color=INK, lw=1.6, label="E_c" if n_type else "E_v")
        top = 2.0 * max(tops) if max(tops) > 0 else float(np.nanmax(d_f))
        ax.set_ylim(top, -0.08 * top) if n_type else ax.set_ylim(-0.08 * top, top)
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel(("E_c − E" if n_type else "E − E_v") + " [eV]")
        ax.set_title("near the " + ("conduction" if n_type else "valence") + "-band edge")
        ax.legend(loc="center left", bbox_to_anchor=(1.0, 0.5))
        return ax


def fermi_figure(result: FitResult, curves: ModelCurves):
    """The whole gap beside a zoom on the majority band edge."""
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(9.0, 4.2), layout="constrained")
        left, right = fig.subplots(1, 2)
        fermi_axes(result, curves, left)
        edge_axes(result, curves, right)
        return fig


def ionization_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Ionized fraction of each level versus temperature."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax, (7.0, 3.6))
        for i, name in enumerate(curves.level_names):
            f = curves.ionized_fraction[i]
            style = ":" if np.all(f == 1.0) else "-"
            suffix = " (fully ionized by assumption)" if style == ":" else ""
            ax.plot(curves.temperature, f, color=level_colour(i),
                    lw=1.6, ls=style, label=f"{name}{suffix}")
        t_data = result.data.temperature
        used = result.data.used
        tmin = float(t_data[used].min()) if used.any() else float(t_data.min())
        ax.axvline(tmin, color=MUTED, lw=0.8, ls="--")
        ax.annotate("lowest fitted T", (tmin, 1.0), xytext=(4, -14), textcoords="offset points",
                    fontsize=8, color=MUTED)
        ax.set_ylim(-0.03, 1.05)
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel("ionized fraction")
        ax.legend(loc="lower right")
        return ax


def transport_figure(result: FitResult):
    """Resistivity and Hall mobility versus temperature, or None if the run has neither."""
    d = result.data
    rho, mu = d.resistivity, d.mobility
    if rho is None and mu is None:
        return None
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(7.0, 3.4), layout="constrained")
        axes = fig.subplots(1, 2)
        t, _, _, used, _, _ = _points(result)
        for ax, vals, errs, label in (
            (axes[0], rho, d.resistivity_err, "resistivity [Ω cm]"),
            (axes[1], mu, d.mobility_err, "Hall mobility [cm$^2$/(V s)]"),
        ):
            if vals is None:
                ax.set_visible(False)
                continue
            v, e = _finite_or_nan(vals), None if errs is None else _finite_or_nan(errs)
            ok = np.isfinite(v) & (v > 0)
            ax.errorbar(t[ok & used], v[ok & used], yerr=None if e is None else e[ok & used],
                        fmt="o", ms=4, color=INK, mfc="white", elinewidth=0.8)
            bad = ok & ~used
            if bad.any():
                ax.plot(t[bad], v[bad], "X", ms=6, color=FLAG)
            ax.set_yscale("log")
            _log_temperature_xaxis(ax, t[ok])
            ax.set_xlabel("temperature [K]")
            ax.set_ylabel(label)
        return fig


def _finite_or_nan(values) -> np.ndarray:
    """Float array with NaN for every non-finite value."""
    a = np.asarray(values, dtype=float)
    return np.where(np.isfinite(a), a, np.nan)


def png_bytes(fig_or_ax) -> bytes:
    """Render a Figure (or the Figure of an Axes) to PNG bytes."""
    fig = fig_or_ax if isinstance(fig_or_ax, Figure) else fig_or_ax.figure
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=130)
    return buf.getvalue()
