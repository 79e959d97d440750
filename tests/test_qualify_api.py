"""The qualification pipeline as a library call: verdicts, report files, history records.

The bundled sample lot is synthetic (fictional supplier "Kestrel Ridge Wafers", fictional
"Harrowgate Cryo Lab", runs made by scripts/make_sample_lot.py): the verdicts checked here are
the ones it was designed to give. The pipeline runs once per module (a fixture) and each test
checks one thing of it.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from sqlalchemy import create_engine, func, select

import freezeout
from freezeout.physics.materials import get_material
from freezeout.records.verdicts import DEFERENCE, RULE_IN_WORDS
from freezeout.storage.schema import fit_records, lot_records

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "lot_kestrel_2026-11" / "lot.toml"


def counts(url: str) -> tuple[int, int]:
    engine = create_engine(url)
    try:
        with engine.connect() as conn:
            return (conn.execute(select(func.count()).select_from(lot_records)).scalar(),
                    conn.execute(select(func.count()).select_from(fit_records)).scalar())
    finally:
        engine.dispose()


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """The sample lot qualified once in this process; its report folder and database."""
    tmp = tmp_path_factory.mktemp("qualify")
    url = f"sqlite:///{tmp / 'history.sqlite'}"
    seen = []
    outcome = freezeout.qualify_lot(SAMPLE, out=tmp / "report", db=url, workers=1,
                                    progress=lambda done, total, wid: seen.append(
                                        (done, total, wid)))
    return outcome, tmp / "report", url, seen


def by_id(doc):
    return {w["id"]: w for w in doc["wafers"]}


def claim(wafer, key):
    return next(c for c in wafer["claims"] if c["claim"] == key)


def test_verdicts_as_the_sample_was_designed(run):
    outcome = run[0]
    doc = outcome.to_dict()
    assert (doc["lot"], doc["supplier"], doc["verdict"]) == ("KRW-2611-07",
                                                             "Kestrel Ridge Wafers", "reject")
    assert outcome.exit_code == 3
    assert {k: w["verdict"] for k, w in by_id(doc).items()} == {
        "W01": "accept", "W02": "accept", "W03": "accept", "W04": "reject",
        "W05": "indeterminate"}
    assert doc["decided_by"]["wafer"] == "W04"
    assert doc["deference"] == DEFERENCE and doc["sentence"].endswith(DEFERENCE)


def test_typed_record_matches_its_json(run):
    q = run[0].qualification
    doc = run[0].to_dict()
    assert [w.wafer_id for w in q.verdict.wafers] == [w["id"] for w in doc["wafers"]]
    assert q.inputs["W01"].how == "fit" and q.inputs["W01"].fit.n_points > 10
    assert q.inputs["W03"].how == "single room-temperature result"
    assert q.inputs["W03"].fit is None
    assert json.loads(json.dumps(doc, allow_nan=False)) == doc  # strict JSON


def test_progress_reports_every_wafer_once(run):
    seen = run[3]
    assert [s[0] for s in seen] == [1, 2, 3, 4, 5] and {s[1] for s in seen} == {5}
    assert sorted(s[2] for s in seen) == ["W01", "W02", "W03", "W04", "W05"]


def test_straddling_wafer_is_indeterminate(run):
    # W05: converted resistivity y with U straddles the 4 ohm cm limit: y - U < 4 < y + U
    r5 = claim(by_id(run[0].to_dict())["W05"], "claim[2]")
    y, big_u = r5["measured"]["value"], r5["expanded_uncertainty"]
    assert y - big_u < 4.0 < y + big_u and "ASTM F723" in r5["method"]
    assert r5["margin_U"] == pytest.approx((y - 4.0) / big_u)


def test_room_temperature_point_by_hand(run):
    # W03, the single room-temperature result, checked against its file by hand:
    # resistivity used as measured (u = rho_err, U = 2 u); net doping = n - n_i^2/n
    w3 = by_id(run[0].to_dict())["W03"]
    row = (SAMPLE.parent / "runs" / "w03_room_temperature.csv").read_text().splitlines()[-1]
    t, n, n_err, rho, rho_err = map(float, row.split(","))
    r3 = claim(w3, "claim[2]")
    assert (r3["measured"]["value"], r3["measured"]["stderr"]) == (rho, rho_err)
    assert r3["expanded_uncertainty"] == pytest.approx(2 * rho_err)
    ni = float(get_material("Si").intrinsic_density(t))
    n3 = claim(w3, "claim[3]")
    assert n3["measured"]["value"] == pytest.approx(n - ni**2 / n, rel=1e-12)
    assert n3["measured"]["stderr"] == pytest.approx(n_err, rel=1e-6)  # (1 + (n_i/n)^2) ~ 1
    assert any("saturation" in s for s in w3["notes"])


def test_report_files(run):
    outcome, folder = run[0], run[1]
    doc = outcome.to_dict()
    assert set(outcome.written) >= {"lot_report.html", "lot.json", "lot.csv"}
    html = (folder / "lot_report.html").read_text()
    assert html.count("data:image/png;base64,") == 2
    assert DEFERENCE.replace("'", "&#x27;") in html and RULE_IN_WORDS["guarded"] in html
    for wid in by_id(doc):
        assert f"Wafer {wid}" in html
    assert json.loads((folder / "lot.json").read_text()) == doc
    assert doc["provenance"]["lot_file"] == "lot.toml"
    assert len(doc["provenance"]["lot_input_sha256"]) == 64
    for name in ("chart_claim2.png", "chart_claim3.png"):
        assert (folder / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_lot_csv_rows(run):
    rows = list(csv.DictReader(io.StringIO((run[1] / "lot.csv").read_text())))
    assert len(rows) == 5 * 3  # one row per wafer and claim
    row = (SAMPLE.parent / "runs" / "w03_room_temperature.csv").read_text().splitlines()[-1]
    rho, rho_err = map(float, row.split(",")[3:5])
    r = next(r for r in rows if r["wafer"] == "W03" and r["claim"] == "claim[2]")
    assert (float(r["measured"]), float(r["stderr"]), float(r["spec_min"]),
            float(r["spec_max"]), r["unit"]) == (rho, rho_err, 4.0, 6.0, "ohm cm")


def test_history_holds_the_lot_and_each_fit_once(run):
    outcome, _, url, _ = run
    assert counts(url) == (1, 4)  # W03 is not fitted
    assert outcome.lot_record.created and outcome.fits_new == 4
    again = freezeout.qualify_lot(SAMPLE, report=False, db=url, workers=1)
    assert not again.lot_record.created and again.fits_new == 0
    assert counts(url) == (1, 4)


def test_worker_processes_give_the_same_verdicts(run, tmp_path):
    url = f"sqlite:///{tmp_path / 'h.sqlite'}"
    parallel = freezeout.qualify_lot(SAMPLE, report=False, db=url, workers=2).to_dict()
    serial = run[0].to_dict()

    def verdicts(doc):
        return [(w["id"], w["verdict"], [(c["verdict"], c["measured"]) for c in w["claims"]])
                for w in doc["wafers"]]

    assert verdicts(parallel) == verdicts(serial)


def test_no_report_unless_asked(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    outcome = freezeout.qualify_lot(SAMPLE, report=False, workers=1)
    assert outcome.written == {} and not (tmp_path / "reports").exists()


def test_default_folder_name_is_one_safe_component():
    from freezeout.api import default_lot_folder

    assert default_lot_folder("KRW-2611-07") == Path("reports") / "KRW-2611-07"
    assert default_lot_folder("../lot 7/a") == Path("reports") / "lot_7_a"


def test_wafer_fits_skip_the_level_spectrum(tmp_path, monkeypatch):
    # project choice, no source: a wafer's verdict reads the fitted levels, not Hoffmann's
    # level spectrum, so a lot does not compute it (about 17 ms a wafer)
    import freezeout.fitting.spectroscopy as spectroscopy

    def refuse(*args, **kwargs):
        raise AssertionError("the level spectrum was computed for a wafer of a lot")

    monkeypatch.setattr(spectroscopy, "fit_spectrum", refuse)
    outcome = freezeout.qualify_lot(SAMPLE, report=False, workers=1)
    assert "fit" in [w["input"]["how"] for w in outcome.to_dict()["wafers"]]
