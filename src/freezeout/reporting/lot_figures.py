"""Figures of a lot qualification: one chart per claim with a specification window.

Each function draws on a given or new Axes and returns it. The inputs are the typed verdict
records (:class:`~freezeout.records.verdicts.LotVerdict` and its claims), so a stored record
can be drawn again once read back into them.

Verdicts are told apart by marker shape as well as colour, and written as text under each
wafer, so the figures read in grey scale too. The supplier's trend over lots is drawn by
:mod:`freezeout.reporting.trend_figures`.
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from freezeout.numbers import finite_or_none  # noqa: E402
from freezeout.records.verdicts import ClaimVerdict, LotVerdict  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, MUTED, STYLE, new_axes  # noqa: E402

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
_UNIT_LABEL = {"cm^-3": "cm⁻³", "ohm cm": "Ω cm"}

#: Horizontal offset of a wafer's ±U/±u bars from its marker, in wafer slots (project
#: choice): beside the marker, not under it. [1]
BAR_OFFSET = 0.16


def unit_label(unit: str | None) -> str:
    """A canonical unit written for a matplotlib label (``cm^-3`` -> cm⁻³)."""
    if not unit:
        return ""
    return _UNIT_LABEL.get(unit, unit)


def claim_entries(verdict: LotVerdict, claim_key: str) -> list[tuple[str, ClaimVerdict]]:
    """(wafer id, claim verdict) of every wafer with the claim ``claim_key``, in lot order."""
    return [(str(w.wafer_id), c) for w in verdict.wafers for c in w.claims
            if c.claim_key == claim_key]


def claim_axes(verdict: LotVerdict, claim_key: str, ax=None):
    """Measured values of one numeric claim per wafer, against its specification window.

    Each wafer's measured value is drawn with its expanded uncertainty ±U as a thin error bar
    with caps and its standard uncertainty ±u as a thick bar; the marker shows the verdict
    (shape and colour, see :data:`VERDICT_STYLE`), which is also written under the wafer id.
    The specification is the shaded band (to the edge of the plot for a one-sided claim),
    the nominal value a dashed line. Net doping is drawn on a log axis, resistivity on a log
    axis when the values span more than a factor of 10. A lot of more than
    :data:`~freezeout.reporting.lot_summary_figure.MAX_WAFERS_DRAWN` wafers is drawn in
    groups of consecutive wafers instead, one box each, at one figure size whatever the
    count (:func:`~freezeout.reporting.lot_summary_figure.summary_axes`).

    Parameters
    ----------
    verdict
        The lot's verdict (its wafers' claim verdicts are drawn).
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
    entries = claim_entries(verdict, claim_key)
    if not entries:
        raise ValueError(f"no wafer has claim {claim_key!r}")
    first = entries[0][1]
    window = first.window
    if window is None:
        raise ValueError(f"{claim_key} has no specification window (a type claim?)")
    lower, upper = finite_or_none(window.lower), finite_or_none(window.upper)
    nominal = finite_or_none(window.nominal)
    quantity = str(first.quantity)
    unit = window.unit
    n = len(entries)
    ids = [wid for wid, _ in entries]
    y = np.array([finite_or_none(c.measured) or np.nan for _, c in entries])
    u = np.array([finite_or_none(c.stderr) or np.nan for _, c in entries])
    big_u = np.array([finite_or_none(c.expanded) or np.nan for _, c in entries])
    verdicts = [str(c.verdict) for _, c in entries]
    k = finite_or_none(first.coverage_factor) or 2.0

    ok = np.isfinite(y)
    lo_pts = np.where(np.isfinite(big_u), y - big_u, y)[ok]
    hi_pts = np.where(np.isfinite(big_u), y + big_u, y)[ok]
    span_vals = [v for v in (lower, upper, nominal) if v is not None]
    span_vals += [float(v) for v in y[ok]]
    positive = [v for v in span_vals + [float(v) for v in lo_pts] if v > 0]
    log = quantity == "net_doping" or (
        len(positive) > 1 and max(positive) / min(positive) > 10.0)

    from freezeout.reporting.lot_summary_figure import MAX_WAFERS_DRAWN, summary_axes

    temp = finite_or_none(first.temperature_K)
    where = f" at {temp:g} K" if temp is not None and quantity == "resistivity" else ""
    title = f"{claim_key}: {quantity.replace('_', ' ')}{where}"
    ylabel = f"{_QUANTITY_LABEL.get(quantity, quantity)} [{unit_label(unit)}]"
    if n > MAX_WAFERS_DRAWN:  # a large lot: groups of wafers, a chart of one size
        return summary_axes(
            entries, log=log, styles=VERDICT_STYLE, window=(lower, upper, nominal),
            labels={"window": f"specification {_window_words(lower, upper, unit)}",
                    "nominal": None if nominal is None
                    else f"nominal {nominal:.4g} {unit_label(unit)}",
                    "k": f"{k:g}", "ylabel": ylabel, "title": title}, ax=ax)
    size = (max(7.6, 3.6 + 0.55 * n), 4.6)
    with plt.rc_context(STYLE):
        ax = new_axes(ax, size)
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
            # the bars stand beside the marker, so a U smaller than the marker stays visible
            xb = x[sel] + BAR_OFFSET
            ax.errorbar(xb, yy, yerr=[lower_u, upper_u], fmt="none", ecolor=col,
                        elinewidth=1.0, capsize=4, capthick=1.0, zorder=3)
            lower_s = np.where(np.isfinite(uu), np.minimum(uu, yy * 0.999 if log else uu), 0.0)
            upper_s = np.where(np.isfinite(uu), uu, 0.0)
            ax.errorbar(xb, yy, yerr=[lower_s, upper_s], fmt="none", ecolor=col,
                        elinewidth=3.2, alpha=0.55, zorder=3)
            ax.plot(np.stack([x[sel], xb]), np.stack([yy, yy]), color=col, lw=0.8,
                    alpha=0.6, zorder=3)  # a short tie from the marker to its bars
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
        ax.set_ylabel(ylabel)
        ax.set_title(title, loc="left")
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
