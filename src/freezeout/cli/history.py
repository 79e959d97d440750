"""``freezeout history``: list stored fits and qualifications; draw each supplier's trend."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Annotated

import typer

from freezeout.cli.common import DbOpt, JsonOpt, print_json
from freezeout.errors import InputError

HELP = ("List the fits and lot qualifications stored in the history database, and draw the "
        "trend of measured over claimed values per lot for each supplier (a PNG per "
        "supplier).")

_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")


def parse_since(text: str | None):
    """``--since YYYY-MM-DD`` as a date, or an InputError naming the option."""
    import datetime as dt

    if text is None:
        return None
    t = text.strip()
    try:
        if not _DATE.match(t):
            raise ValueError(t)
        return dt.date.fromisoformat(t)
    except ValueError:
        raise InputError(f"--since: {text!r} is not a date; write YYYY-MM-DD, e.g. "
                         "2026-11-03") from None


def supplier_file_name(supplier: str) -> str:
    """The trend PNG's file name for a supplier, e.g. ``trend_Kestrel_Ridge_Wafers.png``."""
    slug = re.sub(r"[^A-Za-z0-9._-]+", "_", supplier).strip("._") or "supplier"
    return f"trend_{slug}.png"


def _result_text(rec) -> str:
    if rec.kind == "lot":
        rule = f" ({rec.decision_rule} rule)" if rec.decision_rule else ""
        return f"{rec.verdict}{rule}"
    head = " ".join(x for x in (f"{rec.carrier}-type" if rec.carrier else "", rec.material or "")
                    if x)
    if rec.net_doping is None:
        return head or "—"
    se = "" if rec.net_doping_stderr is None else f" ± {rec.net_doping_stderr:.2g}"
    return f"{head}: {abs(rec.net_doping):.4g}{se}" if head else f"{abs(rec.net_doping):.4g}{se}"


def _trend_targets(out: Path | None, suppliers: list[str], json_output: bool
                   ) -> dict[str, Path | None]:
    if out is None:
        folder = None if json_output else Path("reports") / "history"
        return {s: None if folder is None else folder / supplier_file_name(s)
                for s in suppliers}
    if out.suffix.lower() == ".png":
        if len(suppliers) > 1:
            raise InputError(f"--out {out} names one file, but {len(suppliers)} suppliers have "
                             "trends; give a folder, or choose one with --supplier")
        return {s: out for s in suppliers}
    return {s: out / supplier_file_name(s) for s in suppliers}


def history_command(
    supplier: Annotated[str | None, typer.Option(
        "--supplier", "-s", help="Only this supplier's lots (as written in the lot files); "
        "fits carry no supplier and are then left out.")] = None,
    since: Annotated[str | None, typer.Option(
        "--since", help="Only lots dated, and fits stored, on or after this date "
        "(YYYY-MM-DD).")] = None,
    kind: Annotated[str | None, typer.Option(
        "--kind", help="Only 'fit' or 'lot' records.")] = None,
    db: DbOpt = None,
    out: Annotated[Path | None, typer.Option(
        "--out", "-o", help="Where the trend PNGs go: a folder (default reports/history/, "
        "files trend_<supplier>.png) or, for one supplier, a .png file. With --json, no PNG "
        "unless --out is given.")] = None,
    json_output: JsonOpt = False,
) -> int:
    """List history records and draw trends; see HELP."""
    from freezeout.storage.db import StorageError, open_store

    day = parse_since(since)
    if kind is not None and kind not in ("fit", "lot"):
        raise InputError(f"--kind must be 'fit' or 'lot', got {kind!r}")
    try:
        store = open_store(db)
    except StorageError as exc:
        raise InputError(f"--db: history database: {exc}") from None
    try:
        records = store.list_records(supplier=supplier, since=day, kind=kind)
        if supplier is not None:
            suppliers = [supplier]
        elif kind == "fit":
            suppliers = []
        else:
            suppliers = sorted({r.supplier for r in records if r.kind == "lot" and r.supplier})
        trends = {}
        for s in suppliers:
            pts = [p for p in store.trend(s) if day is None or p.lot_date >= day]
            if pts:
                trends[s] = [p.to_dict() for p in pts]
    finally:
        store.close()

    targets = _trend_targets(out, list(trends), json_output)
    figures: dict[str, Path | None] = {}
    for s, pts in trends.items():
        path = targets[s]
        if path is not None:
            from freezeout.io.atomic import atomic_write_bytes
            from freezeout.reporting.figures import png_bytes
            from freezeout.reporting.lot_figures import trend_axes

            ax = trend_axes(pts, s)
            atomic_write_bytes(path, png_bytes(ax))
        figures[s] = path

    if json_output:
        print_json({
            "records": [r.to_dict() for r in records],
            "trends": {s: {"points": pts, "figure": None if figures[s] is None
                           else str(figures[s])} for s, pts in trends.items()},
        })
        return 0
    _print(records, suppliers, trends, figures)
    return 0


def _print(records, suppliers, trends, figures) -> None:
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    con = Console()
    if not records:
        con.print("no records match", highlight=False, markup=False)
    else:
        table = Table(title=f"{len(records)} record(s) (date: lot date for lots, storage "
                      "date (UTC) for fits)", title_justify="left")
        table.add_column("kind", no_wrap=True)
        table.add_column("id", justify="right", no_wrap=True)
        table.add_column("date", no_wrap=True, min_width=10)
        table.add_column("supplier", overflow="fold")
        table.add_column("lot", no_wrap=True)
        table.add_column("input", overflow="fold")
        table.add_column("verdict / net doping [cm^-3]", overflow="fold")
        for r in records:
            date = r.lot_date if r.lot_date is not None else r.created_at.date()
            table.add_row(*(Text(x) for x in (r.kind, str(r.record_id), date.isoformat(),
                                              r.supplier or "—", r.lot or "—", r.input_name,
                                              _result_text(r))))
        con.print(table)
    for s in suppliers:
        if s not in trends:
            con.print(f"no lot with numeric claims stored for supplier {s!r}: no trend",
                      highlight=False, markup=False)
        elif figures.get(s) is not None:
            con.print(f"trend for {s}: {figures[s]}", highlight=False, markup=False)
