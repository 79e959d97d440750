"""Hostile input refused, never half-handled: InputError naming file, line and column, exit 2,
nothing written. Absurd values after unit conversion, infinities made by a unit, files that
are not regular files, files over the size limits (checked before parsing)."""

from __future__ import annotations

import os
import signal
import sys
import time

import pytest

from cli_runner import cli
from freezeout.errors import InputError
from freezeout.io.raw_reader import is_raw_file
from freezeout.io.reduced_csv_reader import MAX_RUN_POINTS, read_reduced_csv
from freezeout.io.table_reader import MAX_ROWS
from freezeout.io.text_file import MAX_FILE_BYTES
from test_raw_io import GOOD_ROWS, raw_text, read_raw


def _write(tmp_path, text, name="run.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture
def no_hang():
    """Fail instead of hanging if a reader ever blocks on a pipe."""
    if not hasattr(signal, "SIGALRM"):
        yield
        return

    def boom(signum, frame):
        raise TimeoutError("a reader blocked")

    old = signal.signal(signal.SIGALRM, boom)
    signal.alarm(20)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


# ---------------------------------------------------------------------------------------
# values: range checks after unit conversion
# ---------------------------------------------------------------------------------------

@pytest.mark.parametrize(("unit", "good", "cell", "match"), [
    ("K", "300", "1e-300", r"1e-300 K\) is outside the range 0.1 K to 5000 K"),
    ("mK", "300000", "1e-297", r"1e-300 K\) is outside the range"),
    ("mK", "300000", "50", r"0.05 K\) is outside the range"),
    ("K", "300", "6000", r"6000 K\) is outside the range"),
    ("degC", "26.85", "-273.15", "not above absolute zero"),  # 0 K (definition)
])
def test_temperature_range_is_checked_after_conversion(tmp_path, unit, good, cell, match):
    p = _write(tmp_path, f"T [{unit}],n [cm^-3]\n{good},1e15\n{cell},1e16\n")
    with pytest.raises(InputError, match=match) as info:
        read_reduced_csv(p)
    assert (info.value.line, info.value.column) == (3, f"T [{unit}]")


@pytest.mark.parametrize(("text", "column"), [
    ("T [K],n [cm^-3],n_err [nm^-3]\n300,1e16,1e300\n", "n_err [nm^-3]"),  # 1e21 per nm^-3
    ("T [K],R_H [m^3/C],R_H_err [m^3/C]\n300,1e-3,1e305\n", "R_H_err [m^3/C]"),
    ("T [K],n [nm^-3]\n300,1e300\n", "n [nm^-3]"),
])
def test_an_uncertainty_made_infinite_by_its_unit_is_refused(tmp_path, text, column):
    with pytest.raises(InputError, match="infinite on conversion") as info:
        read_reduced_csv(_write(tmp_path, text))
    assert (info.value.line, info.value.column) == (2, column)


def test_raw_temperature_range_after_conversion(tmp_path):
    lines = raw_text(GOOD_ROWS, units=("mK", "T", "A", "V")).splitlines()
    first = next(i for i, ln in enumerate(lines) if ln[:1].isdigit())
    cells = lines[first].split(",")
    cells[0] = "1e-297"
    lines[first] = ",".join(cells)
    with pytest.raises(InputError, match=r"1e-300 K\) is outside the range") as info:
        read_raw(_write(tmp_path, "\n".join(lines) + "\n"))
    assert (info.value.line, info.value.column) == (first + 1, "T [mK]")


# ---------------------------------------------------------------------------------------
# files that are not regular files
# ---------------------------------------------------------------------------------------

def _not_regular(tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    folder = tmp_path / "folder.csv"
    folder.mkdir()
    return {"named pipe": fifo, "directory": folder, "character device": "/dev/null"}


@pytest.mark.skipif(sys.platform == "win32", reason="named pipes and /dev/null are POSIX")
def test_non_regular_files_are_refused_before_reading(tmp_path, no_hang):
    for kind, path in _not_regular(tmp_path).items():
        assert not is_raw_file(path)
        for reader in (read_reduced_csv, read_raw):
            with pytest.raises(InputError, match=f"not a regular file \\({'a ' + kind}") as i:
                reader(path)
            assert i.value.file == str(path)


@pytest.mark.skipif(sys.platform == "win32", reason="named pipes and /dev/null are POSIX")
def test_cli_refuses_a_pipe_with_exit_2_and_writes_nothing(tmp_path, monkeypatch, capsys,
                                                           no_hang):
    monkeypatch.chdir(tmp_path)
    for path in _not_regular(tmp_path).values():
        code, out, err = cli(monkeypatch, capsys, "fit", path, "--material", "Si")
        assert code == 2 and "not a regular file" in err and "Traceback" not in err
        code, out, err = cli(monkeypatch, capsys, "reduce", path, "--out", tmp_path / "o.csv")
        assert code == 2 and "not a regular file" in err
    assert not (tmp_path / "reports").exists() and not (tmp_path / "o.csv").exists()


# ---------------------------------------------------------------------------------------
# size limits, checked before parsing
# ---------------------------------------------------------------------------------------

def test_limits_are_stated():
    assert (MAX_FILE_BYTES, MAX_ROWS, MAX_RUN_POINTS) == (50_000_000, 200_000, 10_000)


def test_file_over_the_size_limit_is_refused_unread(tmp_path, monkeypatch):
    big = tmp_path / "big.csv"
    with open(big, "wb") as fh:
        fh.write(b"T [K],n [cm^-3]\n300,1e16\n")
        fh.truncate(MAX_FILE_BYTES + 1)  # sparse: no disk used
    import freezeout.io.text_file as text_file

    def no_read(*args, **kwargs):
        raise AssertionError("the file was opened")

    monkeypatch.setattr(text_file.os, "open", no_read)
    for reader in (read_reduced_csv, read_raw):
        with pytest.raises(InputError, match="over the limit of 50 MB") as info:
            reader(big)
        assert info.value.file == str(big)


def test_too_many_rows_refused_before_parsing(tmp_path, monkeypatch):
    rows = "".join(f"{20 + i * 1e-3:.3f},1e15\n" for i in range(MAX_RUN_POINTS + 1))
    p = _write(tmp_path, "T [K],n [cm^-3]\n" + rows)
    import pandas as pd

    def no_parse(*args, **kwargs):
        raise AssertionError("parsed")

    monkeypatch.setattr(pd, "read_csv", no_parse)
    start = time.perf_counter()
    with pytest.raises(InputError, match="10,002 lines, over the limit of 10,000"):
        read_reduced_csv(p)
    assert time.perf_counter() - start < 10  # generous: refused, not parsed


def test_cli_refuses_an_oversized_run_with_exit_2(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    rows = "".join(f"{20 + i * 1e-3:.3f},1e15\n" for i in range(MAX_RUN_POINTS + 1))
    p = _write(tmp_path, "T [K],n [cm^-3]\n" + rows, "huge.csv")
    code, out, err = cli(monkeypatch, capsys, "fit", p, "--material", "Si")
    assert code == 2 and "over the limit of 10,000" in err and "huge.csv" in err
    assert not (tmp_path / "reports").exists()


def test_cli_names_file_line_and_column_and_writes_nothing(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    p = _write(tmp_path, "T [K],n [cm^-3]\n300,1e15\n1e-300,1e16\n", "tiny.csv")
    code, out, err = cli(monkeypatch, capsys, "fit", p, "--material", "Si")
    assert code == 2
    assert "tiny.csv, line 3, column 'T [K]'" in err
    assert not (tmp_path / "reports").exists()


@pytest.mark.parametrize(("text", "line"), [
    ('T [K],n [cm^-3]\n10,1e15\n20,"2e15\n', 3),  # open on the last line
    ('T [K],n [cm^-3]\n10,"1e15\n20,2e15\n', 2),  # open on an earlier line
])
def test_a_quote_left_open_is_refused_with_its_line(tmp_path, text, line):
    """A quoted cell must close on its own line (project choice, no source), the last line
    included: Python's csv module, which tokenises the rows, would take a quote left open
    at the end of the data as closed there."""
    with pytest.raises(InputError, match="quoted cell runs over the end of its line") as info:
        read_reduced_csv(_write(tmp_path, text))
    assert info.value.line == line


def test_a_quoted_cell_with_the_separator_is_one_cell(tmp_path):
    """A quoted cell may hold the separator and doubled quotes (RFC 4180, 2)."""
    p = _write(tmp_path, 'T [K],n [cm^-3],flags\n10,1e15,"a, b"\n20,"2e15","say ""x"""\n')
    run = read_reduced_csv(p)
    assert list(run.density) == [1e15, 2e15]


@pytest.mark.parametrize(("header", "row"), [
    ("T [K],n [cm^-3],n_err [cm^-3],rho [ohm cm],rho_err [ohm cm]", "296.15,1e15,1e13,5.0,0"),
    ("T [K],n [cm^-3],mu [cm^2/Vs],mu_err [cm^2/Vs]", "296.15,1e15,1300,0"),
])
def test_a_zero_uncertainty_of_a_transport_value_is_refused(tmp_path, header, row):
    """A stated uncertainty of exactly zero is no measurement's: under guarded acceptance it
    would prove conformity by itself (project choice, no source); an empty cell is the way
    to say "unknown"."""
    p = _write(tmp_path, f"{header}\n296.0,1e15{row[row.index(',', 7):]}\n{row}\n")
    with pytest.raises(InputError) as info:
        read_reduced_csv(p)
    e = info.value
    assert e.line == 2 and e.column == header.split(",")[-1] and "is zero" in e.message
