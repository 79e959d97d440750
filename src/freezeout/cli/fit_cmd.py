"""``freezeout fit``: fit a run and write its report."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from freezeout import api
from freezeout.cli.common import (
    DbOpt,
    JsonOpt,
    MaterialFileOpt,
    MaterialOpt,
    StatisticsOpt,
    parse_assignments,
    parse_number,
    print_json,
)
from freezeout.errors import InputError

HELP = ("Fit a temperature run (reduced CSV or raw readings) to the carrier model and write "
        "fit.json, figures and report.html.")


def fit_command(
    run: Annotated[Path, typer.Argument(
        metavar="RUN.csv", help="Run file: reduced CSV, or raw van der Pauw/Hall readings "
        "(recognised and reduced on the way in).")],
    material: MaterialOpt = None,
    material_file: MaterialFileOpt = None,
    donors: Annotated[int, typer.Option(help="Donor levels: partially ionized levels for an "
                                        "n-type run, 0/1 compensating donor for p-type.")] = 1,
    acceptors: Annotated[int, typer.Option(help="Acceptor levels: partially ionized levels "
                                           "for a p-type run, 0/1 compensating acceptor for "
                                           "n-type.")] = 1,
    statistics: StatisticsOpt = "fermi-dirac",
    hall_factor: Annotated[float | None, typer.Option(
        "--hall-factor", help="Hall scattering factor r_H (default: the file's own "
        "'# hall_factor:' line, else 1).")] = None,
    out: Annotated[Path | None, typer.Option("--out", "-o", help="Report folder (default: "
                                             "reports/<run name>/; with --json, no report "
                                             "unless --out is given).")] = None,
    json_output: JsonOpt = False,
    fix: Annotated[list[str] | None, typer.Option(
        "--fix", help="Hold a parameter: NAME=VALUE, e.g. E_D1=0.045 or N_A=1e14 "
        "(concentrations in cm^-3, energies in eV). Repeatable.")] = None,
    bound: Annotated[list[str] | None, typer.Option(
        "--bound", help="Bound a parameter: NAME=LOW:HIGH, e.g. E_D1=0.02:0.08. "
        "Repeatable.")] = None,
    degeneracy: Annotated[float | None, typer.Option(
        help="Ground-state degeneracy of the majority levels (default 2 donors, "
        "4 acceptors).")] = None,
    include_mixed: Annotated[bool, typer.Option(
        "--include-mixed", help="Keep points whose Hall sign is opposite to the run's.")] = False,
    include_flagged: Annotated[bool, typer.Option(
        "--include-flagged", help="Keep points that failed a severe quality check.")] = False,
    thickness: Annotated[str | None, typer.Option(
        help="Sample thickness for a raw file, e.g. 350um (overrides the file).")] = None,
    db: DbOpt = None,
    no_history: Annotated[bool, typer.Option(
        "--no-history", help="Do not store the fit in the history database.")] = False,
) -> int:
    """Fit a run; see HELP."""
    fixes = {k: parse_number(v, f"--fix {k}") for k, v in
             parse_assignments(fix, "--fix").items()}
    bounds = {}
    for k, v in parse_assignments(bound, "--bound").items():
        lo, sep, hi = v.partition(":")
        if not sep:
            raise InputError(f"--bound {k}={v}: expected LOW:HIGH")
        bounds[k] = (parse_number(lo, f"--bound {k}"), parse_number(hi, f"--bound {k}"))
    folder = None
    if out is not None or not json_output:
        folder = out if out is not None else api.default_report_folder(run)
        api.refuse_overwrite(api.fit_report_outputs(folder), [run, material_file])
    result = api.fit_file(run, material=material, material_file=material_file, donors=donors,
                          acceptors=acceptors, statistics=statistics, hall_factor=hall_factor,
                          degeneracy=degeneracy, fix=fixes, bounds=bounds,
                          include_mixed=include_mixed, include_flagged=include_flagged,
                          thickness=thickness)
    written = {} if folder is None else api.write_fit_report(result, folder)
    saved = None if no_history else api.record_fit(result, db)
    if json_output:
        print_json(result.to_dict())
    else:
        _print_summary(result, written)
        if saved is not None:
            how = "stored" if saved.created else "already stored for this input and options"
            typer.echo(f"history: fit record {saved.record_id} ({how})")
    return 0


def _print_summary(result, written) -> None:
    from rich.console import Console
    from rich.table import Table

    con = Console()
    d = result.to_dict()
    st = d["statistics"]
    table = Table(title=f"{d['provenance']['input']}: {d['carrier']}-type "
                  f"{d['material']['name']}, {st['n_points']} points", title_justify="left")
    for col in ("parameter", "value", "std. error", "95 % interval"):
        table.add_column(col, justify="right" if col != "parameter" else "left")

    user_bounds = d["provenance"].get("options", {}).get("bounds") or {}

    def row(name, est, unit):
        lo, hi = est["ci95"]
        ci = "—" if lo is None else f"{lo:.4g} … {hi:.4g}"
        se = "—" if est["stderr"] is None else f"{est['stderr']:.2g}"
        if est.get("method"):  # how the interval was computed, under it
            ci = f"{ci}\n[dim]{est['method']}[/dim]"
        if est.get("fixed"):
            se, ci = "fixed", "fixed (held)"
        if name in user_bounds:
            b_lo, b_hi = user_bounds[name]
            name = f"{name}\n bounds {b_lo:.3g}…{b_hi:.3g}"
        table.add_row(name, f"{est['value']:.4g} {unit}", se, ci)

    for lv in d["levels"]:
        row(f"N_{lv['name']}", lv["concentration_cm3"], "cm^-3")
        if lv["energy_eV"] is not None:
            row(f"E_{lv['name']}", lv["energy_eV"], "eV")
    row("net doping", d["net_doping_cm3"], "cm^-3")
    row("compensation ratio", d["compensation_ratio"], "")
    con.print(table)
    con.print(f"chi^2 = {st['chi2']:.4g}, reduced chi^2 = {st['reduced_chi2']:.4g}, "
              f"AIC = {st['aic']:.4g}, BIC = {st['bic']:.4g}")
    if st.get("rms_residual_percent") is not None:
        note = ("" if st["weighted"] else "; unweighted, so reduced chi^2 is the residual "
                "variance in ln units, not a goodness-of-fit test")
        con.print(f"rms residual = {st['rms_residual_percent']:.2g} % (ln density){note}",
                  highlight=False)
    for w in d["warnings"]:
        con.print(f"[yellow]warning:[/yellow] {w}", highlight=False)
    if written:
        con.print(f"report: {written['report.html']}", highlight=False)
