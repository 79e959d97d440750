"""The run-plan figure: the model n(T), the two plans' points, the target sensitivities.

The model n(T) with the proposed and the even plan's temperatures on top, and the
sensitivities d ln n / d theta of the target parameters below, against 1000/T.

A plan's points are where the sensitivities are large and unlike each other; the figure
shows both so a reader can see why the plan put its points where it did. Several proposed
points often fall close together (the criterion wants that temperature measured more than
once); the strip between the panels shows each point as a tick, a cluster as a count.
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.reporting.figures import INK, LEVEL_COLOURS, MUTED, STYLE  # noqa: E402

#: Colour of the proposed plan's points.
PROPOSED = "#c0392b"

_NICE_T = (2, 3, 5, 10, 15, 20, 30, 40, 50, 75, 100, 150, 200, 300, 400, 500, 700, 1000)


def _temperature_axis(ax, lo: float, hi: float) -> None:
    """Top axis in kelvin over a 1000/T bottom axis, round ticks within [lo, hi] of 1000/T."""
    def fwd(x):
        with np.errstate(divide="ignore"):
            return 1000.0 / np.asarray(x, dtype=float)

    sec = ax.secondary_xaxis("top", functions=(fwd, fwd))
    ticks, last = [], None
    for t in sorted(_NICE_T, reverse=True):
        x = 1000.0 / t
        if lo * 0.999 <= x <= hi * 1.001 and (last is None or x - last >= 0.05 * (hi - lo)):
            ticks.append(t)
            last = x
    sec.set_xticks(ticks, [f"{t:g}" for t in ticks])
    sec.set_xlabel("temperature [K]")


def _clusters(x: np.ndarray, width: float) -> list[tuple[float, int]]:
    """Points within ``width`` of their neighbour grouped: (mean position, count)."""
    xs = np.sort(np.asarray(x, dtype=float))
    groups: list[list[float]] = []
    for v in xs:
        if groups and v - groups[-1][-1] <= width:
            groups[-1].append(v)
        else:
            groups.append([v])
    return [(float(np.mean(g)), len(g)) for g in groups]


def _sensitivity_label(name: str) -> str:
    if name.startswith("N_"):
        return f"{name}: d ln n / d ln {name}"
    return f"{name}: d ln n / d{name} per meV"


def plan_figure(temperature, density, proposed, proposed_density, even, even_density,
                sensitivity: dict, *, title: str = "", carrier: str = "n") -> Figure:
    """Draw the plan.

    Parameters
    ----------
    temperature, density
        The model on the candidate grid. [K], [cm^-3]
    proposed, proposed_density
        The proposed temperatures and the model density there. [K], [cm^-3]
    even, even_density
        The even plan's temperatures and density. [K], [cm^-3]
    sensitivity
        Target name -> d ln n / d theta on the grid, public units (per ln N, per meV).
    title
        Figure title.
    carrier
        ``"n"`` or ``"p"`` (the density's symbol).
    """
    x = 1000.0 / np.asarray(temperature, dtype=float)
    xp = 1000.0 / np.asarray(proposed, dtype=float)
    xe = 1000.0 / np.asarray(even, dtype=float)
    with plt.rc_context(STYLE):
        fig = Figure(figsize=(8.6, 8.2), layout="constrained")
        top, strip, bottom = fig.subplots(3, 1, sharex=True,
                                          gridspec_kw={"height_ratios": [3.0, 0.75, 2.6]})
        top.semilogy(x, density, "-", color=INK, lw=1.8, label=f"model {carrier}(T)")
        top.plot(xe, even_density, "s", ms=7, mfc="none", mec=MUTED, mew=1.4,
                 label=f"even in 1000/T ({len(xe)} points)")
        top.plot(xp, proposed_density, "o", ms=5.5, color=PROPOSED, zorder=5,
                 label=f"proposed ({len(xp)} points)")
        top.set_ylabel(f"{carrier} [cm⁻³]")
        top.legend(loc="upper right")
        if title:
            top.set_title(title)
        lo, hi = float(x.min()), float(x.max())
        pad = 0.03 * (hi - lo)
        top.set_xlim(lo - pad, hi + pad)
        _temperature_axis(top, lo, hi)

        width = 0.012 * (hi - lo)
        for row, (pts, colour) in enumerate(((xp, PROPOSED), (xe, MUTED))):
            yrow = 1.0 - row
            strip.vlines(pts, yrow - 0.3, yrow + 0.3, color=colour, lw=1.6)
            for pos, count in _clusters(pts, width):
                if count > 1:
                    strip.annotate(f"×{count}", (pos, yrow + 0.3), xytext=(0, 1),
                                   textcoords="offset points", ha="center", va="bottom",
                                   fontsize=8, color=colour)
        strip.set_ylim(-0.6, 1.9)
        strip.set_yticks([1.0, 0.0], ["proposed", "even"])
        strip.grid(False)
        strip.tick_params(axis="x", labelbottom=False)

        for i, (name, s) in enumerate(sensitivity.items()):
            bottom.plot(x, s, "-", lw=1.8, color=LEVEL_COLOURS[i % len(LEVEL_COLOURS)],
                        label=_sensitivity_label(name))
        for v in xp:
            bottom.axvline(v, color=PROPOSED, lw=0.6, alpha=0.35)
        bottom.axhline(0.0, color=MUTED, lw=0.8)
        bottom.set_ylabel("sensitivity of ln n")
        bottom.set_xlabel("1000 / T [1/K]")
        bottom.legend(loc="best")
        bottom.set_title("sensitivities of the target parameters (proposed points as lines)",
                         fontsize=10)
    return fig
