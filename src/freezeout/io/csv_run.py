"""Old name of :mod:`freezeout.io.reduced_csv_reader`: use that one.

Kept only until the API and the command line call the new module.
"""

from freezeout.io.reduced_csv_reader import read_reduced_csv as read_run_csv
from freezeout.records.run_rules import split_scale_uncertainty

__all__ = ["read_run_csv", "split_scale_uncertainty"]
