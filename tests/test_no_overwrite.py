"""No command writes over one of its own inputs: exit 2, the input's bytes unchanged.

Through the command line, for every command that writes (reduce, fit, simulate, qualify,
history), with the same file spelled as given, relative against absolute, through ``..``, a
symbolic link and a hard link (project choice, no source: two names are one file when
os.path.samefile says so). The runs are the bundled synthetic samples (made by the scripts
in scripts/, not measurements) and invented single points.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from cli_runner import cli
from freezeout.api.fits import FIT_REPORT_FILES
from freezeout.reporting.lot_report import LOT_REPORT_FILES

ROOT = Path(__file__).resolve().parents[1]
RAW = ROOT / "sample_data" / "harrowgate_raw_vdp_run.csv"
RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"
MATERIAL = ('name = "Si-copy"\nband_gap_0K_eV = 1.17\nvarshni_alpha_eV_per_K = 4.73e-4\n'
            'varshni_beta_K = 636.0\nelectron_dos_mass = 1.18\nhole_dos_mass = 0.81\n')


@pytest.fixture(autouse=True)
def db_file(tmp_path, monkeypatch):
    p = tmp_path / "history.sqlite"
    monkeypatch.setenv("FREEZEOUT_DB", f"sqlite:///{p}")
    return p


def refused(monkeypatch, capsys, protected: list[Path], *args) -> str:
    """Run the command; it must exit 2 and leave every protected file as it was."""
    before = {p: p.read_bytes() for p in protected}
    stats = {p: os.stat(p) for p in protected}
    code, out, err = cli(monkeypatch, capsys, *args)
    assert code == 2, out + err
    assert "would write over an input" in err, err
    for p in protected:
        assert p.read_bytes() == before[p], p
        assert os.stat(p).st_ino == stats[p].st_ino, p  # not replaced by a rename either
    return err


# ---------------------------------------------------------------------------------------------
# reduce RAW --out RAW


@pytest.fixture
def raw(tmp_path):
    p = tmp_path / "raw.csv"
    shutil.copy(RAW, p)
    return p


def test_reduce_onto_its_raw_file(monkeypatch, capsys, tmp_path, raw):
    refused(monkeypatch, capsys, [raw], "reduce", raw, "--out", raw)


def test_reduce_relative_against_absolute(monkeypatch, capsys, tmp_path, raw):
    monkeypatch.chdir(tmp_path)
    refused(monkeypatch, capsys, [raw], "reduce", "raw.csv", "--out", raw.resolve())
    (tmp_path / "sub").mkdir()
    refused(monkeypatch, capsys, [raw], "reduce", raw, "--out", "sub/../raw.csv")


def test_reduce_through_a_symbolic_link(monkeypatch, capsys, tmp_path, raw):
    link = tmp_path / "link.csv"
    link.symlink_to(raw)
    refused(monkeypatch, capsys, [raw], "reduce", raw, "--out", link)
    assert link.is_symlink()


def test_reduce_through_a_hard_link(monkeypatch, capsys, tmp_path, raw):
    hard = tmp_path / "hard.csv"
    os.link(raw, hard)
    refused(monkeypatch, capsys, [raw], "reduce", raw, "--out", hard)
    assert os.path.samefile(raw, hard)  # still one file, not split by a rename


# ---------------------------------------------------------------------------------------------
# fit RUN --out DIR


def test_fit_report_folder_is_the_run_itself(monkeypatch, capsys, tmp_path):
    run = tmp_path / "run.csv"
    shutil.copy(RUN, run)
    refused(monkeypatch, capsys, [run], "fit", run, "--out", run)


@pytest.mark.parametrize("name", FIT_REPORT_FILES)
def test_fit_report_file_would_be_the_run(monkeypatch, capsys, tmp_path, name):
    folder = tmp_path / "rep"
    folder.mkdir()
    run = folder / name  # a run file that happens to carry a report file's name
    shutil.copy(RUN, run)
    refused(monkeypatch, capsys, [run], "fit", run, "--out", folder)


def test_fit_report_file_would_be_the_material_file(monkeypatch, capsys, tmp_path):
    folder = tmp_path / "rep"
    folder.mkdir()
    mat = folder / "fit.json"
    mat.write_text(MATERIAL)
    run = tmp_path / "run.csv"
    shutil.copy(RUN, run)
    err = refused(monkeypatch, capsys, [mat, run], "fit", run, "--material-file", mat,
                  "--out", folder)
    assert "fit.json" in err


def test_fit_report_file_names_are_the_written_ones(tmp_path):
    # the guard checks the names the report writes: the list must be complete
    from freezeout.api import fit_file, write_fit_report

    written = write_fit_report(fit_file(RUN, material="Si"), tmp_path / "rep")
    assert set(written) <= set(FIT_REPORT_FILES)


# ---------------------------------------------------------------------------------------------
# simulate --material-file M --out M


def test_simulate_onto_its_material_file(monkeypatch, capsys, tmp_path):
    mat = tmp_path / "m.toml"
    mat.write_text(MATERIAL)
    refused(monkeypatch, capsys, [mat], "simulate", "-t", "40:400:5", "--material-file", mat,
            "--donor", "1e15,0.045", "--out", mat)
    link = tmp_path / "m_link.csv"
    link.symlink_to(mat)
    refused(monkeypatch, capsys, [mat], "simulate", "-t", "40:400:5", "--material-file", mat,
            "--donor", "1e15,0.045", "--out", link)


# ---------------------------------------------------------------------------------------------
# qualify LOT --out DIR


def write_lot(folder: Path, run: str = "runs/w1.csv", material_file: str | None = None) -> Path:
    """A synthetic one-wafer lot (fictional supplier) with an invented single point."""
    runs = folder / "runs"
    runs.mkdir(parents=True, exist_ok=True)
    (folder / run).parent.mkdir(parents=True, exist_ok=True)
    (folder / run).write_text("# data: SYNTHETIC single point, not a measurement\n"
                              "T [K],n [cm^-3],n_err [cm^-3],rho [ohm cm],rho_err [ohm cm]\n"
                              "296.15,9e14,9e12,5.0,0.05\n")
    where = (f'material_file = "{material_file}"' if material_file else 'material = "Si"')
    if material_file:
        (folder / material_file).parent.mkdir(parents=True, exist_ok=True)
        (folder / material_file).write_text(MATERIAL.replace("Si-copy", "Si"))
    lot = folder / "lot.toml"
    lot.write_text(f"""\
supplier = "Kestrel Ridge Wafers"
lot = "KRW-GUARD-1"
date = 2026-11-20
[decision]
rule = "guarded"
[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
temperature_K = 296.15
[[wafer]]
id = "W1"
{where}
run = "{run}"
""")
    return lot


def test_qualify_report_folder_is_the_lot_file(monkeypatch, capsys, tmp_path, db_file):
    lot = write_lot(tmp_path)
    refused(monkeypatch, capsys, [lot], "qualify", lot, "--out", lot)
    assert not db_file.exists()  # nothing stored either


@pytest.mark.parametrize("name", LOT_REPORT_FILES)
def test_qualify_report_file_would_be_a_run(monkeypatch, capsys, tmp_path, name, db_file):
    lot = write_lot(tmp_path, run=f"runs/{name}")
    run = tmp_path / "runs" / name
    refused(monkeypatch, capsys, [lot, run], "qualify", lot, "--out", tmp_path / "runs")
    assert not db_file.exists()


def test_qualify_report_file_would_be_the_lot_file(monkeypatch, capsys, tmp_path):
    lot = write_lot(tmp_path)
    renamed = tmp_path / "lot.json"  # a lot file (TOML) under a report file's name
    lot.rename(renamed)
    monkeypatch.chdir(tmp_path)
    refused(monkeypatch, capsys, [renamed], "qualify", "lot.json", "--out", ".")


def test_qualify_report_file_would_be_a_material_file(monkeypatch, capsys, tmp_path):
    lot = write_lot(tmp_path, material_file="mat/lot_report.html")
    mat = tmp_path / "mat" / "lot_report.html"
    refused(monkeypatch, capsys, [lot, mat], "qualify", lot, "--out", tmp_path / "mat")


def test_qualify_report_file_hard_linked_to_a_run(monkeypatch, capsys, tmp_path):
    lot = write_lot(tmp_path)
    (tmp_path / "rep").mkdir()
    os.link(tmp_path / "runs" / "w1.csv", tmp_path / "rep" / "lot.csv")
    refused(monkeypatch, capsys, [tmp_path / "runs" / "w1.csv"], "qualify", lot, "--out",
            tmp_path / "rep")


def test_qualify_database_would_be_the_lot_file(monkeypatch, capsys, tmp_path):
    lot = write_lot(tmp_path)
    err = refused(monkeypatch, capsys, [lot], "qualify", lot, "--db", f"sqlite:///{lot}",
                  "--out", tmp_path / "rep")
    assert "--db" in err
    assert not (tmp_path / "rep").exists()


# ---------------------------------------------------------------------------------------------
# history --out X.png onto the database


def test_history_figure_onto_the_database(monkeypatch, capsys, tmp_path):
    # a database file that happens to be named like a PNG, with one lot in it
    db = tmp_path / "hist.png"
    url = f"sqlite:///{db}"
    lot = write_lot(tmp_path)
    code, _, err = cli(monkeypatch, capsys, "qualify", lot, "--db", url, "--out",
                       tmp_path / "rep")
    assert code == 0, err
    refused(monkeypatch, capsys, [db], "history", "--db", url, "--out", db)
    monkeypatch.chdir(tmp_path)
    refused(monkeypatch, capsys, [db], "history", "--db", url, "--out", "hist.png")
    monkeypatch.setenv("FREEZEOUT_DB", url)  # the default database, from the environment
    refused(monkeypatch, capsys, [db], "history", "--out", db)


@pytest.mark.parametrize("args", [
    ("fit", RUN, "--no-history"),
    ("simulate", "-t", "20:400:10", "--donor", "1e16,0.045"),
    ("reduce", RAW),
    ("qualify", ROOT / "sample_data" / "lot_kestrel_2026-09" / "lot.toml"),
    ("history",),
    ("plan", "-m", "Si", "--donor", "1e16,0.045", "--range", "20:400", "-n", "8"),
])
@pytest.mark.parametrize("empty", ["", "  "])
def test_an_empty_out_is_refused_and_writes_nothing(args, empty, tmp_path, monkeypatch,
                                                     capsys):
    """``--out ""`` (an unset shell variable) is refused, not read as the current folder
    (project choice, no source)."""
    monkeypatch.chdir(tmp_path)
    code, _, err = cli(monkeypatch, capsys, *args, "--out", empty)
    assert code == 2 and "an empty path names no file or folder" in err
    assert list(tmp_path.iterdir()) == [] or all(p.name.endswith(".db") for p in
                                                 tmp_path.iterdir())
