"""``freezeout history``: list stored fits and qualifications; draw each supplier's trend."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from freezeout import api
from freezeout.cli.common import DbOpt, JsonOpt, output_path, print_json
from freezeout.cli.render import console, num, say, show, text

HELP = ("List the fits and lot qualifications stored in the history database, and draw the "
        "trend of measured over claimed values per lot for each supplier (a PNG per "
        "supplier).")


def _result_text(rec) -> str:
    if rec.kind == "lot":
        rule = f" ({rec.decision_rule} rule)" if rec.decision_rule else ""
        return f"{rec.verdict}{rule}"
    head = " ".join(x for x in (f"{rec.carrier}-type" if rec.carrier else "", rec.material or "")
                    if x)
    if rec.net_doping is None:
        return head or "—"
    se = "" if rec.net_doping_stderr is None else f" ± {num(rec.net_doping_stderr, 2)}"
    value = num(abs(rec.net_doping))
    return f"{head}: {value}{se}" if head else f"{value}{se}"


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
        "--out", "-o", parser=output_path, metavar="PATH",
        help="Where the trend PNGs go: a folder (default reports/history/, "
             "files trend_<supplier>.png) or, for one supplier, a .png file. With --json, no PNG "
             "unless --out is given.")] = None,
    json_output: JsonOpt = False,
) -> int:
    """List history records and draw trends; see HELP."""
    result = api.history(supplier=supplier, since=since, kind=kind, db=db, out=out,
                         draw=not json_output)
    if json_output:
        print_json(result.to_dict())
        return 0
    _print(result.records, result.suppliers, result.trends, result.figures)
    return 0


#: The fit options shown in the history table, in this order (the rest stay in --json).
_SHOWN_OPTIONS = ("material", "donors", "acceptors", "statistics", "hall_factor", "degeneracy",
                  "fix", "bounds", "include_mixed", "include_flagged", "mobility")


def options_text(options) -> str:
    """The options a record was made with, compact: ``donors=1 acceptors=1 fix E_D1=0.045``.

    For a fit: the options that were set (None, False and empty ones left out); for a lot:
    the fit settings used for its wafers. Everything is in ``--json``.
    """
    opts = dict(options or {})
    if "fit" in opts and isinstance(opts["fit"], dict):  # a lot: the wafers' fit settings
        opts = opts["fit"]
    parts = []
    for key in _SHOWN_OPTIONS:
        value = opts.get(key)
        if value in (None, False, {}, [], ()):
            continue
        if isinstance(value, dict):
            inner = " ".join(f"{k}={num(v[0], 3)}:{num(v[1], 3)}" if isinstance(v, list | tuple)
                             else f"{k}={num(v, 4)}" for k, v in value.items())
            parts.append(f"{key} {inner}")
        elif value is True:
            parts.append(key.replace("_", "-"))
        else:
            parts.append(f"{key}={num(value, 4) if isinstance(value, float) else value}")
    return " ".join(parts) or "—"


def _print(records, suppliers, trends, figures) -> None:
    from rich.table import Table

    con = console()
    if not records:
        say(con, "no records match")
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
        table.add_column("options", overflow="fold")
        for r in records:
            date = r.lot_date if r.lot_date is not None else r.created_at.date()
            table.add_row(*(text(x) for x in (r.kind, str(r.record_id), date.isoformat(),
                                              r.supplier or "—", r.lot or "—", r.input_name,
                                              _result_text(r), options_text(r.options))))
        show(con, table)
    for s in suppliers:
        if s not in trends:
            say(con, f"no lot with numeric claims stored for supplier {s!r}: no trend")
        elif figures.get(s) is not None:
            say(con, f"trend for {s}: {figures[s]}")
