"""The Python API: the whole job as library calls, what the CLI calls.

The names below are re-exported lazily: a module of the API is imported when one of its
names is first used (PEP 562), so ``import freezeout`` and the CLI's ``--help`` load neither
the numerical stack nor the API modules. Each re-export is a plain import in
:func:`__getattr__`, visible to the import-table test.
"""

import sys

from freezeout._version import __version__ as __version__
from freezeout.records.limits import DEFAULT_GROUPING_TOLERANCE_K, HALL_FACTOR_RANGE

_BATCH = frozenset({"BatchFit", "default_comparison_folder", "fit_files", "write_comparison"})
_FITS = frozenset({
    "FIT_REPORT_FILES", "default_report_folder", "fit_file",
    "fit_report_outputs", "record_fit", "write_fit_report"
})
_GUARD = frozenset({"refuse_overwrite", "same_file", "sqlite_file"})
_HISTORY = frozenset({"HistoryResult", "check_history_url", "history", "parse_since",
                      "trend_file_name"})
_MATERIALS = frozenset({"list_materials", "load_material"})
_PLAN = frozenset({"PLAN_FILES", "PlanResult", "plan_csv", "plan_temperatures", "write_plan"})
_QUALIFICATION = frozenset({
    "EXIT_CODES", "QualificationOutcome", "build_qualification", "default_lot_folder",
    "lot_options", "qualify_lot"
})
_RUNS = frozenset({
    "ReduceOutcome", "default_reduced_output", "is_raw_file", "load_run", "reduce_file",
    "reduce_raw_file"
})
_SIMULATION = frozenset({"check_statistics", "simulate", "simulation_csv", "write_simulation_csv"})
_TABLES = frozenset({"curves_frame", "fit_arrays", "fit_table", "parameters_frame"})
_WAFERS = frozenset({"FIT_OPTIONS", "WaferJob", "WaferOutcome", "measure_wafer"})


def __getattr__(name: str):
    """Import the API module that holds ``name`` and return the name from it.

    The module is taken from ``sys.modules`` after a plain import, because some names equal
    their module's (``history``), which ``from freezeout.api import history`` would resolve
    through this very function.
    """
    if name in _BATCH:
        import freezeout.api.batch  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.batch"]
    elif name in _FITS:
        import freezeout.api.fits  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.fits"]
    elif name in _GUARD:
        import freezeout.api.guard  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.guard"]
    elif name in _HISTORY:
        import freezeout.api.history  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.history"]
        # the import bound the package's name "history" to the module, over the function of
        # that name: the function again, whichever name of the module came first
        globals()["history"] = module.history
    elif name in _MATERIALS:
        import freezeout.api.materials  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.materials"]
    elif name in _PLAN:
        import freezeout.api.plan  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.plan"]
    elif name in _QUALIFICATION:
        import freezeout.api.qualification  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.qualification"]
    elif name in _RUNS:
        import freezeout.api.runs  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.runs"]
    elif name in _SIMULATION:
        import freezeout.api.simulation  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.simulation"]
    elif name in _TABLES:
        import freezeout.api.tables  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.tables"]
    elif name in _WAFERS:
        import freezeout.api.wafers  # noqa: F401  (the module, taken from sys.modules)

        module = sys.modules["freezeout.api.wafers"]
    else:
        raise AttributeError(f"module 'freezeout.api' has no attribute {name!r}")
    value = getattr(module, name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    """The public names, for completion in a notebook."""
    return sorted(__all__)


__all__ = [
    "BatchFit", "default_comparison_folder", "fit_files", "write_comparison",
    "DEFAULT_GROUPING_TOLERANCE_K", "HALL_FACTOR_RANGE", "__version__", "EXIT_CODES",
    "FIT_OPTIONS", "FIT_REPORT_FILES", "HistoryResult", "QualificationOutcome", "ReduceOutcome",
    "WaferJob", "WaferOutcome", "build_qualification", "check_history_url", "check_statistics",
    "curves_frame", "default_lot_folder", "default_reduced_output", "default_report_folder",
    "fit_arrays", "fit_file", "fit_report_outputs", "fit_table", "history", "is_raw_file",
    "list_materials", "load_material", "load_run", "lot_options", "measure_wafer",
    "parameters_frame", "parse_since", "qualify_lot", "record_fit", "reduce_file",
    "reduce_raw_file", "refuse_overwrite", "PLAN_FILES", "PlanResult", "plan_csv",
    "plan_temperatures", "write_plan", "same_file", "simulate", "simulation_csv",
    "sqlite_file", "trend_file_name", "write_fit_report", "write_simulation_csv",
]
