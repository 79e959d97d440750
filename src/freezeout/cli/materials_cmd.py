"""``freezeout materials``: the materials library."""

from __future__ import annotations

from typing import Annotated

import typer

from freezeout import api
from freezeout.cli.common import JsonOpt, print_json
from freezeout.cli.render import console, num, say, show, text

HELP = "List the materials library, or show one material with the source of each parameter."


def materials_command(
    name: Annotated[str | None, typer.Argument(help="Material to show.")] = None,
    json_output: JsonOpt = False,
) -> int:
    """Show the materials library; see HELP."""
    from rich.table import Table

    con = console()
    if name is None:
        lib = api.list_materials()
        if json_output:
            print_json({k: m.to_dict() for k, m in lib.items()})
            return 0
        table = Table(title="freezeout materials", title_justify="left")
        for col in ("name", "description", "Eg(0 K) [eV]", "Eg(300 K) [eV]", "m_e,dos", "m_h,dos",
                    "eps_r"):
            table.add_column(text(col))
        for m in lib.values():
            eps = m.relative_permittivity
            table.add_row(*(text(x) for x in (
                m.name, m.description, num(m.band_gap_0k), num(float(m.band_gap(300.0))),
                f"{m.electron_dos_mass:g}", f"{m.hole_dos_mass:g}",
                "—" if not eps else f"{eps:g}")))
        show(con, table)
        return 0
    m = api.load_material(name)
    if json_output:
        print_json(m.to_dict())
        return 0
    table = Table(title=text(f"{m.name} ({m.description})"), title_justify="left")
    table.add_column("parameter")
    table.add_column("value", justify="right")
    table.add_column("source")
    d = m.to_dict()
    for key, src in m.sources.items():
        table.add_row(text(key), text(f"{d[key]:g}"), text(src))
    show(con, table)
    say(con, f"Nc(300 K) = {num(float(m.nc(300.0)))} cm^-3, Nv(300 K) = "
             f"{num(float(m.nv(300.0)))} cm^-3, n_i(300 K) = "
             f"{num(float(m.intrinsic_density(300.0)))} cm^-3")
    return 0
