"""``freezeout qualify`` end to end: verdicts, exit codes, report files, history, bad input.

All lots here are synthetic: the bundled sample lot (fictional supplier "Kestrel Ridge
Wafers", fictional "Harrowgate Cryo Lab", runs made by scripts/make_sample_lot.py) and small
lots written into tmp_path from invented single-point results.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from sqlalchemy import create_engine, func, select

import freezeout
from cli_runner import cli
from freezeout.storage.schema import fit_records, lot_records

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "lot_kestrel_2026-11" / "lot.toml"
HEADER = "T [K],n [cm^-3],n_err [cm^-3],rho [ohm cm],rho_err [ohm cm]"




def counts(db_file: Path) -> tuple[int, int]:
    engine = create_engine(f"sqlite:///{db_file}")
    try:
        with engine.connect() as conn:
            return (conn.execute(select(func.count()).select_from(lot_records)).scalar(),
                    conn.execute(select(func.count()).select_from(fit_records)).scalar())
    finally:
        engine.dispose()


LOT_HEAD = """\
# synthetic test lot (fictional supplier)
supplier = "Kestrel Ridge Wafers"
lot = "{lot}"
date = 2026-11-20

[decision]
rule = "guarded"
coverage_factor = 2

[[claim]]
quantity = "type"
value = "n"

[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = 296.15

[[claim]]
quantity = "net_doping"
nominal = 9e14
tolerance = "30%"
unit = "cm^-3"
"""


def single_point(path: Path, n: float, n_err: float | None, rho: float, rho_err: float | None,
                 t: float = 296.15) -> Path:
    """A synthetic single-point result; a missing uncertainty is an empty cell."""
    cells = [t, n, "" if n_err is None else n_err, rho, "" if rho_err is None else rho_err]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("# data: SYNTHETIC test result, not a measurement\n" + HEADER + "\n"
                    + ",".join(str(c) for c in cells) + "\n")
    return path


def write_lot(folder: Path, wafers: dict[str, str], lot: str = "KRW-TEST-01",
              head: str = LOT_HEAD) -> Path:
    text = head.format(lot=lot)
    for wid, run in wafers.items():
        text += f'\n[[wafer]]\nid = "{wid}"\nmaterial = "Si"\nrun = "{run}"\n'
    p = folder / "lot.toml"
    p.write_text(text)
    return p


@pytest.fixture
def db_file(tmp_path, monkeypatch):
    p = tmp_path / "qualify_history.sqlite"
    monkeypatch.setenv("FREEZEOUT_DB", f"sqlite:///{p}")
    return p


# ---------------------------------------------------------------------------------------------
# the sample lot


def by_id(doc):
    return {w["id"]: w for w in doc["wafers"]}


def claim(wafer, key):
    return next(c for c in wafer["claims"] if c["claim"] == key)


def test_json_equals_the_api_and_exit_code_follows_the_verdict(monkeypatch, capsys, tmp_path,
                                                                db_file):
    code, out, err = cli(monkeypatch, capsys, "qualify", SAMPLE, "--json", "--workers", 1)
    assert code == 3, err  # rejected, because of W04
    printed = json.loads(out)
    direct = freezeout.qualify_lot(SAMPLE, report=False, workers=1).to_dict()
    for doc in (printed, direct):
        doc["provenance"].pop("date")  # the time of the run, to the second
    assert printed == json.loads(json.dumps(direct))
    assert not (tmp_path / "reports").exists()  # --json without --out writes no report


def test_summary_names_the_deciding_wafer(monkeypatch, capsys, tmp_path, db_file):
    monkeypatch.setenv("COLUMNS", "300")
    code, out, _ = cli(monkeypatch, capsys, "qualify", SAMPLE, "--workers", 1, "--out",
                       tmp_path / "rep")
    assert code == 3
    assert "KRW-2611-07" in out and "W04" in out and "rejected" in out
    assert f"report: {tmp_path / 'rep' / 'lot_report.html'}" in out
    assert "history: lot record" in out and "4 new fit record(s)" in out


# ---------------------------------------------------------------------------------------------
# small lots of invented single-point results


def test_all_accepted_lot_exits_0_and_writes_the_default_report(monkeypatch, capsys, tmp_path,
                                                                db_file):
    runs = tmp_path / "runs"
    # resistivity 5.0 +- 0.05 ohm cm: U = 0.1, margin min(5 - 4, 6 - 5) / 0.1 = 10.0;
    # net doping 9e14 +- 9e12: U = 1.8e13, margin (9e14 - 6.3e14) / 1.8e13 = 15.0
    single_point(runs / "a.csv", 9.0e14, 9.0e12, 5.0, 0.05)
    shutil.copy(SAMPLE.parent / "runs" / "w01_temperature_run.csv", runs / "b.csv")
    lot = write_lot(tmp_path, {"A1": "runs/a.csv", "B1": "runs/b.csv"})
    monkeypatch.chdir(tmp_path)
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--workers", 1)
    assert code == 0, out + err
    assert "accepted" in out and "report:" in out
    report = tmp_path / "reports" / "KRW-TEST-01"
    doc = json.loads((report / "lot.json").read_text())
    a1 = by_id(doc)["A1"]
    assert claim(a1, "claim[2]")["margin_U"] == pytest.approx(10.0)
    assert claim(a1, "claim[3]")["margin_U"] == pytest.approx(15.0, rel=1e-6)
    assert (report / "lot_report.html").stat().st_size > 10_000
    assert counts(db_file) == (1, 1)


def test_indeterminate_only_lot_exits_4(monkeypatch, capsys, tmp_path, db_file):
    # resistivity 4.05 +- 0.05: U = 0.1, y - U = 3.95 < 4 < y + U: margin 0.05 / 0.1 = +0.5;
    # net doping 1.1e15 +- 1.1e13 accepted (1.1e15 + 2.2e13 = 1.122e15 <= 1.17e15)
    single_point(tmp_path / "r.csv", 1.1e15, 1.1e13, 4.05, 0.05)
    lot = write_lot(tmp_path, {"W1": "r.csv"})
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json")
    assert code == 4, err
    doc = json.loads(out)
    assert doc["verdict"] == "indeterminate"
    w = doc["wafers"][0]
    assert (w["verdict"], w["decided_by"]) == ("indeterminate", "claim[2]")
    assert w["margin_U"] == pytest.approx(0.5)
    assert claim(w, "claim[3]")["verdict"] == "accept"
    # --json without --out writes no report
    assert not (tmp_path / "reports").exists() and not Path("reports/KRW-TEST-01").exists()


def test_unknown_uncertainty_is_never_invented(monkeypatch, capsys, tmp_path, db_file):
    # no n_err and no rho_err: guarded acceptance cannot prove conformity (indeterminate)
    single_point(tmp_path / "r.csv", 9.0e14, None, 5.0, None)
    lot = write_lot(tmp_path, {"W1": "r.csv"})
    code, out, _ = cli(monkeypatch, capsys, "qualify", lot, "--json")
    assert code == 4
    w = json.loads(out)["wafers"][0]
    for key in ("claim[2]", "claim[3]"):
        c = claim(w, key)
        assert c["measured"]["stderr"] is None and c["expanded_uncertainty"] is None
        assert c["verdict"] == "indeterminate"


def test_failing_wafer_is_indeterminate_not_fatal(monkeypatch, capsys, tmp_path, db_file):
    single_point(tmp_path / "good.csv", 9.0e14, 9.0e12, 5.0, 0.05)
    # a run the reader rejects (no unit on the density column, line 2)
    (tmp_path / "bad.csv").write_text("T [K],n\n20,1e12\n30,2e12\n")
    # a run of three points cannot fit three free parameters
    (tmp_path / "short.csv").write_text("T [K],n [cm^-3]\n50,1e14\n100,5e14\n200,9e14\n")
    # a single point at 77 K is not a room-temperature result
    single_point(tmp_path / "cold.csv", 8.0e14, 8.0e12, 1.0, 0.01, t=77.0)
    lot = write_lot(tmp_path, {"OK": "good.csv", "BAD": "bad.csv", "SHORT": "short.csv",
                               "COLD": "cold.csv"})
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json", "--workers", 1)
    assert code == 4, err
    doc = json.loads(out)
    w = by_id(doc)
    assert w["OK"]["verdict"] == "accept"
    for wid, words in (("BAD", ("bad.csv", "line 1", "no unit")),
                       ("SHORT", ("short.csv", "too few usable points")),
                       ("COLD", ("cold.csv", "77 K", "not a room-temperature result"))):
        assert w[wid]["verdict"] == "indeterminate"
        assert all(c["verdict"] == "indeterminate" for c in w[wid]["claims"])
        reason = w[wid]["input"]["reason"]
        for word in words:
            assert word in reason, reason
        assert reason in w[wid]["notes"]
        # no claim decided it: the sentence says the wafer was not measured, and why
        assert w[wid]["decided_by"] == ""
        assert w[wid]["sentence"] == (f"Wafer {wid} is indeterminate: it was not measured "
                                      f"({reason}).")
    assert doc["decided_by"]["claim"] == "" and "which was not measured (" in doc["sentence"]
    assert counts(db_file) == (1, 0)
    # the console summary prints the reason as text (brackets are not taken as markup)
    monkeypatch.setenv("COLUMNS", "400")
    code, out, _ = cli(monkeypatch, capsys, "qualify", lot, "--workers", 1, "--out",
                       tmp_path / "rep")
    assert code == 4 and "write it like 'T [K]', 'n [cm^-3]'" in out
    assert "already stored, nothing new" in out


def test_summary_gives_the_reason_of_every_indeterminate_verdict(monkeypatch, capsys,
                                                                  tmp_path, db_file):
    # project choice, no source: the terminal says why, not only lot.json. W1's resistivity
    # straddles a limit (4.05 +- 0.05, U = 0.1); COLD is a single point at 77 K (not measured)
    single_point(tmp_path / "r.csv", 1.1e15, 1.1e13, 4.05, 0.05)
    single_point(tmp_path / "cold.csv", 8.0e14, 8.0e12, 1.0, 0.01, t=77.0)
    lot = write_lot(tmp_path, {"W1": "r.csv", "COLD": "cold.csv"})
    monkeypatch.setenv("COLUMNS", "100")  # long reasons are not cut or wrapped into pieces
    code, out, _ = cli(monkeypatch, capsys, "qualify", lot, "--workers", 1, "--out",
                       tmp_path / "rep")
    assert code == 4
    doc = json.loads((tmp_path / "rep" / "lot.json").read_text())
    lines = out.splitlines()
    w1 = claim(by_id(doc)["W1"], "claim[2]")
    assert w1["verdict"] == "indeterminate"
    line = next(x for x in lines if x.startswith("indeterminate: W1 claim[2]"))
    assert w1["sentence"] in line and "straddles a limit" in line
    cold = [x for x in lines if x.startswith("indeterminate: COLD")]
    assert len(cold) == 1 and "not a room-temperature result" in cold[0]  # once per wafer
    assert not any(x.startswith("indeterminate: W1 claim[3]") for x in lines)  # accepted


# ---------------------------------------------------------------------------------------------
# bad input: exit 2, one line naming the file and the key, no traceback, nothing written


@pytest.mark.parametrize(
    ("edit", "words"),
    [
        (lambda s: s.replace("max = 6.0", "maximum = 6.0"),
         ("claim[2].maximum", "unknown key 'maximum'")),
        (lambda s: s.replace('run = "r.csv"', 'run = "missing.csv"'),
         ("wafer[1].run", "run file not found")),
        (lambda s: s.replace("min = 4.0", "min = 7.0"),
         ("claim[2].max", "must be greater than min")),
        (lambda s: s.replace('value = "n"', 'value = "p"'),
         ("claim[2].dopant", "makes silicon n-type")),
    ],
)
def test_bad_lot_files_exit_2(monkeypatch, capsys, tmp_path, db_file, edit, words):
    single_point(tmp_path / "r.csv", 9.0e14, 9.0e12, 5.0, 0.05)
    lot = write_lot(tmp_path, {"W1": "r.csv"})
    lot.write_text(edit(lot.read_text()))
    monkeypatch.chdir(tmp_path)
    code, out, err = cli(monkeypatch, capsys, "qualify", lot)
    assert code == 2 and out == ""
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert err.startswith("freezeout: error: ") and str(lot.resolve()) in err
    for word in words:
        assert word in err, err
    assert not (tmp_path / "reports").exists()
    assert not db_file.exists() or counts(db_file) == (0, 0)


def test_claim_that_cannot_be_compared_exits_2(monkeypatch, capsys, tmp_path, db_file):
    # no dopant: the resistivity claim needs a measured resistivity, which a density-only
    # single point does not have (documented in docs/lot_format.md as exit 2)
    (tmp_path / "r.csv").write_text("# synthetic\nT [K],n [cm^-3],n_err [cm^-3]\n"
                                    "296.15,9e14,9e12\n")
    lot = write_lot(tmp_path, {"W1": "r.csv"},
                    head=LOT_HEAD.replace('dopant = "phosphorus"\n', ""))
    code, _, err = cli(monkeypatch, capsys, "qualify", lot)
    assert code == 2 and "needs a measured resistivity" in err and "claim[2]" in err
    assert "Traceback" not in err


def test_missing_lot_file_and_bad_options(monkeypatch, capsys, tmp_path):
    code, _, err = cli(monkeypatch, capsys, "qualify", tmp_path / "nope.toml")
    assert code == 2 and "lot file not found" in err and "nope.toml" in err
    code, _, err = cli(monkeypatch, capsys, "qualify", SAMPLE, "--workers", 0)
    assert code == 2 and "--workers must be at least 1" in err
    code, _, err = cli(monkeypatch, capsys, "qualify", SAMPLE, "--db", "mysql://h/x")
    assert code == 2 and "--db" in err and "unsupported database" in err


def test_a_measured_resistivity_too_far_from_the_claim_is_named_not_dropped_silently(
        monkeypatch, capsys, tmp_path, db_file):
    # the claim at the default 300 K, the point measured at 296.15 K: 3.85 K apart, beyond
    # the 1 K match, so the F723 conversion decides; a note says why the point was not used
    single_point(tmp_path / "r.csv", 9.0e14, 9.0e12, 5.0, 0.05)
    head = LOT_HEAD.replace("temperature_K = 296.15\n", "")
    lot = write_lot(tmp_path, {"W1": "r.csv"}, head=head)
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json", "--workers", 1)
    c = claim(json.loads(out)["wafers"][0], "claim[2]")
    assert c["method"].startswith("ASTM F723"), c
    assert any("measured resistivity at 296.15 K is 3.85 K from the claim's 300 K" in n
               for n in c["notes"]), c["notes"]
