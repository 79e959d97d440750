"""The lot report: lot.json, lot.csv (for a LIMS), charts and a self-contained HTML page.

Everything is drawn from the typed record of a qualification
(:class:`~freezeout.records.qualification.LotQualification`: the lot file, the lot's verdict
with every wafer's and claim's, how each wafer was measured, provenance); lot.json is its
``to_dict()``.
"""

from __future__ import annotations

import base64
import csv
import html
import io
import json
import re
from collections.abc import Mapping
from pathlib import Path

from freezeout.io.atomic import atomic_folder, atomic_write_bytes, atomic_write_text
from freezeout.numbers import finite_or_none, slug
from freezeout.records.lot import LotFile
from freezeout.records.qualification import LotQualification, WaferInput
from freezeout.records.verdicts import (
    DEFERENCE,
    RULE_IN_WORDS,
    ClaimVerdict,
    LotVerdict,
    SpecWindow,
    WaferVerdict,
)
from freezeout.reporting.fit_report import CSS

#: First characters that make a spreadsheet read a text cell as a formula (OWASP "CSV
#: Injection"); such text cells of lot.csv get a leading ``'``, numbers are left alone.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

#: The provenance row of a trial run that was not stored (``qualify --no-history``).
_NOT_RECORDED = ("<tr><th>history</th><td>not recorded: a trial run, not stored in the "
                 "history database</td></tr>")

#: Columns of lot.csv, one row per wafer and claim.
CSV_COLUMNS = (
    "lot", "supplier", "lot_date", "wafer", "claim", "quantity", "unit", "temperature_K",
    "measured", "stderr", "U", "coverage_factor", "spec_min", "spec_max", "nominal",
    "claimed_type", "verdict", "margin_in_U", "p_conformance", "method", "rule",
)

_HTML_UNIT = {"cm^-3": "cm⁻³", "ohm cm": "Ω cm"}

# verdict badges: our own neutral scheme (shape of the border plus the word), matching the
# markers of freezeout.reporting.lot_figures.VERDICT_STYLE
_VERDICT_CSS = """
.verdict{display:inline-block;padding:.05rem .5rem;border-radius:3px;font-weight:600;
font-size:.85rem;letter-spacing:.02em}
.v-accept{border:1.5px solid #1f77b4;color:#1f77b4}
.v-indeterminate{border:1.5px dashed #6a4c93;color:#6a4c93}
.v-reject{border:1.5px solid #1d2a3a;background:#1d2a3a;color:#fff}
.lotverdict{font-size:1.05rem;padding:.6rem .9rem;border-left:5px solid #8a94a3;
background:#f3f5f8;margin:.6rem 0}
.rule{border-left:4px solid #8a94a3;padding:.4rem .8rem;margin:.4rem 0;background:#fafbfc}
td.note{color:#5b6675;font-size:.86rem}
td.why{color:#6a4c93;font-size:.86rem}
"""


def _claim_label(key, quantity_of: dict) -> str:
    """``claim[2] (resistivity)`` for a claim key, or a dash."""
    if not key:
        return "—"
    q = quantity_of.get(key)
    return f"{key} ({q})" if q else str(key)


def _g(x, digits: int = 4) -> str:
    v = finite_or_none(x)
    return "—" if v is None else f"{v:.{digits}g}"


def _unit(unit: str | None) -> str:
    return _HTML_UNIT.get(unit or "", unit or "")


def _probability(p: float | None) -> str:
    if p is None:
        return "—"
    if p < 1e-4:
        return "&lt; 0.0001"
    if p > 0.9999:
        return "&gt; 0.9999"
    return f"{p:.4f}"


def _badge(verdict: str) -> str:
    v = html.escape(str(verdict))
    return f"<span class='verdict v-{v}'>{v}</span>"


def _window_text(window: SpecWindow | None, type_value: str | None) -> str:
    """A specification in words; a type claim (no window) as ``type n``, or a dash."""
    if window is None:
        return f"type {type_value}" if type_value else "—"
    lo, hi = finite_or_none(window.lower), finite_or_none(window.upper)
    u = _unit(window.unit)
    if lo is not None and hi is not None:
        text = f"{lo:.4g} to {hi:.4g} {u}"
    elif lo is not None:
        text = f"≥ {lo:.4g} {u}"
    else:
        text = f"≤ {hi:.4g} {u}"
    nominal = finite_or_none(window.nominal)
    if nominal is not None:
        text += f" (nominal {nominal:.4g})"
    return text


def _claim_unit(c: ClaimVerdict) -> str | None:
    return c.window.unit if c.window is not None else None


def _measured_text(c: ClaimVerdict) -> str:
    if isinstance(c.measured, str):
        return f"type {c.measured}"
    v = finite_or_none(c.measured)
    if v is None:
        return "no value"
    u = finite_or_none(c.stderr)
    unit = _unit(_claim_unit(c))
    if u is None:
        return f"{v:.4g} {unit} (u unknown)"
    return f"{v:.4g} ± {u:.2g} {unit}"


def numeric_claim_keys(verdict: LotVerdict) -> list[str]:
    """The keys of the claims that have a specification window (charted), in file order."""
    keys: list[str] = []
    for w in verdict.wafers:
        for c in w.claims:
            if c.window is not None and c.claim_key not in keys:
                keys.append(c.claim_key)
    return keys


def chart_file_name(claim_key: str) -> str:
    """The chart's file name: ``chart_`` and the key's safe characters (``chart_claim2.png``)."""
    return f"chart_{slug(claim_key, 'claim', joiner='')}.png"


#: The files every lot report writes, besides one chart per claim with a window.
LOT_REPORT_FILES = ("lot.json", "lot.csv", "lot_report.html")


def lot_report_files(lot: LotFile) -> list[str]:
    """Every file name the lot's report will write (known before anything is measured)."""
    return [*LOT_REPORT_FILES,
            *(chart_file_name(c.key) for c in lot.claims if c.window is not None)]


def lot_figures(qualification: LotQualification) -> dict[str, tuple[bytes, str]]:
    """One chart per claim with a specification window: file name -> (PNG bytes, caption)."""
    from freezeout.reporting import lot_figures as lf
    from freezeout.reporting.figures import png_bytes
    from freezeout.reporting.lot_summary_figure import MAX_WAFERS_DRAWN

    verdict = qualification.verdict
    out = {}
    for key in numeric_claim_keys(verdict):
        ax = lf.claim_axes(verdict, key)
        quantity = ax.get_title(loc="left").split(": ", 1)[-1]
        k = _g(verdict.coverage_factor)
        if len(lf.claim_entries(verdict, key)) > MAX_WAFERS_DRAWN:
            caption = (f"{key}, {quantity}: the wafers in groups of consecutive wafers, lot "
                       "order; per group a box from the lower to the upper quartile of the "
                       "measured values with the median, whiskers to the minimum and maximum, "
                       f"and beside it the group's median ± its median U (k = {k}); every "
                       "indeterminate or rejected wafer drawn on its own by its verdict's "
                       "marker; under each group its counts of accepted, indeterminate and "
                       "rejected wafers. The specification window is shaded.")
        else:
            caption = (f"{key}, {quantity}: measured value per wafer with its expanded "
                       f"uncertainty ±U (k = {k}, thin bars with caps) and standard "
                       "uncertainty ±u (thick bars), against the specification window "
                       "(shaded). Marker shape and the word under each wafer give its "
                       "verdict on this claim.")
        out[chart_file_name(key)] = (png_bytes(ax), caption)
        ax.figure.clear()
    return out


def lot_csv(qualification: LotQualification) -> str:
    """lot.csv: one row per wafer and claim (:data:`CSV_COLUMNS`), numbers at full precision.

    Empty cells stand for "none" (no uncertainty, a one-sided window, a type claim's limits).
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)

    def cell(x) -> str:
        if x is None:
            return ""
        if isinstance(x, str):  # text a spreadsheet would run as a formula is quoted
            return "'" + x if x[:1] in _FORMULA_START else x
        v = finite_or_none(x)
        return "" if v is None else repr(v)

    v = qualification.verdict
    for wafer in v.wafers:
        for c in wafer.claims:
            win = c.window
            lo, hi, nominal = (None, None, None) if win is None else (
                win.lower, win.upper, win.nominal)
            w.writerow([cell(x) for x in (
                v.lot, v.supplier, v.date, wafer.wafer_id, c.claim_key, c.quantity,
                _claim_unit(c), c.temperature_K, c.measured, c.stderr, c.expanded,
                c.coverage_factor, lo, hi, nominal, c.claimed if win is None else None,
                c.verdict, c.margin, c.conformance_probability, c.method, c.rule)])
    return buf.getvalue()


def _claim_rows(wafer: WaferVerdict) -> str:
    rows = []
    for c in wafer.claims:
        temp = finite_or_none(c.temperature_K)
        quantity = str(c.quantity).replace("_", " ")
        if temp is not None and c.quantity == "resistivity":
            quantity += f" at {temp:g} K"
        big_u = finite_or_none(c.expanded)
        u_text = "—" if big_u is None else f"{big_u:.2g} {_unit(_claim_unit(c))}"
        margin = finite_or_none(c.margin)
        p_c = finite_or_none(c.conformance_probability)
        rows.append(
            f"<tr><td>{html.escape(str(c.claim_key))}</td><td>{html.escape(quantity)}</td>"
            f"<td class=num>{html.escape(_measured_text(c))}</td>"
            f"<td class=num>{html.escape(u_text)}</td>"
            f"<td>{html.escape(_window_text(c.window, c.claimed))}</td>"
            f"<td>{_badge(str(c.verdict))}</td>"
            f"<td class=num>{'—' if margin is None else f'{margin:+.2f}'}</td>"
            f"<td class=num>{_probability(p_c)}</td>"
            f"<td>{html.escape(str(c.method or '—'))}</td></tr>")
        if c.verdict == "indeterminate" and c.sentence:
            rows.append(f"<tr><td></td><td class=why colspan=8>Why indeterminate: "
                        f"{html.escape(str(c.sentence))}</td></tr>")
        if c.notes:
            rows.append(f"<tr><td></td><td class=note colspan=8>"
                        f"{'<br>'.join(html.escape(str(n)) for n in c.notes)}</td></tr>")
    return "".join(rows)


def _indeterminate_reasons(verdict: LotVerdict, inputs: Mapping[str, WaferInput],
                           quantity_of: dict) -> str:
    """The "Why indeterminate" section of the page, or "" when nothing is indeterminate.

    A line per indeterminate claim with its sentence, or one per unmeasured wafer (one
    reason for all its claims).
    """
    esc = html.escape
    items = []
    for w in verdict.wafers:
        claims = [c for c in w.claims if c.verdict == "indeterminate"]
        wid = esc(str(w.wafer_id))
        link = f"<a href='#wafer-{wid}'>{wid}</a>"
        reason = inputs[w.wafer_id].reason
        if claims and reason:
            items.append(f"<li>{link}: not measured: {esc(str(reason))}</li>")
            continue
        items += [f"<li>{link}, {esc(_claim_label(c.claim_key, quantity_of))}: "
                  f"{esc(str(c.sentence))}</li>" for c in claims]
    if not items:
        return ""
    return f"<h2>Why indeterminate</h2><ul>{''.join(items)}</ul>"


def _wafer_section(wafer: WaferVerdict, inp: WaferInput) -> str:
    esc = html.escape
    how = inp.how or ""
    lines = []
    if inp.run:
        lines.append(f"run <code>{esc(str(inp.run))}</code>")
    if how:
        lines.append(esc(how))
    if inp.material:
        lines.append(f"material {esc(str(inp.material))}")
    hall = inp.hall_factor
    r_h = None if hall is None else finite_or_none(hall.value)
    if r_h is not None:
        u_r = finite_or_none(hall.stderr) or 0.0
        text = f"Hall factor r_H = {r_h:g}" + (f" ± {u_r:g}" if u_r > 0 else "")
        if hall.source:
            text += f" ({hall.source})"
        lines.append(esc(text))
    fit = inp.fit
    if fit is not None:
        red = finite_or_none(fit.reduced_chi2)
        lines.append(f"{fit.n_points} points, reduced χ² = "
                     f"{'—' if red is None else f'{red:.3g}'}")
    notes_html = "".join(f"<div class=warn>{esc(str(n))}</div>" for n in wafer.notes)
    wid = esc(str(wafer.wafer_id))
    head = f"<h3 id='wafer-{wid}'>Wafer {wid} {_badge(str(wafer.verdict))}</h3>"
    return (f"{head}<p class=sub>{' · '.join(lines)}</p>"
            f"<p>{esc(str(wafer.sentence or ''))}</p>"
            "<table><tr><th>claim</th><th>quantity</th><th>measured ± u</th><th>U</th>"
            "<th>specification</th><th>verdict</th><th>margin [U]</th><th>p<sub>c</sub></th>"
            f"<th>method</th></tr>{_claim_rows(wafer)}</table>{notes_html}")


def render_lot_html(qualification: LotQualification,
                    figures: Mapping[str, tuple[bytes, str]]) -> str:
    """The lot report page, figures embedded as data URIs (no outside files needed).

    Parameters
    ----------
    qualification
        The qualified lot. Every text from the lot file is HTML-escaped.
    figures
        File name -> (PNG bytes, caption), e.g. from :func:`lot_figures`.

    Returns
    -------
    str
        The HTML text.
    """
    esc = html.escape
    lot, v, prov = qualification.lot, qualification.verdict, qualification.provenance
    inputs = qualification.inputs
    rule = str(v.rule)
    k = _g(v.coverage_factor)
    counts = v.counts()
    quantity_of = {c.key: str(c.quantity).replace("_", " ") for c in lot.claims}
    summary = []
    for w in v.wafers:
        m = finite_or_none(w.margin)
        wid = esc(str(w.wafer_id))
        summary.append(
            f"<tr><td><a href='#wafer-{wid}'>{wid}</a></td><td>{_badge(str(w.verdict))}"
            f"</td><td>{esc(_claim_label(w.decided_by, quantity_of))}</td>"
            f"<td class=num>{'—' if m is None else f'{m:+.2f}'}</td>"
            f"<td>{esc(str(inputs[w.wafer_id].how or ''))}</td></tr>")
    claims = []
    for c in lot.claims:
        temp = finite_or_none(c.temperature_K)
        extra = []
        if c.dopant:
            extra.append(f"dopant {c.dopant}")
        if c.unit:
            extra.append(f"written in {c.unit}")
        if c.note:
            extra.append(str(c.note))
        claims.append(
            f"<tr><td>{esc(str(c.key))}</td>"
            f"<td>{esc(str(c.quantity).replace('_', ' '))}</td>"
            f"<td>{esc(_window_text(c.window, c.carrier))}</td>"
            f"<td class=num>{'—' if temp is None else f'{temp:g} K'}</td>"
            f"<td>{esc('; '.join(extra))}</td></tr>")
    figs = []
    for name, (png, caption) in figures.items():
        b64 = base64.b64encode(png).decode("ascii")
        figs.append(f"<figure><img alt='{esc(caption)}' src='data:image/png;base64,{b64}'>"
                    f"<figcaption>{esc(caption)} ({esc(name)})</figcaption></figure>")
    wafers = "".join(_wafer_section(w, inputs[w.wafer_id]) for w in v.wafers)
    opts = esc(json.dumps(dict(prov.options), sort_keys=True))
    sub = [f"supplier {esc(str(v.supplier))}", f"lot date {esc(str(v.date))}"]
    if lot.certificate:
        sub.append(f"certificate {esc(str(lot.certificate))}")
    sub.append(f"{len(v.wafers)} wafers")
    sub.append(f"{esc(rule)} rule, k = {k}")
    note = f"<p>{esc(str(lot.note))}</p>" if lot.note else ""
    outside = prov.options.get("paths_outside_lot_folder")
    if outside:  # read only because the user allowed it (qualify --allow-outside-paths)
        note += ("<p class=caution>Allowed by --allow-outside-paths: this lot read files "
                 f"outside the lot file's folder: {esc(', '.join(map(str, outside)))}.</p>")
    # the deference sentence stands once, in bold under the rule
    sentence = str(v.sentence or "").replace(DEFERENCE, "").strip()
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8">
<title>freezeout lot qualification — {esc(str(v.lot))}</title>
<style>{CSS}{_VERDICT_CSS}</style></head><body>
<h1>Lot qualification of {esc(str(v.lot))}</h1>
<p class=sub>{' · '.join(sub)}</p>{note}
<div class=lotverdict>Lot verdict: {_badge(str(v.verdict))}
({counts.get('accept', 0)} accepted, {counts.get('indeterminate', 0)} indeterminate,
{counts.get('reject', 0)} rejected). {esc(sentence)}</div>
<h2>Decision rule</h2>
<div class=rule>{esc(RULE_IN_WORDS.get(rule, rule))} Here k = {k}. Each verdict reports its
margin, the signed distance from the measured value to the nearest specification limit in units
of U (positive inside), and the conformance probability p<sub>c</sub> for a Gaussian state of
knowledge (JCGM 106:2012). A wafer is rejected if any claim is rejected, indeterminate if none
is rejected and any is indeterminate, and accepted otherwise; the lot likewise over its
wafers.</div>
<p><strong>{esc(DEFERENCE)}</strong></p>
<h2>Wafers</h2>
<table><tr><th>wafer</th><th>verdict</th><th>decided by</th><th>margin [U]</th>
<th>measured from</th></tr>{''.join(summary)}</table>
{_indeterminate_reasons(v, inputs, quantity_of)}
<h2>Claims</h2>
<table><tr><th>claim</th><th>quantity</th><th>specification</th><th>temperature</th>
<th>details</th></tr>{''.join(claims)}</table>
<h2>Measured against claimed</h2>{''.join(figs) or '<p>No claim with a numeric window.</p>'}
<h2>Per wafer</h2>{wafers}
<h2>Provenance</h2>
<table><tr><th>lot file</th><td>{esc(str(prov.lot_file))}</td></tr>
<tr><th>input sha256</th><td><code>{esc(str(prov.lot_input_sha256))}</code>
(the lot file and every run and material file it names)</td></tr>
<tr><th>tool</th><td>freezeout {esc(str(prov.tool_version))}</td></tr>
<tr><th>qualified (UTC)</th><td>{esc(str(prov.date))}</td></tr>
{"" if prov.recorded else _NOT_RECORDED}
<tr><th>options</th><td><code>{opts}</code></td></tr></table>
<p class=sub>Exports: lot.json (this report's data) and lot.csv (one row per wafer and
claim).</p>
</body></html>
"""


def write_lot_report(qualification: LotQualification,
                     out_dir: str | Path) -> dict[str, Path]:
    """Write lot.json, lot.csv, the charts and lot_report.html into ``out_dir``, as one set.

    The files are written into a sibling temporary folder that then replaces ``out_dir``
    (:func:`freezeout.io.atomic.atomic_folder`); a failure or a kill leaves the earlier report
    whole. A folder that also holds other files keeps them.

    Parameters
    ----------
    qualification
        The qualified lot; lot.json is its ``to_dict()``.
    out_dir
        The report folder (created if needed).

    Returns
    -------
    dict
        File name -> path written.
    """
    out = Path(out_dir)
    figures = lot_figures(qualification)
    doc = json.dumps(qualification.to_dict(), indent=2, allow_nan=False) + "\n"
    page = render_lot_html(qualification, figures)
    names = ["lot.json", "lot.csv", *figures, "lot_report.html"]
    known = {*lot_report_files(qualification.lot), *names}

    def owned(name: str) -> bool:  # this report's files, and any lot report's charts
        return name in known or re.fullmatch(r"chart_[A-Za-z0-9_]+\.png", name) is not None

    with atomic_folder(out, owned=owned) as tmp:
        atomic_write_text(tmp / "lot.json", doc)
        atomic_write_text(tmp / "lot.csv", lot_csv(qualification))
        for name, (png, _) in figures.items():
            atomic_write_bytes(tmp / name, png)
        atomic_write_text(tmp / "lot_report.html", page)
    return {name: out / name for name in names}
