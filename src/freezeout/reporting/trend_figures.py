"""The trend figure of a supplier's history: measured over claimed value, lot by lot.

Drawn from the trend points of the history store (:meth:`freezeout.storage.Store.trend`);
:func:`write_trend_png` writes it as a PNG, so callers need no plotting code of their own.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from freezeout.io.atomic import atomic_write_bytes  # noqa: E402
from freezeout.numbers import finite_or_none  # noqa: E402
from freezeout.records.history import TrendPoint  # noqa: E402
from freezeout.reporting.figure_layout import ratio_limits  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, STYLE, new_axes, png_bytes  # noqa: E402

# one accent per trend series (quantity and temperature)
_SERIES_COLOURS = (LEVEL_COLOURS[3], LEVEL_COLOURS[1], LEVEL_COLOURS[0], LEVEL_COLOURS[2],
                   LEVEL_COLOURS[4], LEVEL_COLOURS[5])


def _date_text(p: TrendPoint) -> str:
    d = p.lot_date
    return d.isoformat() if isinstance(d, _dt.date) else str(d)


def _series_key(p: TrendPoint) -> tuple[str, float | None]:
    return (str(p.quantity), finite_or_none(p.temperature_K))


def _series_label(key: tuple[str, float | None], unit: str | None) -> str:
    quantity, temp = key
    text = quantity.replace("_", " ")
    if quantity == "resistivity" and temp is not None:
        text += f" at {temp:g} K"
    return text


def trend_axes(points: Sequence[TrendPoint], supplier: str, ax=None):
    """Measured over claimed value per lot, one series per claimed quantity.

    For each lot (in date order along x) and each claimed quantity, the marker is the mean of
    measured/claimed over the lot's wafers and the bar spans their minimum to maximum; the
    claimed value is the nominal, else the middle of the window, else its one limit. The
    specification window over the claimed value is a band behind each lot's points, and the
    ratio 1 a line. More than
    :data:`~freezeout.reporting.trend_summary_figure.MAX_LOTS_DRAWN` lots are drawn in
    groups of consecutive lots, a box each, at one figure size whatever the count.

    Parameters
    ----------
    points
        Trend points (:class:`freezeout.storage.TrendPoint`, or anything with its
        attributes).
    supplier
        For the title.
    ax
        Axes to draw on; a new figure when None.

    Returns
    -------
    matplotlib.axes.Axes
        The axes drawn on.

    Raises
    ------
    ValueError
        If there are no points.
    """
    if not points:
        raise ValueError(f"no trend points for supplier {supplier!r}")
    lots = list(dict.fromkeys(sorted((_date_text(p), str(p.lot)) for p in points)))
    xpos = {lot: i for i, (_, lot) in enumerate(lots)}
    series: dict[tuple[str, float | None], list[TrendPoint]] = {}
    for p in points:
        series.setdefault(_series_key(p), []).append(p)
    keys = sorted(series, key=lambda k: (k[0], k[1] or 0.0))
    from freezeout.reporting.trend_summary_figure import MAX_LOTS_DRAWN, trend_summary_axes

    if len(lots) > MAX_LOTS_DRAWN:  # many lots: groups of lots, a figure of one size
        return trend_summary_axes(lots, series, keys, _SERIES_COLOURS,
                                  lambda k: _series_label(k, None),
                                  {str(p.lot): str(p.lot_verdict) for p in points},
                                  supplier, ax=ax)
    width = 0.7 / max(len(keys), 1)
    n = len(lots)
    size = (max(7.6, 3.8 + 0.8 * n), 5.0)
    with plt.rc_context(STYLE):
        ax = new_axes(ax, size)
        values = [1.0]
        for j, key in enumerate(keys):
            col = _SERIES_COLOURS[j % len(_SERIES_COLOURS)]
            offset = (j - (len(keys) - 1) / 2) * width
            pts = sorted(series[key], key=lambda p: xpos[str(p.lot)])
            xs = np.array([xpos[str(p.lot)] + offset for p in pts])
            mean = np.array([float(p.mean_ratio) for p in pts])
            lo = np.array([float(p.min_ratio) for p in pts])
            hi = np.array([float(p.max_ratio) for p in pts])
            values += [*lo, *hi]
            first_band = True
            for xc, p in zip(xs, pts, strict=True):
                smin, smax = finite_or_none(p.spec_min_ratio), finite_or_none(p.spec_max_ratio)
                if smin is None and smax is None:
                    continue
                values += [v for v in (smin, smax) if v is not None]
                ax.fill_between([xc - width / 2, xc + width / 2],
                                smin if smin is not None else 0.0,
                                smax if smax is not None else max(hi.max(), 1.0) * 1.5,
                                color=col, alpha=0.13, lw=0, zorder=1,
                                label=("specification window, "
                                       f"{_series_label(key, None)}") if first_band else None)
                first_band = False
            ax.errorbar(xs, mean, yerr=[mean - lo, hi - mean], fmt="o", ms=6, color=col,
                        mfc="white", mew=1.5, elinewidth=1.2, capsize=4, zorder=3,
                        label=f"{_series_label(key, None)}: mean, min–max over wafers")
        ax.axhline(1.0, color=INK, lw=1.0, ls="--", zorder=2, label="measured = claimed")
        ratio_limits(ax, values)
        verdict_of = {str(p.lot): str(p.lot_verdict) for p in points}
        ax.set_xticks(range(n), [f"{lot}\n{date}\n{verdict_of.get(lot, '')}"
                                 for date, lot in lots], rotation=0 if n <= 8 else 90)
        ax.set_xlim(-0.6, n - 0.4)
        ax.grid(axis="x", visible=False)
        ax.set_xlabel("lot (date, lot verdict)")
        ax.set_ylabel("measured / claimed [1]")
        ax.set_title(f"{supplier}: measured over claimed, per lot", loc="left")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.3), ncols=2, borderaxespad=0.0)
        return ax


def write_trend_png(points: Sequence[TrendPoint], supplier: str,
                    path: str | Path) -> Path:
    """Draw a supplier's trend (:func:`trend_axes`) and write it as a PNG, atomically.

    Parameters
    ----------
    points
        The supplier's trend points, at least one.
    supplier
        For the title.
    path
        The PNG file (its folder is created if needed).

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    ValueError
        If there are no points.
    """
    ax = trend_axes(points, supplier)
    try:
        return atomic_write_bytes(Path(path), png_bytes(ax))
    finally:
        ax.figure.clear()
