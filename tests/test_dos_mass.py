"""Temperature-dependent density-of-states masses of silicon.

Source: R. F. Pierret, *Advanced Semiconductor Fundamentals*, 2nd ed. (2003), Ch. 2:
m_n/m0 = 1.028 + 6.11e-4 T - 3.09e-7 T^2 and m_p/m0 = 0.610 + 7.83e-4 T - 4.46e-7 T^2,
1.183 and 0.805 at 300 K, with N_c = 2.510e19 (m_n/m0)^(3/2) (T/300)^(3/2) cm^-3 (fit to
H. D. Barber, Solid-State Electron. 10, 1039 (1967), from memory).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from cli_runner import cli
from freezeout.errors import InputError
from freezeout.physics.dos_mass import (
    SILICON_ELECTRON_DOS_MASS,
    SILICON_HOLE_DOS_MASS,
    polynomial_dos_mass,
)
from freezeout.physics.materials import get_material


def test_masses_at_300k():
    """Pierret (2003): 1.183 and 0.805 m0 at 300 K."""
    assert float(polynomial_dos_mass(300.0, SILICON_ELECTRON_DOS_MASS)) == pytest.approx(
        1.183, abs=5e-4)
    assert float(polynomial_dos_mass(300.0, SILICON_HOLE_DOS_MASS)) == pytest.approx(
        0.805, abs=5e-4)


def test_nc_nv_with_temperature_masses():
    """N_c(300 K) = 2.510e19 m_n^(3/2) (Pierret 2003): 3.23e19 cm^-3; the prefactor is
    rounded to 4 digits there, so 1e-3 relative."""
    si_t = get_material("Si").with_dos_mass_model("temperature")
    m_n = float(polynomial_dos_mass(300.0, SILICON_ELECTRON_DOS_MASS))
    m_p = float(polynomial_dos_mass(300.0, SILICON_HOLE_DOS_MASS))
    assert float(si_t.nc(300.0)) == pytest.approx(2.510e19 * m_n**1.5, rel=1e-3)
    assert float(si_t.nc(300.0)) == pytest.approx(3.23e19, rel=2e-3)
    assert float(si_t.nv(300.0)) == pytest.approx(2.510e19 * m_p**1.5, rel=1e-3)
    # at 100 K the masses are lighter: N_c below the constant-mass value by (m(100)/1.18)^1.5
    t = 100.0
    ratio = float(si_t.nc(t) / get_material("Si").nc(t))
    assert ratio == pytest.approx((polynomial_dos_mass(t, SILICON_ELECTRON_DOS_MASS) / 1.18)
                                  ** 1.5, rel=1e-12)
    assert ratio < 0.94


def test_default_unchanged_and_refusals():
    si = get_material("Si")
    assert si.dos_mass_model == "constant"
    t = np.geomspace(10, 900, 20)
    np.testing.assert_array_equal(si.with_dos_mass_model("constant").nc(t), si.nc(t))
    assert "dos_mass_model" not in si.to_dict()
    assert si.with_dos_mass_model("temperature").to_dict()["dos_mass_model"] == "temperature"
    with pytest.raises(InputError, match="no temperature-dependent"):
        get_material("Ge").with_dos_mass_model("temperature")
    with pytest.raises(InputError, match="valid: constant, temperature"):
        si.with_dos_mass_model("barber")


def test_cli_fit_records_dos_mass(monkeypatch, capsys):
    code, out, _ = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--dos-mass", "temperature")
    assert code == 0
    d = json.loads(out)
    assert d["provenance"]["options"]["dos_mass"] == "temperature"
    assert d["material"]["dos_mass_model"] == "temperature"
    code, _, err = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--dos-mass", "heavy")
    assert code == 2 and "constant, temperature" in err
