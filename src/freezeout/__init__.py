"""freezeout: fit temperature-dependent Hall runs to an equilibrium carrier model.

The package imports its heavy parts lazily, so ``import freezeout`` (and the CLI's
``--help``) stays fast.
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__", "fit_file", "simulate", "load_material", "load_run"]


def __getattr__(name: str):
    if name in ("fit_file", "simulate", "load_material", "load_run"):
        from freezeout import api

        return getattr(api, name)
    raise AttributeError(f"module 'freezeout' has no attribute {name!r}")
