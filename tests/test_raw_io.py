"""Raw-readings CSV: reading, unit conversion, validation, reduced output, the CLI command."""

from __future__ import annotations

import importlib.util
import json
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from cli_runner import cli
from freezeout.api import default_reduced_output as default_output
from freezeout.errors import InputError
from freezeout.io.raw_reader import is_raw_file, parse_length
from freezeout.io.raw_reader import read_raw as read_raw_table
from freezeout.io.reduced_csv_layout import reduced_columns, severe_from_flags
from freezeout.io.reduced_csv_writer import write_reduced_csv
from freezeout.records.limits import DEFAULT_GROUPING_TOLERANCE_K
from freezeout.reduction import readings_from_table, reduce_readings
from test_hall_reduction import reduce_rows, synth_rows

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "sample_data" / "harrowgate_raw_vdp_run.csv"
SCRIPT = ROOT / "scripts" / "make_raw_sample.py"

# unit -> factor from canonical (value_in_unit = canonical * factor), or an offset for degC.
# SI prefixes (BIPM SI Brochure, 9th ed.), 1 G = 1e-4 T (CGS definition), 0 degC = 273.15 K.
TO_UNIT = {"K": 1.0, "mK": 1e3, "T": 1.0, "mT": 1e3, "G": 1e4, "A": 1.0, "mA": 1e3,
           "uA": 1e6, "nA": 1e9, "V": 1.0, "mV": 1e3, "uV": 1e6}


def raw_text(rows, *, units=("K", "T", "A", "V"), meta=None):
    """Rows (T, B, I, I+, I-, V+, V-, V) in canonical units -> raw CSV text."""
    meta = {"sample": "HG-TEST-01 (synthetic)", "thickness": "350 um",
            **(meta or {})}
    lines = [f"# {k}: {v}" for k, v in meta.items()]
    ut, ub, ui, uv = units
    lines.append(f"T [{ut}],B [{ub}],I [{ui}],I+,I-,V+,V-,V [{uv}]")
    for row in rows:
        t, b, i, ip, im, vp, vm, v = (float(x) for x in row)
        t_out = t - 273.15 if ut == "degC" else t * TO_UNIT[ut]
        lines.append(f"{t_out!r},{b * TO_UNIT[ub]!r},{i * TO_UNIT[ui]!r},{int(ip)},{int(im)},"
                     f"{int(vp)},{int(vm)},{v * TO_UNIT[uv]!r}")
    return "\n".join(lines) + "\n"


def read_raw(path, *, temperature_tolerance=DEFAULT_GROUPING_TOLERANCE_K, thickness=None):
    """Read a raw file (io) and check and group its readings (reduction)."""
    return readings_from_table(read_raw_table(path, thickness=thickness),
                               temperature_tolerance=temperature_tolerance)


def load_raw_run(path, *, thickness=None, hall_factor=1.0,
                 temperature_tolerance=DEFAULT_GROUPING_TOLERANCE_K, thresholds=None):
    """Read a raw file and reduce it: the composition the API makes of io and reduction."""
    readings = read_raw(path, temperature_tolerance=temperature_tolerance, thickness=thickness)
    return reduce_readings(readings, hall_factor=hall_factor, thresholds=thresholds)


def write(tmp_path, text, name="run.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def load_generator():
    spec = importlib.util.spec_from_file_location("make_raw_sample", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


# ---------------------------------------------------------------------------------------
# the committed sample run
# ---------------------------------------------------------------------------------------


def test_sample_run_reduces_back_to_its_model():
    """The synthetic sample (known rho(T), R_H(T)) reduces back to the model it came from.

    Noise and 7-digit rounding allow ~1e-3; the bad-contact points (below 42 K) are marked
    severe and the drifting set point (50 K) gets a warning.
    """
    gen = load_generator()
    assert is_raw_file(SAMPLE)
    run = load_raw_run(SAMPLE)
    assert run.n_points == len(gen.SET_POINTS)
    assert run.metadata["sample"] == "HG-W07-C3"
    assert run.thickness == pytest.approx(0.035) and run.thickness_err == pytest.approx(5e-4)
    clean = np.array([f == "" for f in run.flags])
    assert clean.sum() >= 18
    t = run.temperature[clean]
    assert np.allclose(run.resistivity[clean], gen.true_resistivity(t), rtol=1e-3)
    assert np.allclose(run.hall_coefficient[clean], gen.true_hall_coefficient(t), rtol=1e-3)
    assert np.allclose(run.density[clean], gen.hole_density(t), rtol=1e-3)
    assert np.allclose(run.mobility[clean], gen.mobility(t), rtol=2e-3)
    assert run.severe.tolist() == (run.temperature < gen.BAD_BELOW_K).tolist()
    assert set(run.carrier) == {"p"}
    drift = [f for f in run.findings if f.code == "temperature-drift"]
    assert len(drift) == 1 and abs(drift[0].temperature - gen.DRIFT_SET_POINT) < 1.0
    assert all("current-reversal" in run.flags[i] for i in np.flatnonzero(run.severe))


def test_sample_file_matches_its_generator():
    """The committed file is exactly what the committed generator writes."""
    gen = load_generator()
    assert SAMPLE.read_text(encoding="utf-8") == "\n".join(gen.generate()) + "\n"
    head = SAMPLE.read_text(encoding="utf-8").splitlines()[:3]
    assert "SYNTHETIC" in head[0] and "Harrowgate Cryo Lab" in head[1]


def test_documented_example_reduces(tmp_path):
    """The example in docs/raw_format.md is a valid raw file (docs kept honest)."""
    doc = (ROOT / "docs" / "raw_format.md").read_text(encoding="utf-8")
    example = doc.split("## Example", 1)[1].split("```", 2)[1].strip("\n")
    run = load_raw_run(write(tmp_path, example + "\n"))
    assert run.n_points == 1
    assert run.majority_carrier == "p"
    assert run.hall_coefficient[0] == pytest.approx(3213.0, rel=2e-3)
    assert "single-reading" in run.flags[0]
    assert not run.severe[0]


# ---------------------------------------------------------------------------------------
# units and metadata
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("units", [("mK", "G", "nA", "uV"), ("degC", "mT", "mA", "mV"),
                                   ("K", "T", "uA", "V")])
def test_units_convert_to_the_same_run(tmp_path, units):
    rows = synth_rows(temperatures=(77.0, 300.0), k=-3.0, misalignment=0.4,
                      emf=(1e-6, 0, -1e-6, 2e-6), noise=1e-8, seed=2)
    base = load_raw_run(write(tmp_path, raw_text(rows), "a.csv"))
    other = load_raw_run(write(tmp_path, raw_text(rows, units=units), "b.csv"))
    for name in ("temperature", "resistivity", "hall_coefficient", "density", "mobility"):
        assert np.allclose(getattr(other, name), getattr(base, name), rtol=1e-9), name
    direct = reduce_rows(rows)
    assert np.allclose(base.resistivity, direct.resistivity, rtol=1e-12)


@pytest.mark.parametrize(("text", "value", "err"), [
    ("350um", 0.035, 0.0),
    ("0.35 mm", 0.035, 0.0),
    ("350 um +- 5 um", 0.035, 5e-4),
    ("350 µm ± 5", 0.035, 5e-4),
    ("0.035 cm +/- 0.5 mm", 0.035, 0.05),
    ("350 um +- 2%", 0.035, 7e-4),
    ("1e-4 m", 0.01, 0.0),
])
def test_parse_length(text, value, err):
    v, e = parse_length(text)
    assert v == pytest.approx(value, rel=1e-12)
    assert e == pytest.approx(err, rel=1e-12, abs=1e-18)


@pytest.mark.parametrize("text", ["350", "abc", "-5 um", "0 um", "350 furlongs", "350 K",
                                  "350 um +- -5 um"])
def test_parse_length_rejects(text):
    with pytest.raises(ValueError):
        parse_length(text)


def test_thickness_override_and_uncertainty_key(tmp_path):
    rows = synth_rows(noise=1e-9)
    p = write(tmp_path, raw_text(rows, meta={"thickness": "350 um",
                                             "thickness_uncertainty": "7 um"}))
    run = load_raw_run(p)
    assert run.thickness_err == pytest.approx(7e-4)
    thick = load_raw_run(p, thickness="700um")
    assert thick.resistivity[0] == pytest.approx(2 * run.resistivity[0], rel=1e-12)
    assert thick.thickness_err == 0.0
    assert thick.metadata["thickness_source"] == "option"
    assert load_raw_run(p, thickness=0.07).resistivity[0] == pytest.approx(
        thick.resistivity[0], rel=1e-12)
    with pytest.raises(InputError, match="--thickness"):
        read_raw(p, thickness="thick")
    both = write(tmp_path, raw_text(rows, meta={"thickness": "350 um +- 5 um",
                                                "thickness_uncertainty": "7 um"}), "b.csv")
    with pytest.raises(InputError, match="given twice"):
        read_raw(both)


def test_hall_bar_geometry(tmp_path):
    """Six-contact Hall bar: rho = R_xx w t / L; Hall sign as for van der Pauw.

    Contacts counter-clockwise with +B towards the viewer: 1 left end, 2, 3 lower side,
    4 right end, 5, 6 upper side; holes driven 1 -> 4 go to the lower side (Lorentz force
    q v x B with v along +x, B along +z gives -y), so V2 - V6 > 0.
    """
    assert np.cross([1.0, 0, 0], [0, 0, 1.0])[1] < 0
    r_xx, k, m = 25.0, 4.0, 0.7
    table = {(1, 4, 2, 3): lambda b: r_xx, (1, 4, 6, 5): lambda b: r_xx * 1.01,
             (1, 4, 2, 6): lambda b: k * b + m, (1, 4, 3, 5): lambda b: k * b - 0.3}
    rows = []
    for (a, bb, c, d), fn in table.items():
        for b in ((0.0,) if c in (2, 6) and d in (3, 5) else (0.5, -0.5)):
            for forward in (True, False):
                for rep in range(2):
                    i = 1e-4
                    sign = 1.0 if forward else -1.0
                    v = sign * fn(b) * i + 1e-6 * (c - d) + 1e-9 * rep
                    ip, im = (a, bb) if forward else (bb, a)
                    rows.append((300.0, b, i, ip, im, c, d, v))
    meta = {"geometry": "hall-bar", "width": "1 mm", "spacing": "4 mm +- 0.1 mm"}
    run = load_raw_run(write(tmp_path, raw_text(rows, meta=meta)))
    expected_rs = (r_xx * 2.01 / 2) * 0.1 / 0.4
    assert run.sheet_resistance[0] == pytest.approx(expected_rs, rel=1e-6)
    assert run.resistivity[0] == pytest.approx(expected_rs * 0.035, rel=1e-6)
    assert run.hall_coefficient[0] == pytest.approx(1e4 * 0.035 * k, rel=1e-6)
    assert run.carrier == ("p",)
    assert run.sheet_resistance_err[0] / run.sheet_resistance[0] >= 0.1 / 4
    assert run.r_a[0] == pytest.approx(r_xx, rel=1e-6)
    assert run.r_b[0] == pytest.approx(1.01 * r_xx, rel=1e-6)
    no_width = write(tmp_path, raw_text(rows, meta={"geometry": "hall-bar"}), "nw.csv")
    with pytest.raises(InputError, match="width"):
        read_raw(no_width)


# ---------------------------------------------------------------------------------------
# bad raw files: clear errors naming file, line and column
# ---------------------------------------------------------------------------------------

GOOD_ROWS = synth_rows(temperatures=(300.0, 77.0), repeats=1, k=2.0, misalignment=0.1)
# line 1-2 metadata, line 3 header, data from line 4


def good_lines():
    return raw_text(GOOD_ROWS).splitlines()


def mutate(select=None, edit=None, header=None, append=None):
    lines = good_lines()
    out = lines[:3]
    if header is not None:
        out[2] = header
    for number, line in enumerate(lines[3:], start=4):
        cells = line.split(",")
        if select is not None and not select(cells):
            continue
        if edit is not None:
            cells = edit(number, cells)
        out.append(",".join(cells))
    if append is not None:
        out.append(append(out))
    return "\n".join(out) + "\n"


def contacts(cells):
    return tuple(int(c) for c in cells[3:7])


def set_cell(line_no, col, value):
    def edit(number, cells):
        if number == line_no:
            cells[col] = value
        return cells
    return edit


BAD_FILES = {
    "missing configuration": (
        mutate(select=lambda c: set(contacts(c)[:2]) != {2, 3}),
        4, None, r"missing configuration I 2->3, V1-V4"),
    "single field direction": (
        mutate(select=lambda c: float(c[1]) >= 0),
        None, "B [T]", r"only one field direction \(\+B\)"),
    "single current direction": (
        mutate(select=lambda c: contacts(c) != (2, 1, 4, 3)),
        4, "I [A]", r"only one current direction"),
    "zero current": (mutate(edit=set_cell(7, 2, "0.0")), 7, "I [A]", r"current is zero"),
    "unknown contact number": (mutate(edit=set_cell(8, 3, "5")), 8, "I+",
                               r"unknown contact label '5'"),
    "unknown contact letter": (mutate(edit=set_cell(9, 6, "B")), 9, "V-",
                               r"unknown contact label 'B'"),
    "three-terminal": (mutate(edit=set_cell(4, 5, "1")), 4, "V+",
                       r"voltage contact is also a current contact"),
    "NaN": (mutate(edit=set_cell(10, 7, "nan")), 10, "V [V]", r"not a finite number"),
    "not a number": (mutate(edit=set_cell(10, 7, "1.2.3")), 10, "V [V]", r"not a number"),
    "empty cell": (mutate(edit=set_cell(10, 0, "")), 10, "T [K]", r"empty value"),
    "negative temperature": (mutate(edit=set_cell(6, 0, "-5")), 6, "T [K]",
                             r"not above absolute zero"),
    "wrong unit": (mutate(header="T [K],B [T],I [mV],I+,I-,V+,V-,V [V]"), 3, "I [mV]",
                   r"unknown unit 'mV' for current"),
    "missing unit": (mutate(header="T,B [T],I [A],I+,I-,V+,V-,V [V]"), 3, "T",
                     r"needs a unit"),
    "missing column": (mutate(header="T [K],B [T],I [A],I+,I-,V+,Vx,V [V]"), 3, "V-",
                       r"missing column\(s\) V-"),
    "duplicate row": (mutate(append=lambda out: out[5]), None, "V [V]",
                      r"duplicate row: identical to line 6"),
}


@pytest.mark.parametrize("name", list(BAD_FILES))
def test_bad_raw_files(tmp_path, name):
    text, line, column, message = BAD_FILES[name]
    path = write(tmp_path, text)
    with pytest.raises(InputError, match=message) as info:
        read_raw(path)
    err = info.value
    assert err.file == str(path)
    if line is not None:
        assert err.line == line
    else:
        assert err.line is not None
    assert err.column == column
    assert str(path) in str(err)


def test_truncated_file(tmp_path):
    text = raw_text(GOOD_ROWS)
    cut = text[: text.rstrip("\n").rfind(",")]  # the last row loses its voltage
    n_lines = len(cut.splitlines())
    with pytest.raises(InputError, match="truncated") as info:
        read_raw(write(tmp_path, cut))
    assert info.value.line == n_lines
    assert info.value.column == "V [V]"  # the first missing column


@pytest.mark.parametrize(("text", "message", "line", "column"), [
    ("", "no header line", None, None),
    ("# sample: x\n# thickness: 350 um\n", "no header line", None, None),
    ("# thickness: 350 um\nT [K],B [T],I [A],I+,I-,V+,V-,V [V]\n", "no readings", 2, None),
    ("# thickness: 350\n" + "\n".join(good_lines()[2:]) + "\n", "needs a unit", 1,
     "thickness"),
    ("# geometry: triangle\n" + "\n".join(good_lines()) + "\n", "unknown geometry", 1,
     "geometry"),
    ("# sample: a\n" + "\n".join(good_lines()) + "\n", "given twice", 2, "sample"),
    ("\n".join(good_lines()[2:]) + "\n", "no thickness", None, None),
])
def test_bad_headers_and_metadata(tmp_path, text, message, line, column):
    with pytest.raises(InputError, match=message) as info:
        read_raw(write(tmp_path, text))
    assert info.value.line == line
    assert info.value.column == column


def test_not_utf8(tmp_path):
    p = tmp_path / "bin.csv"
    p.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(InputError, match="UTF-8"):
        read_raw(p)
    assert not is_raw_file(tmp_path / "missing.csv")


def test_is_raw_file(tmp_path):
    assert is_raw_file(write(tmp_path, raw_text(GOOD_ROWS)))
    reduced = tmp_path / "r.csv"
    write_reduced_csv(load_raw_run(write(tmp_path, raw_text(GOOD_ROWS), "g.csv")), reduced)
    assert not is_raw_file(reduced)
    assert not is_raw_file(write(tmp_path, "", "empty.csv"))


# ---------------------------------------------------------------------------------------
# reduced CSV
# ---------------------------------------------------------------------------------------

EXPECTED_COLUMNS = ["T [K]", "T_err [K]", "rho [ohm cm]", "rho_err [ohm cm]", "R_H [cm^3/C]",
                    "R_H_err [cm^3/C]", "p [cm^-3]", "p_err [cm^-3]", "mu_H [cm^2/(V s)]",
                    "mu_H_err [cm^2/(V s)]", "flags"]


def test_reduced_csv_layout_and_read_back(tmp_path):
    run = load_raw_run(SAMPLE)
    out = write_reduced_csv(run, tmp_path / "run_reduced.csv")
    lines = out.read_text(encoding="utf-8").splitlines()
    meta = [ln for ln in lines if ln.startswith("#")]
    header = next(ln for ln in lines if not ln.startswith("#"))
    assert header.split(",") == EXPECTED_COLUMNS
    assert "# sample: HG-W07-C3" in meta
    assert "# reduced_from: harrowgate_raw_vdp_run.csv" in meta
    assert "# thickness: 350 um +- 5 um" in meta
    assert any(m.startswith("# raw_sha256: ") for m in meta)
    assert [p.name for p in tmp_path.iterdir()] == ["run_reduced.csv"]  # no temp file left
    cols = reduced_columns(run)
    assert list(cols) == EXPECTED_COLUMNS
    assert severe_from_flags(cols["flags"]).tolist() == run.severe.tolist()
    # the reduced-run reader of the fit reads it unchanged
    from freezeout.io.reduced_csv_reader import read_reduced_csv

    back = read_reduced_csv(out)
    assert np.allclose(back.temperature, run.temperature, rtol=1e-9)
    assert np.allclose(back.resistivity, run.resistivity, rtol=1e-9)
    assert np.allclose(back.density, run.density, rtol=1e-9)
    assert back.carrier == "p"
    assert severe_from_flags(back.flags).tolist() == run.severe.tolist()


def test_electron_run_writes_n_column_and_replaces(tmp_path):
    run = reduce_rows(synth_rows(temperatures=(100.0, 200.0), k=-2.0))
    target = tmp_path / "n.csv"
    target.write_text("old content\n", encoding="utf-8")
    write_reduced_csv(run, target, raw_source="somewhere/raw_n.csv")
    text = target.read_text(encoding="utf-8")
    assert "old content" not in text
    assert "# reduced_from: raw_n.csv" in text
    assert "n [cm^-3],n_err [cm^-3]" in text
    assert "R_H [cm^3/C]" in text and ",-700" in text


# ---------------------------------------------------------------------------------------
# the reduce command
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class CliResult:
    exit_code: int
    stdout: str
    stderr: str

    @property
    def output(self):
        return self.stdout + self.stderr


@pytest.fixture
def reduce_cli(monkeypatch, capsys):
    """Run ``freezeout reduce ARGS`` through the console-script entry point, in-process."""
    def run(*args):
        return CliResult(*cli(monkeypatch, capsys, "reduce", *args))
    return run


def test_cli_module_is_light_and_defaults_agree():
    """Importing the command does not import numpy (fast --help); defaults match."""
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-c", "import sys, freezeout.cli.reduce_cmd; "
                          "print('numpy' in sys.modules)"], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "False"
    import inspect

    from freezeout import api
    from freezeout.reduction import readings_from_arrays

    default = inspect.signature(readings_from_arrays).parameters["temperature_tolerance"].default
    assert api.DEFAULT_GROUPING_TOLERANCE_K == default == DEFAULT_GROUPING_TOLERANCE_K


def test_cli_reduce_default_output_and_summary(tmp_path, reduce_cli, monkeypatch):
    raw = tmp_path / "harrowgate_raw.csv"
    raw.write_bytes(SAMPLE.read_bytes())
    monkeypatch.setenv("COLUMNS", "200")
    result = reduce_cli(str(raw))
    assert result.exit_code == 0, result.output
    out = default_output(raw)
    assert out == tmp_path / "harrowgate_raw_reduced.csv" and out.exists()
    assert "current-reversal" in result.stdout and "wrote" in result.stdout
    assert "3 severe" in result.stdout


def test_cli_reduce_out_thickness_json(tmp_path, reduce_cli):
    out = tmp_path / "sub.csv"
    result = reduce_cli(str(SAMPLE), "--out", str(out), "--thickness", "700um", "--json")
    assert result.exit_code == 0, result.output
    payload = json.loads(result.stdout)
    assert payload["output"] == str(out) and payload["severe"] == 3
    base = load_raw_run(SAMPLE)
    assert np.allclose(payload["run"]["resistivity"], 2 * base.resistivity, rtol=1e-12)
    assert payload["run"]["findings"][0]["severity"] in ("warning", "severe")
    assert out.exists()


def test_cli_thresholds(tmp_path, reduce_cli):
    result = reduce_cli(
        str(SAMPLE), "--out", str(tmp_path / "o.csv"), "--json",
        "--threshold", "reciprocity_severe=1", "--threshold", "current-reversal-severe=1")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["severe"] == 0


@pytest.mark.parametrize("args", [
    ["--threshold", "reciprocity=0.1"],
    ["--threshold", "nonsense"],
    ["--hall-factor", "0"],
    ["--thickness", "thick"],
])
def test_cli_bad_options_exit_2(tmp_path, args, reduce_cli):
    result = reduce_cli(str(SAMPLE), "--out", str(tmp_path / "o.csv"), *args)
    assert result.exit_code == 2
    assert result.stderr.startswith("freezeout: error:")
    assert not (tmp_path / "o.csv").exists()


def test_cli_input_error_is_one_line_exit_2(tmp_path, reduce_cli):
    bad = write(tmp_path, BAD_FILES["zero current"][0])
    result = reduce_cli(str(bad))
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1
    assert re.search(r"run\.csv, line 7, column 'I \[A\]': current is zero", lines[0])
    assert "Traceback" not in result.output
    assert not default_output(bad).exists()
    missing = reduce_cli(str(tmp_path / "nope.csv"))
    assert missing.exit_code == 2 and "cannot read file" in missing.stderr


def test_no_nan_in_clean_reduction():
    run = load_raw_run(SAMPLE)
    for name in ("resistivity_err", "hall_coefficient_err", "density_err", "mobility_err"):
        assert np.all(np.isfinite(getattr(run, name))), name
    assert math.isfinite(run.thickness)


def test_cli_reduce_json_equals_the_api(tmp_path, reduce_cli):
    """``reduce --json`` prints exactly ``freezeout.reduce_file(...).to_dict()``."""
    out = tmp_path / "cli.csv"
    result = reduce_cli(str(SAMPLE), "--out", str(out), "--json", "--hall-factor", "1.1")
    assert result.exit_code == 0, result.output
    from freezeout import reduce_file

    direct = reduce_file(SAMPLE, out=out, hall_factor=1.1).to_dict()
    assert json.loads(result.stdout) == json.loads(json.dumps(direct, allow_nan=False))
    nothing = reduce_file(SAMPLE, write=False, hall_factor=1.1)
    assert nothing.output is None and nothing.to_dict()["run"] == direct["run"]
