"""History details: supplier matching, read-only opening, unrecorded trial lots, and the
default number of worker processes.

Records are synthetic (tests/conftest_storage.py, fictional supplier "Kestrel Ridge
Wafers"). Every rule checked here is project choice, no source.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import conftest_storage as cs
import freezeout
from cli_runner import cli
from freezeout.api.qualification import default_workers
from freezeout.errors import InputError
from freezeout.storage import open_history, open_store


@pytest.fixture
def url(tmp_path):
    u = f"sqlite:///{tmp_path / 'hist.sqlite'}"
    with open_store(u) as store:
        store.save_lot(cs.lot_qualification(lot="KRW-2611-07", key="nov", options={}))
    return u


@pytest.mark.parametrize("typed", ["kestrel ridge wafers", "  KESTREL RIDGE WAFERS ",
                                   "Kestrel Ridge Wafers"])
def test_supplier_matches_case_and_blanks(monkeypatch, capsys, url, typed):
    code, out, err = cli(monkeypatch, capsys, "history", "--db", url, "--json", "--supplier",
                         typed)
    assert code == 0, err
    doc = json.loads(out)
    assert [r["lot"] for r in doc["records"]] == ["KRW-2611-07"]
    (points,) = [t["points"] for t in doc["trends"].values()]
    assert {p["lot"] for p in points} == {"KRW-2611-07"}


def test_history_does_not_create_a_database(monkeypatch, capsys, tmp_path):
    missing = tmp_path / "typo.sqlite"
    code, out, err = cli(monkeypatch, capsys, "history", "--db", f"sqlite:///{missing}")
    assert code == 2 and out == ""
    assert f"no history database at {missing}" in err
    assert not missing.exists()
    # a plain path is a SQLite file as well
    code, _, err = cli(monkeypatch, capsys, "history", "--db", str(missing), "--json")
    assert code == 2 and "no history database" in err and not missing.exists()
    with pytest.raises(InputError, match="no history database"):
        open_history(str(missing), read_only=True)
    assert not missing.exists()


def test_history_before_anything_was_stored(monkeypatch, capsys, tmp_path):
    """A new user's first ``history`` (default database not made yet): no records, exit 0,
    and still no database file (project choice, no source)."""
    import freezeout.storage.engine as engine

    monkeypatch.delenv("FREEZEOUT_DB", raising=False)
    monkeypatch.setattr(engine.platformdirs, "user_data_dir", lambda app: str(tmp_path / app))
    code, out, err = cli(monkeypatch, capsys, "history")
    assert code == 0 and "no records match" in out, err
    assert not list(tmp_path.rglob("history.sqlite*"))


def _single_point_lot(tmp_path):
    (tmp_path / "r.csv").write_text("# synthetic\nT [K],n [cm^-3],n_err [cm^-3]\n"
                                    "296.15,9e14,9e12\n")
    (tmp_path / "lot.toml").write_text(
        '# synthetic\nsupplier = "Kestrel Ridge Wafers"\nlot = "KRW-TRIAL-1"\n'
        'date = 2026-11-21\n[decision]\nrule = "guarded"\n'
        '[[claim]]\nquantity = "net_doping"\nnominal = 9e14\ntolerance = "30%"\n'
        'unit = "cm^-3"\ndopant = "phosphorus"\n[[wafer]]\nid = "W1"\nmaterial = "Si"\n'
        'run = "r.csv"\n')
    return tmp_path / "lot.toml"


def test_qualify_without_history(monkeypatch, capsys, tmp_path):
    lot = _single_point_lot(tmp_path)
    db = tmp_path / "trial.sqlite"
    outcome = freezeout.api.qualify_lot(lot, out=tmp_path / "rep", db=f"sqlite:///{db}",
                                        workers=1, record=False)
    assert outcome.lot_record is None and outcome.fits_new == 0
    assert not db.exists()
    doc = json.loads((tmp_path / "rep" / "lot.json").read_text())
    assert doc["provenance"]["recorded"] is False
    assert "not recorded" in (tmp_path / "rep" / "lot_report.html").read_text()

    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--no-history", "--db",
                         f"sqlite:///{db}", "--out", tmp_path / "rep2")
    assert code == 0, err
    assert "not recorded" in out and not db.exists()
    # a recorded run says nothing of the kind
    code, _, err = cli(monkeypatch, capsys, "qualify", lot, "--db", f"sqlite:///{db}",
                       "--out", tmp_path / "rep3", "--json")
    assert code == 0, err
    assert db.exists()
    assert "recorded" not in json.loads((tmp_path / "rep3" / "lot.json").read_text()
                                        )["provenance"]


@pytest.mark.parametrize(("wafers", "cpus", "expected"), [
    (1, 8, 1), (3, 2, 1), (4, 8, 1), (5, 2, 1), (6, 2, 2), (9, 8, 3), (30, 4, 4), (30, 1, 1),
])
def test_default_workers(wafers, cpus, expected):
    # spawned workers re-import the stack, so a small lot runs faster in one process
    assert default_workers(wafers, cpus, fork=False) == expected


@pytest.mark.parametrize(("wafers", "cpus", "expected"), [
    (1, 8, 1), (3, 2, 1), (4, 2, 2), (4, 8, 2), (9, 8, 4), (100, 2, 2), (1000, 1, 1),
])
def test_default_workers_forked(wafers, cpus, expected):
    # forked workers start warm: a pool pays from 4 wafers on (measured, project choice)
    assert default_workers(wafers, cpus, fork=True) == expected


def test_history_table_shows_the_options_each_record_used(monkeypatch, capsys, tmp_path):
    """The terminal table names the options of each fit (what was set) and the fit settings
    of a lot's wafers; the full options are in --json (project choice, no source)."""
    from freezeout.cli.history_cmd import options_text

    assert options_text({"material": "Si", "donors": 2, "acceptors": 1, "fix": {"E_D1": 0.045},
                         "bounds": {"N_A": [1e12, 1e15]}, "include_mixed": False,
                         "hall_factor": None}) == (
        "material=Si donors=2 acceptors=1 fix E_D1=0.045 bounds N_A=1e12:1e15")
    assert options_text({"fit": {"donors": 1, "acceptors": 1, "statistics": "fermi-dirac"},
                         "temperature_tolerance_K": 1.0}) == (
        "donors=1 acceptors=1 statistics=fermi-dirac")
    assert options_text({}) == "—"
    sample = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"
    db = f"sqlite:///{tmp_path / 'h.sqlite'}"
    code, _, err = cli(monkeypatch, capsys, "fit", sample, "--donors", "1", "--fix",
                       "E_D1=0.0455", "--json", "--db", db)
    assert code == 0, err
    monkeypatch.setenv("COLUMNS", "300")
    code, out, _ = cli(monkeypatch, capsys, "history", "--db", db)
    assert code == 0 and "fix E_D1=0.0455" in out and "donors=1" in out
