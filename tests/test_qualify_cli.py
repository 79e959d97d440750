"""``freezeout qualify`` end to end: verdicts, exit codes, report files, history, bad input.

All lots here are synthetic: the bundled sample lot (fictional supplier "Kestrel Ridge
Wafers", fictional "Harrowgate Cryo Lab", runs made by scripts/make_sample_lot.py) and small
lots written into tmp_path from invented single-point results.
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import pytest
from sqlalchemy import create_engine, func, select

from cli_runner import cli
from freezeout.claims.conformity import DEFERENCE, RULE_IN_WORDS
from freezeout.physics.materials import get_material
from freezeout.storage.db import fit_records, lot_records

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


def test_sample_lot_parallel_and_in_process(monkeypatch, capsys, tmp_path, db_file):
    import concurrent.futures

    pools = []

    class CountingPool(concurrent.futures.ProcessPoolExecutor):
        def __init__(self, *args, **kwargs):
            pools.append(kwargs)
            super().__init__(*args, **kwargs)

    monkeypatch.setattr(concurrent.futures, "ProcessPoolExecutor", CountingPool)
    out_dir = tmp_path / "report"
    code, out, err = cli(monkeypatch, capsys, "qualify", SAMPLE, "--json", "--out", out_dir,
                         "--workers", 2)
    assert code == 3, err  # rejected, because of W04
    assert len(pools) == 1 and pools[0]["max_workers"] == 2  # the parallel path ran
    assert pools[0]["mp_context"].get_start_method() == "spawn"
    doc = json.loads(out)
    # the shape promised by the issue
    assert (doc["lot"], doc["supplier"], doc["verdict"]) == ("KRW-2611-07",
                                                             "Kestrel Ridge Wafers", "reject")
    for w in doc["wafers"]:
        assert w["verdict"] in ("accept", "reject", "indeterminate")
        for c in w["claims"]:
            assert {"quantity", "measured", "verdict"} <= set(c)
            assert set(c["measured"]) >= {"value", "stderr"}
    wafers = by_id(doc)
    # the verdicts as the sample lot was designed (scripts/make_sample_lot.py)
    assert {k: w["verdict"] for k, w in wafers.items()} == {
        "W01": "accept", "W02": "accept", "W03": "accept", "W04": "reject",
        "W05": "indeterminate"}
    assert doc["decided_by"]["wafer"] == "W04"
    assert doc["deference"] == DEFERENCE and doc["sentence"].endswith(DEFERENCE)
    assert [wafers[k]["input"]["how"] for k in ("W01", "W03")] == [
        "fit", "single room-temperature result"]

    # W05: converted resistivity y with U straddles the 4 ohm cm limit: y - U < 4 < y + U
    r5 = claim(wafers["W05"], "claim[2]")
    y, big_u = r5["measured"]["value"], r5["expanded_uncertainty"]
    assert y - big_u < 4.0 < y + big_u and "ASTM F723" in r5["method"]
    assert r5["margin_U"] == pytest.approx((y - 4.0) / big_u)

    # W03, the single room-temperature result, checked against its file by hand:
    # resistivity used as measured (u = rho_err, U = 2 u); net doping = n - n_i^2/n
    row = (SAMPLE.parent / "runs" / "w03_room_temperature.csv").read_text().splitlines()[-1]
    t, n, n_err, rho, rho_err = map(float, row.split(","))
    r3 = claim(wafers["W03"], "claim[2]")
    assert (r3["measured"]["value"], r3["measured"]["stderr"]) == (rho, rho_err)
    assert r3["expanded_uncertainty"] == pytest.approx(2 * rho_err)
    ni = float(get_material("Si").intrinsic_density(t))
    n3 = claim(wafers["W03"], "claim[3]")
    assert n3["measured"]["value"] == pytest.approx(n - ni**2 / n, rel=1e-12)
    assert n3["measured"]["stderr"] == pytest.approx(n_err, rel=1e-6)  # (1 + (n_i/n)^2) ~ 1
    assert any("saturation" in s for s in wafers["W03"]["notes"])

    # report files
    html = (out_dir / "lot_report.html").read_text()
    assert len(html) > 20_000 and html.count("data:image/png;base64,") == 2
    assert DEFERENCE.replace("'", "&#x27;") in html
    assert RULE_IN_WORDS["guarded"] in html
    for wid in wafers:
        assert f"Wafer {wid}" in html
    assert json.loads((out_dir / "lot.json").read_text()) == doc
    assert doc["provenance"]["lot_file"] == "lot.toml"
    assert len(doc["provenance"]["lot_input_sha256"]) == 64
    for name in ("chart_claim2.png", "chart_claim3.png"):
        assert (out_dir / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    rows = list(csv.DictReader(io.StringIO((out_dir / "lot.csv").read_text())))
    assert len(rows) == 5 * 3  # one row per wafer and claim
    for col in ("lot", "supplier", "wafer", "quantity", "unit", "measured", "stderr", "U",
                "spec_min", "spec_max", "verdict", "margin_in_U", "p_conformance", "method"):
        assert col in rows[0]
    r = next(r for r in rows if r["wafer"] == "W03" and r["claim"] == "claim[2]")
    assert (float(r["measured"]), float(r["stderr"]), float(r["spec_min"]),
            float(r["spec_max"]), r["unit"]) == (rho, rho_err, 4.0, 6.0, "ohm cm")

    # history: one lot record and one fit record per fitted wafer (W03 is not fitted)
    assert counts(db_file) == (1, 4)

    # the in-process path gives the same verdicts, and stores nothing new
    code2, out2, _ = cli(monkeypatch, capsys, "qualify", SAMPLE, "--json", "--workers", 1)
    assert code2 == 3 and len(pools) == 1  # in process: no second pool
    doc2 = json.loads(out2)
    assert [(w["id"], w["verdict"], [c["verdict"] for c in w["claims"]])
            for w in doc2["wafers"]] == [(w["id"], w["verdict"],
                                          [c["verdict"] for c in w["claims"]])
                                         for w in doc["wafers"]]
    assert claim(by_id(doc2)["W05"], "claim[2]")["measured"] == r5["measured"]
    assert counts(db_file) == (1, 4)


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
    assert counts(db_file) == (1, 0)
    # the console summary prints the reason as text (brackets are not taken as markup)
    monkeypatch.setenv("COLUMNS", "400")
    code, out, _ = cli(monkeypatch, capsys, "qualify", lot, "--workers", 1, "--out",
                       tmp_path / "rep")
    assert code == 4 and "write it like 'T [K]', 'n [cm^-3]'" in out
    assert "already stored, nothing new" in out


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


def test_lot_folder_name_is_safe():
    from freezeout.cli.qualify import _folder_name

    assert _folder_name("KRW-2611-07") == "KRW-2611-07"
    assert _folder_name("../lot 7/a") == "lot_7_a"  # one path component, no dot start
