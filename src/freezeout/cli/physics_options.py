"""The optional level and band physics options shared by ``fit`` and ``simulate``."""

from __future__ import annotations

from typing import Annotated

import typer

ExcitedStatesOpt = Annotated[str | None, typer.Option(
    "--excited-states", metavar="SET", help="Donor excited states in the ionized fraction, "
    "g_eff(T) = g_0 + sum g_i exp(-(E_0 - E_i)/kT): a bundled set, si-p, si-as or si-sb "
    "(the valley-orbit 1s states; g_0 = 2 unless --degeneracy). Default: none.")]
EnergyVsDensityOpt = Annotated[str | None, typer.Option(
    "--energy-vs-density", metavar="MODEL", help="Ionization energy lowered with the level's "
    "own concentration N: 'pearson-bardeen' (E = E_0 - alpha N^(1/3), alpha = 4.3e-8 eV cm), "
    "'pearson-bardeen:ALPHA' (eV cm), or E = E_0 / (1 + (N/N_ref)^c) with the Si:P or Si:B "
    "set, 'altermatt-p' or 'altermatt-b'; the fitted E is then E_0. Default: none.")]
DosMassOpt = Annotated[str | None, typer.Option(
    "--dos-mass", metavar="constant|temperature", help="Density-of-states masses: 'constant' "
    "(default, the material's) or 'temperature' (Si: m(T) polynomials, 1.183 and 0.805 m0 "
    "at 300 K).")]
