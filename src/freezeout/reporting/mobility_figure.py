"""The mobility of a joint density and mobility fit: measured and model Hall mobility, r_H."""

from __future__ import annotations

import html

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS  # noqa: E402

#: Legend names of the mechanisms' own mobilities.
MECHANISM_LABELS = {"lattice": "lattice alone",
                    "brooks-herring": "ionized impurities alone (Brooks-Herring)",
                    "conwell-weisskopf": "ionized impurities alone (Conwell-Weisskopf)",
                    "neutral": "neutral impurities alone (Erginsoy)"}


def hall_factor_label(result: FitResult) -> str:
    """What the Hall factor of a joint fit was, in words."""
    mob = result.mobility
    if mob.hall_factor_source == "scattering":
        return "r_H(T) from the scattering, applied to n and μ_H"
    return f"constant r = {mob.run_hall_factor:g} (the run's), applied to n and μ_H"


def mobility_figure(result: FitResult) -> Figure | None:
    """Hall mobility against T on log-log axes, and the Hall factor below it.

    Measured points, the joint fit's model mu_H and each mechanism's own (drift) mobility
    above, the legend beside the axes; the Hall factor the model applied below (r_H(T) from
    the scattering, or the run's constant). None for a density-only fit.
    """
    mob = result.mobility
    if mob is None or result.data.mobility is None:
        return None
    fig = Figure(figsize=(9.2, 5.8), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1.2))
    t = result.data.temperature
    mu = result.data.mobility
    ok = np.isfinite(mu) & (mu > 0)
    err = None if result.data.mobility_err is None else result.data.mobility_err[ok]
    if mob.curve_temperature is not None:
        tc, mu_c, r_c = mob.curve_temperature, mob.curve_hall_mobility, mob.curve_hall_factor
    else:
        order = np.argsort(mob.temperature)
        tc, mu_c = mob.temperature[order], mob.model_hall_mobility[order]
        r_c = mob.model_hall_factor[order]
    shown = [mu[ok], mu_c]
    for i, (name, values) in enumerate(mob.mechanism_mobility.items()):
        values = np.asarray(values, dtype=float)
        if not np.any(np.isfinite(values)):
            continue
        top.plot(tc, values, "--", lw=1.3, color=LEVEL_COLOURS[(i + 1) % len(LEVEL_COLOURS)],
                 label=MECHANISM_LABELS.get(name, name))
    top.plot(tc, mu_c, "-", lw=2.0, color=INK, label="model μ_H (" + " + ".join(mob.models)
             + ")", zorder=3)
    top.errorbar(t[ok], mu[ok], yerr=err, fmt="o", ms=4, color=INK, mfc="white",
                 elinewidth=0.8, label="measured μ_H", zorder=4)
    top.set_xscale("log")
    top.set_yscale("log")
    finite = np.concatenate([np.asarray(v, dtype=float).ravel() for v in shown])
    finite = finite[np.isfinite(finite) & (finite > 0)]
    top.set_ylim(finite.min() / 2.0, finite.max() * 6.0)  # mechanisms beyond: off the axes
    top.set_xlim(tc.min() / 1.03, tc.max() * 1.03)
    _plain_temperature_ticks(bottom, tc.min() / 1.03, tc.max() * 1.03)
    top.set_ylabel("mobility [cm²/(V s)]")
    top.set_title("Hall mobility: measured, model, and each mechanism's own drift mobility",
                  fontsize=9, loc="left")
    top.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=8)
    bottom.plot(tc, r_c, "-", lw=1.4, color=LEVEL_COLOURS[1], label=hall_factor_label(result))
    if mob.hall_factor_source != "scattering":
        bottom.set_ylim(mob.run_hall_factor - 0.1, mob.run_hall_factor + 0.1)
    bottom.set_ylabel("Hall factor")
    bottom.set_xlabel("temperature [K]")
    bottom.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=8)
    for ax in (top, bottom):
        ax.grid(True, which="major", alpha=0.3)
    return fig


#: Temperatures that may label the log axis. [K]
_TICKS = (1, 2, 3, 5, 7, 10, 15, 20, 30, 40, 60, 100, 150, 200, 300, 500, 700, 1000, 1500,
          2000, 3000, 5000)


def _plain_temperature_ticks(ax, lo: float, hi: float) -> None:
    """Plain-number ticks (60, 100, 200 ...) on a log temperature axis, no minor labels."""
    ticks = [x for x in _TICKS if lo <= x <= hi]
    if len(ticks) < 3:
        return
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.xaxis.set_major_formatter(FixedFormatter([f"{x:g}" for x in ticks]))
    ax.xaxis.set_minor_formatter(NullFormatter())


def _interval(est) -> str:
    lo, hi = est.ci95
    if lo is None or hi is None or not (np.isfinite(lo) and np.isfinite(hi)):
        return "not determined"
    return f"{lo:.3g} … {hi:.3g} cm<sup>−3</sup>"


def narrowing_html(result: FitResult) -> str:
    """How much the mobility narrowed the compensating concentration's interval.

    Compared with the density-only fit; empty for a density-only fit.
    """
    mob = result.mobility
    if mob is None or mob.density_only_compensation is None or not result.levels:
        return ""
    joint = result.levels[-1].concentration
    before = mob.density_only_compensation
    ratio = ""
    lo0, hi0 = before.ci95
    lo1, hi1 = joint.ci95
    if all(x is not None and np.isfinite(x) and x > 0 for x in (lo0, hi0, lo1, hi1)):
        ratio = (f", {np.log10(hi0 / lo0) / max(np.log10(hi1 / lo1), 1e-12):.3g}× narrower in "
                 "decades")
    name = html.escape(f"N_{result.levels[-1].name}")
    return (f"<p>The Hall mobility ({html.escape(' + '.join(mob.models))}, μ_H from "
            f"{html.escape(mob.measured_from)}) narrowed the 95 % interval of {name} from "
            f"{_interval(before)} (density only) to {_interval(joint)} (joint fit){ratio}.</p>")


def carrier_density_view(result: FitResult) -> FitResult:
    """The fit with its density data and model as carrier densities n, for the density figure.

    With the scattering Hall factor the density column is r_run / (q |R_H|) and the model of
    it r_run n / r_H(T); the density figure draws the model n(T) and its contributions, so the
    measured points (and their model values and errors) are multiplied by r_H(T) / r_run:
    n = r_H(T) / (q |R_H|) with the fitted r_H(T) at each point. Unchanged otherwise.
    """
    from dataclasses import replace

    mob = result.mobility
    if mob is None or mob.hall_factor_source != "scattering" or mob.point_hall_factor is None:
        return result
    k = np.asarray(mob.point_hall_factor, dtype=float) / mob.run_hall_factor
    d = result.data
    return replace(result, data=replace(
        d, density=d.density * k, model_density=d.model_density * k,
        density_err=None if d.density_err is None else d.density_err * k))
