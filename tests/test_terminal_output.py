"""What the commands print: file text never read as markup, no control sequences, wide
tables off a terminal, severities readable without colour, rounded sentence numbers,
``--version``, and lot.csv cells a spreadsheet does not run as formulas.

Sources: the escape-sequence forms are ECMA-48 (5th ed., 1991), sections 5.4 and 8.3.89
(CSI, OSC); the formula prefixes are OWASP "CSV Injection" (common practice). Everything
else is project choice, no source.
"""

from __future__ import annotations

import csv
import dataclasses
import io

import pytest

import conftest_storage as cs
import freezeout
from cli_runner import cli
from freezeout.cli.render import clean, num
from freezeout.reporting.lot_report import lot_csv

SI_TOML = ('band_gap_0K_eV = 1.17\nvarshni_alpha_eV_per_K = 4.73e-4\nvarshni_beta_K = 636.0\n'
           'electron_dos_mass = 1.18\nhole_dos_mass = 0.81\n')


@pytest.fixture(scope="module")
def sim_csv(tmp_path_factory):
    """A simulated n-type Si run, 25 points (project choice, no source)."""
    p = tmp_path_factory.mktemp("sim") / "sim.csv"
    sim = freezeout.api.simulate(material="Si", donors=[(1e16, 0.045, None)],
                                 acceptors=[(1e14, None, None)], temperatures=(20, 600, 25),
                                 statistics="fermi-dirac")
    freezeout.api.write_simulation_csv(sim, "fermi-dirac", p)
    return p


def test_clean_strips_escapes_and_controls():
    # ECMA-48 CSI (ESC [ ... final) and OSC (ESC ] ... BEL); C0 and C1 controls
    assert clean("a\x1b[2Jb\x1b[31mc\x1b]0;title\x07d") == "abcd"
    assert clean("x\x00y\x07z\x7f\x9b31m\x85w") == "xyzw"
    assert clean("tab\there\nnext") == "tab\there\nnext"
    assert clean("[/yellow] [bold]") == "[/yellow] [bold]"  # brackets are kept, not parsed


def test_sentence_numbers():
    # project choice, no source: 4 significant digits, a plain exponent
    assert num(378.808) == "378.8"
    assert num(1e15) == "1e15"
    assert num(-2.5e-3) == "-0.0025"
    assert num(1.234e-7) == "1.234e-7"
    assert num(None) == "—"


def test_csv_header_markup_does_not_crash_fit(sim_csv, tmp_path, monkeypatch, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text(sim_csv.read_text().replace("p [cm^-3]", "[/yellow]"))
    code, out, err = cli(monkeypatch, capsys, "fit", bad, "--no-history", "--out",
                         tmp_path / "r")
    assert code == 0, err
    assert "report:" in out


def test_material_name_markup_and_escapes(sim_csv, tmp_path, monkeypatch, capsys):
    m = tmp_path / "m.toml"
    m.write_text('name = "[/x]\\u001b[2J\\u0007"\n' + SI_TOML)
    code, out, err = cli(monkeypatch, capsys, "fit", sim_csv, "--material-file", m,
                         "--no-history", "--out", tmp_path / "r")
    assert code == 0, err
    assert "[/x]" in out
    assert "\x1b" not in out and "\x07" not in out


def test_tables_not_cut_when_piped(tmp_path, monkeypatch, capsys):
    # capsys: stdout is not a terminal, as in a CI log or a pipe
    raw = freezeout.api.reduce_file  # noqa: F841 - the command below calls it
    from pathlib import Path

    sample = Path(__file__).parent.parent / "sample_data" / "harrowgate_raw_vdp_run.csv"
    monkeypatch.delenv("COLUMNS", raising=False)
    code, out, err = cli(monkeypatch, capsys, "reduce", sample, "--out", tmp_path / "r.csv")
    assert code == 0, err
    assert "…" not in out
    # the severity is written, not only coloured (no colour off a terminal)
    assert "\x1b[" not in out
    assert "severe" in out or "warning" in out
    assert "reciprocity" in out  # whole codes, not cut


def test_history_net_doping_rounded(tmp_path, monkeypatch, capsys):
    url = f"sqlite:///{tmp_path / 'h.sqlite'}"
    from freezeout.storage import open_store

    with open_store(url) as store:
        store.save_fit(cs.fit_result(net=1.0e15, stderr=2.0e13, name="w01.csv", key="w01",
                                     options={}))
    code, out, err = cli(monkeypatch, capsys, "history", "--db", url, "--kind", "fit")
    assert code == 0, err
    assert "1e15" in out and "1e+15" not in out and "1000000000000000" not in out


def test_version(monkeypatch, capsys):
    code, out, _ = cli(monkeypatch, capsys, "--version")
    assert code == 0 and out.strip() == f"freezeout {freezeout.__version__}"


def test_lot_csv_formula_cells_are_text():
    q = cs.lot_qualification(supplier="@SUM(A1)")
    w0 = dataclasses.replace(q.verdict.wafers[0], wafer_id='=HYPERLINK("x")')
    q = dataclasses.replace(q, verdict=dataclasses.replace(
        q.verdict, wafers=(w0, *q.verdict.wafers[1:])))
    rows = list(csv.DictReader(io.StringIO(lot_csv(q))))
    assert {r["supplier"] for r in rows} == {"'@SUM(A1)"}
    assert rows[0]["wafer"] == "'=HYPERLINK(\"x\")"
    assert rows[-1]["wafer"] == "W03"
    # numbers stay numbers: a negative margin is written as it is (W03 is out of window)
    margins = [r["margin_in_U"] for r in rows if r["margin_in_U"]]
    assert any(m.startswith("-") for m in margins)
    for m in margins:
        float(m)


def test_error_messages_are_cleaned(tmp_path, monkeypatch, capsys):
    # a file name carrying an escape sequence, quoted back in the error message
    missing = tmp_path / "run\x1b[2J.csv"
    code, out, err = cli(monkeypatch, capsys, "fit", missing, "--no-history", "--json")
    assert code == 2 and out == ""
    assert "freezeout: error:" in err and "run.csv" in err  # the sequence is removed whole
    assert "\x1b" not in err
