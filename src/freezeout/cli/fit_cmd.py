"""``freezeout fit``: fit a run and write its report."""

from __future__ import annotations

import sys
from contextlib import contextmanager
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
    output_path,
    parse_assignments,
    parse_hall_factor,
    parse_level_count,
    parse_number,
    print_json,
)
from freezeout.cli.physics_options import DosMassOpt, EnergyVsDensityOpt, ExcitedStatesOpt
from freezeout.cli.render import clean, console, num, say, show, text
from freezeout.errors import InputError

HELP = ("Fit a temperature run (reduced CSV or raw readings) to the carrier model and write "
        "fit.json, figures and report.html.")


def fit_command(
    run: Annotated[list[Path], typer.Argument(
        metavar="RUN.csv...", help="Run file(s): reduced CSV, or raw van der Pauw/Hall "
        "readings (recognised and reduced on the way in). Several runs are fitted with the "
        "same options, each with its own report, plus comparison.csv and overlay.png.")],
    material: MaterialOpt = None,
    material_file: MaterialFileOpt = None,
    donors: Annotated[str, typer.Option(
        metavar="N|auto", help="Donor levels: partially ionized levels for an n-type run, "
        "0/1 compensating donor for p-type; 'auto' fits 1 to 4 levels (n-type) or without "
        "and with the compensating donor (p-type) and chooses by BIC.")] = "1",
    acceptors: Annotated[str, typer.Option(
        metavar="N|auto", help="Acceptor levels: partially ionized levels for a p-type run, "
        "0/1 compensating acceptor for n-type; 'auto' as for --donors.")] = "1",
    statistics: StatisticsOpt = "fermi-dirac",
    hall_factor: Annotated[str | None, typer.Option(
        "--hall-factor", metavar="R|scattering", help="Hall scattering factor: a number r "
        "(density r/(q|R_H|), and with --mobility mu_H = r mu), or 'scattering' (needs "
        "--mobility): r_H(T) from the mechanisms at every point, for the density and the "
        "mobility alike. Default: the file's own '# hall_factor:' line, else 1; with "
        "--mobility and no such line, scattering.")] = None,
    out: Annotated[Path | None, typer.Option("--out", "-o", parser=output_path, metavar="PATH",
                                             help="Report folder (default: "
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
    mobility: Annotated[str | None, typer.Option(
        "--mobility", help="Fit the Hall mobility too: scattering mechanisms joined by '+' "
        "(lattice, brooks-herring, conwell-weisskopf, neutral; lattice required, its mu_300 "
        "and exponent are fitted). Needs a mobility or resistivity column.")] = None,
    lattice_mu300: Annotated[str | None, typer.Option(
        "--lattice-mu300", help="Start of the fitted lattice mobility at 300 K "
        "[cm^2/(V s)] (with --mobility).")] = None,
    lattice_exponent: Annotated[str | None, typer.Option(
        "--lattice-exponent", help="Start of the fitted lattice exponent a, mu_L ~ T^-a "
        "(with --mobility).")] = None,
    db: DbOpt = None,
    carriers: Annotated[str, typer.Option(
        "--carriers", help="'majority' (default): the majority carrier's Hall density; "
        "'both': fit the signed R_H(T) and rho(T) with electrons and holes, mixed-conduction "
        "points included (mechanisms from --mobility, default lattice+brooks-herring). "
        "Needs R_H and resistivity columns, or raw readings.")] = "majority",
    no_history: Annotated[bool, typer.Option(
        "--no-history", help="Do not store the fit in the history database.")] = False,
    svg: Annotated[bool, typer.Option(
        "--svg", help="Also write every figure as SVG beside its PNG.")] = False,
    posterior: Annotated[bool, typer.Option(
        "--posterior", help="Sample the density fit's parameters with an ensemble MCMC "
        "(emcee: pip install freezeout[posterior]) and report medians and 95 % credible "
        "intervals beside the fit's; not with --mobility or --carriers both.")] = False,
    posterior_steps: Annotated[int | None, typer.Option(
        "--posterior-steps", metavar="N", help="Steps per walker of --posterior (64 "
        "walkers; default 1000).")] = None,
    excited_states: ExcitedStatesOpt = None,
    energy_vs_density: EnergyVsDensityOpt = None,
    dos_mass: DosMassOpt = None,
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
    n_donors = parse_level_count(donors, "--donors")
    n_acceptors = parse_level_count(acceptors, "--acceptors")
    r_hall = parse_hall_factor(hall_factor)
    if r_hall == "scattering" and mobility is None:
        raise InputError("--hall-factor scattering computes r_H(T) from the scattering "
                         "mechanisms: give them with --mobility (e.g. lattice+brooks-herring), "
                         "or give a number")
    mu300 = None if lattice_mu300 is None else parse_number(lattice_mu300, "--lattice-mu300")
    exponent = (None if lattice_exponent is None
                else parse_number(lattice_exponent, "--lattice-exponent"))
    if mobility is None and (mu300 is not None or exponent is not None):
        raise InputError("--lattice-mu300 and --lattice-exponent need --mobility")
    if not no_history:  # a URL the history cannot use fails before the fit, nothing written
        api.check_history_url(db)
    options = dict(material=material, material_file=material_file, donors=n_donors,
                   acceptors=n_acceptors, statistics=statistics, hall_factor=r_hall,
                   degeneracy=degeneracy, fix=fixes, bounds=bounds, include_mixed=include_mixed,
                   include_flagged=include_flagged, thickness=thickness,
                   mobility=mobility or (), lattice_mu300=mu300, lattice_exponent=exponent,
                   carriers=carriers)
    for key, value in (("excited_states", excited_states), ("dos_mass", dos_mass),
                       ("energy_vs_density", energy_vs_density)):
        if value is not None:
            options[key] = value
    if posterior or posterior_steps is not None:
        if not posterior:
            raise InputError("--posterior-steps needs --posterior")
        options.update(posterior=True, posterior_steps=posterior_steps)
    with _posterior_bar(posterior and not json_output) as bar:
        if posterior:
            options["posterior_progress"] = bar
        return _fit_runs(list(run), out, json_output, svg, db, no_history, material_file,
                         options)


@contextmanager
def _posterior_bar(show: bool):
    """A progress(done, total) callback drawing the sampler's bar on a terminal's stderr.

    The bar is live only while a chain runs (it starts at a chain's first step and goes at
    its last, or when the command ends), so the summary prints on a clean terminal.
    """
    live: list = []
    show = show and sys.stderr.isatty()

    def stop() -> None:
        while live:
            live.pop().stop()

    def progress(done: int, total: int) -> None:
        if not show:
            return
        if not live:
            # imported here: rich.progress takes 30 ms, which a fit without a bar need not pay
            from rich.console import Console
            from rich.progress import (
                BarColumn,
                MofNCompleteColumn,
                Progress,
                TextColumn,
                TimeElapsedColumn,
                TimeRemainingColumn,
            )

            bar = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                           TimeElapsedColumn(), TimeRemainingColumn(),
                           console=Console(stderr=True), transient=True)
            bar.add_task("sampling the posterior (Ctrl-C keeps what is sampled)", total=total)
            bar.start()
            live.append(bar)
        live[0].update(live[0].task_ids[0], total=total, completed=done)
        if done >= total:
            stop()

    try:
        yield progress
    finally:
        stop()


def _fit_runs(runs: list[Path], out, json_output: bool, svg: bool, db, no_history: bool,
              material_file, options: dict) -> int:
    """Fit one run or several with the same options, report and print them."""
    if len(runs) == 1:
        result = _fit_one(runs[0], out, json_output, svg, db, no_history, options)
        if json_output:
            print_json(result.to_dict())
        return 0
    batch = api.fit_files(runs, **options)  # refuses a run named twice before any fit
    for _path, message, code in batch.failures:  # each named; the other runs are reported
        typer.echo(f"freezeout: {'error' if code == 2 else 'fit failed'}: {message}", err=True)
    if not batch.results:
        return max(code for _, _, code in batch.failures)
    folder = None
    if out is not None or not json_output:
        folder = out if out is not None else api.default_comparison_folder()
        api.refuse_overwrite([folder / "comparison.csv", folder / "overlay.png"],
                             [*runs, material_file])
    for path, result in zip(batch.paths, batch.results, strict=True):
        _report_one(path, result, None if folder is None else folder / path.stem,
                    json_output, svg, db, no_history, material_file)
    compared = {} if folder is None else api.write_comparison(batch, folder)
    if json_output:
        print_json(batch.to_dict())
    else:
        for name, where in compared.items():
            typer.echo(f"{name}: {where}")
    return max((code for _, _, code in batch.failures), default=0)


def _fit_one(run: Path, out: Path | None, json_output: bool, svg: bool, db, no_history: bool,
             options: dict):
    """Fit one run, write its report, record it; return the result."""
    folder = None
    if out is not None or not json_output:
        folder = out if out is not None else api.default_report_folder(run)
        api.refuse_overwrite(api.fit_report_outputs(folder), [run, options["material_file"]])
    result = api.fit_file(run, **options)
    _report_one(run, result, folder, json_output, svg, db, no_history,
                options["material_file"])
    return result


def _report_one(run: Path, result, folder: Path | None, json_output: bool, svg: bool, db,
                no_history: bool, material_file) -> None:
    """Write a fit's report into ``folder`` (if any), record it and print its summary."""
    if folder is not None:
        api.refuse_overwrite(api.fit_report_outputs(folder), [run, material_file])
    replacing = folder is not None and Path(folder).is_dir() and any(Path(folder).iterdir())
    written = {} if folder is None else api.write_fit_report(result, folder, svg=svg)
    if replacing:
        typer.echo(f"replaced the earlier report in {folder}", err=json_output)
    saved = None if no_history else api.record_fit(result, db,
                                                   report=folder if written else None)
    if not json_output:
        _print_summary(result, written)
        if saved is not None:
            how = "stored" if saved.created else "already stored for this input and options"
            typer.echo(f"history: fit record {saved.record_id} ({how})")


def _print_summary(result, written) -> None:
    from rich.table import Table
    from rich.text import Text

    con = console()
    d = result.to_dict()
    st = d["statistics"]
    two = d.get("two_carrier")
    count = (f"{two['n_points']} points ({st['n_points']} in the density fit)"
             if two and two.get("n_points") else f"{st['n_points']} points")
    table = Table(title=text(f"{d['provenance']['input']}: {d['carrier']}-type "
                             f"{d['material']['name']}, {count}"),
                  title_justify="left")
    for col in ("parameter", "value", "std. error", "95 % interval"):
        table.add_column(col, justify="right" if col != "parameter" else "left")

    user_bounds = d["provenance"].get("options", {}).get("bounds") or {}

    def row(name, est, unit):
        lo, hi = est["ci95"]
        ci = Text("—" if lo is None else f"{num(lo)} … {num(hi)}")
        se = "—" if est["stderr"] is None else num(est["stderr"], 2)
        if est.get("method") and lo is not None:  # how the interval was computed, under it
            ci.append("\n")
            ci.append(clean(est["method"]), style="dim")
        if est.get("fixed"):
            se, ci = "fixed", Text("fixed (held)")
        if name in user_bounds:
            b_lo, b_hi = user_bounds[name]
            name = f"{name}\n bounds {num(b_lo, 3)}…{num(b_hi, 3)}"
        table.add_row(text(name), text(f"{num(est['value'])} {unit}".rstrip()), text(se), ci)

    for lv in d["levels"]:
        row(f"N_{lv['name']}", lv["concentration_cm3"], "cm^-3")
        if lv["energy_eV"] is not None:
            row(f"E_{lv['name']}", lv["energy_eV"], "eV")
    row("net doping", d["net_doping_cm3"], "cm^-3")
    row("compensation ratio", d["compensation_ratio"], "")
    for carrier, block in (d.get("mobility") or {}).items():
        row(f"{carrier} lattice mu_300", block["lattice_mu300_cm2_per_Vs"], "cm^2/(V s)")
        row(f"{carrier} lattice exponent", block["lattice_exponent"], "")
    if "hall_sign_reversal_K" in d:
        rev = (d.get("two_carrier") or {}).get("hall_sign_reversal")
        if rev is None:
            table.add_row("Hall sign reversal", "none in range", "—", Text("—"))
        else:
            row("Hall sign reversal", rev, "K")
    show(con, table)
    _print_selection(con, d.get("model_selection"))
    _print_posterior(con, d.get("posterior"))
    two = d.get("two_carrier")
    if two is not None:
        say(con, f"two-carrier fit of R_H and rho: chi^2 = {num(two['chi2'])} over "
                 f"{two['n_points']} points x 2 series, rms misfit R_H "
                 f"{num(two['rms_percent']['hall'], 2)} %, rho "
                 f"{num(two['rms_percent']['resistivity'], 2)} %; below, the density-only "
                 "fit it started from (majority-sign points)")
    say(con, f"chi^2 = {num(st['chi2'])}, reduced chi^2 = {num(st['reduced_chi2'])}, "
             f"AIC = {num(st['aic'])}, BIC = {num(st['bic'])}")
    if st.get("rms_residual_percent") is not None:
        note = ("" if st["weighted"] else "; unweighted, so reduced chi^2 is the residual "
                "variance in ln units, not a goodness-of-fit test")
        say(con, f"rms residual = {num(st['rms_residual_percent'], 2)} % (ln density){note}")
    for w in d["warnings"]:
        say(con, Text.assemble(("warning: ", "yellow"), clean(w)))
    if written:
        say(con, f"report: {written['report.html']}")


def _print_selection(con, sel: dict | None) -> None:
    """The candidates of an 'auto' level count, the chosen one marked, and the rule."""
    if sel is None:
        return
    from rich.table import Table

    table = Table(title=text(f"model selection: {sel['chosen']}"), title_justify="left")
    for col in ("candidate", "k", "chi^2", "BIC", "delta BIC", "verdict"):
        table.add_column(col, justify="left" if col in ("candidate", "verdict") else "right")
    for c in sel["candidates"]:
        verdict = c["reason"] if not c["kept"] else (
            "chosen" if c["label"] == sel["chosen"] else "kept")
        table.add_row(text(c["label"]), text(num(c["n_parameters"])), text(num(c["chi2"])),
                      text(num(c["bic"])), text(num(c["delta_bic"], 3)), text(verdict))
    show(con, table)
    say(con, f"{sel['rule']} {sel['stop_rule']} This search: {sel['stopped']}.")


def _print_posterior(con, post: dict | None) -> None:
    """Posterior medians and 95 % credible intervals beside the fit's, and the chain."""
    if post is None:
        return
    from rich.table import Table
    from rich.text import Text

    table = Table(title=text("posterior (MCMC): median and 95 % credible interval"),
                  title_justify="left")
    for col in ("parameter", "median", "95 % credible", "fit 95 % interval"):
        table.add_column(col, justify="left" if col == "parameter" else "right")

    def span(ci) -> str:
        return "—" if ci[0] is None else f"{num(ci[0])} … {num(ci[1])}"

    for name, q in post["parameters"].items():
        fit = q["fit"]
        table.add_row(text(name), text(f"{num(q['median'])} {q['unit']}".rstrip()),
                      text(span(q["ci95"])), text(f"{span(fit['ci95'])} ({fit['method']})"))
    show(con, table)
    tau = ", ".join(f"{k} {num(v, 3)}" for k, v in post["autocorr_time_steps"].items())
    say(con, f"{post['walkers']} walkers x {post['steps']} steps, first {post['burn_in_steps']} "
             f"discarded (burn-in: {post['burn_in_rule']}); acceptance "
             f"{num(post['acceptance_fraction'], 2)}; autocorrelation time (steps): {tau}")
    for note in post["notes"]:
        say(con, Text.assemble(("posterior: ", "yellow"), clean(note)))
