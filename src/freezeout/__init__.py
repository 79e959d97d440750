"""freezeout: fit temperature-dependent Hall runs to an equilibrium carrier model.

The package face re-exports the library calls of :mod:`freezeout.api`, lazily (PEP 562): a
call's module, and the numerical stack, are imported when it is first used, so
``import freezeout`` (and the CLI's ``--help``) stays fast.
"""

from freezeout._version import __version__

#: The calls re-exported here (the API has more: ``freezeout.api``).
_API_NAMES = frozenset({
    "fit_arrays", "fit_file", "fit_table", "history", "list_materials", "load_material",
    "load_run", "plan_temperatures", "qualify_lot", "reduce_file", "simulate",
})


def __getattr__(name: str):
    """Return ``freezeout.api.<name>`` for the re-exported calls (imported on first use)."""
    if name not in _API_NAMES:
        raise AttributeError(f"module 'freezeout' has no attribute {name!r}")
    from freezeout import api

    value = getattr(api, name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    """The public names, for completion in a notebook."""
    return sorted(__all__)


__all__ = ["__version__", "fit_arrays", "fit_file", "fit_table", "history", "list_materials",
           "load_material", "load_run", "plan_temperatures", "qualify_lot", "reduce_file",
           "simulate"]
