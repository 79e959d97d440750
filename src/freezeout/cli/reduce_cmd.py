"""``freezeout reduce``: raw van der Pauw / Hall readings to a reduced CSV that ``fit`` reads."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from freezeout import api
from freezeout.cli.common import output_path, parse_assignments, parse_number
from freezeout.cli.render import clean, console, num, say, show, text

if TYPE_CHECKING:
    from rich.table import Table

__all__ = ["HELP", "reduce_command"]

HELP = ("Reduce raw van der Pauw and Hall readings (one row per reading) to a reduced run "
        "that fit reads, with data-quality findings per temperature.")

_SEVERITY_STYLE = {"info": "cyan", "warning": "yellow", "severe": "bold red"}
#: The mark after a flag's code, so a severity reads without colour (CI logs, pipes).
_SEVERITY_MARK = {"info": "", "warning": "?", "severe": "!"}
#: The word in the findings table.
_SEVERITY_WORD = {"info": "info", "warning": "warning", "severe": "severe!"}


def _parse_thresholds(items: list[str] | None) -> dict[str, float]:
    return {name: parse_number(value, f"--threshold {name}")
            for name, value in parse_assignments(items, "--threshold").items()}


def _fmt(value: float, err: float | None = None) -> str:
    if not math.isfinite(value):
        return str(value)
    out = f"{value:.4g}"
    if err is not None and math.isfinite(err):
        out += f"±{err:.2g}"
    return out


def _summary_table(run) -> Table:
    from rich.table import Table
    from rich.text import Text

    c = run.majority_carrier
    table = Table(title=f"Reduced run ({run.n_points} set points)",
                  caption="flags: CODE! = severe (red), CODE? = warning (yellow), CODE = info "
                  "(cyan)")
    for name in ("T [K]", "rho [ohm cm]", "R_H [cm^3/C]", f"{c} [cm^-3]", "mu_H [cm^2/(V s)]",
                 "flags"):
        table.add_column(text(name), justify="left" if name == "flags" else "right")
    for i in range(run.n_points):
        marks = Text()
        for f in run.findings_at(i):
            if marks:
                marks.append(" ")
            marks.append(clean(f.code) + _SEVERITY_MARK[f.severity],
                         style=_SEVERITY_STYLE[f.severity])
        table.add_row(
            f"{run.temperature[i]:.4g}",
            _fmt(run.resistivity[i], run.resistivity_err[i]),
            _fmt(run.hall_coefficient[i], run.hall_coefficient_err[i]),
            _fmt(run.density[i], run.density_err[i]) + ("" if run.carrier[i] == c
                                                         else f" ({run.carrier[i]})"),
            _fmt(run.mobility[i], run.mobility_err[i]),
            marks if marks else Text("clean", style="green"),
        )
    return table


def reduce_command(
    raw: Annotated[Path, typer.Argument(help="Raw-readings CSV (see docs/raw_format.md).")],
    out: Annotated[
        Path | None,
        typer.Option("--out", "-o", parser=output_path, metavar="PATH",
                     help="Reduced CSV to write (default: <raw stem>_reduced.csv next to RAW)."),
    ] = None,
    thickness: Annotated[
        str | None,
        typer.Option(help="Thickness, overrides the file's, e.g. 350um or '0.35 mm +- 5 um'."),
    ] = None,
    temperature_tolerance: Annotated[
        float | None,
        typer.Option(help="Readings within this many K of a set point's mean join it "
                     f"(default {api.DEFAULT_GROUPING_TOLERANCE_K:g} K)."),
    ] = None,
    hall_factor: Annotated[
        float, typer.Option(help="Hall scattering factor r_H for the density r_H/(q|R_H|).")
    ] = 1.0,
    json_output: Annotated[
        bool, typer.Option("--json", help="Print the result as JSON instead of tables.")
    ] = False,
    threshold: Annotated[
        list[str] | None,
        typer.Option(help="Override a quality threshold, NAME=VALUE (repeatable), e.g. "
                     "reciprocity_warning=0.05."),
    ] = None,
) -> None:
    """Reduce raw van der Pauw and Hall readings to a reduced run that `fit` reads."""
    outcome = api.reduce_file(raw, out=out, thickness=thickness, hall_factor=hall_factor,
                              temperature_tolerance=temperature_tolerance,
                              thresholds=_parse_thresholds(threshold))
    if json_output:
        typer.echo(json.dumps(outcome.to_dict(), allow_nan=False))
        return
    from rich.table import Table
    from rich.text import Text

    run = outcome.run
    con = console()
    show(con, _summary_table(run))
    if run.findings:
        detail = Table(title="Data-quality findings")
        detail.add_column("T [K]", justify="right")
        detail.add_column("severity")
        detail.add_column("code")
        detail.add_column("finding")
        for f in run.findings:
            style = _SEVERITY_STYLE[f.severity]
            detail.add_row(num(f.temperature), Text(_SEVERITY_WORD[f.severity], style=style),
                           text(f.code), text(f.message))
        show(con, detail)
    say(con, f"wrote {outcome.output} ({run.n_points} points, {outcome.n_flagged} flagged, "
             f"{outcome.n_severe} severe; severe points are kept but left out of fit unless "
             "asked)")
