"""The fit report's data exports: curves.csv and residuals.csv always, SVG figures on request.

The data are the bundled synthetic sample run (fictional Harrowgate Cryo Lab).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest

import freezeout
from cli_runner import cli

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"


@pytest.fixture(scope="module")
def result():
    return freezeout.fit_file(SAMPLE, material="Si")


def _rows(path: Path) -> list[dict]:
    return list(csv.DictReader(io.StringIO(path.read_text())))


def test_csv_exports_hold_the_points_and_the_model(result, tmp_path):
    written = freezeout.api.write_fit_report(result, tmp_path / "rep")
    assert {"curves.csv", "residuals.csv"} <= set(written)
    res = _rows(written["residuals.csv"])
    assert len(res) == result.n_points or len(res) == len(result.data.temperature)
    t = np.array([float(r[next(k for k in r if k.startswith("temperature"))]) for r in res])
    assert np.allclose(np.sort(t), np.sort(result.data.temperature))
    curves = _rows(written["curves.csv"])
    assert len(curves) >= 100  # a fine grid, not the measured points
    assert not list((tmp_path / "rep").glob("*.svg"))  # SVG only on request


def test_svg_on_request_from_the_cli(tmp_path, monkeypatch, capsys):
    out = tmp_path / "rep"
    code, _, err = cli(monkeypatch, capsys, "fit", SAMPLE, "--material", "Si", "--no-history",
                       "--out", out, "--svg")
    assert code == 0, err
    for stem in ("density", "residuals", "fermi_level", "ionization"):
        text = (out / f"{stem}.svg").read_text()
        assert text.lstrip().startswith("<?xml") and "<svg" in text
        assert (out / f"{stem}.png").read_bytes()[:4] == b"\x89PNG"
