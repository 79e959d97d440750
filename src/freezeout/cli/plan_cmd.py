"""``freezeout plan``: the temperatures of the next run by an optimal-design criterion."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from freezeout import api
from freezeout.cli.common import (
    JsonOpt,
    MaterialFileOpt,
    SimMaterialOpt,
    output_path,
    parse_level,
    parse_number,
    print_json,
)
from freezeout.cli.render import clean, console, num, say, show, text
from freezeout.errors import InputError

HELP = ("Propose the temperatures of the next run: the N points of the cryostat's range that "
        "make the chosen parameters' errors smallest (D- or A-optimal design on the fit's "
        "model), with the predicted errors beside those of N points evenly in 1000/T.")


def _range(text_: str) -> tuple[float, float]:
    parts = text_.split(":")
    if len(parts) != 2:
        raise InputError(f"--range {text_!r}: expected TMIN:TMAX in K, e.g. 20:400")
    return parse_number(parts[0], "--range TMIN"), parse_number(parts[1], "--range TMAX")


def _error(text_: str) -> float:
    t = text_.strip()
    if t.endswith("%"):
        return parse_number(t[:-1], "--error") / 100.0
    return parse_number(t, "--error")


def _stderr(x: float | None, unit: str) -> str:
    if x is None:
        return "—"
    return f"{x * 100:.3g} %" if unit == "relative" else f"{num(x * 1e3, 3)} meV"


def plan_command(
    t_range: Annotated[str, typer.Option(
        "--range", help="TMIN:TMAX the cryostat reaches [K].")],
    points: Annotated[int, typer.Option("--points", "-n", help="Point budget N.")] = 15,
    material: SimMaterialOpt = None,
    material_file: MaterialFileOpt = None,
    donor: Annotated[list[str] | None, typer.Option(
        "--donor", help="CONC,ENERGY_EV[,G] as for simulate. Repeatable.")] = None,
    acceptor: Annotated[list[str] | None, typer.Option(
        "--acceptor", help="CONC,ENERGY_EV[,G] as for simulate. Repeatable.")] = None,
    from_fit: Annotated[Path | None, typer.Option(
        "--from-fit", help="A fit result JSON (freezeout fit --json, or a report's "
        "fit.json): its material, levels, carrier and statistics.")] = None,
    statistics: Annotated[str | None, typer.Option(
        "--statistics", help="fermi-dirac (default) or boltzmann; with --from-fit the "
        "fit's.")] = None,
    target: Annotated[list[str] | None, typer.Option(
        "--target", help="A parameter that matters (N_D1, E_D1, N_A, ...). Repeatable; "
        "default every free parameter.")] = None,
    criterion: Annotated[str, typer.Option(
        "--criterion", help="D (largest det of the targets' information) or A (smallest "
        "sum of their variances, each relative to the even plan's).")] = "D",
    error: Annotated[str, typer.Option(
        "--error", help="Relative error of n per point, e.g. 2% or 0.02.")] = "2%",
    out: Annotated[Path | None, typer.Option(
        "--out", "-o", parser=output_path, metavar="PATH",
        help="Folder for plan.json, plan.csv and plan.png.")] = None,
    json_output: JsonOpt = False,
) -> int:
    """Propose a run plan; see HELP."""
    result = api.plan_temperatures(
        material=material, material_file=material_file,
        donors=[parse_level(x, "donor") for x in donor or []],
        acceptors=[parse_level(x, "acceptor") for x in acceptor or []],
        from_fit=from_fit, statistics=statistics, t_range=_range(t_range), points=points,
        targets=target, criterion=criterion, error=_error(error))
    if out is not None:
        api.write_plan(result, out)
    d = result.to_dict()
    if json_output:
        print_json(d)
        if out is not None:
            sys.stderr.write(f"wrote {clean(out)}\n")
        return 0
    _render(d)
    if out is not None:
        say(console(), f"wrote {out} (plan.json, plan.csv, plan.png)")
    return 0


def _render(d: dict) -> None:
    from rich.table import Table

    con = console()
    say(con, f"{d['material']}, {d['carrier']}-type ({d['statistics']}), "
             f"{d['range_K'][0]:g}–{d['range_K'][1]:g} K, {d['points']} points, "
             f"{d['criterion']}-optimal for {', '.join(d['targets'])}, "
             f"{d['relative_error'] * 100:g} % per point", "bold")
    say(con, "proposed temperatures [K]: "
             + ", ".join(f"{t:.4g}" for t in d["proposed_K"]))
    say(con, "even in 1000/T [K]:        " + ", ".join(f"{t:.4g}" for t in d["even_K"]))
    table = Table(title="predicted standard errors", title_justify="left")
    for col in ("parameter", "value", "target", "proposed", "even", "ratio"):
        table.add_column(col, justify="left" if col == "parameter" else "right")
    for p in d["parameters"]:
        unit = p["stderr_unit"]
        value = (f"{num(p['value'])} cm^-3" if p["unit"] == "cm^-3"
                 else f"{num(p['value'])} eV")
        table.add_row(text(p["name"]), text(value), text("yes" if p["target"] else ""),
                      text(_stderr(p["stderr_proposed"], unit)),
                      text(_stderr(p["stderr_even"], unit)),
                      text("—" if p["ratio"] is None else f"{p['ratio']:.3f}"))
    show(con, table)
    eff = d["efficiency_vs_even"]
    if eff is not None:
        say(con, f"the even plan would need about {eff:.2f} times as many points for the "
                 f"same {d['criterion']} criterion (predicted, linearised)")
    for note in d["notes"]:
        say(con, f"note: {note}")
