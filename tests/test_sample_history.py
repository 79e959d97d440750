"""The three synthetic sample lots of the fictional supplier show a drift in the history."""

from __future__ import annotations

import json
from pathlib import Path

from cli_runner import cli

ROOT = Path(__file__).resolve().parents[1] / "sample_data"


def test_three_lots_build_a_trend(monkeypatch, capsys, tmp_path):
    db = f"sqlite:///{tmp_path / 'h.sqlite'}"
    codes = []
    for month in ("2026-09", "2026-10"):
        code, _, _ = cli(monkeypatch, capsys, "qualify", ROOT / f"lot_kestrel_{month}/lot.toml",
                         "--db", db, "--out", tmp_path / month, "--workers", 1)
        codes.append(code)
    assert codes == [0, 0]  # earlier lots accepted (designed so by make_sample_history.py)
    code, out, _ = cli(monkeypatch, capsys, "history", "--supplier", "Kestrel Ridge Wafers",
                       "--db", db, "--json", "--out", tmp_path / "trend.png")
    assert code == 0
    doc = json.loads(out)
    assert (tmp_path / "trend.png").stat().st_size > 5000
    points = doc["trends"]["Kestrel Ridge Wafers"]["points"]
    doping = {p["lot"]: p["mean_ratio"] for p in points if p["quantity"] == "net_doping"}
    # the generator's true net doping: 8.4e14 then 9.53e14 mean against the nominal 9e14
    assert abs(doping["KRW-2609-02"] - 8.4e14 / 9e14) < 0.03
    assert abs(doping["KRW-2610-05"] - 9.533e14 / 9e14) < 0.03
    assert doping["KRW-2609-02"] < doping["KRW-2610-05"]
