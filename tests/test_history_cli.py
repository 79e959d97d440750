"""``freezeout history``: listing, filters, the trend figure, bad options.

Records are synthetic (tests/conftest_storage.py: fictional supplier "Kestrel Ridge Wafers"),
plus one lot of invented single-point results qualified end to end.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import conftest_storage as cs
import freezeout
from cli_runner import cli
from freezeout.storage import open_store

OTHER = "Fenwick Hollow Silicon"  # a second fictional supplier




@pytest.fixture
def url(tmp_path):
    """A history database with two lots of one supplier, one of another, and one fit."""
    u = f"sqlite:///{tmp_path / 'hist.sqlite'}"
    with open_store(u) as store:
        store.save_lot(cs.lot_qualification(lot="KRW-2610-01", date="2026-10-05",
                                            resistivities=(9.0, 10.0, 11.0), folder="oct",
                                            key="oct", options={}))
        store.save_lot(cs.lot_qualification(lot="KRW-2611-07", date="2026-11-03",
                                            folder="nov", key="nov", options={}))
        store.save_lot(cs.lot_qualification(lot="FHS-0042", date="2026-11-10",
                                            resistivities=(10.0,), supplier=OTHER,
                                            folder="fhs", key="fhs", options={}))
        store.save_fit(cs.fit_result(name="w01.csv", key="w01", options={"donors": 1}))
    return u


def test_listing_and_filters(monkeypatch, capsys, url):
    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--json")
    assert code == 0
    doc = json.loads(out)
    kinds = [(r["kind"], r["lot"]) for r in doc["records"]]
    assert sorted(kinds, key=str) == sorted([("lot", "KRW-2610-01"), ("lot", "KRW-2611-07"),
                                             ("lot", "FHS-0042"), ("fit", None)], key=str)
    # with --json and no --out no figure is written, but the trend points are printed
    assert set(doc["trends"]) == {cs.SUPPLIER, OTHER}
    assert all(t["figure"] is None for t in doc["trends"].values())

    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--json", "--supplier",
                       cs.SUPPLIER, "--since", "2026-11-01")
    doc = json.loads(out)
    # only the November lot of that supplier; fits carry no supplier
    assert [(r["kind"], r["lot"]) for r in doc["records"]] == [("lot", "KRW-2611-07")]
    assert {p["lot"] for p in doc["trends"][cs.SUPPLIER]["points"]} == {"KRW-2611-07"}

    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--json", "--kind", "fit")
    doc = json.loads(out)
    assert [r["kind"] for r in doc["records"]] == ["fit"] and doc["trends"] == {}
    assert doc["records"][0]["net_doping_cm3"] == 5.0e14


def test_trend_points_by_hand(monkeypatch, capsys, url, tmp_path):
    png = tmp_path / "kestrel.png"
    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--supplier", cs.SUPPLIER,
                       "--json", "--out", png)
    assert code == 0
    trend = json.loads(out)["trends"][cs.SUPPLIER]
    assert trend["figure"] == str(png)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 10_000
    pts = {(p["lot"], p["quantity"]): p for p in trend["points"]}
    # November lot: resistivities 10, 11.75, 13 against the window 8..12 ohm cm, whose
    # midpoint 10 is the claimed value: ratios 1.0, 1.175, 1.3, mean 3.475/3 = 1.158333;
    # the window over the claimed value is 0.8 .. 1.2
    r = pts[("KRW-2611-07", "resistivity")]
    assert (r["min_ratio"], r["max_ratio"]) == (pytest.approx(1.0), pytest.approx(1.3))
    assert r["mean_ratio"] == pytest.approx(3.475 / 3)
    assert (r["spec_min_ratio"], r["spec_max_ratio"]) == (pytest.approx(0.8),
                                                          pytest.approx(1.2))
    # net doping 5e14 measured against the nominal 5e14 +- 10 %: ratio 1, window 0.9 .. 1.1
    d = pts[("KRW-2611-07", "net_doping")]
    assert d["mean_ratio"] == pytest.approx(1.0) and d["n_wafers"] == 3
    assert (d["spec_min_ratio"], d["spec_max_ratio"]) == (pytest.approx(0.9),
                                                          pytest.approx(1.1))
    # October lot: 9, 10, 11 -> mean ratio 1.0
    assert pts[("KRW-2610-01", "resistivity")]["mean_ratio"] == pytest.approx(1.0)


def test_table_and_default_trend_folder(monkeypatch, capsys, url, tmp_path):
    monkeypatch.chdir(tmp_path)
    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url)
    assert code == 0
    assert "KRW-2611-07" in out and "FHS-0042" in out and "reject" in out
    for supplier in ("Kestrel_Ridge_Wafers", "Fenwick_Hollow_Silicon"):
        p = tmp_path / "reports" / "history" / f"trend_{supplier}.png"
        assert p.read_bytes()[:4] == b"\x89PNG"
        assert str(Path("reports") / "history" / p.name) in out
    # a supplier with no lots: listed as such, no figure
    code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--supplier", "Nobody")
    assert code == 0 and "no records match" in out and "no trend" in out


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (("--since", "2026-13-01"), ("--since", "not a date", "YYYY-MM-DD")),
        (("--since", "yesterday"), ("--since", "not a date")),
        (("--kind", "wafer"), ("--kind must be 'fit' or 'lot'",)),
        (("--db", "mysql://host/db"), ("--db", "unsupported database")),
    ],
)
def test_bad_options_exit_2(monkeypatch, capsys, args, words):
    code, out, err = cli(monkeypatch, capsys, "history", *args)
    assert code == 2 and out == "" and "Traceback" not in err
    for w in words:
        assert w in err, err


def test_one_png_file_for_several_suppliers_is_refused(monkeypatch, capsys, url, tmp_path):
    code, _, err = cli(monkeypatch, capsys, "history", "--db", url, "--out",
                       tmp_path / "one.png")
    assert code == 2 and "2 suppliers" in err and not (tmp_path / "one.png").exists()


def test_qualified_lot_shows_in_history(monkeypatch, capsys, tmp_path):
    # a synthetic single-point result qualified end to end, then listed (same database)
    (tmp_path / "r.csv").write_text("# synthetic\nT [K],n [cm^-3],n_err [cm^-3]\n"
                                    "296.15,9e14,9e12\n")
    (tmp_path / "lot.toml").write_text(
        '# synthetic\nsupplier = "Kestrel Ridge Wafers"\nlot = "KRW-E2E-1"\n'
        'date = 2026-11-21\n[decision]\nrule = "guarded"\n'
        '[[claim]]\nquantity = "net_doping"\nnominal = 9e14\ntolerance = "30%"\n'
        'unit = "cm^-3"\ndopant = "phosphorus"\n[[wafer]]\nid = "W1"\nmaterial = "Si"\n'
        'run = "r.csv"\n')
    code, _, _ = cli(monkeypatch, capsys, "qualify", tmp_path / "lot.toml", "--json")
    assert code == 0
    code, out, _ = cli(monkeypatch, capsys, "history", "--json", "--supplier",
                       "Kestrel Ridge Wafers")
    doc = json.loads(out)
    assert [(r["lot"], r["verdict"]) for r in doc["records"]] == [("KRW-E2E-1", "accept")]
    (pt,) = doc["trends"]["Kestrel Ridge Wafers"]["points"]
    # 9e14 measured (less n_i^2/n ~ 4e4 cm^-3) over the nominal 9e14: ratio 1
    assert pt["mean_ratio"] == pytest.approx(1.0, rel=1e-9)
    assert (pt["spec_min_ratio"], pt["spec_max_ratio"]) == (pytest.approx(0.7),
                                                            pytest.approx(1.3))


def test_json_equals_the_api(monkeypatch, capsys, url, tmp_path):
    """``history --json`` prints exactly ``freezeout.history(...).to_dict()``."""
    for args, kw in (((), {}), (("--supplier", OTHER), {"supplier": OTHER}),
                     (("--kind", "lot", "--since", "2026-11-01"),
                      {"kind": "lot", "since": "2026-11-01"})):
        code, out, _ = cli(monkeypatch, capsys, "history", "--db", url, "--json", *args)
        assert code == 0
        direct = freezeout.history(db=url, draw=False, **kw).to_dict()
        assert json.loads(out) == json.loads(json.dumps(direct))
    # with --out the figure path is part of the JSON, and the PNG exists
    folder = tmp_path / "trends"
    result = freezeout.history(db=url, out=folder, supplier=OTHER)
    assert result.figures[OTHER] == folder / "trend_Fenwick_Hollow_Silicon.png"
    assert result.figures[OTHER].read_bytes()[:4] == b"\x89PNG"
