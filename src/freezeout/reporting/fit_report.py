"""The fit report: fit.json, PNG figures and a self-contained report.html."""

from __future__ import annotations

import base64
import html
import json
from functools import partial
from pathlib import Path

from freezeout.fitting.curves import model_curves
from freezeout.fitting.result import FitResult
from freezeout.io.atomic import atomic_folder, atomic_write_bytes, atomic_write_text
from freezeout.io.writers import format_csv
from freezeout.reporting.figure_workers import render_figures
from freezeout.reporting.hall_figure import hall_sign_figure, two_carrier_html
from freezeout.reporting.mobility_figure import (
    carrier_density_view,
    hall_factor_label,
    narrowing_html,
)
from freezeout.reporting.posterior_figure import posterior_html
from freezeout.reporting.report_files import REPORT_FILES
from freezeout.reporting.selection_figure import selection_figure, selection_html

CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:2rem auto;max-width:980px;
color:#1d2a3a;line-height:1.45;padding:0 1rem}
h1{font-size:1.5rem;margin-bottom:.2rem}h2{font-size:1.15rem;margin-top:2rem;
border-bottom:2px solid #dfe4ea;padding-bottom:.2rem}
.sub{color:#5b6675;margin-top:0}
table{border-collapse:collapse;margin:.6rem 0;font-size:.92rem;display:block;max-width:100%;
overflow-x:auto}
th,td{padding:.3rem .7rem;border-bottom:1px solid #e6e9ee;text-align:left}
th{background:#f3f5f8;font-weight:600}td.num{text-align:right;font-variant-numeric:tabular-nums}
.warn{background:#fff6e5;border-left:4px solid #d4a017;padding:.5rem .8rem;margin:.4rem 0}
.ok{background:#eaf6f0;border-left:4px solid #2a7f62;padding:.5rem .8rem}
.sev-severe{color:#c0392b;font-weight:600}.sev-warning{color:#b5651d}
figure{margin:1rem 0}figcaption{color:#5b6675;font-size:.88rem}
img{max-width:100%}code{background:#f3f5f8;padding:0 .25rem;border-radius:3px}
.caution{color:#5b6675;font-size:.88rem;border-top:1px solid #dfe4ea;padding-top:.5rem}
"""


def _fmt(x, unit="", digits=4):
    if x is None:
        return "—"
    return f"{x:.{digits}g}{(' ' + unit) if unit else ''}"


def _estimate_cells(est: dict | None, unit: str) -> str:
    if est is None:
        return "<td colspan=4>fully ionized (no level energy)</td>"
    if est.get("fixed"):
        return (f"<td class=num>{_fmt(est['value'], unit)}</td><td class=num>fixed</td>"
                "<td class=num>fixed (held, not fitted)</td><td>—</td>")
    lo, hi = est["ci95"]
    ci = f"{_fmt(lo)} … {_fmt(hi)}" if lo is not None else "not determined"
    method = html.escape(str(est.get("method") or "—"))
    return (f"<td class=num>{_fmt(est['value'], unit)}</td><td class=num>"
            f"{_fmt(est['stderr'], unit, 2)}</td><td class=num>{ci}</td><td>{method}</td>")


def _rms_sentence(st: dict) -> str:
    """The rms misfit in percent; for an unweighted fit, what its reduced χ² is not."""
    rms = st.get("rms_residual_percent")
    if rms is None:
        return ""
    note = ("" if st["weighted"] else " Unweighted, so the reduced χ² is the residual "
            "variance in ln units, not a goodness-of-fit test.")
    return f" rms residual {rms:.2g} % (ln density).{note}"


#: The figures that take longest to draw (two panels, or many curves), drawn first.
_SLOW_FIGURES = ("fermi_level", "density", "spectroscopy", "mobility", "hall_sign",
                 "selection", "posterior")


def figure_files(result: FitResult, curves=None, svg: dict | None = None, *,
                 workers: int | None = None) -> dict[str, tuple[bytes, str]]:
    """PNG bytes and caption per figure; with ``svg`` (a dict), its SVG bytes go there too.

    The figures are drawn by :func:`freezeout.reporting.figure_workers.render_figures`
    (``workers``: 1 here only, 2 with a forked helper, None where the machine allows it).
    """
    from freezeout.reporting import figures as fg

    curves = model_curves(result) if curves is None else curves
    scattering = result.mobility is not None and result.mobility.hall_factor_source == \
        "scattering"
    core = (  # stem, drawing, caption
        ("density", lambda: fg.density_axes(carrier_density_view(result), curves),
         "Carrier density versus 1000/T: measured points, the fit, and the "
         "contribution of each level and of intrinsic generation."
         + (" The measured points are carrier densities n = r_H(T) / (q |R_H|), "
            "the run's densities times r_H(T) / r with the fitted r_H(T) of the "
            "joint fit (r: the run's constant Hall factor)." if scattering else "")),
        ("residuals", lambda: fg.residual_axes(result),
         "Residuals of the fit, measured/fitted − 1."),
        ("fermi_level", lambda: fg.fermi_figure(result, curves),
         "Fermi level in the gap, with the band edges and level energies; "
         "right: measured from the majority band edge."),
        ("ionization", lambda: fg.ionization_axes(result, curves),
         "Ionized fraction of each level."),
    )
    from freezeout.reporting import posterior_figure as pf
    from freezeout.reporting.mobility_figure import mobility_figure
    from freezeout.reporting.spectroscopy_figure import caption as spectrum_caption
    from freezeout.reporting.spectroscopy_figure import spectroscopy_figure
    from freezeout.reporting.transport_figure import CAPTION as TRANSPORT_CAPTION
    from freezeout.reporting.transport_figure import transport_figure

    optional = (  # stem, drawing (None when the fit has nothing to draw), caption
        ("transport", transport_figure, TRANSPORT_CAPTION),
        ("mobility", mobility_figure, lambda r: "Hall mobility of the joint fit: measured "
         "points and the model of the named scattering mechanisms, each mechanism's own "
         "drift mobility dashed; below, the Hall factor the model applied to the density and "
         "the mobility (" + hall_factor_label(r) + ")."),
        ("spectroscopy", spectroscopy_figure, spectrum_caption),
        ("posterior", pf.posterior_figure, pf.CAPTION),
        ("hall_sign", hall_sign_figure, "Two-carrier fit: |R_H| against temperature with its "
         "sign (filled circles and one colour where holes dominate, open squares and the "
         "other where electrons do), the reversal marked; below, the resistivity."),
        ("selection", selection_figure, "Model selection: the measured density and the model "
         "curve of every candidate fitted (chosen: thick ink; others coloured by level count, "
         "dashed without compensation, faded when refused; curves that coincide lie on top of "
         "each other), each with its delta BIC; below, each candidate's misfit at the "
         "points."),
    )
    jobs = [*core, *((stem, partial(draw, result), caption) for stem, draw, caption in optional)]
    # drawn longest first, so that the two processes end together (the two-panel and the
    # many-curve figures take about twice as long as the others; project choice, no source)
    order = sorted(jobs, key=lambda job: job[0] not in _SLOW_FIGURES)
    drawn = render_figures([(stem, draw) for stem, draw, _ in order], svg=svg is not None,
                           workers=workers)
    out = {}
    for stem, _, caption in jobs:
        if stem in drawn:  # an optional figure the fit has nothing for is not drawn
            png, vector = drawn[stem]
            out[f"{stem}.png"] = (png, caption(result) if callable(caption) else caption)
            if svg is not None:
                svg[f"{stem}.svg"] = vector
    return out


def _alternatives_html(alternatives: list[dict]) -> str:
    """The table of distinct solutions that fit almost as well (empty when there are none)."""
    if not alternatives:
        return ""
    esc = html.escape
    names = list(alternatives[0]["parameters"])
    head = "".join(f"<th>{esc(n)}</th>" for n in names)
    rows = "".join(
        "<tr>" + "".join(f"<td class=num>{_fmt(a['parameters'].get(n))}</td>" for n in names)
        + f"<td class=num>{_fmt(a['compensation_ratio'], '', 3)}</td>"
        f"<td class=num>{_fmt(a['net_doping_cm3'], 'cm⁻³')}</td>"
        f"<td class=num>{_fmt(a['chi2'])}</td><td class=num>{_fmt(a['delta_chi2'], '', 3)}</td>"
        "</tr>" for a in alternatives)
    return ("<h2>Alternative solutions</h2><p>Distinct solutions (another compensation basin "
            "or level assignment) whose χ² lies within Δχ² = 4 of the fit above: the data "
            "cannot tell them apart.</p>"
            f"<table><tr>{head}<th>K</th><th>N_net</th><th>χ²</th><th>Δχ²</th></tr>{rows}"
            "</table>")


def _hall_factor_text(result: FitResult, d: dict) -> str:
    """The Hall factor the fit applied, for the page's subtitle (HTML-escaped)."""
    if result.mobility is None:
        return f"Hall factor r_H = {d['hall_factor']:g}"
    return html.escape("Hall factor: " + hall_factor_label(result)
                       + (f" (density column computed with r = {d['hall_factor']:g})"
                          if result.mobility.hall_factor_source == "scattering" else ""))


def render_html(result: FitResult, figures: dict[str, tuple[bytes, str]]) -> str:
    """The report page with figures embedded as data URIs."""
    d = result.to_dict()
    prov = d["provenance"]
    esc = html.escape
    rows = []
    user_bounds = prov.get("options", {}).get("bounds") or {}

    def bounded(name: str, unit: str) -> str:
        if name not in user_bounds:
            return ""
        lo, hi = user_bounds[name]
        return esc(f" (bounded by the user: {_fmt(lo)} … {_fmt(hi)} {unit})")

    for lv in d["levels"]:
        label = f"{lv['kind']} {lv['name']}"
        rows.append(f"<tr><th>N_{esc(lv['name'])}</th><td>{esc(label)} concentration"
                    f"{bounded('N_' + lv['name'], 'cm⁻³')}</td>"
                    f"{_estimate_cells(lv['concentration_cm3'], 'cm⁻³')}</tr>")
        if lv["energy_eV"] is not None:
            g = lv["degeneracy"]
            rows.append(f"<tr><th>E_{esc(lv['name'])}</th><td>ionization energy "
                        f"(g = {g:g}){bounded('E_' + lv['name'], 'eV')}</td>"
                        f"{_estimate_cells(lv['energy_eV'], 'eV')}</tr>")
    rows.append("<tr><th>N_net</th><td>net doping |N_D − N_A|</td>"
                f"{_estimate_cells(d['net_doping_cm3'], 'cm⁻³')}</tr>")
    rows.append("<tr><th>K</th><td>compensation ratio</td>"
                f"{_estimate_cells(d['compensation_ratio'], '')}</tr>")
    st = d["statistics"]
    warn_html = ("".join(f"<div class=warn>{esc(w)}</div>" for w in d["warnings"])
                 or "<div class=ok>No warnings: every free parameter is constrained by the "
                 "data.</div>")
    figs = []
    for name, (png, caption) in figures.items():
        b64 = base64.b64encode(png).decode("ascii")
        figs.append(f"<figure><img alt='{esc(caption)}' src='data:image/png;base64,{b64}'>"
                    f"<figcaption>{esc(caption)} ({esc(name)})</figcaption></figure>")
    findings = d["data"].get("findings") or []
    if findings:
        frows = "".join(
            f"<tr><td class=num>{_fmt(f.get('temperature'), 'K')}</td>"
            f"<td class='sev-{esc(str(f.get('severity')))}'>{esc(str(f.get('severity')))}</td>"
            f"<td><code>{esc(str(f.get('code')))}</code></td><td>{esc(str(f.get('message')))}"
            "</td></tr>" for f in findings)
        quality = ("<h2>Data quality</h2><p>Findings of the reduction, per temperature. Points "
                   "with a severe finding are left out of the fit unless "
                   "<code>--include-flagged</code> is given, and drawn as red crosses.</p>"
                   "<table><tr><th>T</th><th>severity</th><th>code</th><th>finding</th></tr>"
                   f"{frows}</table>")
    elif any(d["data"].get("flags") or []):
        quality = "<h2>Data quality</h2><p>Flags per point are in fit.json.</p>"
    else:
        quality = ""
    meta = "".join(f"<tr><th>{esc(str(k))}</th><td>{esc(str(v))}</td></tr>"
                   for k, v in prov.get("metadata", {}).items())
    opts = esc(json.dumps(prov.get("options", {}), sort_keys=True))
    kernel = (f" (charge neutrality solved by the {esc(prov['neutrality_kernel'])} kernel)"
              if prov.get("neutrality_kernel") else "")
    mat = d["material"]
    mat_rows = "".join(
        f"<tr><th>{esc(k)}</th><td class=num>{_fmt(mat.get(k))}</td>"
        f"<td>{esc(str(mat.get('sources', {}).get(k, '')))}</td></tr>"
        for k in ("band_gap_0K_eV", "varshni_alpha_eV_per_K", "varshni_beta_K",
                  "electron_dos_mass", "hole_dos_mass", "relative_permittivity",
                  "electron_conductivity_mass", "hole_conductivity_mass"))
    inflation = st.get("error_inflation") or 1.0
    inflated = (f" Standard errors inflated by √χ²_red = {inflation:.3g}, as the points "
                "scatter more than their stated uncertainties." if inflation > 1.0 else "")
    carrier = "n-type (electrons)" if d["carrier"] == "n" else "p-type (holes)"
    weighting = ("weighted by the stated per-point uncertainties" if st["weighted"]
                 else "unweighted (no per-point uncertainties; errors scaled by χ²)")
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>freezeout fit — {esc(prov['input'])}</title>
<style>{CSS}</style></head><body>
<h1>Carrier-statistics fit of {esc(prov['input'])}</h1>
<p class=sub>{carrier} · host {esc(d['material']['name'])} · {esc(st['model'])} statistics ·
{_hall_factor_text(result, d)} · {st['n_points']} points, {st['n_parameters']} free
parameters</p>
<h2>Parameters</h2>
<table><tr><th>symbol</th><th>quantity</th><th>value</th><th>std. error</th>
<th>95 % interval</th><th>interval method</th></tr>{''.join(rows)}</table>
<p class=sub>Interval methods: wald-log / wald-linear from the covariance (t quantile, log
or linear scale); profile from the χ² profile, where χ² − χ²_min ≤ 3.84 (times the reduced χ²
when the errors are inflated or fitted), the other parameters refitted; one-sided where one
end is a limit of the model's range (a concentration floor, the band gap) rather than set by
the data; plateau from the saturation points alone.</p>
<p>χ² = {_fmt(st['chi2'])}, reduced χ² = {_fmt(st['reduced_chi2'])}, AIC = {_fmt(st['aic'])},
BIC = {_fmt(st['bic'])}; residuals in ln(density), {weighting}.{inflated}{_rms_sentence(st)}</p>
{selection_html(result)}
{posterior_html(d.get("posterior"))}
{_alternatives_html(d.get("alternatives") or [])}{narrowing_html(result)}{two_carrier_html(result)}
<h2>Warnings</h2>{warn_html}
<h2>Figures</h2>{''.join(figs)}
{quality}
<h2>Provenance</h2>
<table><tr><th>input file</th><td>{esc(prov['input'])}</td></tr>
<tr><th>sha256</th><td><code>{esc(prov['sha256'])}</code></td></tr>
<tr><th>tool</th><td>freezeout {esc(prov['tool_version'])}{kernel}</td></tr>
<tr><th>date (UTC)</th><td>{esc(prov['date'])}</td></tr>
<tr><th>options</th><td><code>{opts}</code></td></tr>{meta}</table>
<h2>Material: {esc(mat['name'])}</h2>
<table><tr><th>parameter</th><th>value</th><th>source</th></tr>{mat_rows}</table>
<p class=sub>Model: charge neutrality with {esc(st['model'])} statistics, effective densities
of states from the density-of-states masses, Varshni band gap, partially ionized majority
levels with degeneracy factors, fully ionized compensation.</p>
<p class=caution>Caution: these numbers are a model fit, to be checked against the data and the
model's limits before anything rests on them; the measurements behind them carry the hazards of
cryogens, strong magnets, heated stages and mains-powered instruments (README, Safety).</p>
</body></html>
"""


def write_fit_report(result: FitResult, out_dir: str | Path, *, svg: bool = False
                     ) -> dict[str, Path]:
    """Write fit.json, the figures, curves.csv, residuals.csv and report.html, as one set.

    ``curves.csv`` holds the model on a fine temperature grid and ``residuals.csv`` the
    measured points beside the model (:func:`freezeout.reporting.figures.curve_columns`,
    :func:`~freezeout.reporting.figures.residual_columns`); with ``svg`` every figure is also
    written as SVG.

    The files are written into a sibling temporary folder that then replaces ``out_dir``
    (:func:`freezeout.io.atomic.atomic_folder`): a failure or a kill leaves the earlier report
    whole, never a new fit.json beside an old report.html. A folder that also holds other
    files keeps them; only the report's own files (:data:`REPORT_FILES`) are replaced.
    """
    from freezeout.reporting.figures import curve_columns, residual_columns

    out = Path(out_dir)
    curves = model_curves(result)
    svgs: dict[str, bytes] | None = {} if svg else None
    figures = figure_files(result, curves, svgs)
    page = render_html(result, figures)
    tables = {"curves.csv": format_csv(curve_columns(result, curves)),
              "residuals.csv": format_csv(residual_columns(result))}
    names = ["fit.json", *figures, *(svgs or {}), *tables, "report.html"]
    with atomic_folder(out, owned=REPORT_FILES) as tmp:
        atomic_write_text(tmp / "fit.json", json.dumps(result.to_dict(), indent=2) + "\n")
        for name, (png, _) in figures.items():
            atomic_write_bytes(tmp / name, png)
        for name, data in (svgs or {}).items():
            atomic_write_bytes(tmp / name, data)
        for name, text in tables.items():
            atomic_write_text(tmp / name, text)
        atomic_write_text(tmp / "report.html", page)
    return {name: out / name for name in names}
