"""Figures of a lot qualification and of a supplier's history.

Each function draws on a given or new Axes and returns it. The inputs are the plain JSON
documents (the lot JSON of ``freezeout qualify`` and the trend points of the history store),
so the figures can be redrawn from stored records.

Verdicts are told apart by marker shape as well as colour, and written as text under each
wafer, so the figures read in grey scale too.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.reporting.figures import INK, LEVEL_COLOURS, MUTED, STYLE  # noqa: E402

#: How each verdict is drawn: colour, marker, and whether the marker is filled.
VERDICT_STYLE = {
    "accept": {"colour": LEVEL_COLOURS[3], "marker": "o", "filled": True},
    "indeterminate": {"colour": LEVEL_COLOURS[2], "marker": "D", "filled": False},
    "reject": {"colour": INK, "marker": "X", "filled": True},
}

_QUANTITY_LABEL = {
    "net_doping": "net doping |N$_D$ − N$_A$|",
    "resistivity": "resistivity ρ",
}
_UNIT_LABEL = {"cm^-3": "cm$^{-3}$", "ohm cm": "Ω cm"}

# one accent per trend series (quantity and temperature)
_SERIES_COLOURS = (LEVEL_COLOURS[3], LEVEL_COLOURS[1], LEVEL_COLOURS[0], LEVEL_COLOURS[2],
                   LEVEL_COLOURS[4], LEVEL_COLOURS[5])


def unit_label(unit: str | None) -> str:
    """A canonical unit written for a matplotlib label (``cm^-3`` -> cm⁻³)."""
    if not unit:
        return ""
    return _UNIT_LABEL.get(unit, unit)


def _new_axes(ax, size):
    if ax is not None:
        return ax
    fig = Figure(figsize=size, layout="constrained")
    return fig.add_subplot()


def _claim_entries(lot: Mapping, claim_key: str) -> list[tuple[str, Mapping]]:
    out = []
    for w in lot.get("wafers") or []:
        for c in w.get("claims") or []:
            if c.get("claim") == claim_key:
                out.append((str(w.get("id")), c))
    return out


def _number(x) -> float | None:
    if x is None or isinstance(x, bool | str):
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def claim_axes(lot: Mapping, claim_key: str, ax=None):
    """Measured values of one numeric claim per wafer, against its specification window.

    Each wafer's measured value is drawn with its expanded uncertainty ±U as a thin error bar
    with caps and its standard uncertainty ±u as a thick bar; the marker shows the verdict
    (shape and colour, see :data:`VERDICT_STYLE`), which is also written under the wafer id.
    The specification is the shaded band (to the edge of the plot for a one-sided claim),
    the nominal value a dashed line. Net doping is drawn on a log axis, resistivity on a log
    axis when the values span more than a factor of 10.

    Parameters
    ----------
    lot
        The lot JSON (``LotVerdict.to_dict()`` as written to lot.json).
    claim_key
        Which claim, e.g. ``"claim[2]"``; it must have a specification window.
    ax
        Axes to draw on; a new figure when None.

    Returns
    -------
    matplotlib.axes.Axes
        The axes drawn on.

    Raises
    ------
    ValueError
        If no wafer has that claim, or it is a claim without a window (a type claim).
    """
    entries = _claim_entries(lot, claim_key)
    if not entries:
        raise ValueError(f"no wafer has claim {claim_key!r}")
    first = entries[0][1]
    spec = first.get("spec") or {}
    lower, upper = _number(spec.get("min")), _number(spec.get("max"))
    nominal = _number(spec.get("nominal"))
    if lower is None and upper is None:
        raise ValueError(f"{claim_key} has no specification window (a type claim?)")
    quantity = str(first.get("quantity"))
    unit = first.get("unit") or spec.get("unit")
    n = len(entries)
    ids = [wid for wid, _ in entries]
    y = np.array([_number((c.get("measured") or {}).get("value")) or np.nan
                  for _, c in entries])
    u = np.array([_number((c.get("measured") or {}).get("stderr")) or np.nan
                  for _, c in entries])
    big_u = np.array([_number(c.get("expanded_uncertainty")) or np.nan for _, c in entries])
    verdicts = [str(c.get("verdict")) for _, c in entries]
    k = _number(first.get("coverage_factor")) or 2.0

    ok = np.isfinite(y)
    lo_pts = np.where(np.isfinite(big_u), y - big_u, y)[ok]
    hi_pts = np.where(np.isfinite(big_u), y + big_u, y)[ok]
    span_vals = [v for v in (lower, upper, nominal) if v is not None]
    span_vals += [float(v) for v in y[ok]]
    positive = [v for v in span_vals + [float(v) for v in lo_pts] if v > 0]
    log = quantity == "net_doping" or (
        len(positive) > 1 and max(positive) / min(positive) > 10.0)

    size = (max(7.6, 3.6 + 0.55 * n), 4.6)
    with plt.rc_context(STYLE):
        ax = _new_axes(ax, size)
        # y range: the window and every y +- U, with room around
        top = max([*span_vals, *[float(v) for v in hi_pts]])
        if log:
            bottom = min(positive)
            ax.set_yscale("log")
            y0, y1 = bottom / 1.8, top * 1.8
        else:
            bottom = min([*span_vals, *[float(v) for v in lo_pts]])
            pad = 0.15 * (top - bottom) if top > bottom else 0.1 * abs(top) or 1.0
            y0, y1 = bottom - pad, top + pad
        ax.set_ylim(y0, y1)
        band_lo = lower if lower is not None else y0
        band_hi = upper if upper is not None else y1
        window_words = _window_words(lower, upper, unit)
        ax.axhspan(band_lo, band_hi, color=MUTED, alpha=0.16, lw=0,
                   label=f"specification {window_words}")
        for lim in (lower, upper):
            if lim is not None:
                ax.axhline(lim, color=MUTED, lw=1.0)
        if nominal is not None:
            ax.axhline(nominal, color=MUTED, lw=1.0, ls="--",
                       label=f"nominal {nominal:.4g} {unit_label(unit)}")

        x = np.arange(n, dtype=float)
        for verdict in ("accept", "indeterminate", "reject"):
            sel = np.array([v == verdict for v in verdicts]) & ok
            if not sel.any():
                continue
            st = VERDICT_STYLE[verdict]
            col = st["colour"]
            yy, uu, bu = y[sel], u[sel], big_u[sel]
            # error bars that stay above zero on a log axis
            lower_u = np.where(np.isfinite(bu), np.minimum(bu, yy * 0.999 if log else bu), 0.0)
            upper_u = np.where(np.isfinite(bu), bu, 0.0)
            ax.errorbar(x[sel], yy, yerr=[lower_u, upper_u], fmt="none", ecolor=col,
                        elinewidth=1.0, capsize=5, capthick=1.0, zorder=3)
            lower_s = np.where(np.isfinite(uu), np.minimum(uu, yy * 0.999 if log else uu), 0.0)
            upper_s = np.where(np.isfinite(uu), uu, 0.0)
            ax.errorbar(x[sel], yy, yerr=[lower_s, upper_s], fmt="none", ecolor=col,
                        elinewidth=3.2, alpha=0.55, zorder=3)
            ax.plot(x[sel], yy, st["marker"], ms=8, color=col,
                    mfc=col if st["filled"] else "white", mew=1.6, ls="none", zorder=4,
                    label=verdict)
        # the error-bar key, once
        ax.errorbar([], [], yerr=[], fmt="none", ecolor=INK, elinewidth=1.0, capsize=5,
                    label=f"±U (k = {k:g})")
        ax.errorbar([], [], yerr=[], fmt="none", ecolor=INK, elinewidth=3.2, alpha=0.55,
                    label="±u")
        labels = []
        for wid, v, has in zip(ids, verdicts, ok, strict=True):
            labels.append(f"{wid}\n{v}" + ("" if has else "\n(no value)") if n <= 14
                          else wid)
        ax.set_xticks(x, labels, rotation=0 if n <= 14 else 90)
        ax.set_xlim(-0.6, n - 0.4)
        ax.grid(axis="x", visible=False)
        ax.set_xlabel("wafer")
        ax.set_ylabel(f"{_QUANTITY_LABEL.get(quantity, quantity)} [{unit_label(unit)}]")
        temp = _number(first.get("temperature_K"))
        where = f" at {temp:g} K" if temp is not None and quantity == "resistivity" else ""
        ax.set_title(f"{claim_key}: {quantity.replace('_', ' ')}{where}", loc="left")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.26), ncols=4,
                  borderaxespad=0.0)
        return ax


def _window_words(lower, upper, unit) -> str:
    u = unit_label(unit)
    if lower is not None and upper is not None:
        return f"{lower:.4g} to {upper:.4g} {u}"
    if lower is not None:
        return f"≥ {lower:.4g} {u}"
    return f"≤ {upper:.4g} {u}"


def _series_key(p: Mapping) -> tuple[str, float | None]:
    return (str(p.get("quantity")), _number(p.get("temperature_K")))


def _series_label(key: tuple[str, float | None], unit: str | None) -> str:
    quantity, temp = key
    text = quantity.replace("_", " ")
    if quantity == "resistivity" and temp is not None:
        text += f" at {temp:g} K"
    return text


def trend_axes(points: Sequence[Mapping], supplier: str, ax=None):
    """Measured over claimed value per lot, one series per claimed quantity.

    For each lot (in date order along x) and each claimed quantity, the marker is the mean of
    measured/claimed over the lot's wafers and the bar spans their minimum to maximum; the
    claimed value is the nominal, else the middle of the window, else its one limit. The
    specification window over the claimed value is a band behind each lot's points, and the
    ratio 1 a line.

    Parameters
    ----------
    points
        Trend points (``TrendPoint.to_dict()``: ``lot``, ``lot_date``, ``quantity``,
        ``temperature_K``, ``unit``, ``n_wafers``, ``mean_ratio``, ``min_ratio``,
        ``max_ratio``, ``spec_min_ratio``, ``spec_max_ratio``, ``lot_verdict``).
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
    lots: list[tuple[str, str]] = []
    for p in sorted(points, key=lambda p: (str(p.get("lot_date")), str(p.get("lot")))):
        key = (str(p.get("lot_date")), str(p.get("lot")))
        if key not in lots:
            lots.append(key)
    xpos = {lot: i for i, (_, lot) in enumerate(lots)}
    series: dict[tuple[str, float | None], list[Mapping]] = {}
    for p in points:
        series.setdefault(_series_key(p), []).append(p)
    keys = sorted(series, key=lambda k: (k[0], k[1] or 0.0))
    width = 0.7 / max(len(keys), 1)
    n = len(lots)
    size = (max(7.6, 3.8 + 0.8 * n), 5.0)
    with plt.rc_context(STYLE):
        ax = _new_axes(ax, size)
        values = [1.0]
        for j, key in enumerate(keys):
            col = _SERIES_COLOURS[j % len(_SERIES_COLOURS)]
            offset = (j - (len(keys) - 1) / 2) * width
            pts = sorted(series[key], key=lambda p: xpos[str(p.get("lot"))])
            xs = np.array([xpos[str(p.get("lot"))] + offset for p in pts])
            mean = np.array([float(p["mean_ratio"]) for p in pts])
            lo = np.array([float(p["min_ratio"]) for p in pts])
            hi = np.array([float(p["max_ratio"]) for p in pts])
            values += [*lo, *hi]
            first_band = True
            for xc, p in zip(xs, pts, strict=True):
                smin, smax = _number(p.get("spec_min_ratio")), _number(p.get("spec_max_ratio"))
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
        vmin, vmax = min(values), max(values)
        if vmin > 0 and vmax / vmin > 10.0:
            ax.set_yscale("log")
            ax.set_ylim(vmin / 1.5, vmax * 1.5)
        else:
            pad = 0.12 * (vmax - vmin) if vmax > vmin else 0.1
            ax.set_ylim(max(vmin - pad, 0.0), vmax + pad)
        verdict_of = {str(p.get("lot")): str(p.get("lot_verdict")) for p in points}
        ax.set_xticks(range(n), [f"{lot}\n{date}\n{verdict_of.get(lot, '')}"
                                 for date, lot in lots], rotation=0 if n <= 8 else 90)
        ax.set_xlim(-0.6, n - 0.4)
        ax.grid(axis="x", visible=False)
        ax.set_xlabel("lot (date, lot verdict)")
        ax.set_ylabel("measured / claimed [1]")
        ax.set_title(f"{supplier}: measured over claimed, per lot", loc="left")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.3), ncols=2, borderaxespad=0.0)
        return ax
