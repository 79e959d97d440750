"""A supplier's trend over many lots: lots in date order, in groups, a box per group.

Above :data:`MAX_LOTS_DRAWN` lots a trend with one slot per lot would grow without bound
(42,000 pixels wide at 10,000 lots), so the lots, in date order, are put in at most
:data:`~freezeout.reporting.lot_summary_figure.MAX_GROUPS` groups of consecutive lots. For each
group and claimed quantity: a box from the lower to the upper quartile of the lots' mean
measured/claimed with its median, whiskers from the lowest wafer's ratio to the highest, and
the specification window (its widest extent over the group) as a band behind. Under each
group: its first and last lot date, its number of lots and how many were rejected. The figure
has one size whatever the count (project choice, no source).
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from freezeout.numbers import finite_or_none  # noqa: E402
from freezeout.reporting.figure_layout import ratio_limits  # noqa: E402
from freezeout.reporting.figures import INK, STYLE, new_axes  # noqa: E402
from freezeout.reporting.lot_summary_figure import SUMMARY_SIZE, wafer_groups  # noqa: E402

#: Up to this many lots a trend has one slot per lot; above, groups of lots.
MAX_LOTS_DRAWN = 14


def trend_summary_axes(lots: list[tuple[str, str]], series: dict, keys: list, colours,
                       label_of, verdict_of: dict, supplier: str, ax=None):
    """Draw the grouped trend (called by ``trend_axes`` for more than MAX_LOTS_DRAWN lots).

    Parameters
    ----------
    lots
        (date text, lot) in date order.
    series
        Series key -> its trend points.
    keys
        The series keys in drawing order.
    colours
        One colour per series (cycled).
    label_of
        Series key -> its legend text.
    verdict_of
        Lot -> the lot's verdict.
    supplier
        For the title.
    ax
        Axes to draw on; a new figure when None.
    """
    groups = wafer_groups(len(lots))
    group_of = {lot: gi for gi, g in enumerate(groups) for i in g for lot in [lots[i][1]]}
    width = 0.7 / max(len(keys), 1)
    with plt.rc_context(STYLE):
        ax = new_axes(ax, SUMMARY_SIZE)
        values = [1.0]
        for j, key in enumerate(keys):
            col = colours[j % len(colours)]
            offset = (j - (len(keys) - 1) / 2) * width
            per: dict[int, list] = {}
            for p in series[key]:
                per.setdefault(group_of[str(p.lot)], []).append(p)
            first_band = True
            for gi, pts in sorted(per.items()):
                means = np.array([float(p.mean_ratio) for p in pts])
                lo = min(float(p.min_ratio) for p in pts)
                hi = max(float(p.max_ratio) for p in pts)
                values += [lo, hi]
                smins = [v for p in pts if (v := finite_or_none(p.spec_min_ratio)) is not None]
                smaxs = [v for p in pts if (v := finite_or_none(p.spec_max_ratio)) is not None]
                if smins or smaxs:
                    values += [*smins[:1], *smaxs[:1]]
                    ax.fill_between([gi + offset - width / 2, gi + offset + width / 2],
                                    min(smins) if smins else 0.0,
                                    max(smaxs) if smaxs else max(hi, 1.0) * 1.5,
                                    color=col, alpha=0.13, lw=0, zorder=1,
                                    label=f"specification window, {label_of(key)}"
                                    if first_band else None)
                    first_band = False
                x = gi + offset
                q1, med, q3 = np.percentile(means, [25, 50, 75])
                ax.vlines(x, lo, hi, color=col, lw=1.0, zorder=3)
                ax.hlines([lo, hi], x - width * 0.2, x + width * 0.2, color=col, lw=1.0,
                          zorder=3)
                ax.add_patch(matplotlib.patches.Rectangle(
                    (x - width * 0.35, q1), width * 0.7, max(q3 - q1, 0.0), facecolor="white",
                    edgecolor=col, lw=1.3, zorder=3))
                ax.hlines(med, x - width * 0.35, x + width * 0.35, color=col, lw=2.0,
                          zorder=4, label=None if gi != min(per) else
                          f"{label_of(key)}: lots' mean ratio, quartiles and median; "
                          "whiskers: wafer min–max")
        ax.axhline(1.0, color=INK, lw=1.0, ls="--", zorder=2, label="measured = claimed")
        ratio_limits(ax, values)
        ticks = []
        for g in groups:
            rejected = sum(verdict_of.get(lots[i][1]) == "reject" for i in g)
            ticks.append(f"{lots[g.start][0]}\n–{lots[g.stop - 1][0]}\n{len(g)} lots\n"
                         f"{rejected} rejected")
        ax.set_xticks(range(len(groups)), ticks, fontsize=7)
        ax.set_xlim(-0.6, len(groups) - 0.4)
        ax.grid(axis="x", visible=False)
        ax.set_xlabel(f"{len(lots)} lots in date order, in {len(groups)} groups "
                      "(first–last lot date, lots, lots rejected)")
        ax.set_ylabel("measured / claimed [1]")
        ax.set_title(f"{supplier}: measured over claimed, lots in groups", loc="left")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.34), ncols=3,
                  borderaxespad=0.0)
        return ax
