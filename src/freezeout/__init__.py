"""freezeout: fit temperature-dependent Hall runs to an equilibrium carrier model.

The package imports its heavy parts lazily, so ``import freezeout`` (and the CLI's
``--help``) stays fast.
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__", "fit_file", "simulate", "load_material", "load_run"]


def fit_file(*args, **kwargs):
    """Read a run, fit it and return the result; see :func:`freezeout.api.fit_file`."""
    from freezeout.api import fit_file as _fit_file

    return _fit_file(*args, **kwargs)


def simulate(*args, **kwargs):
    """Simulate a run; see :func:`freezeout.api.simulate`."""
    from freezeout.api import simulate as _simulate

    return _simulate(*args, **kwargs)


def load_material(*args, **kwargs):
    """A material by name or file; see :func:`freezeout.api.load_material`."""
    from freezeout.api import load_material as _load_material

    return _load_material(*args, **kwargs)


def load_run(*args, **kwargs):
    """Read a run file; see :func:`freezeout.api.load_run`."""
    from freezeout.api import load_run as _load_run

    return _load_run(*args, **kwargs)
