"""``freezeout qualify``: check a lot's certificate claims against the measured wafers.

Parses the options, runs :func:`freezeout.api.qualify_lot` with a progress bar on stderr,
prints the verdicts and maps the lot verdict to the exit code: 0 accepted, 3 rejected,
4 indeterminate (2 bad input).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from freezeout import api
from freezeout.cli.common import DbOpt, JsonOpt, output_path, print_json
from freezeout.cli.render import console, markup_safe, say, show, text

HELP = ("Qualify a wafer lot: fit every wafer's run, decide each certificate claim with the "
        "measurement uncertainty (lot file's decision rule), write lot_report.html, lot.json "
        "and lot.csv, and store the result in the history. Exit 0 accepted, 3 rejected, "
        "4 indeterminate, 2 bad input.")


def qualify_command(
    lot: Annotated[Path, typer.Argument(metavar="LOT.toml",
                                        help="Lot file (TOML; see docs/lot_format.md).")],
    out: Annotated[Path | None, typer.Option(
        "--out", "-o", parser=output_path, metavar="PATH",
        help="Report folder (default: reports/<lot>/; with --json, no report "
             "unless --out is given).")] = None,
    db: DbOpt = None,
    json_output: JsonOpt = False,
    workers: Annotated[int | None, typer.Option(
        "--workers", "-j", help="Processes fitting wafers at once (default: 1, in this "
        "process, for a lot of up to 5 wafers, else one per 3 wafers up to the number of "
        "CPUs).")] = None,
    no_history: Annotated[bool, typer.Option(
        "--no-history", help="A trial run: store nothing in the history database; the "
        "report says the run was not recorded.")] = False,
    allow_outside_paths: Annotated[bool, typer.Option(
        "--allow-outside-paths", help="Read run and material files outside the lot file's "
        "folder ('..', absolute paths, symbolic links out); refused by default. The report "
        "says so.")] = False,
) -> int:
    """Qualify a lot; see HELP."""
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeElapsedColumn,
    )

    show = not json_output and sys.stderr.isatty()
    columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
               TimeElapsedColumn())
    with Progress(*columns, console=Console(stderr=True), disable=not show,
                  transient=True) as bar:
        task = bar.add_task("measuring wafers", total=None)

        def progress(done: int, total: int, wafer_id: str) -> None:
            bar.update(task, total=total, completed=done,
                       description=f"measured wafer {markup_safe(wafer_id)}")

        outcome = api.qualify_lot(lot, out=out, report=not json_output, db=db,
                                  workers=workers, progress=progress,
                                  allow_outside=allow_outside_paths,
                                  record=not no_history)
    if json_output:
        print_json(outcome.to_dict())
    else:
        _print_summary(outcome)
    return outcome.exit_code


def indeterminate_lines(doc: dict) -> list[str]:
    """Why each indeterminate verdict is so: a line per claim, or per unmeasured wafer.

    Parameters
    ----------
    doc
        The lot JSON (:meth:`freezeout.api.QualificationOutcome.to_dict`).

    Returns
    -------
    list of str
        ``indeterminate: W02 claim[2] (resistivity): <the claim's sentence>``, or for a wafer
        that could not be measured (every claim indeterminate for one reason)
        ``indeterminate: W03: not measured: <reason>``.
    """
    lines = []
    for w in doc["wafers"]:
        claims = [c for c in w["claims"] if c["verdict"] == "indeterminate"]
        reason = w["input"]["reason"]
        if claims and reason:
            lines.append(f"indeterminate: {w['id']}: not measured: {reason}")
            continue
        lines += [f"indeterminate: {w['id']} {c['claim']} ({c['quantity']}): {c['sentence']}"
                  for c in claims]
    return lines


def _print_summary(outcome) -> None:
    from rich.table import Table

    doc = outcome.to_dict()
    con = console()
    table = Table(title=text(f"Lot {doc['lot']} ({doc['supplier']}, {doc['date']}), "
                             f"{doc['decision']['rule']} rule"), title_justify="left")
    for col in ("wafer", "verdict", "decided by", "margin [U]", "measured from"):
        table.add_column(col, justify="right" if col == "margin [U]" else "left")
    for w in doc["wafers"]:
        m = w["margin_U"]
        how = w["input"]["how"]
        if w["input"]["reason"]:
            how += f": {w['input']['reason']}"
        table.add_row(*(text(x) for x in (w["id"], w["verdict"], w["decided_by"] or "—",
                                          "—" if m is None else f"{m:+.2f}", how)))
    show(con, table)
    for line in indeterminate_lines(doc):
        say(con, line)
    say(con, doc["sentence"])
    if outcome.written:
        say(con, f"report: {outcome.written['lot_report.html']}")
    saved = outcome.lot_record
    if saved is None:
        say(con, "history: not recorded (--no-history)")
        return
    state = "stored" if saved.created else "already stored, nothing new"
    say(con, f"history: lot record {saved.record_id} ({state}); {outcome.fits_new} new fit "
             "record(s)")
