"""Several runs in one ``fit``: each its own report, one comparison table, one overlay figure.

The runs are the bundled synthetic samples (fictional Harrowgate Cryo Lab).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

import freezeout
from cli_runner import cli

DATA = Path(__file__).resolve().parents[1] / "sample_data"
RUNS = [DATA / "harrowgate_si_n_run.csv", DATA / "harrowgate_gan_p_epilayer.csv"]


def test_cli_writes_each_report_and_the_comparison(tmp_path, monkeypatch, capsys):
    out = tmp_path / "cmp"
    code, stdout, err = cli(monkeypatch, capsys, "fit", *RUNS, "--no-history", "--out", out)
    assert code == 0, err
    for run in RUNS:
        assert (out / run.stem / "report.html").is_file()
        assert (out / run.stem / "fit.json").is_file()
    assert (out / "overlay.png").read_bytes()[:4] == b"\x89PNG"
    rows = list(csv.DictReader(io.StringIO((out / "comparison.csv").read_text())))
    assert [r["run"] for r in rows] == [r.name for r in RUNS]
    assert [r["carrier"] for r in rows] == ["n", "p"]
    assert "comparison.csv" in stdout and "overlay.png" in stdout


def test_json_equals_the_api_and_each_fit_equals_its_own(tmp_path, monkeypatch, capsys):
    code, stdout, err = cli(monkeypatch, capsys, "fit", *RUNS, "--no-history", "--json")
    assert code == 0, err
    printed = json.loads(stdout)
    batch = freezeout.api.fit_files(RUNS)
    assert printed == json.loads(json.dumps(batch.to_dict()))
    single = freezeout.fit_file(RUNS[1]).to_dict()
    for doc in (single, printed["runs"][1]):
        doc["provenance"].pop("date")
    assert printed["runs"][1] == json.loads(json.dumps(single))
    row = printed["comparison"][0]
    assert row["net_doping_cm3"] == pytest.approx(printed["runs"][0]["net_doping_cm3"]["value"])
    assert not (tmp_path / "reports").exists()  # --json without --out writes nothing


def test_a_run_named_twice_is_refused(tmp_path, monkeypatch, capsys):
    code, _, err = cli(monkeypatch, capsys, "fit", RUNS[0], RUNS[0], "--no-history", "--out",
                       tmp_path / "x")
    assert code == 2 and "named twice" in err and not (tmp_path / "x").exists()
