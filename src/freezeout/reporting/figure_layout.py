"""Placement helpers for figures: model ranges, visible lines, legends and line names."""

from __future__ import annotations

import numpy as np

#: Drop of a legend under the axes: clears the tick labels and the x-axis label. [pt]
BELOW_PT = 40.0


def split_at(t, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Masks of the grid ``t`` inside [lo, hi] and outside it.

    The outside mask also takes the first inside point at each join, so the two parts of a
    curve drawn with them meet.
    """
    t = np.asarray(t, dtype=float)
    inside = (t >= lo) & (t <= hi)
    out = ~inside
    joined = out.copy()
    joined[:-1] |= out[1:]
    joined[1:] |= out[:-1]
    return inside, joined


def model_line(ax, x, y, masks, label, extrapolated=None, **style) -> list:
    """Draw a model curve full strength on ``masks[0]``, and marked on ``masks[1]``.

    The marked part is dashed and named ``extrapolated`` when that is given, else faded and
    unnamed. Returns both lines, the full-strength one first.
    """
    inside, outside = masks
    y = np.asarray(y, dtype=float)
    main = ax.plot(x, np.where(inside, y, np.nan), label=label, **style)[0]
    if extrapolated is None:
        rest = dict(style, alpha=0.35, label="_nolegend_")
    else:
        rest = dict(style, ls="--", alpha=0.8, label=extrapolated)
    return [main, ax.plot(x, np.where(outside, y, np.nan), **rest)[0]]


def shade_outside(ax, t, lo: float, hi: float, colour: str, label="_nolegend_") -> None:
    """Shade the x range of the grid ``t`` below ``lo`` and above ``hi``.

    Both spans get the gid ``"extrapolated"``; the first one is named ``label``.
    """
    for a, b, name in ((t[0], lo, label), (hi, t[-1], "_nolegend_")):
        ax.axvspan(a, b, color=colour, alpha=0.18, lw=0, gid="extrapolated", label=name)


def visible_extent(ax, lines) -> float:
    """Diagonal of the box around the part of ``lines`` inside the view limits. [1]

    In axes fractions, 0 when nothing shows (1 for a single point); call it after the
    limits and scales are set. Each line goes through its own transform (an axhline is
    in axes units along x).
    """
    to_axes = ax.transAxes.inverted()
    parts = [np.empty((0, 2))]
    for ln in lines:
        xy = np.column_stack([np.asarray(ln.get_xdata(), float),
                              np.asarray(ln.get_ydata(), float)])
        with np.errstate(all="ignore"):
            a = to_axes.transform(ln.get_transform().transform(xy))
        eps = 1e-9  # a marker set on the edge itself counts as inside
        parts.append(a[np.all(np.isfinite(a) & (a >= -eps) & (a <= 1.0 + eps), axis=1)])
    pts = np.concatenate(parts)
    return float(np.hypot(*np.ptp(pts, axis=0))) if len(pts) > 1 else float(len(pts))


def is_visible(ax, lines) -> bool:
    """True if ``lines`` show inside the axes: one point of markers, 2 % of a curve."""
    markers = all(ln.get_linestyle() in ("None", "none", "") for ln in lines)
    return visible_extent(ax, lines) > (0.0 if markers else 0.02)


def drop_unseen(ax, groups) -> None:
    """Remove each group of lines (one legend entry) that shows nothing inside the axes.

    When only a later line of a group shows, the name moves to it from the first.
    """
    for group in groups:
        if not is_visible(ax, group):
            for ln in group:
                ln.remove()
        elif not is_visible(ax, group[:1]):
            group[1].set_label(group[0].get_label())
            group[0].set_label("_nolegend_")


def legend_below(ax, ncols=2, first=None):
    """Legend in rows under the x-axis label, off the data; None when nothing is named.

    The entry named ``first``, if any, leads (error bars otherwise come last).
    """
    from matplotlib.transforms import offset_copy

    handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return None
    order = sorted(range(len(labels)), key=lambda i: labels[i] != first)
    anchor = offset_copy(ax.transAxes, fig=ax.figure, y=-BELOW_PT, units="points")
    return ax.legend([handles[i] for i in order], [labels[i] for i in order],
                     loc="upper center", bbox_to_anchor=(0.5, 0.0), bbox_transform=anchor,
                     ncols=ncols)


def label_line_ends(ax, items, gap=0.07) -> None:
    """Name lines just right of the axes, at the height of their right ends.

    ``items`` holds (y at the right end, text, colour). Names are nudged at least ``gap``
    (axes fraction) apart; a hairline joins a name that had to move to its line. Call it
    after the limits are set.
    """
    lo, hi = ax.get_ylim()
    x_end = ax.get_xlim()[1]
    want = [(y - lo) / (hi - lo) for y, _, _ in items]
    order = np.argsort(want, kind="stable")
    placed = np.array(want, dtype=float)
    floor = -np.inf
    for k in order:  # push up from the bottom, then pull the top back inside
        placed[k] = floor = max(placed[k], floor + gap)
    ceiling = np.inf
    for k in order[::-1]:
        placed[k] = ceiling = min(placed[k], ceiling - gap, 1.0)
    for (y, text, col), p, w in zip(items, placed, want, strict=True):
        arrow = (dict(arrowstyle="-", lw=0.5, color=col, shrinkA=1, shrinkB=0)
                 if abs(p - w) > 0.01 else None)
        ax.annotate(text, (x_end, y), xytext=(1.015, p), textcoords="axes fraction",
                    va="center", fontsize=9, color=col, annotation_clip=False,
                    arrowprops=arrow)


def ratio_limits(ax, values) -> None:
    """Y range of a measured/claimed ratio axis: log when the values span more than 10x.

    A linear range is padded by 12 % of the span (0.1 for a single value) and never goes
    below 0; a log range extends 1.5x beyond both ends (project choice, no source).
    """
    vmin, vmax = min(values), max(values)
    if vmin > 0 and vmax / vmin > 10.0:
        ax.set_yscale("log")
        ax.set_ylim(vmin / 1.5, vmax * 1.5)
    else:
        pad = 0.12 * (vmax - vmin) if vmax > vmin else 0.1
        ax.set_ylim(max(vmin - pad, 0.0), vmax + pad)
