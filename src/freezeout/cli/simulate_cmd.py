"""``freezeout simulate``: the forward model on a temperature grid, as a CSV run."""

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
    StatisticsOpt,
    output_path,
    parse_level,
    parse_number,
    print_json,
)
from freezeout.cli.physics_options import DosMassOpt, EnergyVsDensityOpt, ExcitedStatesOpt
from freezeout.cli.render import clean
from freezeout.errors import InputError

HELP = ("Simulate n, p, E_F and ionized fractions versus temperature for given levels; the "
        "CSV it writes is a valid input to 'freezeout fit'.")


def simulate_command(
    temperatures: Annotated[str, typer.Option(
        "--temperatures", "-t", help="TMIN:TMAX:N, N points evenly spaced in 1000/T [K].")],
    material: SimMaterialOpt = None,
    material_file: MaterialFileOpt = None,
    donor: Annotated[list[str] | None, typer.Option(
        "--donor", help="CONC,ENERGY_EV[,G] (cm^-3, eV below E_c; energy 'none' for fully "
        "ionized). Repeatable.")] = None,
    acceptor: Annotated[list[str] | None, typer.Option(
        "--acceptor", help="CONC,ENERGY_EV[,G] (cm^-3, eV above E_v). Repeatable.")] = None,
    statistics: StatisticsOpt = "fermi-dirac",
    mobility: Annotated[str | None, typer.Option(
        "--mobility", help="Scattering mechanisms of the majority carrier joined by '+' "
        "(lattice, brooks-herring, conwell-weisskopf, neutral): adds mu_H, rho and R_H "
        "columns.")] = None,
    lattice_mu300: Annotated[str | None, typer.Option(
        "--lattice-mu300", help="Lattice mobility at 300 K [cm^2/(V s)] (with lattice).")
    ] = None,
    lattice_exponent: Annotated[str | None, typer.Option(
        "--lattice-exponent", help="Exponent a of mu_L ~ T^-a (with lattice).")] = None,
    minority_mu300: Annotated[str | None, typer.Option(
        "--minority-mu300", help="Lattice mobility at 300 K of the minority carrier "
        "[cm^2/(V s)]: with --minority-exponent, R_H and rho come from electrons and holes "
        "together (mixed conduction, Hall sign reversal).")] = None,
    minority_exponent: Annotated[str | None, typer.Option(
        "--minority-exponent", help="Lattice exponent of the minority carrier.")] = None,
    out: Annotated[Path | None, typer.Option("--out", "-o", parser=output_path, metavar="PATH",
                                             help="CSV file to write "
                                                  "(default: stdout).")] = None,
    json_output: JsonOpt = False,
    excited_states: ExcitedStatesOpt = None,
    energy_vs_density: EnergyVsDensityOpt = None,
    dos_mass: DosMassOpt = None,
) -> int:
    """Simulate a run; see HELP."""
    parts = temperatures.split(":")
    if len(parts) != 3:
        raise InputError(f"--temperatures {temperatures!r}: expected TMIN:TMAX:N")
    t_min = parse_number(parts[0], "--temperatures TMIN")
    t_max = parse_number(parts[1], "--temperatures TMAX")
    try:
        n = int(parts[2])
    except ValueError:
        raise InputError(f"--temperatures: N {parts[2]!r} is not a whole number") from None
    donors = [parse_level(x, "donor") for x in donor or []]
    acceptors = [parse_level(x, "acceptor") for x in acceptor or []]
    mu300 = None if lattice_mu300 is None else parse_number(lattice_mu300, "--lattice-mu300")
    exponent = (None if lattice_exponent is None
                else parse_number(lattice_exponent, "--lattice-exponent"))
    if mobility is None and (mu300 is not None or exponent is not None):
        raise InputError("--lattice-mu300 and --lattice-exponent need --mobility with lattice")
    mu_min = (None if minority_mu300 is None
              else parse_number(minority_mu300, "--minority-mu300"))
    a_min = (None if minority_exponent is None
             else parse_number(minority_exponent, "--minority-exponent"))
    sim = api.simulate(material=material, material_file=material_file, donors=donors,
                       acceptors=acceptors, temperatures=(t_min, t_max, n),
                       statistics=statistics, mobility=mobility or (), lattice_mu300=mu300,
                       lattice_exponent=exponent, minority_mu300=mu_min,
                       minority_exponent=a_min, excited_states=excited_states,
                       energy_vs_density=energy_vs_density, dos_mass=dos_mass)
    if out is not None:
        api.write_simulation_csv(sim, statistics, out, material_file=material_file)
    if json_output:
        print_json(sim.to_dict())
    elif out is not None:
        sys.stderr.write(f"wrote {clean(out)}\n")
    else:
        sys.stdout.write(api.simulation_csv(sim, statistics))
    return 0
