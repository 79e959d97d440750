"""The corner plot of a fit's sampled posterior: every pair of free parameters, each marginal.

Drawn with corner (D. Foreman-Mackey, "corner.py: Scatterplot matrices in Python", JOSS 1, 24
(2016); from memory), installed with emcee by the ``posterior`` extra: its pair layout,
smoothed 2-D credible contours and quantile marks are well tested, and it draws on our own
matplotlib Figure with the report's style. Concentrations are shown as log10 (the sampled
scale, where the priors are flat), energies in meV. On the diagonal the dashed lines are the
posterior's 2.5, 50 and 97.5 % quantiles and the shaded band the fit's own 95 % interval;
the thick lines mark the fit's best values.
"""

from __future__ import annotations

import math
import warnings

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from freezeout.fitting.result import FitResult  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, STYLE  # noqa: E402

CAPTION = ("Posterior of the fit's free parameters (MCMC): each pair's samples with their "
           "39 % and 86 % (1 and 2 sigma in 2-D) credible contours, and each parameter's "
           "marginal histogram with its median and 95 % credible interval dashed; the "
           "shaded band is the fit's own 95 % interval, the green lines the fit's best "
           "values. Concentrations as log10 (cm⁻³), energies in meV.")

FIT_COLOUR = LEVEL_COLOURS[0]


def _axis(name: str, samples: np.ndarray, fit: dict) -> tuple[str, np.ndarray, float, tuple]:
    """Label, displayed samples, fit value and fit interval of one sampled parameter."""
    public = name.removeprefix("log10_")
    lo, hi = fit["ci95"]
    if name.startswith("log10_"):
        def show(v):
            return math.log10(v) if v is not None and v > 0 else math.nan
        return (f"log10 {public} (cm⁻³)", samples, show(fit["value"]),
                (show(lo), show(hi)))

    def show(v):
        return 1e3 * v if v is not None else math.nan
    return f"{public} (meV)", 1e3 * samples, show(fit["value"]), (show(lo), show(hi))


def posterior_figure(result: FitResult) -> Figure | None:
    """The corner plot of ``result.posterior``; None without samples or without corner."""
    post = result.posterior
    if post is None or post.samples.shape[0] < 10 * max(post.samples.shape[1], 1):
        return None
    try:
        import corner
    except ImportError:
        return None
    fits = {p.name: {"value": p.fit_value, "ci95": p.fit_ci95} for p in post.parameters}
    labels, columns, best, bands = [], [], [], []
    for j, name in enumerate(post.sample_names):
        label, col, value, band = _axis(name, post.samples[:, j],
                                        fits[name.removeprefix("log10_")])
        labels.append(label)
        columns.append(col)
        best.append(value)
        bands.append(band)
    data = np.column_stack(columns)
    k = data.shape[1]
    size = max(3.2 * k, 5.0)
    with plt.rc_context({**STYLE, "font.size": 10.5}):
        fig = Figure(figsize=(size, size))
        fig.subplots(k, k)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # corner's notes on flat contours of a short chain
            corner.corner(data, fig=fig, labels=labels, bins=30, smooth=1.0,
                          quantiles=[0.025, 0.5, 0.975], show_titles=True,
                          title_quantiles=[0.025, 0.5, 0.975],
                          title_fmt=".4g", title_kwargs={"fontsize": 10},
                          label_kwargs={"fontsize": 11}, color=INK,
                          truths=[b if np.isfinite(b) else None for b in best],
                          truth_color=FIT_COLOUR, levels=(1 - np.exp(-0.5), 1 - np.exp(-2.0)),
                          plot_datapoints=True, data_kwargs={"alpha": 0.05, "ms": 1.5},
                          max_n_ticks=4, labelpad=0.08)
        axes = np.array(fig.axes).reshape(k, k)
        for i, (lo, hi) in enumerate(bands):
            if np.isfinite(lo) and np.isfinite(hi):
                axes[i, i].axvspan(lo, hi, color=FIT_COLOUR, alpha=0.15, lw=0)
        for ax in fig.axes:
            ax.tick_params(labelsize=9)
        state = (f"{post.walkers} walkers × {post.steps} steps, {post.burn_in} burn-in"
                 + (" — interrupted" if post.interrupted else ""))
        fig.suptitle(f"Posterior of the density fit ({state})", fontsize=12)
        fig.subplots_adjust(left=0.14, bottom=0.14, right=0.97, top=0.9, wspace=0.06,
                            hspace=0.06)
    return fig


def _num(x, digits: int = 4) -> str:
    return "—" if x is None else f"{x:.{digits}g}"


def _span(ci) -> str:
    return "not determined" if ci[0] is None else f"{_num(ci[0])} … {_num(ci[1])}"


def posterior_html(post: dict | None) -> str:
    """The report's posterior section: credible intervals beside the fit's, and the chain."""
    if post is None:
        return ""
    import html

    esc = html.escape
    rows = "".join(
        f"<tr><th>{esc(name)}</th><td class=num>{_num(q['median'])} {esc(q['unit'])}</td>"
        f"<td class=num>{_span(q['ci95'])}</td><td class=num>{_span(q['fit']['ci95'])}</td>"
        f"<td>{esc(str(q['fit']['method']))}</td></tr>"
        for name, q in post["parameters"].items())
    tau = ", ".join(f"{esc(k)} {_num(v, 3)}" for k, v in post["autocorr_time_steps"].items())
    priors = "; ".join(
        f"{esc(k)} flat in {esc(v['flat_in'])} over {_num(v['range'][0], 3)} … "
        f"{_num(v['range'][1], 3)} {esc(v['unit'])}" for k, v in post["priors"].items())
    notes = "".join(f"<div class=warn>{esc(n)}</div>" for n in post["notes"])
    held = ", ".join(f"{esc(k)} = {_num(v)}" for k, v in post["held"].items())
    return (
        "<h2>Posterior (MCMC)</h2><p>The fit's parameters sampled with an ensemble Markov "
        "chain (emcee): the median and the central 95 % credible interval of each, beside "
        "the fit's own 95 % interval and how it was computed.</p>"
        "<table><tr><th>quantity</th><th>posterior median</th><th>95 % credible interval"
        "</th><th>fit 95 % interval</th><th>fit interval method</th></tr>"
        f"{rows}</table>{notes}"
        f"<p class=sub>{post['walkers']} walkers × {post['steps']} steps "
        f"({post['model_evaluations']} model evaluations), the first "
        f"{post['burn_in_steps']} steps of each walker discarded ({esc(post['burn_in_rule'])}"
        f"); acceptance fraction {_num(post['acceptance_fraction'], 2)}; integrated "
        f"autocorrelation time {tau} steps; about {_num(post['effective_samples'], 3)} "
        f"independent samples. Likelihood: {esc(post['likelihood'])}. Priors: {priors}"
        f"{'; held: ' + held if held else ''}. Seed {post['seed']}."
        f"{' Interrupted: the summary is of the steps done.' if post['interrupted'] else ''}"
        "</p>")
