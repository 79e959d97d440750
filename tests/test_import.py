"""Reading reduced runs: spellings, units, metadata, mixed conduction and bad input."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from freezeout.errors import InputError
from freezeout.io.reduced_csv_reader import read_reduced_csv as read_run_csv


def _write(tmp_path, text, name="run.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


@pytest.mark.parametrize(
    ("t_head", "n_head", "t_val", "n_val", "t_k", "n_cm3"),
    [
        ("T [K]", "n [cm^-3]", "300", "1e16", 300.0, 1e16),
        ("T (K)", "n (cm-3)", "300", "1e16", 300.0, 1e16),
        ("Temperature_K", "n [cm^-3]", "300", "1e16", 300.0, 1e16),
        ("T [degC]", "carrier density (m^-3)", "26.85", "1e22", 300.0, 1e16),
        ("T [mK]", "n [1/cm3]", "300000", "1e16", 300.0, 1e16),
        ("temperature (°C)", "p [cm⁻³]", "-173.15", "2e15", 100.0, 2e15),
    ],
)
def test_header_spellings_and_units(tmp_path, t_head, n_head, t_val, n_val, t_k, n_cm3):
    """Units converted at the edge: degC + 273.15, m^-3 = 1e-6 cm^-3 (SI definitions)."""
    p = _write(tmp_path, f"{t_head},{n_head}\n{t_val},{n_val}\n")
    run = read_run_csv(p)
    assert run.temperature[0] == pytest.approx(t_k, rel=1e-12)
    assert run.density[0] == pytest.approx(n_cm3, rel=1e-12)


def test_metadata_errors_mobility_resistivity(tmp_path):
    p = _write(tmp_path, "# sample: HCL-0042\n# thickness: 350 um\n# operator: R. Okafor\n"
               "T [K],n [cm^-3],n_err [cm^-3],mu_H [cm^2/(V s)],rho [ohm cm]\n"
               "100,5e15,1e14,3000,0.4\n300,1e16,2e14,1200,0.52\n")
    run = read_run_csv(p)
    assert run.metadata == {"sample": "HCL-0042", "thickness": "350 um",
                            "operator": "R. Okafor"}
    assert run.density_err.tolist() == [1e14, 2e14]
    assert run.mobility.tolist() == [3000, 1200] and run.resistivity[1] == 0.52
    assert len(run.sha256) == 64


def test_hall_coefficient_gives_density_and_type(tmp_path):
    """density = r_H / (q |R_H|); R_H > 0 for holes (Hall effect sign convention,
    common practice, no source); q from scipy.constants."""
    p = _write(tmp_path, "T [K],R_H [m^3/C],R_H_err [m^3/C]\n300,6.2415e-4,6.2415e-6\n"
               "200,7.0e-4,7.0e-6\n")
    run = read_run_csv(p, hall_factor=1.15)
    assert run.carrier == "p"
    assert run.density[1] == pytest.approx(1.15 / (sc.e * 6.2415e-4 * 1e6), rel=1e-12)
    assert run.density_err[1] / run.density[1] == pytest.approx(0.01)


def test_mixed_conduction_is_reported_and_excluded(tmp_path):
    rows = "\n".join(f"{t},{rh}" for t, rh in [(100, 50.0), (200, 40.0), (300, 30.0),
                                               (500, -5.0), (600, -2.0)])
    p = _write(tmp_path, "T [K],R_H [cm^3/C]\n" + rows + "\n")
    run = read_run_csv(p)
    assert run.carrier == "p"
    assert run.mixed.tolist() == [False, False, False, True, True]
    assert any("changes sign" in n and "left out" in n for n in run.notes)
    kept = read_run_csv(p, include_mixed=True)
    assert not kept.mixed.any()


def test_simulate_style_n_and_p_columns(tmp_path):
    p = _write(tmp_path, "T [K],n [cm^-3],p [cm^-3],E_F - E_v [eV]\n300,1e16,1e4,1.0\n"
               "400,1.1e16,1e7,0.9\n")
    run = read_run_csv(p)
    assert run.carrier == "n" and run.density[0] == 1e16
    assert "E_F - E_v [eV]" in run.ignored_columns


def test_rows_sorted_by_temperature(tmp_path):
    p = _write(tmp_path, "T [K],n [cm^-3]\n300,3\n100,1\n200,2\n")
    assert read_run_csv(p).density.tolist() == [1, 2, 3]


@pytest.mark.parametrize(
    ("text", "line", "column", "match"),
    [
        ("T [K],n [cm^-3]\n300,1e16\n200,abc\n", 3, "n [cm^-3]", "cannot read 'abc'"),
        ("T [K],n [furlongs]\n300,1e16\n", 1, "n [furlongs]", "unknown unit"),
        ("T [K],n [cm^-3]\n-20,1e16\n", 2, "T [K]", "absolute zero"),
        ("T [K],n [cm^-3]\n300,nan\n", 2, "n [cm^-3]", "missing value"),
        ("T [K],n [cm^-3]\n300,1e16\n300,1.1e16\n", 3, "T [K]", "duplicate temperature"),
        ("T [K],n [cm^-3]\n300,1e16\n200\n", 3, None, "truncated"),
        ("T [K],n [cm^-3]\n300,1e40\n", 2, "n [cm^-3]", "plausible range"),
        ("T [K],n [cm^-3]\n300,-1e16\n", 2, "n [cm^-3]", "must be > 0"),
        ("T,n [cm^-3]\n300,1e16\n", 1, "T", "no unit"),
        ("n [cm^-3]\n1e16\n", 1, None, "no temperature column"),
        ("# only comments\n", None, None, "no header"),
        ("T [K],n [cm^-3]\n", 1, None, "no data rows"),
        ("T [K],n [cm^-3],n_err [cm^-3]\n300,1e16,1e14\n200,1e15,\n", 3, "n_err [cm^-3]",
         "every row or none"),
    ],
)
def test_bad_input_names_file_line_column(tmp_path, text, line, column, match):
    p = _write(tmp_path, text, "bad.csv")
    with pytest.raises(InputError, match=match) as info:
        read_run_csv(p)
    err = info.value
    assert err.file.endswith("bad.csv")
    assert err.line == line
    if column is not None:
        assert err.column == column
    assert "bad.csv" in str(err)


def test_missing_file_and_binary(tmp_path):
    with pytest.raises(InputError, match="cannot read"):
        read_run_csv(tmp_path / "nope.csv")
    p = tmp_path / "bin.csv"
    p.write_bytes(b"T [K],n [cm^-3]\n\xff\xfe\x00\n")
    with pytest.raises(InputError, match="UTF-8") as info:
        read_run_csv(p)
    assert info.value.line == 2


def test_units_parser_edge_cases():
    from freezeout.numbers.units import parse_unit, split_header

    assert split_header("mu_H [cm^2/(V s)]") == ("mu_H", "cm^2/(V s)")
    assert split_header("n (cm-3)") == ("n", "cm-3")
    assert parse_unit("uA", "current").to_canonical(5.0) == pytest.approx(5e-6)
    assert parse_unit("G", "field").to_canonical(1e4) == pytest.approx(1.0)
    assert parse_unit("Ω·cm", "resistivity").to_canonical(2.0) == 2.0
    assert np.isclose(parse_unit("cm2/Vs", "mobility").to_canonical(1.0), 1.0)
    with pytest.raises(ValueError, match="known"):
        parse_unit("parsec", "length")


def test_hall_factor_of_the_file_is_kept_unless_overridden(tmp_path):
    """A density computed with r_H = 1.2 (stated in the file) stays as it is by default; an
    explicit Hall factor rescales it: n = r_H / (q |R_H|) (common practice, no source)."""
    p = _write(tmp_path, "# hall_factor: 1.2\nT [K],n [cm^-3]\n300,1.2e16\n200,1.1e16\n")
    assert read_run_csv(p).density[1] == pytest.approx(1.2e16)
    assert read_run_csv(p).hall_factor == 1.2
    assert read_run_csv(p, hall_factor=1.0).density[1] == pytest.approx(1e16)
    with pytest.raises(InputError, match="between 0.1 and 10"):
        read_run_csv(p, hall_factor=1e99)


def test_unused_and_contradicting_columns_are_said(tmp_path):
    p = _write(tmp_path, "# carrier: n\nT [K],p [cm^-3],p_eror [cm^-3]\n300,1e16,1e14\n"
               "200,1e16,1e14\n")
    run = read_run_csv(p)
    assert run.carrier == "p" and run.density_err is None
    text = " ".join(run.notes)
    assert "p_eror" in text and "'# carrier: n'" in text


def test_temperature_uncertainty_column(tmp_path):
    p = _write(tmp_path, "T [K],T_err [mK],n [cm^-3]\n30,200,1e12\n40,100,1e13\n")
    run = read_run_csv(p)
    np.testing.assert_allclose(run.temperature_err, [0.2, 0.1])


def test_carrier_type_from_the_cold_points(tmp_path):
    """A p-type run whose Hall sign turns negative over most of a hot range is still p-type:
    the extrinsic (cold) points carry the doping type (common practice, no source)."""
    rows = [(100, 50.0), (150, 40.0), (200, 30.0), (400, -1.0), (450, -2.0), (500, -3.0),
            (550, -3.0), (600, -3.0)]
    p = _write(tmp_path, "T [K],R_H [cm^3/C]\n" + "\n".join(f"{t},{r}" for t, r in rows) + "\n")
    run = read_run_csv(p)
    assert run.carrier == "p" and run.mixed.sum() == 5
