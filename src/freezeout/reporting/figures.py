"""Figures of a fit. Each function draws on a given or new Axes and returns it."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.curves import ModelCurves  # noqa: E402
from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figure_layout import (  # noqa: E402
    drop_unseen,
    label_line_ends,
    legend_below,
    model_line,
    shade_outside,
    split_at,
)
from freezeout.reporting.figure_output import png_bytes as png_bytes  # noqa: E402

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


def log_temperature_xaxis(ax, temperature):
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


def fitted_range(result: FitResult) -> tuple[float, float]:
    """Lowest and highest temperature of the points the fit used (of all, if none). [K]"""
    t, used = result.data.temperature, result.data.used
    t = t[used] if used.any() else t
    return float(t.min()), float(t.max())


def _inverse_temperature_limits(result: FitResult) -> tuple[float, float]:
    """1000/T range of the density and residual figures, the same for both.

    The model grid's span (0.9 T_min to 1.05 T_max, as in fitting.curves) with a margin.
    """
    t = result.data.temperature
    x_lo, x_hi = 1000.0 / (1.05 * t.max()), 1000.0 / (0.9 * t.min())
    return 0.95 * x_lo, x_hi + 0.02 * (x_hi - x_lo)


def density_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Carrier density versus 1000/T (log axis): data, fit and each contribution.

    The model is full strength over the fitted temperature range only: beyond it the fit
    continues dashed ("model (extrapolated)") and each contribution faded. A curve with no
    visible stretch on the axes is left out; the legend sits under the axes.
    """
    with plt.rc_context(STYLE):
        ax = new_axes(ax, (7.0, 5.6))
        t, y, err, used, mixed, flagged = _points(result)
        x = 1000.0 / t
        carrier = "electron" if result.carrier == "n" else "hole"
        minority = "holes" if result.carrier == "n" else "electrons"
        xc = 1000.0 / curves.temperature
        masks = split_at(curves.temperature, *fitted_range(result))
        model_line(ax, xc, curves.majority, masks, f"fit: {carrier} density",
                    "model (extrapolated)", color=INK, lw=2.0, zorder=3)
        groups = []
        for i, name in enumerate(curves.level_names):
            col = level_colour(i)
            if np.all(curves.ionized_fraction[i] == 1.0):
                label, ls = f"N_{name} (compensating, fully ionized)", ":"
            else:
                sign = "+" if curves.level_kinds[i] == "donor" else "−"
                label, ls = f"ionized N_{name}{sign}", "--"
            groups.append(model_line(ax, xc, curves.ionized_density[i], masks, label,
                                      color=col, lw=1.2, ls=ls))
        groups.append(model_line(ax, xc, curves.minority, masks,
                                  f"intrinsic generation ({minority})", color=MUTED, lw=1.2,
                                  ls="-."))
        groups.append(model_line(ax, xc, curves.intrinsic, masks, "n_i", color=MUTED, lw=0.8,
                                  ls=":"))
        ax.errorbar(x[used], y[used], yerr=None if err is None else err[used], fmt="o",
                    ms=4.5, color=INK, mfc="white", mew=1.2, elinewidth=0.8,
                    label="measured (fitted)", zorder=4)
        odd = mixed & ~used
        if odd.any():
            ax.plot(x[odd], y[odd], "^", ms=5, color=MUTED, mfc="none",
                    label="opposite Hall sign (not fitted)", zorder=4)
        if flagged.any():
            ax.plot(x[flagged], y[flagged], "X", ms=6, color=FLAG,
                    label="failed a severe quality check (not fitted)", zorder=5)
        lo = max(np.min(y) / 30.0, 1e-300)
        hi = max(np.max(y), np.max(curves.majority[np.isfinite(curves.majority)])) * 3.0
        ax.set_yscale("log")
        ax.set_ylim(lo, hi)
        ax.set_xlim(*_inverse_temperature_limits(result))
        ax.set_xlabel("1000 / T [1/K]")
        ax.set_ylabel("density [cm⁻³]")
        _add_temperature_axis(ax)
        drop_unseen(ax, groups)
        legend_below(ax, ncols=2)
        return ax


#: Left-out points of the residual figure: marker, colour, face and name per reason.
_LEFT_OUT = {
    "severe": ("X", FLAG, FLAG, "failed a severe quality check (not fitted"),
    "mixed": ("^", MUTED, "none", "opposite Hall sign (not fitted"),
}


def _residual_limit(r, e) -> float:
    """Half-height of the residual axis: the fitted points and their error bars, +15 %. [%]"""
    v = np.abs(r) if e is None else np.abs(r) + np.nan_to_num(e)
    v = v[np.isfinite(v)]
    top = float(v.max()) if v.size else 0.0
    return 1.15 * top if top > 0 else 1.0


def residual_axes(result: FitResult, ax=None):
    """Relative residual (measured/fitted - 1, in %) versus 1000/T, on the density's x axis.

    The fitted points and their error bars set the y range; a left-out point beyond it is a
    triangle on the edge it passed (pointing out), with its value printed beside it.
    """
    with plt.rc_context(STYLE):
        ax = new_axes(ax, (7.0, 3.8))
        cols = residual_columns(result)
        x = 1000.0 / cols["temperature_K"]
        r, used = cols["residual_percent"], cols["used"]
        e = None if result.data.density_err is None else cols["residual_err_percent"]
        ax.axhline(0.0, color=MUTED, lw=1)
        ax.errorbar(x[used], r[used], yerr=None if e is None else e[used], fmt="o", ms=4,
                    color=INK, mfc="white", elinewidth=0.8, label="fitted points")
        lim = _residual_limit(r[used], None if e is None else e[used])
        ax.set_ylim(-lim, lim)
        for reason, (marker, col, face, name) in _LEFT_OUT.items():
            pick = (cols["left_out"] == reason) & np.isfinite(r)
            shown = pick & (np.abs(r) <= lim)
            if shown.any():
                ax.plot(x[shown], r[shown], marker, ms=5.5, color=col, mfc=face,
                        label=name + ")", zorder=4)
            label = name + ", off scale)"
            for sign, arrow, va in ((1.0, "^", "top"), (-1.0, "v", "bottom")):
                off = pick & (sign * r > lim)
                if not off.any():
                    continue
                ax.plot(x[off], np.full(off.sum(), sign * lim), arrow, ms=7, color=col,
                        clip_on=False, zorder=5, label=label)
                label = "_nolegend_"
                for xi, ri in zip(x[off], r[off], strict=True):
                    ax.annotate(f"{ri:+.0f} %".replace("-", "−"), (xi, sign * lim),
                                xytext=(6, -3 * sign), textcoords="offset points", va=va,
                                fontsize=7.5, color=col)
        ax.set_xlim(*_inverse_temperature_limits(result))
        ax.set_xlabel("1000 / T [1/K]")
        ax.set_ylabel("measured / fit − 1 [%]")
        _add_temperature_axis(ax)
        if (~used).any():
            legend_below(ax, ncols=2, first="fitted points")
        return ax


def fermi_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Fermi level in the gap versus temperature, with band edges and level energies.

    Every line is named at its right end (a legend box would sit on E_F somewhere); the
    temperatures outside the fitted range are shaded.
    """
    with plt.rc_context(STYLE):
        ax = new_axes(ax)
        t = curves.temperature
        shade_outside(ax, t, *fitted_range(result), MUTED)
        ax.plot(t, curves.band_gap, color=INK, lw=1.6, label="E_c")
        ax.plot(t, np.zeros_like(t), color=INK, lw=1.6, ls="-", alpha=0.6, label="E_v")
        names = [(curves.band_gap[-1], "E_c", INK), (0.0, "E_v", INK)]
        for i, name in enumerate(curves.level_names):
            e = curves.level_energy[i]
            if np.all(np.isnan(e)):
                continue
            ax.plot(t, e, color=level_colour(i), lw=1.1, ls="--", label=f"E_{name}")
            names.append((e[-1], f"E_{name}", level_colour(i)))
        ax.plot(t, curves.fermi_level, color=FLAG, lw=2.0, label="E_F")
        names.append((curves.fermi_level[-1], "E_F", FLAG))
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel("energy above E_v [eV]")
        ax.set_title("whole gap")
        ax.set_ylim(-0.05 * curves.band_gap.max(), 1.08 * curves.band_gap.max())
        ax.set_xlim(t[0], t[-1])
        label_line_ends(ax, names)
        return ax


def edge_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Fermi level and level energies measured from the majority band edge (a zoom).

    Same temperature range as :func:`fermi_axes`; the legend sits right of the axes.
    """
    with plt.rc_context(STYLE):
        ax = new_axes(ax)
        t = curves.temperature
        n_type = result.carrier == "n"
        shade_outside(ax, t, *fitted_range(result), MUTED, "outside the fitted range")
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
        ax.set_xlim(t[0], t[-1])
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel(("E_c − E" if n_type else "E − E_v") + " [eV]")
        ax.set_title("near the " + ("conduction" if n_type else "valence") + "-band edge")
        ax.legend(loc="center left", bbox_to_anchor=(1.0, 0.5))
        return ax


def fermi_figure(result: FitResult, curves: ModelCurves):
    """The whole gap beside a zoom on the majority band edge, on one temperature range."""
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(9.0, 4.2), layout="constrained")
        left, right = fig.subplots(1, 2, sharex=True)
        fermi_axes(result, curves, left)
        edge_axes(result, curves, right)
        return fig


def ionization_axes(result: FitResult, curves: ModelCurves, ax=None):
    """Ionized fraction of each level versus temperature, the unfitted range shaded."""
    with plt.rc_context(STYLE):
        ax = new_axes(ax, (7.0, 4.0))
        shade_outside(ax, curves.temperature, *fitted_range(result), MUTED,
                      "outside the fitted range")
        for i, name in enumerate(curves.level_names):
            f = curves.ionized_fraction[i]
            style = ":" if np.all(f == 1.0) else "-"
            suffix = " (fully ionized by assumption)" if style == ":" else ""
            ax.plot(curves.temperature, f, color=level_colour(i),
                    lw=1.6, ls=style, label=f"{name}{suffix}")
        ax.set_ylim(-0.03, 1.05)
        ax.set_xlim(curves.temperature[0], curves.temperature[-1])
        ax.set_xlabel("temperature [K]")
        ax.set_ylabel("ionized fraction")
        legend_below(ax, ncols=3)
        return ax


def curve_columns(result: FitResult, curves: ModelCurves) -> dict[str, np.ndarray]:
    """The model curves of a fit as plain named columns, one value per grid temperature.

    Parameters
    ----------
    result
        The fit (for its fitted temperature range).
    curves
        Its model curves (:func:`freezeout.fitting.curves.model_curves`).

    Returns
    -------
    dict
        ``temperature_K``; ``majority_cm3``, ``minority_cm3``, ``intrinsic_cm3``;
        ``fermi_level_eV`` and ``band_gap_eV`` (above E_v); per level ``ionized_<name>_cm3``,
        ``ionized_fraction_<name>`` and, for a level with an energy, ``level_<name>_eV``
        (above E_v); ``extrapolated``, True outside the fitted temperature range.
    """
    t = curves.temperature
    lo, hi = fitted_range(result)
    cols = {"temperature_K": t, "majority_cm3": curves.majority,
            "minority_cm3": curves.minority, "intrinsic_cm3": curves.intrinsic,
            "fermi_level_eV": curves.fermi_level, "band_gap_eV": curves.band_gap}
    for i, name in enumerate(curves.level_names):
        cols[f"ionized_{name}_cm3"] = curves.ionized_density[i]
        cols[f"ionized_fraction_{name}"] = curves.ionized_fraction[i]
        if not np.all(np.isnan(curves.level_energy[i])):
            cols[f"level_{name}_eV"] = curves.level_energy[i]
    cols["extrapolated"] = (t < lo) | (t > hi)
    return {k: np.asarray(v) for k, v in cols.items()}


def residual_columns(result: FitResult) -> dict[str, np.ndarray]:
    """The measured points of a fit beside the model, as plain named columns.

    Parameters
    ----------
    result
        The fit.

    Returns
    -------
    dict
        ``temperature_K``, ``density_cm3``, ``density_err_cm3`` (NaN without uncertainties),
        ``model_density_cm3``; ``residual_percent`` (measured/fitted - 1) and
        ``residual_err_percent``; ``ln_residual`` (ln measured/fitted, what the fit
        minimizes); ``used``; ``left_out``: ``""``, ``"severe"`` or ``"mixed"`` (opposite
        Hall sign).
    """
    d = result.data
    model = d.model_density
    err = np.full(model.shape, np.nan) if d.density_err is None else d.density_err
    reason = np.where(d.used, "", np.where(d.mixed, "mixed", "severe"))
    with np.errstate(divide="ignore", invalid="ignore"):
        return {"temperature_K": d.temperature, "density_cm3": d.density,
                "density_err_cm3": np.asarray(err, dtype=float), "model_density_cm3": model,
                "residual_percent": 100.0 * (d.density / model - 1.0),
                "residual_err_percent": 100.0 * np.asarray(err, dtype=float) / model,
                "ln_residual": np.log(d.density / model), "used": np.asarray(d.used),
                "left_out": reason}
