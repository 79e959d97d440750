"""The model selection of an ``auto`` level count: the candidates' curves and their table."""

from __future__ import annotations

import html

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.curves import model_curves  # noqa: E402
from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import (  # noqa: E402
    INK,
    LEVEL_COLOURS,
    MUTED,
    STYLE,
    _add_temperature_axis,
)

#: Smallest half-height of the residual panel. [%]
MIN_RESIDUAL_SPAN = 5.0

#: Most the residual panel widens beyond the chosen candidate's scale to show the other
#: kept candidates' misfit. [1]
SPAN_WIDENING = 5.0


def _style(candidate, chosen: bool) -> dict:
    """Line style of a candidate: colour by its level count, dashed without compensation.

    The chosen one is thick ink; a refused one is thinner and faded.
    """
    if chosen:
        return {"color": INK, "lw": 2.6, "ls": "-", "zorder": 4}
    colour = LEVEL_COLOURS[(candidate.majority_levels - 1) % len(LEVEL_COLOURS)]
    ls = "-" if candidate.compensated else (0, (5, 2))
    if candidate.kept:
        return {"color": colour, "lw": 1.7, "ls": ls, "zorder": 3}
    return {"color": colour, "lw": 1.1, "ls": ls, "alpha": 0.6, "zorder": 2}


def _legend_text(candidate, chosen: bool, off_scale: bool) -> str:
    state = "chosen" if chosen else ("kept" if candidate.kept else "refused")
    if off_scale:
        state += ", misfit off the scale below"
    d = candidate.delta_bic
    delta = ""
    if np.isfinite(d):
        delta = f", ΔBIC {d:+.1f}" if abs(d) < 1e4 else f", ΔBIC {d:+.2g}"
    return f"{candidate.label}\n({state}{delta})"


def selection_figure(result: FitResult) -> Figure | None:
    """Every fitted candidate's model density over the data, and each one's residuals.

    Above, the measured majority density against 1000/T (log axis) with each candidate's
    model curve on a fine grid (:func:`freezeout.fitting.curves.model_curves`): the chosen
    one thick ink, the others coloured by their level count, dashed without the
    compensating species, faded when refused. Below, 100 ln(measured/model)
    of each candidate at the points, on a scale set by the kept ones (a candidate beyond it
    is not drawn there, and its legend entry says so). The legend, beside the axes, names
    each candidate with its state and delta BIC. None without a model selection.
    """
    sel = result.model_selection
    if sel is None:
        return None
    fitted = [(i, c) for i, c in enumerate(sel.candidates) if c.result is not None]
    d = result.data
    x = 1000.0 / d.temperature
    order = np.argsort(x)
    used = np.asarray(d.used, dtype=bool)
    err = None if d.density_err is None else d.density_err[used]
    chosen_at = next(i for i, c in fitted if c.label == sel.chosen)
    misfit = {}
    for i, c in fitted:
        with np.errstate(divide="ignore", invalid="ignore"):
            misfit[i] = 100.0 * np.log(d.density / c.result.data.model_density)
    # the panel shows the chosen candidate's misfit and error bars twice over, widened for
    # the misfit of another kept candidate that stays within SPAN_WIDENING times that
    rel = 0.0 if err is None else 100.0 * err / d.density[used]
    reach = np.abs(misfit[chosen_at][used]) + rel
    reach = reach[np.isfinite(reach)]
    span = max(MIN_RESIDUAL_SPAN, 2.0 * float(reach.max()) if reach.size else 0.0)
    kept = [np.nanmax(np.abs(misfit[i][used])) for i, c in fitted if c.kept]
    span = max([span, *(1.1 * k for k in kept if 1.1 * k <= SPAN_WIDENING * span)])
    with matplotlib.rc_context(STYLE):
        fig = Figure(figsize=(10.0, 6.8), layout="constrained")
        top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1.6))
        for i, c in fitted:
            is_chosen = i == chosen_at
            style = _style(c, is_chosen)
            r = misfit[i]
            off = not bool(np.all(np.abs(r[used]) <= span))
            curves = model_curves(c.result)
            top.plot(1000.0 / curves.temperature, curves.majority,
                     label=_legend_text(c, is_chosen, off), **style)
            if not off:
                bottom.plot(x[order], r[order], marker="o", ms=2.5, **style)
        top.errorbar(x[used], d.density[used], yerr=err, fmt="o", ms=4.5, color=INK,
                     mfc="white", mew=1.2, elinewidth=0.8, label="measured (fitted)",
                     zorder=5)
        if np.any(~used):
            top.plot(x[~used], d.density[~used], "x", ms=5, color=MUTED,
                     label="measured (not fitted)", zorder=5)
        positive = d.density[np.isfinite(d.density) & (d.density > 0)]
        top.set_yscale("log")
        top.set_ylim(positive.min() / 5.0, positive.max() * 3.0)
        top.set_ylabel("majority carrier density [cm⁻³]")
        top.set_title(f"Model selection by BIC: {sel.chosen} chosen", loc="left")
        top.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
                   labelspacing=0.9)
        bottom.axhline(0.0, color=MUTED, lw=0.8)
        bottom.set_ylim(-span, span)
        bottom.set_ylabel("100 ln(measured / model) [%]")
        bottom.set_xlabel("1000 / T [1/K]")
        lo, hi = x.min(), x.max()
        bottom.set_xlim(lo - 0.02 * (hi - lo), hi + 0.02 * (hi - lo))
        _add_temperature_axis(top)
        return fig


def _num(x, digits: int = 4) -> str:
    return "—" if x is None else f"{x:.{digits}g}"


def selection_html(result: FitResult) -> str:
    """The report's model-selection section: rule, search, table of candidates (or "")."""
    sel = result.model_selection
    if sel is None:
        return ""
    esc = html.escape
    rows = []
    for c in sel.to_dict()["candidates"]:
        mark = " style='font-weight:600'" if c["label"] == sel.chosen else ""
        rows.append(
            f"<tr{mark}><td>{esc(c['label'])}</td><td class=num>{c['majority_levels']}</td>"
            f"<td>{'yes' if c['compensated'] else 'no'}</td>"
            f"<td class=num>{_num(c['n_parameters'])}</td><td class=num>{_num(c['chi2'])}</td>"
            f"<td class=num>{_num(c['aic'])}</td><td class=num>{_num(c['bic'])}</td>"
            f"<td class=num>{_num(c['delta_bic'], 3)}</td>"
            f"<td>{'kept' if c['kept'] else 'refused'}</td><td>{esc(c['reason'])}</td></tr>")
    return ("<h2>Model selection</h2>"
            f"<p>Level count chosen from the data: <b>{esc(sel.chosen)}</b>. "
            f"{esc(sel.rule)} {esc(sel.stop_rule)} This search: {esc(sel.stopped)}. ΔBIC is "
            "measured from the lowest BIC of the kept candidates.</p>"
            "<table><tr><th>candidate</th><th>levels</th><th>compensated</th><th>k</th>"
            "<th>χ²</th><th>AIC</th><th>BIC</th><th>ΔBIC</th><th>verdict</th><th>reason</th>"
            f"</tr>{''.join(rows)}</table>")
