"""The names of the files a fit report writes: no drawing, so cheap to import.

The API's overwrite guard and a ``fit --json`` without a report need the names but not the
plotting stack that :mod:`freezeout.reporting.fit_report` loads.
"""

from __future__ import annotations

#: The figures a fit report may draw (``.png``, and ``.svg`` on request).
FIGURE_STEMS = ("density", "residuals", "fermi_level", "ionization", "transport",
                "mobility", "hall_sign", "selection", "spectroscopy", "posterior")

#: Every file a fit report may write into its folder (replaced as a set): the result, the
#: page, the model curves and residuals as CSV, and each figure as PNG and SVG.
REPORT_FILES = ("fit.json", "report.html", "curves.csv", "residuals.csv",
                *(f"{stem}.{ext}" for stem in FIGURE_STEMS for ext in ("png", "svg")))
