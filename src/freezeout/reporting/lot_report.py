"""The lot report: lot.json, lot.csv (for a LIMS), charts and a self-contained HTML page.

Everything is drawn from the lot JSON document that ``freezeout qualify`` builds (the
:class:`~freezeout.claims.conformity.LotVerdict` dict plus ``claims``, per-wafer ``input`` and
``provenance``), so a stored record can be rendered again.
"""

from __future__ import annotations

import base64
import csv
import html
import io
import json
import math
import re
from collections.abc import Mapping
from pathlib import Path

from freezeout.claims.conformity import DEFERENCE, RULE_IN_WORDS
from freezeout.io.atomic import atomic_write_bytes, atomic_write_text
from freezeout.reporting.fit_report import CSS

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
"""


def _claim_label(key, quantity_of: dict) -> str:
    """``claim[2] (resistivity)`` for a claim key, or a dash."""
    if not key:
        return "—"
    q = quantity_of.get(key)
    return f"{key} ({q})" if q else str(key)

def _num(x) -> float | None:
    if x is None or isinstance(x, bool | str):
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _g(x, digits: int = 4) -> str:
    v = _num(x)
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


def _window_text(spec: Mapping, unit: str | None) -> str:
    lo, hi = _num(spec.get("min")), _num(spec.get("max"))
    u = _unit(unit)
    if lo is not None and hi is not None:
        text = f"{lo:.4g} to {hi:.4g} {u}"
    elif lo is not None:
        text = f"≥ {lo:.4g} {u}"
    elif hi is not None:
        text = f"≤ {hi:.4g} {u}"
    else:
        value = spec.get("value")
        return f"type {value}" if value else "—"
    nominal = _num(spec.get("nominal"))
    if nominal is not None:
        text += f" (nominal {nominal:.4g})"
    return text


def _measured_text(c: Mapping) -> str:
    m = c.get("measured") or {}
    value = m.get("value")
    if isinstance(value, str):
        return f"type {value}"
    v = _num(value)
    if v is None:
        return "no value"
    u = _num(m.get("stderr"))
    unit = _unit(c.get("unit"))
    if u is None:
        return f"{v:.4g} {unit} (u unknown)"
    return f"{v:.4g} ± {u:.2g} {unit}"


def numeric_claim_keys(lot: Mapping) -> list[str]:
    """The keys of the claims that have a specification window (charted), in file order."""
    keys: list[str] = []
    for w in lot.get("wafers") or []:
        for c in w.get("claims") or []:
            spec = c.get("spec") or {}
            if (spec.get("min") is not None or spec.get("max") is not None) and \
                    c.get("claim") not in keys:
                keys.append(c.get("claim"))
    return keys


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "", text) or "claim"


def lot_figures(lot: Mapping) -> dict[str, tuple[bytes, str]]:
    """One chart per claim with a specification window: file name -> (PNG bytes, caption)."""
    from freezeout.reporting import lot_figures as lf
    from freezeout.reporting.figures import png_bytes

    out = {}
    for key in numeric_claim_keys(lot):
        ax = lf.claim_axes(lot, key)
        quantity = ax.get_title(loc="left").split(": ", 1)[-1]
        k = _g((lot.get("decision") or {}).get("coverage_factor"))
        caption = (f"{key}, {quantity}: measured value per wafer with its expanded "
                   f"uncertainty ±U (k = {k}, thin bars with caps) and standard uncertainty "
                   "±u (thick bars), against the specification window (shaded). Marker shape "
                   "and the word under each wafer give its verdict on this claim.")
        out[f"chart_{_slug(key)}.png"] = (png_bytes(ax), caption)
        ax.figure.clear()
    return out


def lot_csv(lot: Mapping) -> str:
    """lot.csv: one row per wafer and claim (:data:`CSV_COLUMNS`), numbers at full precision.

    Empty cells stand for "none" (no uncertainty, a one-sided window, a type claim's limits).
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)

    def cell(x) -> str:
        if x is None:
            return ""
        if isinstance(x, str):
            return x
        v = _num(x)
        return "" if v is None else repr(v)

    for wafer in lot.get("wafers") or []:
        for c in wafer.get("claims") or []:
            m = c.get("measured") or {}
            spec = c.get("spec") or {}
            value = m.get("value")
            w.writerow([cell(x) for x in (
                lot.get("lot"), lot.get("supplier"), lot.get("date"), wafer.get("id"),
                c.get("claim"), c.get("quantity"), c.get("unit"), c.get("temperature_K"),
                value, m.get("stderr"), c.get("expanded_uncertainty"),
                c.get("coverage_factor"), spec.get("min"), spec.get("max"),
                spec.get("nominal"), spec.get("value"), c.get("verdict"), c.get("margin_U"),
                c.get("conformance_probability"), c.get("method"), c.get("rule"))])
    return buf.getvalue()


def _claim_rows(wafer: Mapping) -> str:
    rows = []
    for c in wafer.get("claims") or []:
        temp = _num(c.get("temperature_K"))
        quantity = str(c.get("quantity")).replace("_", " ")
        if temp is not None and c.get("quantity") == "resistivity":
            quantity += f" at {temp:g} K"
        big_u = _num(c.get("expanded_uncertainty"))
        u_text = "—" if big_u is None else f"{big_u:.2g} {_unit(c.get('unit'))}"
        margin = _num(c.get("margin_U"))
        p_c = _num(c.get("conformance_probability"))
        rows.append(
            f"<tr><td>{html.escape(str(c.get('claim')))}</td><td>{html.escape(quantity)}</td>"
            f"<td class=num>{html.escape(_measured_text(c))}</td>"
            f"<td class=num>{html.escape(u_text)}</td>"
            f"<td>{html.escape(_window_text(c.get('spec') or {}, c.get('unit')))}</td>"
            f"<td>{_badge(str(c.get('verdict')))}</td>"
            f"<td class=num>{'—' if margin is None else f'{margin:+.2f}'}</td>"
            f"<td class=num>{_probability(p_c)}</td>"
            f"<td>{html.escape(str(c.get('method') or '—'))}</td></tr>")
        notes = list(c.get("notes") or [])
        if notes:
            rows.append(f"<tr><td></td><td class=note colspan=8>"
                        f"{'<br>'.join(html.escape(str(n)) for n in notes)}</td></tr>")
    return "".join(rows)


def _wafer_section(wafer: Mapping) -> str:
    esc = html.escape
    inp = wafer.get("input") or {}
    how = inp.get("how") or ""
    run = inp.get("run")
    lines = []
    if run:
        lines.append(f"run <code>{esc(str(run))}</code>")
    if how:
        lines.append(esc(how))
    if inp.get("material"):
        lines.append(f"material {esc(str(inp['material']))}")
    hall = inp.get("hall_factor") or {}
    r_h = _num(hall.get("value"))
    if r_h is not None:
        u_r = _num(hall.get("stderr")) or 0.0
        text = f"Hall factor r_H = {r_h:g}" + (f" ± {u_r:g}" if u_r > 0 else "")
        if hall.get("source"):
            text += f" ({hall['source']})"
        lines.append(esc(text))
    fit = inp.get("fit") or {}
    if fit:
        red = _num(fit.get("reduced_chi2"))
        lines.append(f"{fit.get('n_points')} points, reduced χ² = "
                     f"{'—' if red is None else f'{red:.3g}'}")
    notes = [str(n) for n in wafer.get("notes") or []]
    notes_html = "".join(f"<div class=warn>{esc(n)}</div>" for n in notes)
    head = (f"<h3 id='wafer-{esc(str(wafer.get('id')))}'>Wafer {esc(str(wafer.get('id')))} "
            f"{_badge(str(wafer.get('verdict')))}</h3>")
    return (f"{head}<p class=sub>{' · '.join(lines)}</p>"
            f"<p>{esc(str(wafer.get('sentence') or ''))}</p>"
            "<table><tr><th>claim</th><th>quantity</th><th>measured ± u</th><th>U</th>"
            "<th>specification</th><th>verdict</th><th>margin [U]</th><th>p<sub>c</sub></th>"
            f"<th>method</th></tr>{_claim_rows(wafer)}</table>{notes_html}")


def render_lot_html(lot: Mapping, figures: Mapping[str, tuple[bytes, str]]) -> str:
    """The lot report page, figures embedded as data URIs (no outside files needed).

    Parameters
    ----------
    lot
        The lot JSON document.
    figures
        File name -> (PNG bytes, caption), e.g. from :func:`lot_figures`.

    Returns
    -------
    str
        The HTML text.
    """
    esc = html.escape
    prov = lot.get("provenance") or {}
    decision = lot.get("decision") or {}
    rule = str(decision.get("rule"))
    k = _g(decision.get("coverage_factor"))
    counts = lot.get("counts") or {}
    quantity_of = {c.get("key"): str(c.get("quantity", "")).replace("_", " ")
                   for c in lot.get("claims") or []}
    summary = []
    for w in lot.get("wafers") or []:
        m = _num(w.get("margin_U"))
        wid = esc(str(w.get("id")))
        summary.append(
            f"<tr><td><a href='#wafer-{wid}'>{wid}</a></td><td>{_badge(str(w.get('verdict')))}"
            f"</td><td>{esc(_claim_label(w.get('decided_by'), quantity_of))}</td>"
            f"<td class=num>{'—' if m is None else f'{m:+.2f}'}</td>"
            f"<td>{esc(str((w.get('input') or {}).get('how') or ''))}</td></tr>")
    claims = []
    for c in lot.get("claims") or []:
        spec = c.get("spec") or {"value": c.get("value")}
        temp = _num(c.get("temperature_K"))
        extra = []
        if c.get("dopant"):
            extra.append(f"dopant {c['dopant']}")
        if c.get("unit_as_written"):
            extra.append(f"written in {c['unit_as_written']}")
        if c.get("note"):
            extra.append(str(c["note"]))
        claims.append(
            f"<tr><td>{esc(str(c.get('key')))}</td>"
            f"<td>{esc(str(c.get('quantity')).replace('_', ' '))}</td>"
            f"<td>{esc(_window_text(spec, (spec or {}).get('unit')))}</td>"
            f"<td class=num>{'—' if temp is None else f'{temp:g} K'}</td>"
            f"<td>{esc('; '.join(extra))}</td></tr>")
    figs = []
    for name, (png, caption) in figures.items():
        b64 = base64.b64encode(png).decode("ascii")
        figs.append(f"<figure><img alt='{esc(caption)}' src='data:image/png;base64,{b64}'>"
                    f"<figcaption>{esc(caption)} ({esc(name)})</figcaption></figure>")
    wafers = "".join(_wafer_section(w) for w in lot.get("wafers") or [])
    opts = esc(json.dumps(prov.get("options", {}), sort_keys=True))
    certificate = lot.get("certificate")
    sub = [f"supplier {esc(str(lot.get('supplier')))}", f"lot date {esc(str(lot.get('date')))}"]
    if certificate:
        sub.append(f"certificate {esc(str(certificate))}")
    sub.append(f"{len(lot.get('wafers') or [])} wafers")
    sub.append(f"{esc(rule)} rule, k = {k}")
    note = f"<p>{esc(str(lot['note']))}</p>" if lot.get("note") else ""
    # the deference sentence stands once, in bold under the rule
    sentence = str(lot.get("sentence") or "").replace(DEFERENCE, "").strip()
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8">
<title>freezeout lot qualification — {esc(str(lot.get('lot')))}</title>
<style>{CSS}{_VERDICT_CSS}</style></head><body>
<h1>Lot qualification of {esc(str(lot.get('lot')))}</h1>
<p class=sub>{' · '.join(sub)}</p>{note}
<div class=lotverdict>Lot verdict: {_badge(str(lot.get('verdict')))}
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
<h2>Claims</h2>
<table><tr><th>claim</th><th>quantity</th><th>specification</th><th>temperature</th>
<th>details</th></tr>{''.join(claims)}</table>
<h2>Measured against claimed</h2>{''.join(figs) or '<p>No claim with a numeric window.</p>'}
<h2>Per wafer</h2>{wafers}
<h2>Provenance</h2>
<table><tr><th>lot file</th><td>{esc(str(prov.get('lot_file')))}</td></tr>
<tr><th>input sha256</th><td><code>{esc(str(prov.get('lot_input_sha256')))}</code>
(the lot file and every run and material file it names)</td></tr>
<tr><th>tool</th><td>freezeout {esc(str(prov.get('tool_version')))}</td></tr>
<tr><th>qualified (UTC)</th><td>{esc(str(prov.get('date')))}</td></tr>
<tr><th>options</th><td><code>{opts}</code></td></tr></table>
<p class=sub>Exports: lot.json (this report's data) and lot.csv (one row per wafer and
claim).</p>
</body></html>
"""


def write_lot_report(lot: Mapping, out_dir: str | Path) -> dict[str, Path]:
    """Write lot.json, lot.csv, the charts and lot_report.html into ``out_dir``, each atomically.

    Parameters
    ----------
    lot
        The lot JSON document.
    out_dir
        The report folder (created if needed).

    Returns
    -------
    dict
        File name -> path written.
    """
    out = Path(out_dir)
    figures = lot_figures(lot)
    paths = {
        "lot.json": atomic_write_text(out / "lot.json",
                                      json.dumps(lot, indent=2, allow_nan=False) + "\n"),
        "lot.csv": atomic_write_text(out / "lot.csv", lot_csv(lot)),
    }
    for name, (png, _) in figures.items():
        paths[name] = atomic_write_bytes(out / name, png)
    paths["lot_report.html"] = atomic_write_text(out / "lot_report.html",
                                                 render_lot_html(lot, figures))
    return paths
