"""A run that cannot be read or fitted is named, and never costs the other runs their
reports; implausibly small uncertainties are refused with their line and column; a history
database that fails says so in one line (project choices, no source)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from cli_runner import cli
from freezeout.errors import FitError, InputError
from freezeout.io.reduced_csv_reader import read_reduced_csv

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"


def _unfittable(tmp_path, monkeypatch) -> Path:
    """A copy of the sample run whose fit raises FitError (the optimizer's failure stood in
    for: real runs that fail are rare and depend on the optimizer's path)."""
    import freezeout.api.fits as fits

    path = tmp_path / "harrowgate_unfittable.csv"
    path.write_bytes(SAMPLE.read_bytes())
    real = fits.fit_run_record

    def failing(run, **kw):
        if kw["input_name"] == path.name:
            raise FitError("no starting point converged to a fit of this carrier type",
                           optimizer_message="not converged after 400 model solves")
        return real(run, **kw)

    monkeypatch.setattr(fits, "fit_run_record", failing)
    return path


def test_a_fit_that_fails_names_its_run(tmp_path, monkeypatch, capsys):
    bad = _unfittable(tmp_path, monkeypatch)
    code, _, err = cli(monkeypatch, capsys, "fit", bad, "--no-history", "--json")
    assert code == 1 and err.startswith(f"freezeout: fit failed: {bad}: ")


def test_the_other_runs_are_fitted_and_reported(tmp_path, monkeypatch, capsys):
    bad = _unfittable(tmp_path, monkeypatch)
    missing = tmp_path / "nowhere.csv"
    out = tmp_path / "out"
    code, stdout, err = cli(monkeypatch, capsys, "fit", SAMPLE, bad, missing,
                            "--no-history", "--out", out)
    assert code == 2  # the worst of the failures: an unreadable run
    assert f"fit failed: {bad}: no starting point" in err and f"error: {missing}" in err
    assert (out / SAMPLE.stem / "report.html").is_file()
    assert (out / "comparison.csv").is_file() and not (out / bad.stem).exists()
    # the JSON lists them
    code, stdout, _ = cli(monkeypatch, capsys, "fit", SAMPLE, bad, "--no-history", "--json")
    doc = json.loads(stdout)
    assert code == 1 and len(doc["runs"]) == 1 and len(doc["comparison"]) == 1
    assert doc["failed"] == [{"input": str(bad), "error": doc["failed"][0]["error"],
                              "exit_code": 1}]
    assert doc["failed"][0]["error"].startswith(f"{bad}: no starting point")
    # nothing fits: no report, the failures' exit code
    code, _, err = cli(monkeypatch, capsys, "fit", bad, missing, "--no-history", "--out", out)
    assert code == 2 and err.count("freezeout:") == 2


def test_the_api_error_carries_the_file(tmp_path, monkeypatch):
    import freezeout

    bad = _unfittable(tmp_path, monkeypatch)
    with pytest.raises(FitError) as info:
        freezeout.fit_file(bad)
    assert info.value.file == str(bad) and str(info.value).startswith(f"{bad}: ")


@pytest.mark.parametrize(("header", "cut", "line"), [
    ("n_err [m^-3]", False, 3),  # every uncertainty 1e6 times too small: the first row
    ("n_err [cm^-3]", True, 5),  # the last cell cut short (no line end)
])
def test_implausibly_small_uncertainties_are_refused(tmp_path, header, cut, line):
    text = (f"# material: Si\nT [K],n [cm^-3],{header}\n"
            "50,1.0e15,2.0e13\n60,1.5e15,3.0e13\n70,2.0e15,4.0e13\n")
    if cut:
        text = text.removesuffix("e13\n")  # "70,2.0e15,4.0": a cell cut mid-number
    path = tmp_path / "run.csv"
    path.write_text(text)
    with pytest.raises(InputError) as info:
        read_reduced_csv(path)
    e = info.value
    assert e.line == line and e.column == header and "check the column's unit" in e.message


def test_a_history_database_that_is_not_one_fails_in_one_line(tmp_path, monkeypatch, capsys):
    not_db = tmp_path / "notes.db"
    not_db.write_bytes(b"\x00not a database at all" * 100)
    code, _, err = cli(monkeypatch, capsys, "fit", SAMPLE, "--db", f"sqlite:///{not_db}",
                       "--out", tmp_path / "out")
    assert code == 2
    assert err.count("\n") == 1 and "[SQL" not in err and "sqlalche.me" not in err
    assert "history database" in err and "was written and kept" in err


def test_a_material_other_than_the_files_is_noted(tmp_path):
    import freezeout

    result = freezeout.fit_file(SAMPLE, material="Ge")
    assert result.warnings[0] == ("the file says '# material: Si' but Ge was asked for: the "
                                  "run is fitted as Ge")
    same = freezeout.fit_file(SAMPLE, material="si")
    assert not any("# material" in w for w in same.warnings)


@pytest.mark.parametrize("option", [("--carriers", "both"), ("--mobility", "lattice")])
def test_a_transport_request_names_the_file_once(option, monkeypatch, capsys):
    code, _, err = cli(monkeypatch, capsys, "fit", SAMPLE, *option, "--no-history", "--json")
    assert code == 2 and err.count(str(SAMPLE)) == 1


def test_history_leaves_an_empty_file_alone(tmp_path, monkeypatch, capsys):
    empty = tmp_path / "empty.db"
    empty.write_bytes(b"")
    code, _, err = cli(monkeypatch, capsys, "history", "--db", f"sqlite:///{empty}", "--json")
    assert code == 2 and "is an empty file, not a history database" in err, err
    assert empty.read_bytes() == b""


def test_api_history_stays_the_function_whatever_is_looked_up_first():
    """The module freezeout.api.history and its function history share a name; looking up
    another name of that module first must not leave the module in the function's place."""
    code = ("from freezeout import api; api.check_history_url(None); api.parse_since(None); "
            "assert callable(api.history), api.history")
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
