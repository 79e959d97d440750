"""The chart of one claim over a large lot: wafers in groups, a box per group.

Above :data:`MAX_WAFERS_DRAWN` wafers a chart with one slot per wafer would grow without bound
(72,000 pixels wide at 1,000 wafers), so the wafers, in lot order, are put in at most
:data:`MAX_GROUPS` groups of consecutive wafers. Each group is a box from the lower to the
upper quartile of its measured values with the median, whiskers from its minimum to its
maximum, a bar beside it for the group's median value ± its median expanded uncertainty U,
and every wafer not accepted drawn on its own with its verdict's marker. Under each group:
its first and last wafer and its counts of accepted, indeterminate and rejected wafers. The
figure has one size whatever the count (project choice, no source).
"""

from __future__ import annotations

import math

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from freezeout.numbers import finite_or_none  # noqa: E402
from freezeout.records.verdicts import ClaimVerdict  # noqa: E402
from freezeout.reporting.figures import INK, MUTED, STYLE, new_axes  # noqa: E402

#: Up to this many wafers a claim's chart has one slot per wafer; above, groups.
MAX_WAFERS_DRAWN = 20
#: At most this many groups of consecutive wafers in a large lot's chart.
MAX_GROUPS = 20
#: The figure size of a large lot's chart [in] (1,820 x 702 px at the reports' 130 dpi).
SUMMARY_SIZE = (14.0, 5.4)


def wafer_groups(n: int, max_groups: int = MAX_GROUPS) -> list[range]:
    """Consecutive index ranges covering ``0..n-1``: at most ``max_groups``, sizes within 1."""
    k = min(n, max_groups)
    edges = [round(i * n / k) for i in range(k + 1)]
    return [range(a, b) for a, b in zip(edges[:-1], edges[1:], strict=True) if b > a]


#: Characters of a wafer id a group label shows at most (about a group's width at 7 pt for
#: 20 groups; project choice).
ID_CHARS = 10


def id_labels(ids: list[str]):
    """The prefix every id shares, and a function giving an id without it.

    The prefix is cut after its last '-', '_', '.' or ' '; the short id is at most
    :data:`ID_CHARS` long (its end kept, after '…').
    """
    import os

    common = os.path.commonprefix(ids) if len(ids) > 1 else ""
    cut = max(common.rfind(c) for c in "-_. ") + 1
    prefix = common[:cut]

    def short(wid: str) -> str:
        rest = wid[len(prefix):] or wid
        return rest if len(rest) <= ID_CHARS else "…" + rest[-(ID_CHARS - 1):]

    return prefix, short


def summary_axes(entries: list[tuple[str, ClaimVerdict]], *, log: bool, styles: dict,
                 window: tuple[float | None, float | None, float | None],
                 labels: dict, ax=None):
    """Draw the grouped chart of one claim (called by ``claim_axes`` for a large lot).

    Parameters
    ----------
    entries
        (wafer id, claim verdict) in lot order.
    log
        Log y axis.
    styles
        Verdict -> {"colour", "marker", "filled"}.
    window
        (lower, upper, nominal) of the specification, None where absent.
    labels
        ``window`` (the band's legend text), ``nominal`` (the nominal line's), ``k``
        (coverage factor), ``ylabel``, ``title``.
    ax
        Axes to draw on; a new figure when None.
    """
    lower, upper, nominal = window
    n = len(entries)
    y = np.array([finite_or_none(c.measured) or np.nan for _, c in entries])
    big_u = np.array([finite_or_none(c.expanded) or np.nan for _, c in entries])
    verdicts = np.array([str(c.verdict) for _, c in entries])
    ok = np.isfinite(y) & (y > 0 if log else True)
    groups = wafer_groups(n)
    prefix, short = id_labels([wid for wid, _ in entries])
    with plt.rc_context(STYLE):
        ax = new_axes(ax, SUMMARY_SIZE)
        span = [v for v in (lower, upper, nominal) if v is not None] + list(y[ok])
        top = max(span) if span else 1.0
        bottom = min(span) if span else 0.0
        if log:
            positive = [v for v in span if v > 0] or [1.0]
            ax.set_yscale("log")
            y0, y1 = min(positive) / 1.8, max(positive) * 1.8
        else:
            pad = 0.15 * (top - bottom) if top > bottom else 0.1 * abs(top) or 1.0
            y0, y1 = bottom - pad, top + pad
        ax.set_ylim(y0, y1)
        ax.axhspan(lower if lower is not None else y0, upper if upper is not None else y1,
                   color=MUTED, alpha=0.16, lw=0, label=labels["window"])
        for lim in (lower, upper):
            if lim is not None:
                ax.axhline(lim, color=MUTED, lw=1.0)
        if nominal is not None:
            ax.axhline(nominal, color=MUTED, lw=1.0, ls="--", label=labels["nominal"])
        ticks, seen, boxes, places = [], set(), [], []
        for gi, g in enumerate(groups):
            idx = np.array(list(g))
            vals = y[idx][ok[idx]]
            if vals.size:
                boxes.append(vals)
                places.append(gi)
                us = big_u[idx][ok[idx] & np.isfinite(big_u[idx])]
                if us.size:
                    med, mu = float(np.median(vals)), float(np.median(us))
                    lo_bar = min(mu, med * 0.999) if log else mu
                    ax.errorbar([gi + 0.36], [med], yerr=[[lo_bar], [mu]], fmt="none",
                                ecolor=MUTED, elinewidth=1.0, capsize=3, zorder=3,
                                label=None if "U" in seen else
                                f"group median ± median U (k = {labels['k']})")
                    seen.add("U")
            for verdict in ("indeterminate", "reject"):
                sel = idx[(verdicts[idx] == verdict) & ok[idx]]
                if not sel.size:
                    continue
                st = styles[verdict]
                jitter = ((sel - g.start) / max(len(g) - 1, 1) - 0.5) * 0.3
                ax.plot(gi + jitter, y[sel], st["marker"], ms=6, color=st["colour"],
                        mfc=st["colour"] if st["filled"] else "white", mew=1.3, ls="none",
                        zorder=4, label=None if verdict in seen else f"{verdict} wafer")
                seen.add(verdict)
            counts = [int(np.sum(verdicts[idx] == v))
                      for v in ("accept", "indeterminate", "reject")]
            missing = int(np.sum(~ok[idx]))
            tail = f"\n{missing} no value" if missing else ""
            ticks.append(f"{short(entries[g.start][0])}\n–{short(entries[g.stop - 1][0])}\n"
                         f"{counts[0]}·{counts[1]}·{counts[2]}{tail}")
        if boxes:  # one call for every group's box
            ax.boxplot(boxes, positions=places, widths=0.5, whis=(0, 100),
                       showfliers=False, patch_artist=True, manage_ticks=False,
                       boxprops={"facecolor": "white", "edgecolor": INK, "lw": 1.0},
                       medianprops={"color": INK, "lw": 1.6},
                       whiskerprops={"color": INK, "lw": 1.0},
                       capprops={"color": INK, "lw": 1.0}, zorder=3)
        ax.set_xticks(range(len(groups)), ticks, fontsize=7)
        ax.set_xlim(-0.6, len(groups) - 0.4)
        ax.grid(axis="x", visible=False)
        per = math.ceil(n / len(groups))
        after = f", ids after '{prefix}'" if prefix else ""
        ax.set_xlabel(f"{n} wafers in lot order, in {len(groups)} groups of up to {per} "
                      f"(first–last wafer{after}; accepted·indeterminate·rejected)")
        ax.set_ylabel(labels["ylabel"])
        ax.set_title(labels["title"], loc="left")
        ax.plot([], [], "s", ms=8, mfc="white", mec=INK,
                label="box: quartiles and median; whiskers: min–max")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.3), ncols=3, borderaxespad=0.0)
        return ax
