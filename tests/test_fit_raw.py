"""fit on a raw readings file: recognised, reduced, quality flags honoured, report sections."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

import freezeout
from freezeout.reporting.fit_report import write_fit_report

RAW = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_raw_vdp_run.csv"


def test_raw_file_is_fitted_and_severe_points_left_out():
    res = freezeout.fit_file(RAW, material="Si")
    d = res.to_dict()
    used = np.array(d["data"]["used"])
    severe = np.array(d["data"]["severe"])
    assert severe.any() and not used[severe].any()
    assert used[~severe].all()
    assert d["carrier"] == "p" and d["data"]["findings"]
    assert any("severe data-quality" in w for w in d["warnings"])
    kept = freezeout.fit_file(RAW, material="Si", include_flagged=True).to_dict()
    assert all(kept["data"]["used"])


def test_reduced_csv_fits_like_the_raw_file(tmp_path):
    """The reduced CSV written by reduce is read by fit unchanged, flags included."""
    from freezeout.io.reduced_csv_writer import write_reduced_csv
    from test_raw_io import load_raw_run

    out = tmp_path / "run.csv"
    write_reduced_csv(load_raw_run(RAW), out, raw_source=RAW)
    a = freezeout.fit_file(RAW, material="Si").to_dict()
    b = freezeout.fit_file(out, material="Si").to_dict()
    assert a["data"]["used"] == b["data"]["used"]
    va = a["levels"][0]["concentration_cm3"]["value"]
    vb = b["levels"][0]["concentration_cm3"]["value"]
    assert abs(va / vb - 1) < 1e-6  # the CSV keeps 10 significant digits


def test_report_has_quality_section_and_transport_panel(tmp_path):
    res = freezeout.fit_file(RAW, material="Si")
    paths = write_fit_report(res, tmp_path)
    assert "transport.png" in paths
    html = paths["report.html"].read_text()
    assert "Data quality" in html and "reciprocity" in html
    assert json.loads(paths["fit.json"].read_text())["data"]["resistivity_ohm_cm"]
