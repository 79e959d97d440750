"""Lab files read as they come: separators, decimal commas, encodings, preambles, units rows,
more unit spellings, unused columns, density against Hall coefficient, the DataFrame API."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import constants as sc

import freezeout
from freezeout.api import curves_frame, fit_arrays, fit_table, parameters_frame
from freezeout.errors import InputError
from freezeout.io.raw_reader import is_raw_file
from freezeout.io.reduced_csv_reader import read_reduced_csv
from test_raw_io import GOOD_ROWS, load_raw_run, raw_text

ROOT = Path(__file__).resolve().parents[1]
SI_RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"


def _write(tmp_path, text, name="run.csv", encoding="utf-8"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding) if isinstance(text, str) else text)
    return p


def _same_run(a, b):
    for name in ("temperature", "density", "resistivity", "mobility"):
        x, y = getattr(a, name), getattr(b, name)
        assert (x is None) == (y is None), name
        if x is not None:
            np.testing.assert_allclose(x, y, rtol=1e-12, err_msg=name)


# ---------------------------------------------------------------------------------------
# separators, decimal marks, encodings, quoting
# ---------------------------------------------------------------------------------------

PLAIN = "T [K],n [cm^-3],mu_H [cm^2/(V s)]\n400.000,1.5e16,1200.5\n300,1.0e16,1500\n"


@pytest.mark.parametrize("text", [
    "T [K];n [cm^-3];mu_H [cm^2/(V s)]\n400,000;1,5e16;1200,5\n300;1,0E16;1500\n",
    "T [K]\tn [cm^-3]\tmu_H [cm^2/(V s)]\n400,000\t1,5e16\t1200,5\n300\t1,0e16\t1500\n",
    "T [K];n [cm^-3];mu_H [cm^2/(V s)]\n400.000;1.5e16;1200.5\n300;1.0e16;1500\n",
    '"T [K]","n [cm^-3]","mu_H [cm^2/(V s)]"\n"400.000","1.5e16",1200.5\n300,1.0e16,1500\n',
])
def test_separators_and_decimal_commas(tmp_path, text):
    """With ';' (or tab) a comma is the decimal mark: 400,000 is 400.0, not 400000
    (the convention of decimal-comma locales, common practice, no source)."""
    run = read_reduced_csv(_write(tmp_path, text))
    _same_run(run, read_reduced_csv(_write(tmp_path, PLAIN, "plain.csv")))
    assert run.temperature.tolist() == [300.0, 400.0]


@pytest.mark.parametrize(("text", "line", "match"), [
    ("T [K];n [cm^-3]\n400,5;1e16\n300.5;1e15\n", 3, "mixed decimal marks"),
    ("T [K];n [cm^-3]\n1.400,5;1e16\n", 2, "thousands separator"),
])
def test_ambiguous_decimal_marks_refused(tmp_path, text, line, match):
    with pytest.raises(InputError, match=match) as info:
        read_reduced_csv(_write(tmp_path, text))
    assert info.value.line == line and info.value.column is not None


@pytest.mark.parametrize(("data", "note"), [
    (b"\xef\xbb\xbfT [K],n [cm^-3]\n300,1e16\n", None),               # UTF-8 with BOM
    ("T [°C],n [cm^-3]\n26.85,1e16\n".encode("cp1252"), "Windows-1252"),
    ("T [°C],n [cm^-3]\n26.85,1e16\n".encode("latin-1"), "Windows-1252"),
    ("T [°C]\tn [cm^-3]\r\n26,85\t1e16\r\n".encode("utf-16"), None),  # spreadsheet text
])
def test_encodings(tmp_path, data, note):
    run = read_reduced_csv(_write(tmp_path, data))
    assert run.density[0] == 1e16
    assert run.temperature[0] == pytest.approx(300.0)  # 26.85 degC = 300 K (definition)
    notes = " ".join(run.notes)
    if note:
        assert note in notes and "line 1" in notes and "°" in notes
    else:
        assert "not UTF-8" not in notes


def test_crlf_blank_and_comment_lines_keep_line_numbers(tmp_path):
    text = "# a: b\r\n\r\nT [K],n [cm^-3]\r\n300,1e16\r\n# interlude\r\n\r\n200,abc\r\n"
    with pytest.raises(InputError, match="cannot read 'abc'") as info:
        read_reduced_csv(_write(tmp_path, text))
    assert info.value.line == 7 and info.value.column == "n [cm^-3]"


# ---------------------------------------------------------------------------------------
# preambles and units rows
# ---------------------------------------------------------------------------------------

PREAMBLE = ("Instrument: cryostat HX-9 (fictional)\nOperator: R. Okafor\n"
            "Run of the 12th, field 0.5 T\n\n")


def test_instrument_preamble_is_metadata_and_lines_stay_right(tmp_path):
    text = PREAMBLE + "Temperature (K);Carrier density (cm-3);Mobility (cm2/Vs)\n" \
        "20;1,23E+14;5400,5\n30;2,5E+14;5000\n"
    run = read_reduced_csv(_write(tmp_path, text))
    assert run.metadata["instrument"] == "cryostat HX-9 (fictional)"
    assert run.metadata["operator"] == "R. Okafor"
    assert "Run of the 12th" in run.metadata["preamble"]
    assert run.density.tolist() == [1.23e14, 2.5e14] and run.mobility[0] == 5400.5
    assert any("preamble" in n and "lines 1-3" in n for n in run.notes)
    bad = _write(tmp_path, text.replace("2,5E+14", "2,5E+1x"), "bad.csv")
    with pytest.raises(InputError, match="cannot read") as info:
        read_reduced_csv(bad)
    assert info.value.line == 7 and info.value.column == "Carrier density (cm-3)"


def test_units_on_a_second_header_row(tmp_path):
    """R_H in m^3/C: 1 m^3/C = 1e6 cm^3/C; n = 1/(q R_H) (q from scipy.constants)."""
    text = "Temperature,Hall coefficient,Hall coefficient_err\nK,m^3/C,m^3/C\n" \
        "300,6.2415e-4,6.2415e-6\n200,7.0e-4,7.0e-6\n"
    run = read_reduced_csv(_write(tmp_path, text))
    assert run.carrier == "p"
    assert run.density[1] == pytest.approx(1 / (sc.e * 6.2415e-4 * 1e6), rel=1e-12)
    assert any("units read from the row under the header (line 2)" in n for n in run.notes)
    with pytest.raises(InputError, match="unknown unit") as info:
        read_reduced_csv(_write(tmp_path, text.replace("m^3/C,m", "furlong,m"), "b.csv"))
    assert info.value.line == 2 and info.value.column == "Hall coefficient [furlong]"
    with pytest.raises(InputError, match="keep one") as info:
        read_reduced_csv(_write(tmp_path, "T [K],n\nmK,cm^-3\n300,1e16\n", "c.csv"))
    assert info.value.line == 2 and info.value.column == "T [K]"


def test_raw_file_with_semicolons_preamble_and_units_row(tmp_path):
    """The raw reader reads the same lab variants; the reduction is unchanged."""
    base = raw_text(GOOD_ROWS)
    lines = base.splitlines()
    header_at = next(i for i, ln in enumerate(lines) if not ln.startswith("#"))
    meta = [ln.lstrip("# ") for ln in lines[:header_at]]  # no '#': an instrument preamble
    names = ["T", "B", "I", "I+", "I-", "V+", "V-", "V"]
    body = [ln.replace(",", ";").replace(".", ",") for ln in lines[header_at + 1:]]
    variant = "\n".join(["Raw export of a fictional Hall rig", *meta, ";".join(names),
                         "K;T;A;;;;;V", *body]) + "\n"
    a = load_raw_run(_write(tmp_path, base, "a.csv"))
    path = _write(tmp_path, variant, "b.csv")
    assert is_raw_file(path)
    b = load_raw_run(path)
    for name in ("temperature", "resistivity", "hall_coefficient", "density"):
        np.testing.assert_allclose(getattr(b, name), getattr(a, name), rtol=1e-12)
    assert b.metadata["sample"] == a.metadata["sample"]
    assert "Hall rig" in b.metadata["preamble"]


# ---------------------------------------------------------------------------------------
# unit spellings, conductivity, unused columns
# ---------------------------------------------------------------------------------------

@pytest.mark.parametrize(("head", "cell", "attr", "value"), [
    ("rho [Ohm-cm]", "2.5", "resistivity", 2.5),
    ("R_H [m^3 C^-1]", "-1e-3", "hall_coefficient", -1e3),  # 1 m^3/C = 1e6 cm^3/C
    ("R_H [cm3/C]", "-625", "hall_coefficient", -625.0),
    ("mu_H [cm^2/Vs]", "1350", "mobility", 1350.0),
    ("sigma [S/cm]", "4", "resistivity", 0.25),            # rho = 1/sigma
    ("conductivity [S/m]", "400", "resistivity", 0.25),     # 1 S/m = 1e-2 S/cm
    ("sigma [1/(ohm cm)]", "4", "resistivity", 0.25),
])
def test_more_unit_spellings(tmp_path, head, cell, attr, value):
    run = read_reduced_csv(_write(tmp_path, f"T [K],n [cm^-3],{head}\n300,1e16,{cell}\n"))
    assert getattr(run, attr)[0] == pytest.approx(value, rel=1e-12)


def test_conductivity_error_is_propagated(tmp_path):
    """u(rho) = u(sigma) / sigma^2 for rho = 1/sigma (first-order propagation, JCGM 100)."""
    run = read_reduced_csv(_write(tmp_path, "T [K],n [cm^-3],sigma [mS/cm],sigma_err [mS/cm]\n"
                                  "300,1e16,4000,40\n200,1e16,2000,20\n"))
    np.testing.assert_allclose(run.resistivity, [0.5, 0.25])  # 200 K first
    np.testing.assert_allclose(run.resistivity_err, [0.02 / 2**2, 0.04 / 4**2])


def test_a_column_the_fit_does_not_use_is_left_out_with_its_reason(tmp_path):
    text = "T [K],n [cm^-3],rho [furlongs],rho_err,mu [cm^2/(V s)]\n300,1e16,1,0.1,1200\n" \
        "200,1.1e16,2,0.1,1500\n"
    run = read_reduced_csv(_write(tmp_path, text))
    assert run.resistivity is None and run.mobility is not None
    assert set(run.ignored_columns) == {"rho [furlongs]", "rho_err"}
    notes = " ".join(run.notes)
    assert "'rho [furlongs]' not used" in notes and "unknown unit 'furlongs'" in notes
    assert "'rho_err' not used" in notes and "value column is not used" in notes
    # a resistivity written in a conductivity's unit says so
    run = read_reduced_csv(_write(tmp_path, "T [K],n [cm^-3],rho [S/cm]\n300,1e16,4\n", "s.csv"))
    assert "name the column 'sigma'" in " ".join(run.notes)
    # the columns the fit needs still stop the read
    with pytest.raises(InputError, match="unknown unit"):
        read_reduced_csv(_write(tmp_path, "T [K],n [furlongs]\n300,1e16\n", "n.csv"))


def test_fit_goes_on_without_an_unreadable_resistivity(tmp_path):
    lines = SI_RUN.read_text(encoding="utf-8").splitlines()
    head = next(i for i, ln in enumerate(lines) if not ln.startswith("#"))
    out = lines[:head] + [lines[head] + ",rho [ohm furlong]"] + \
        [ln + ",1.0" for ln in lines[head + 1:]]
    result = freezeout.fit_file(_write(tmp_path, "\n".join(out) + "\n"), material="Si")
    assert any("'rho [ohm furlong]' not used" in w for w in result.warnings)


# ---------------------------------------------------------------------------------------
# density against Hall coefficient
# ---------------------------------------------------------------------------------------

def _rh(n):
    """R_H = -1/(q n) for electrons, in cm^3/C (q from scipy.constants)."""
    return -1.0 / (sc.e * n)


@pytest.mark.parametrize(("n_factor", "errors", "says"), [
    (1.0, True, False), (1.004, False, False),   # within 1 % without uncertainties
    (1.5, True, True), (1.05, False, True),
])
def test_density_and_hall_coefficient_disagreeing_is_said(tmp_path, n_factor, errors, says):
    rows = []
    for t, n in ((100.0, 5e15), (200.0, 1e16), (300.0, 1.1e16)):
        cells = [t, n * n_factor, n * 0.01, _rh(n), -_rh(n) * 0.01] if errors else \
            [t, n * n_factor, _rh(n)]
        rows.append(",".join(repr(float(c)) for c in cells))
    head = "T [K],n [cm^-3],n_err [cm^-3],R_H [cm^3/C],R_H_err [cm^3/C]" if errors else \
        "T [K],n [cm^-3],R_H [cm^3/C]"
    run = read_reduced_csv(_write(tmp_path, head + "\n" + "\n".join(rows) + "\n"))
    note = [n for n in run.notes if "disagree" in n]
    assert bool(note) == says
    if says:
        assert "fit used the density column" in note[0] and "3 of 3 points" in note[0]
    np.testing.assert_allclose(run.density, np.array([5e15, 1e16, 1.1e16]) * n_factor)


# ---------------------------------------------------------------------------------------
# the DataFrame API
# ---------------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def si_fit():
    return freezeout.fit_file(SI_RUN, material="Si")


def test_fit_table_on_a_frame_read_from_the_file_equals_fit_file(si_fit):
    frame = pd.read_csv(SI_RUN, comment="#")
    table = fit_table(frame, material="Si", name=SI_RUN.name)
    a, b = si_fit.to_dict(), table.to_dict()
    assert a["levels"] == b["levels"]
    assert a["data"] == b["data"]
    assert a["net_doping_cm3"] == b["net_doping_cm3"] and a["warnings"] == b["warnings"]
    pa, pb = parameters_frame(si_fit), parameters_frame(table)
    pd.testing.assert_frame_equal(pa, pb)


def test_fit_arrays_and_frames(si_fit):
    run = freezeout.load_run(SI_RUN)
    result = fit_arrays(run.temperature, run.density, run.density_err, carrier="n",
                        material="Si")
    assert result.to_dict()["levels"] == si_fit.to_dict()["levels"]
    params = parameters_frame(result)
    assert list(params.columns) == ["parameter", "unit", "value", "stderr", "ci95_low",
                                    "ci95_high", "method", "fixed"]
    assert params["parameter"].tolist()[:3] == ["N_D1", "E_D1", "N_A"]
    assert params.set_index("parameter").loc["E_D1", "unit"] == "eV"
    curves = curves_frame(result, n_points=50)
    assert len(curves) == 50
    assert {"T [K]", "n model [cm^-3]", "p model [cm^-3]", "E_F - E_v [eV]",
            "ionized D1 [cm^-3]", "ionized fraction D1 [1]"} <= set(curves.columns)
    assert curves["T [K]"].is_monotonic_increasing


def test_fit_table_errors_name_row_and_column():
    frame = pd.DataFrame({"T [K]": [300.0, 200.0], "n [cm^-3]": [1e16, -1.0]})
    with pytest.raises(InputError, match="must be > 0") as info:
        fit_table(frame, material="Si")
    assert info.value.line == 3 and info.value.column == "n [cm^-3]"  # as in to_csv
    with pytest.raises(InputError, match="DataFrame"):
        fit_table([[300, 1e16]], material="Si")
    with pytest.raises(InputError, match="one length"):
        fit_arrays([300.0, 200.0], [1e16], material="Si")
