"""Hostile lot files: paths leaving the lot's folder, absurd nesting, absurd claim values.

Lots and results are synthetic (fictional supplier "Kestrel Ridge Wafers"); every refusal is
an InputError naming the file, the line and the key path, and nothing is written.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from freezeout.claims.lot_reader import load_lot, parse_lot
from freezeout.errors import InputError

POINT = ("# data: SYNTHETIC single point, not a measurement\n"
         "T [K],n [cm^-3],n_err [cm^-3],rho [ohm cm],rho_err [ohm cm]\n"
         "296.15,9e14,9e12,5.0,0.05\n")

HEAD = """\
supplier = "Kestrel Ridge Wafers"
lot = "KRW-HOSTILE-1"
date = 2026-11-20
[decision]
rule = "guarded"
[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
temperature_K = 296.15
"""


def lot_with(folder: Path, run: str, claim: str = "", material: str = 'material = "Si"') -> Path:
    lot = folder / "lot.toml"
    lot.write_text(HEAD + claim + f'[[wafer]]\nid = "W1"\n{material}\nrun = "{run}"\n')
    return lot


def refused(lot: Path, column: str, words: str, **kw) -> InputError:
    with pytest.raises(InputError) as exc:
        load_lot(lot, **kw)
    err = exc.value
    assert err.file == str(lot.resolve())
    assert err.column == column
    assert err.line is not None
    assert words in err.message
    return err


# ---------------------------------------------------------------------------------------------
# paths leaving the lot's folder (project choice, no source: a lot names files beside it)


@pytest.fixture
def outside(tmp_path):
    """A lot folder and a run file outside it."""
    (tmp_path / "lot").mkdir()
    run = tmp_path / "elsewhere.csv"
    run.write_text(POINT)
    return tmp_path / "lot", run


def test_dotdot_run_is_refused(outside):
    folder, _ = outside
    err = refused(lot_with(folder, "../elsewhere.csv"), "wafer[1].run", "outside the lot's folder")
    assert "--allow-outside-paths" in err.message


def test_deep_dotdot_to_system_file_is_refused(outside):
    folder, _ = outside
    refused(lot_with(folder, "../../../../../../../../etc/passwd"), "wafer[1].run",
            "outside the lot's folder")


def test_absolute_run_is_refused(outside):
    folder, run = outside
    refused(lot_with(folder, str(run)), "wafer[1].run", "outside the lot's folder")


def test_symlink_out_is_refused(outside):
    folder, run = outside
    (folder / "link.csv").symlink_to(run)
    refused(lot_with(folder, "link.csv"), "wafer[1].run", "outside the lot's folder")


def test_material_file_outside_is_refused(outside, tmp_path):
    folder, _ = outside
    (folder / "r.csv").write_text(POINT)
    mat = tmp_path / "mat.toml"
    mat.write_text('name = "Si"\n')
    refused(lot_with(folder, "r.csv", material=f'material_file = "{mat}"'),
            "wafer[1].material_file", "outside the lot's folder")


def test_allow_outside_reads_the_lot(outside):
    folder, run = outside
    lot = load_lot(lot_with(folder, "../elsewhere.csv"), allow_outside=True)
    assert lot.wafers[0].run == run.resolve()


def test_inside_symlink_and_subfolder_are_fine(tmp_path):
    (tmp_path / "runs").mkdir()
    (tmp_path / "runs" / "r.csv").write_text(POINT)
    (tmp_path / "link.csv").symlink_to(tmp_path / "runs" / "r.csv")
    assert load_lot(lot_with(tmp_path, "runs/../link.csv")).wafers[0].run.name == "r.csv"


def test_qualify_refuses_outside_and_writes_nothing(outside, tmp_path):
    from freezeout.api import qualify_lot

    folder, _ = outside
    lot = lot_with(folder, "../elsewhere.csv")
    db = tmp_path / "h.sqlite"
    with pytest.raises(InputError):
        qualify_lot(lot, out=tmp_path / "rep", db=f"sqlite:///{db}", workers=1)
    assert not (tmp_path / "rep").exists() and not db.exists()


def test_qualify_allow_outside_says_so(outside, tmp_path):
    from freezeout.api import qualify_lot

    folder, _ = outside
    lot = lot_with(folder, "../elsewhere.csv")
    rep = tmp_path / "rep"
    qualify_lot(lot, out=rep, db=f"sqlite:///{tmp_path / 'h.sqlite'}", workers=1,
                allow_outside=True)
    doc = json.loads((rep / "lot.json").read_text())
    assert doc["provenance"]["options"]["allow_outside_paths"] is True
    outside = doc["provenance"]["options"]["paths_outside_lot_folder"]
    assert outside == [str(tmp_path / "elsewhere.csv")]
    html = (rep / "lot_report.html").read_text()
    assert "outside the lot file's folder" in html


def test_qualify_cli_option(outside, tmp_path, monkeypatch, capsys):
    from cli_runner import cli

    def run_cli(*args):
        return cli(monkeypatch, capsys, *args)

    folder, _ = outside
    lot = lot_with(folder, "../elsewhere.csv")
    monkeypatch.setenv("FREEZEOUT_DB", f"sqlite:///{tmp_path / 'h.sqlite'}")
    code, _, err = run_cli("qualify", str(lot), "--out", str(tmp_path / "rep"), "--workers", "1")
    assert code == 2 and "outside the lot's folder" in err
    assert not (tmp_path / "rep").exists()
    code, _, _ = run_cli("qualify", str(lot), "--out", str(tmp_path / "rep"), "--workers", "1",
                         "--allow-outside-paths")
    assert code == 0
    assert (tmp_path / "rep" / "lot.json").exists()


# ---------------------------------------------------------------------------------------------
# nesting (tomllib recurses per level: deep nesting may raise RecursionError)


@pytest.mark.parametrize("value", ["[" * 500 + "]" * 500, "{a = " * 500 + "1" + "}" * 500,
                                   "[" * 100000 + "]" * 100000])
def test_deep_nesting_is_refused(tmp_path, value):
    text = HEAD + f"note = {value}\n"
    with pytest.raises(InputError) as exc:
        parse_lot(text, tmp_path / "lot.toml")
    assert exc.value.file == str((tmp_path / "lot.toml").resolve())
    assert "nested too deep" in exc.value.message or "not valid TOML" in exc.value.message


def test_deep_nesting_message(tmp_path):
    text = "a = " + "[" * 5000 + "]" * 5000 + "\n"
    with pytest.raises(InputError) as exc:
        parse_lot(text, tmp_path / "lot.toml")
    assert "nested too deep" in exc.value.message


# ---------------------------------------------------------------------------------------------
# absurd claim values (project choice, no source: densities 1e8..1e23 cm^-3, resistivities
# 1e-6..1e12 ohm cm after unit conversion; beyond them a value is a typing slip)

ABSURD = [
    ('quantity = "net_doping"\nnominal = 1e300\ntolerance = "10%"\nunit = "cm^-3"', "nominal"),
    ('quantity = "net_doping"\nmin = 1e14\nmax = 1e300\nunit = "cm^-3"', "max"),
    ('quantity = "net_doping"\nmin = 1e2\nmax = 1e15\nunit = "cm^-3"', "min"),
    ('quantity = "net_doping"\nmin = 1e14\nmax = 1e24\nunit = "m^-3"', "min"),  # 1e8 cm^-3 ok
    ('quantity = "resistivity"\nmin = 1e-300\nmax = 5\nunit = "ohm cm"', "min"),
    ('quantity = "resistivity"\nnominal = 1e300\ntolerance = 1\nunit = "ohm cm"', "nominal"),
    ('quantity = "resistivity"\nmin = 1\nmax = 1e13\nunit = "ohm m"', "max"),
]


@pytest.mark.parametrize(("claim", "key"), ABSURD)
def test_absurd_claim_is_refused(tmp_path, claim, key):
    (tmp_path / "r.csv").write_text(POINT)
    lot = lot_with(tmp_path, "r.csv", claim="[[claim]]\n" + claim + "\n")
    if 'unit = "m^-3"' in claim:
        # 1e14 m^-3 = 1e8 cm^-3 is the edge, allowed; 1e24 m^-3 = 1e18 cm^-3 fine
        assert load_lot(lot).claims[1].window.lower == pytest.approx(1e8)
        return
    err = refused(lot, f"claim[2].{key}", "outside")
    assert "cm" in err.message


def test_sane_claims_still_read():
    here = Path(__file__).resolve().parents[1]
    lot = load_lot(here / "sample_data" / "lot_kestrel_2026-11" / "lot.toml")
    assert len(lot.claims) == 3
