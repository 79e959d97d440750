"""freezeout: fit temperature-dependent Hall runs to an equilibrium carrier model.

The package face re-exports :mod:`freezeout.api`; the numerical stack is imported only when a
call runs, so ``import freezeout`` (and the CLI's ``--help``) stays fast.
"""

from freezeout._version import __version__
from freezeout.api import (
    fit_file,
    history,
    list_materials,
    load_material,
    load_run,
    qualify_lot,
    reduce_file,
    simulate,
)

__all__ = ["__version__", "fit_file", "history", "list_materials", "load_material",
           "load_run", "qualify_lot", "reduce_file", "simulate"]
