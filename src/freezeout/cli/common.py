"""Options and parsers shared by the commands (defined once)."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated

import typer

from freezeout.errors import InputError

SimMaterialOpt = Annotated[str | None, typer.Option(
    "--material", "-m", help="Host from the library (see 'freezeout materials'); default Si.")]
MaterialOpt = Annotated[str | None, typer.Option(
    "--material", "-m", help="Host from the library (see 'freezeout materials'); default: the "
    "file's '# material:' line, else Si.")]
MaterialFileOpt = Annotated[Path | None, typer.Option(
    "--material-file", help="User material as a TOML file (keys: name, band_gap_0K_eV, "
    "varshni_alpha_eV_per_K, varshni_beta_K, electron_dos_mass, hole_dos_mass; optional "
    "relative_permittivity, electron_conductivity_mass, hole_conductivity_mass).")]
StatisticsOpt = Annotated[str, typer.Option(
    "--statistics", help="Carrier statistics: fermi-dirac or boltzmann.")]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print the result as JSON on stdout.")]
DbOpt = Annotated[str | None, typer.Option(
    "--db", help="History database URL (sqlite:///FILE or postgresql://...); default: a SQLite "
    "file in the user data folder, or $FREEZEOUT_DB.")]


def output_path(text: str) -> Path:
    """The path of an ``--out`` option, refusing an empty one.

    An empty path (an unset shell variable) would otherwise mean the current folder.
    """
    if not str(text).strip():
        raise typer.BadParameter("an empty path names no file or folder (an unset "
                                 "variable?); give a path, or '.' for this folder")
    return Path(text)


def parse_number(text: str, what: str) -> float:
    """A float from the command line, or an InputError naming the option."""
    try:
        v = float(text)
    except ValueError:
        raise InputError(f"{what}: cannot read {text!r} as a number") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise InputError(f"{what}: {text!r} is not a finite number")
    return v


def parse_hall_factor(text: str | None) -> float | str | None:
    """``--hall-factor``: None, the word ``scattering``, or a finite number."""
    if text is None:
        return None
    if text.strip().lower() == "scattering":
        return "scattering"
    try:
        return parse_number(text, "--hall-factor")
    except InputError:
        raise InputError(f"--hall-factor: expected a number or 'scattering', got {text!r}"
                         ) from None


def parse_level_count(text: str, what: str) -> int | str:
    """``--donors``/``--acceptors``: a whole number of levels, or the word ``auto``."""
    word = text.strip().lower()
    if word == "auto":
        return "auto"
    try:
        return int(word)
    except ValueError:
        raise InputError(f"{what}: expected a number of levels or 'auto', got {text!r}"
                         ) from None


def parse_assignments(items: list[str] | None, what: str) -> dict[str, str]:
    """``NAME=VALUE`` items into a dict."""
    out = {}
    for item in items or []:
        name, sep, value = item.partition("=")
        if not sep or not name.strip() or not value.strip():
            raise InputError(f"{what}: expected NAME=VALUE, got {item!r}")
        out[name.strip()] = value.strip()
    return out


def parse_level(text: str, kind: str) -> tuple:
    """``CONC,ENERGY_EV[,G]`` (energy ``none`` for a fully ionized species)."""
    parts = [p.strip() for p in text.split(",")]
    if not 2 <= len(parts) <= 3:
        raise InputError(f"--{kind} {text!r}: expected CONC,ENERGY_EV[,G], e.g. 1e16,0.045")
    conc = parse_number(parts[0], f"--{kind} concentration")
    if not conc > 0:
        raise InputError(f"--{kind} {text!r}: concentration must be > 0 cm^-3")
    energy = None
    if parts[1].lower() not in ("none", "ionized", "full", "-"):
        energy = parse_number(parts[1], f"--{kind} energy")
        if not energy > 0:
            raise InputError(f"--{kind} {text!r}: ionization energy must be > 0 eV")
    g = parse_number(parts[2], f"--{kind} degeneracy") if len(parts) == 3 else None
    if g is not None and not g > 0:
        raise InputError(f"--{kind} {text!r}: degeneracy must be > 0")
    return conc, energy, g


def print_json(data) -> None:
    """JSON on stdout (NaN never appears: results already hold None there)."""
    sys.stdout.write(json.dumps(data, indent=2, allow_nan=False) + "\n")
