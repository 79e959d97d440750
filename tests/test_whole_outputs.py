"""Whole outputs: checks made before a fit, report folders replaced as a set, clean temporaries,
and no worker left alive when ``qualify`` is killed.

Runs and lots are the synthetic sample data (fictional lab and supplier). Writing a folder
into a sibling and renaming it into place is common practice, no source.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from cli_runner import cli
from freezeout.errors import InputError
from freezeout.io import atomic

ROOT = Path(__file__).resolve().parents[1]
RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"
LOT = ROOT / "sample_data" / "lot_kestrel_2026-11" / "lot.toml"

# a material whose gap closes near 160 K: E_g(T) = 0.2 - 1e-3 T^2 / (T + 100) (Varshni)
NARROW = ('name = "Narrow"\nband_gap_0K_eV = 0.2\nvarshni_alpha_eV_per_K = 1e-3\n'
          'varshni_beta_K = 100.0\nelectron_dos_mass = 1.18\nhole_dos_mass = 0.81\n')


@pytest.fixture(autouse=True)
def db_file(tmp_path, monkeypatch):
    p = tmp_path / "history.sqlite"
    monkeypatch.setenv("FREEZEOUT_DB", f"sqlite:///{p}")
    return p


@pytest.fixture(scope="module")
def si_fit():
    from freezeout.api import fit_file

    return fit_file(RUN, material="Si")


# ---------------------------------------------------------------------------------------------
# 3. checks before the fit


def test_fit_refuses_a_material_whose_gap_closes_in_the_run(tmp_path, monkeypatch, capsys):
    mat = tmp_path / "narrow.toml"
    mat.write_text(NARROW)
    code, out, err = cli(monkeypatch, capsys, "fit", RUN, "--material-file", mat,
                         "--out", tmp_path / "rep")
    assert code == 2, out + err
    assert "band gap of Narrow closes" in err and " K" in err
    assert not (tmp_path / "rep").exists()


def test_fit_api_names_the_temperature(tmp_path):
    from freezeout.api import fit_file

    mat = tmp_path / "narrow.toml"
    mat.write_text(NARROW)
    with pytest.raises(InputError) as exc:
        fit_file(RUN, material_file=mat)
    # E_g = 0 at T^2 - 200 T - 20000 = 0, T = 100 + sqrt(30000) = 273.2 K (computed by hand);
    # the message names the run's first temperature at or above it (the run has none between)
    t = float(exc.value.message.split(" at ")[1].split(" K")[0])
    assert 273.2 <= t <= 650
    assert exc.value.file == str(RUN)


def test_fit_bad_db_url_fails_before_the_fit(tmp_path, monkeypatch, capsys):
    import freezeout.api.fits as fits

    def no_fit(*a, **k):  # the fit must not even start
        raise AssertionError("fitted before checking --db")

    monkeypatch.setattr(fits, "fit_run_record", no_fit)
    code, out, err = cli(monkeypatch, capsys, "fit", RUN, "--db", "mysql://u@h/x",
                         "--out", tmp_path / "rep")
    assert code == 2, out + err
    assert "--db: history database" in err and "mysql" in err
    assert not (tmp_path / "rep").exists()


# ---------------------------------------------------------------------------------------------
# 4. report folders as a set


def test_atomic_folder_new_and_replaced(tmp_path):
    target = tmp_path / "rep"
    with atomic.atomic_folder(target) as tmp:
        assert tmp.parent == tmp_path and tmp.name.startswith(".rep.tmp-")
        (tmp / "a.txt").write_text("1")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]
    with atomic.atomic_folder(target) as tmp:
        (tmp / "b.txt").write_text("2")
    assert sorted(p.name for p in target.iterdir()) == ["b.txt"]  # a.txt went with the old set
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]


def test_atomic_folder_failure_keeps_the_old_folder(tmp_path):
    target = tmp_path / "rep"
    target.mkdir()
    (target / "a.txt").write_text("old")
    with pytest.raises(RuntimeError), atomic.atomic_folder(target) as tmp:
        (tmp / "a.txt").write_text("new")
        raise RuntimeError("killed half way")
    assert (target / "a.txt").read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]


def test_atomic_folder_failed_rename_restores_the_old(tmp_path, monkeypatch):
    target = tmp_path / "rep"
    target.mkdir()
    (target / "a.txt").write_text("old")
    real = os.rename
    calls = []

    def flaky(src, dst):
        calls.append((src, dst))
        if len(calls) == 2:  # the new folder's rename into place
            raise OSError("disk trouble")
        return real(src, dst)

    monkeypatch.setattr(atomic.os, "rename", flaky)
    with pytest.raises(OSError), atomic.atomic_folder(target) as tmp:
        (tmp / "a.txt").write_text("new")
    monkeypatch.undo()
    assert (target / "a.txt").read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]


def test_atomic_folder_keeps_foreign_files(tmp_path):
    target = tmp_path / "rep"
    target.mkdir()
    (target / "mine.txt").write_text("user's")
    (target / "old.png").write_text("old report file")
    with atomic.atomic_folder(target, owned={"old.png", "new.json"}) as tmp:
        (tmp / "new.json").write_text("{}")
    assert sorted(p.name for p in target.iterdir()) == ["mine.txt", "new.json"]


def test_stale_temporaries_are_cleaned(tmp_path):
    old = time.time() - 3600
    stale = [tmp_path / ".rep.tmp-abcd1234", tmp_path / ".other.tmp-zz_9yy8x",
             tmp_path / ".fit.json.k2j4h5g6.tmp"]
    stale[0].mkdir()
    (stale[0] / "fit.json").write_text("{}")
    stale[1].mkdir()
    stale[2].write_text("half")
    fresh = tmp_path / ".x.tmp-fresh123"
    fresh.mkdir()
    foreign = [tmp_path / ".rep.tmp-mine", tmp_path / "notes.tmp", tmp_path / "a.b.c.tmp"]
    foreign[0].mkdir()
    foreign[1].write_text("keep")
    foreign[2].write_text("keep")
    for p in [*stale, *foreign]:
        os.utime(p, (old, old))
    with atomic.atomic_folder(tmp_path / "rep") as tmp:
        (tmp / "fit.json").write_text("{}")
    left = {p.name for p in tmp_path.iterdir()}
    assert not left & {p.name for p in stale}
    assert {fresh.name, "rep", *(p.name for p in foreign)} <= left


def test_set_aside_folder_of_a_killed_swap_comes_back(tmp_path):
    aside = tmp_path / ".rep.tmp-old-0123456789ab"
    aside.mkdir()
    (aside / "fit.json").write_text("the last whole report")
    old = time.time() - 3600
    os.utime(aside, (old, old))
    atomic.clean_stale(tmp_path)
    assert (tmp_path / "rep" / "fit.json").read_text() == "the last whole report"


def test_fit_report_replaced_as_a_set(tmp_path, si_fit, monkeypatch):
    from freezeout.reporting import fit_report

    rep = tmp_path / "rep"
    fit_report.write_fit_report(si_fit, rep)
    before = {p.name: p.read_bytes() for p in rep.iterdir()}

    def broken(*a, **k):
        raise RuntimeError("killed while rendering")

    monkeypatch.setattr(fit_report, "atomic_write_text",
                        lambda path, text: broken() if path.name == "report.html"
                        else atomic.atomic_write_text(path, text))
    with pytest.raises(RuntimeError):
        fit_report.write_fit_report(si_fit, rep)
    assert {p.name: p.read_bytes() for p in rep.iterdir()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]


def test_fit_says_it_replaced_the_report(tmp_path, monkeypatch, capsys):
    rep = tmp_path / "rep"
    code, out, err = cli(monkeypatch, capsys, "fit", RUN, "--out", rep, "--no-history")
    assert code == 0 and "replaced the earlier" not in out + err
    code, out, err = cli(monkeypatch, capsys, "fit", RUN, "--out", rep, "--no-history")
    assert code == 0
    assert f"replaced the earlier report in {rep}" in out


def test_fit_history_failure_says_the_report_was_kept(tmp_path, monkeypatch, capsys):
    from freezeout.storage import store

    def fail(self, result):
        raise store.StorageError("disk full")

    monkeypatch.setattr(store.Store, "save_fit", fail)
    rep = tmp_path / "rep"
    code, out, err = cli(monkeypatch, capsys, "fit", RUN, "--out", rep)
    assert code == 2, out + err
    assert "history database" in err and "disk full" in err
    assert f"the report in {rep} was written and kept" in err
    assert json.loads((rep / "fit.json").read_text())["schema_version"] >= 1


def test_qualify_history_failure_says_the_report_was_kept(tmp_path, monkeypatch):
    from freezeout.api import qualify_lot
    from freezeout.storage import store

    def fail(self, qualification, fits):
        raise store.StorageError("disk full")

    monkeypatch.setattr(store.Store, "save_qualification", fail)
    rep = tmp_path / "rep"
    with pytest.raises(InputError) as exc:
        qualify_lot(LOT, out=rep, workers=1)
    assert "disk full" in exc.value.message
    assert f"the report in {rep} was written and kept" in exc.value.message
    assert (rep / "lot.json").exists()


# ---------------------------------------------------------------------------------------------
# 5. killing qualify leaves no worker


def _children(pid: int) -> list[int]:
    """Processes whose parent is ``pid`` (read from /proc/*/stat)."""
    kids = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            text = stat.read_text()
        except OSError:
            continue
        fields = text[text.rindex(")") + 2:].split()
        if int(fields[1]) == pid:
            kids.append(int(stat.parent.name))
    return kids


def _cmdline(pid: int) -> str:
    try:
        return Path(f"/proc/{pid}/cmdline").read_bytes().decode(errors="replace")
    except OSError:
        return ""


def _alive(pid: int) -> bool:
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return text[text.rindex(")") + 2:].split()[0] != "Z"


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs /proc (Linux)")
def test_killing_qualify_leaves_no_worker(tmp_path):
    env = dict(os.environ, FREEZEOUT_DB=f"sqlite:///{tmp_path / 'h.sqlite'}")
    parent = subprocess.Popen(
        [sys.executable, "-m", "freezeout.cli.app", "qualify", str(LOT), "--workers", "2",
         "--json", "--db", f"sqlite:///{tmp_path / 'h.sqlite'}"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, cwd=tmp_path)
    try:
        workers: list[int] = []
        deadline = time.monotonic() + 40
        while time.monotonic() < deadline and parent.poll() is None:
            # the spawn start method adds a resource tracker too; workers run python as well
            # (spawned: "spawn_main" in their command line; forked: the parent's own one)
            kids = _children(parent.pid)
            own = _cmdline(parent.pid)
            workers = [k for k in kids if "spawn_main" in _cmdline(k) or _cmdline(k) == own]
            if len(workers) >= 2:
                break
            time.sleep(0.05)
        assert parent.poll() is None, "qualify ended before its workers could be seen"
        assert len(workers) >= 2, workers
        all_kids = _children(parent.pid)
        parent.send_signal(signal.SIGKILL)
        parent.wait(timeout=5)
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline and any(_alive(k) for k in all_kids):
            time.sleep(0.1)
        left = [k for k in all_kids if _alive(k)]
        for k in left:  # do not leave them running if the test fails
            os.kill(k, signal.SIGKILL)
        assert not left, f"still alive 5 s after the parent was killed: {left}"
    finally:
        if parent.poll() is None:
            parent.kill()
            parent.wait(timeout=5)


def test_atomic_folder_on_the_working_directory_moves_files_in(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with atomic.atomic_folder(".") as tmp:
        (tmp / "fit.json").write_text("{}")
    assert Path.cwd() == tmp_path and (tmp_path / "fit.json").read_text() == "{}"
    assert [p.name for p in tmp_path.iterdir()] == ["fit.json"]
    assert [p.name for p in tmp_path.parent.iterdir() if ".tmp-" in p.name] == []


def test_lot_report_replaced_as_a_set(tmp_path):
    from freezeout.api import qualify_lot

    rep = tmp_path / "rep"
    rep.mkdir()
    (rep / "lot.json").write_text("an earlier lot.json")
    (rep / "chart_claim9.png").write_text("a chart of an earlier claim")
    qualify_lot(LOT, out=rep, workers=1)
    names = sorted(p.name for p in rep.iterdir())
    assert "chart_claim9.png" not in names and "lot_report.html" in names
    assert json.loads((rep / "lot.json").read_text())["lot"] == "KRW-2611-07"
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []
