"""``freezeout reduce``: raw van der Pauw / Hall readings to a reduced CSV that ``fit`` reads.

The numerical stack (numpy, the reduction) is imported only when the command runs, so that
``freezeout --help`` stays fast.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer
from rich.console import Console
from rich.markup import escape
from rich.table import Table

from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.reduction import QualityThresholds, ReducedRun

__all__ = ["HELP", "TEMPERATURE_TOLERANCE", "default_output", "reduce_command"]

HELP = ("Reduce raw van der Pauw and Hall readings (one row per reading) to a reduced run "
        "that fit reads, with data-quality findings per temperature.")

#: Default set-point grouping tolerance [K]; equal to
#: ``freezeout.reduction.DEFAULT_TEMPERATURE_TOLERANCE`` (kept here to avoid importing numpy).
TEMPERATURE_TOLERANCE = 0.5

_SEVERITY_STYLE = {"info": "cyan", "warning": "yellow", "severe": "bold red"}


def default_output(raw: Path) -> Path:
    """Default output of ``reduce``: ``<raw stem>_reduced.csv`` next to the raw file.

    Parameters
    ----------
    raw
        The raw-readings file.

    Returns
    -------
    Path
        The output path.
    """
    return raw.with_name(f"{raw.stem}_reduced.csv")


def _parse_thresholds(items: list[str] | None) -> QualityThresholds:
    from freezeout.reduction import QualityThresholds

    overrides = {}
    for item in items or []:
        name, sep, value = item.partition("=")
        if not sep:
            raise InputError(f"--threshold {item!r}: write NAME=VALUE, e.g. "
                             "reciprocity_warning=0.05")
        try:
            overrides[name.strip()] = float(value)
        except ValueError:
            raise InputError(f"--threshold {item!r}: {value!r} is not a number") from None
    try:
        return QualityThresholds.from_overrides(overrides)
    except ValueError as exc:
        raise InputError(f"--threshold: {exc}") from None


def _finite(value):
    """Replace NaN and infinities by None so the JSON output is strict JSON."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    return value


def _fmt(value: float, err: float | None = None) -> str:
    if not math.isfinite(value):
        return str(value)
    text = f"{value:.4g}"
    if err is not None and math.isfinite(err):
        text += f"±{err:.2g}"
    return text


def _summary_table(run: ReducedRun) -> Table:
    c = run.majority_carrier
    table = Table(title=f"Reduced run ({run.n_points} set points)",
                  caption="flags: yellow = warning, red ! = severe, cyan = info")
    for name in ("T [K]", "rho [ohm cm]", "R_H [cm^3/C]", f"{c} [cm^-3]", "mu_H [cm^2/(V s)]",
                 "flags"):
        table.add_column(escape(name), justify="left" if name == "flags" else "right")
    for i in range(run.n_points):
        marks = []
        for f in run.findings_at(i):
            bang = "!" if f.severity == "severe" else ""
            marks.append(f"[{_SEVERITY_STYLE[f.severity]}]{f.code}{bang}[/]")
        table.add_row(
            f"{run.temperature[i]:.4g}",
            _fmt(run.resistivity[i], run.resistivity_err[i]),
            _fmt(run.hall_coefficient[i], run.hall_coefficient_err[i]),
            _fmt(run.density[i], run.density_err[i]) + ("" if run.carrier[i] == c
                                                         else f" ({run.carrier[i]})"),
            _fmt(run.mobility[i], run.mobility_err[i]),
            " ".join(marks) if marks else "[green]clean[/]",
        )
    return table


def reduce_command(
    raw: Annotated[Path, typer.Argument(help="Raw-readings CSV (see docs/raw_format.md).")],
    out: Annotated[
        Path | None,
        typer.Option("--out", "-o",
                     help="Reduced CSV to write (default: <raw stem>_reduced.csv next to RAW)."),
    ] = None,
    thickness: Annotated[
        str | None,
        typer.Option(help="Thickness, overrides the file's, e.g. 350um or '0.35 mm +- 5 um'."),
    ] = None,
    temperature_tolerance: Annotated[
        float,
        typer.Option(help="Readings within this many K of a set point's mean join it."),
    ] = TEMPERATURE_TOLERANCE,
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
    from freezeout.io.raw import load_raw_run
    from freezeout.io.reduced import write_reduced_csv

    try:
        thresholds = _parse_thresholds(threshold)
        if not (hall_factor > 0 and math.isfinite(hall_factor)):
            raise InputError(f"--hall-factor must be positive, got {hall_factor:g}")
        if not (temperature_tolerance > 0 and math.isfinite(temperature_tolerance)):
            raise InputError("--temperature-tolerance must be positive, got "
                             f"{temperature_tolerance:g}")
        run = load_raw_run(raw, thickness=thickness, hall_factor=hall_factor,
                           temperature_tolerance=temperature_tolerance, thresholds=thresholds)
        target = out if out is not None else default_output(raw)
        write_reduced_csv(run, target, raw_source=raw)
    except InputError as exc:
        typer.echo(f"freezeout: error: {exc}", err=True)
        raise typer.Exit(code=2) from None
    except OSError as exc:
        typer.echo(f"freezeout: error: cannot write {exc.filename or ''}: {exc.strerror or exc}",
                   err=True)
        raise typer.Exit(code=2) from None

    n_severe = int(run.severe.sum())
    n_flagged = sum(bool(f) for f in run.flags)
    if json_output:
        payload = {
            "output": str(target),
            "points": run.n_points,
            "flagged": n_flagged,
            "severe": n_severe,
            "carrier": run.majority_carrier,
            "run": run.to_dict(),
        }
        typer.echo(json.dumps(_finite(payload), allow_nan=False))
        return
    console = Console()
    console.print(_summary_table(run))
    if run.findings:
        detail = Table(title="Data-quality findings")
        detail.add_column("T [K]", justify="right")
        detail.add_column("severity")
        detail.add_column("code")
        detail.add_column("finding")
        for f in run.findings:
            style = _SEVERITY_STYLE[f.severity]
            detail.add_row(f"{f.temperature:.4g}", f"[{style}]{f.severity}[/]", f.code,
                           escape(f.message))
        console.print(detail)
    console.print(
        f"wrote {target} ({run.n_points} points, {n_flagged} flagged, {n_severe} severe; "
        "severe points are kept but left out of fit unless asked)",
        markup=False, highlight=False,
    )
