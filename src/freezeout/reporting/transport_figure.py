"""The transport figure: resistivity and Hall mobility against temperature.

The Hall mobility is the run's own column, or |R_H|/rho where the run has the Hall coefficient
and the resistivity but no mobility (a two-carrier run). The legend says which points the
fit used: for a density fit, the points of the run's carrier type that passed the quality
checks; for a two-carrier fit, every point, those whose Hall sign is the other carrier's
marked apart (they are where the minority carriers dominate R_H).
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import (  # noqa: E402
    FLAG,
    INK,
    LEVEL_COLOURS,
    STYLE,
    log_temperature_xaxis,
)

CAPTION = ("Resistivity and Hall mobility versus temperature (the Hall mobility as |R_H|/ρ "
           "where the run gives no mobility column); the legend says which points the fit "
           "used.")


def _finite_or_nan(values) -> np.ndarray:
    """Float array with NaN for every non-finite value."""
    a = np.asarray(values, dtype=float)
    return np.where(np.isfinite(a), a, np.nan)


def _panels(result: FitResult) -> list[tuple[np.ndarray, np.ndarray | None, str]]:
    """(values, errors or None, axis label) of each quantity the run has."""
    d = result.data
    out = []
    if d.resistivity is not None:
        out.append((_finite_or_nan(d.resistivity), d.resistivity_err, "resistivity [Ω cm]"))
    if d.mobility is not None:
        out.append((_finite_or_nan(d.mobility), d.mobility_err, "Hall mobility [cm²/(V s)]"))
    elif d.resistivity is not None and d.hall_coefficient is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            mu = np.abs(_finite_or_nan(d.hall_coefficient)) / _finite_or_nan(d.resistivity)
        out.append((mu, None, "Hall mobility |R_H|/ρ [cm²/(V s)]"))
    return out


def _groups(result: FitResult) -> list[tuple[np.ndarray, dict, str]]:
    """(mask, marker style, legend label) of the point groups to draw."""
    d = result.data
    used = np.asarray(d.used, dtype=bool)
    if result.two_carrier is not None:
        other = np.asarray(d.mixed, dtype=bool)
        own, rival = ("electrons", "holes") if d.carrier == "n" else ("holes", "electrons")
        return [(~other, dict(fmt="o", color=INK, mfc="white"), f"Hall sign of {own}"),
                (other, dict(fmt="s", color=LEVEL_COLOURS[3], mfc=LEVEL_COLOURS[3]),
                 f"Hall sign of {rival}: used by the two-carrier fit, not the density fit")]
    return [(used, dict(fmt="o", color=INK, mfc="white"), "used by the fit"),
            (~used, dict(fmt="X", color=FLAG, mfc=FLAG), "left out of the fit")]


def transport_figure(result: FitResult) -> Figure | None:
    """Resistivity and Hall mobility versus temperature, or None if the run has neither."""
    panels = _panels(result)
    if not panels:
        return None
    t = np.asarray(result.data.temperature, dtype=float)
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(7.6 if len(panels) == 2 else 4.4, 3.6), layout="constrained")
        axes = np.atleast_1d(fig.subplots(1, len(panels)))
        groups = _groups(result)
        for ax, (v, errs, label) in zip(axes, panels, strict=True):
            e = None if errs is None else _finite_or_nan(errs)
            ok = np.isfinite(v) & (v > 0)
            for mask, style, name in groups:
                sel = ok & mask
                if sel.any():
                    ax.errorbar(t[sel], v[sel], yerr=None if e is None else e[sel], ms=4,
                                elinewidth=0.8, ls="none", label=name, **style)
            ax.set_yscale("log")
            log_temperature_xaxis(ax, t[ok] if ok.any() else t)
            ax.set_xlabel("temperature [K]")
            ax.set_ylabel(label)
        shown = [name for mask, _, name in groups if (mask & np.isfinite(panels[0][0])).any()]
        if len(shown) > 1:
            fig.legend(loc="outside lower center", ncols=len(shown), frameon=False,
                       fontsize=8.5, handles=axes[0].get_legend_handles_labels()[0])
    return fig
