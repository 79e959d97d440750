"""The mobility of a joint density and mobility fit: measured and model Hall mobility, r_H."""

from __future__ import annotations

import html

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS  # noqa: E402


def mobility_figure(result: FitResult) -> Figure | None:
    """Hall mobility against T on log-log axes, and the Hall factor below it.

    Measured points and the joint fit's model above; r_H(T) as the model used it below.
    None for a density-only fit.
    """
    mob = result.mobility
    if mob is None or result.data.mobility is None:
        return None
    fig = Figure(figsize=(7.0, 5.6), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1.3))
    t = result.data.temperature
    mu = result.data.mobility
    ok = np.isfinite(mu) & (mu > 0)
    err = None if result.data.mobility_err is None else result.data.mobility_err[ok]
    top.errorbar(t[ok], mu[ok], yerr=err, fmt="o", ms=4, color=INK, mfc="white",
                 label="measured μ_H")
    order = np.argsort(mob.temperature)
    top.plot(mob.temperature[order], mob.model_hall_mobility[order], "-", lw=1.6,
             color=LEVEL_COLOURS[0], label="model μ_H (" + " + ".join(mob.models) + ")")
    top.set_xscale("log")
    top.set_yscale("log")
    top.set_ylabel("Hall mobility [cm$^2$/(V s)]")
    top.legend(loc="lower left", frameon=False, fontsize=8)
    bottom.plot(mob.temperature[order], mob.model_hall_factor[order], "-", lw=1.4,
                color=LEVEL_COLOURS[1], label="r_H from scattering"
                if mob.hall_factor_source == "scattering" else "r_H (the run's constant)")
    bottom.set_ylabel("r_H")
    bottom.set_xlabel("temperature [K]")
    bottom.legend(loc="best", frameon=False, fontsize=8)
    for ax in (top, bottom):
        ax.grid(True, which="major", alpha=0.3)
    return fig


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
