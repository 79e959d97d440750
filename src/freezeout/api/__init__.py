"""The Python API: the whole job as library calls, what the CLI calls.

Every call imports the numerical stack only when it runs, so ``import freezeout`` (and the
CLI's ``--help``) stays fast.
"""

from freezeout._version import __version__ as __version__
from freezeout.api.fits import (
    FIT_REPORT_FILES,
    default_report_folder,
    fit_file,
    fit_report_outputs,
    record_fit,
    write_fit_report,
)
from freezeout.api.guard import refuse_overwrite, same_file, sqlite_file
from freezeout.api.history import HistoryResult, history, parse_since, trend_file_name
from freezeout.api.materials import list_materials, load_material
from freezeout.api.qualification import (
    EXIT_CODES,
    QualificationOutcome,
    build_qualification,
    default_lot_folder,
    lot_options,
    qualify_lot,
)
from freezeout.api.runs import (
    ReduceOutcome,
    default_reduced_output,
    is_raw_file,
    load_run,
    reduce_file,
    reduce_raw_file,
)
from freezeout.api.simulation import (
    check_statistics,
    simulate,
    simulation_csv,
    write_simulation_csv,
)
from freezeout.api.tables import curves_frame, fit_arrays, fit_table, parameters_frame
from freezeout.api.wafers import FIT_OPTIONS, WaferJob, WaferOutcome, measure_wafer
from freezeout.records.limits import DEFAULT_GROUPING_TOLERANCE_K, HALL_FACTOR_RANGE

__all__ = [
    "DEFAULT_GROUPING_TOLERANCE_K", "HALL_FACTOR_RANGE",
    "EXIT_CODES", "FIT_OPTIONS", "FIT_REPORT_FILES", "fit_report_outputs", "refuse_overwrite",
    "same_file", "sqlite_file", "HistoryResult", "QualificationOutcome", "ReduceOutcome",
    "WaferJob", "WaferOutcome", "build_qualification", "check_statistics",
    "default_lot_folder", "default_reduced_output", "default_report_folder", "fit_file",
    "history", "is_raw_file", "list_materials", "load_material", "load_run", "lot_options",
    "measure_wafer", "parse_since", "qualify_lot", "record_fit", "reduce_file",
    "reduce_raw_file", "simulate", "simulation_csv", "trend_file_name", "write_fit_report",
    "write_simulation_csv", "curves_frame", "fit_arrays", "fit_table", "parameters_frame",
]
