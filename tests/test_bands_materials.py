"""Densities of states, band gaps, intrinsic density and the materials library."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from freezeout.errors import InputError
from freezeout.io.material_file import read_material_file
from freezeout.physics.bands import effective_density_of_states, varshni_band_gap
from freezeout.physics.materials import MATERIAL_KEYS, get_material, library


def _nc_mpmath(t, m):
    """2 (2 pi m m0 k T / h^2)^(3/2) in cm^-3, in 30-digit arithmetic: k and h exact in the
    SI (BIPM, The International System of Units, 9th ed., 2019), m0 = 9.1093837139e-31 kg
    (CODATA 2022, from memory)."""
    mp.mp.dps = 30
    m0, k, h = mp.mpf("9.1093837139e-31"), mp.mpf("1.380649e-23"), mp.mpf("6.62607015e-34")
    return float(2 * (2 * mp.pi * m * m0 * k * mp.mpf(t) / h**2) ** mp.mpf(1.5) / 10**6)


def test_nc_for_free_electron_mass_at_300k():
    """Nc(300 K, m* = 1) = 2 (2 pi m0 k T / h^2)^(3/2) = 2.50941e19 cm^-3, computed here with
    mpmath (the value 2.509e19 also quoted in textbooks, e.g. S. M. Sze, K. K. Ng, Physics of
    Semiconductor Devices, 3rd ed., Sec. 1.4). 1e-8 leaves room for the 1.4e-9 revision of
    m0 between CODATA 2018 and 2022; a wrong constant or exponent is off by far more."""
    nc = effective_density_of_states(300.0, 1.0)
    assert nc == pytest.approx(_nc_mpmath(300, 1), rel=1e-8)
    assert nc == pytest.approx(2.50941e19, rel=2e-6)
    # T^(3/2) and m^(3/2) scaling, and the library's own masses through Material.nc
    assert effective_density_of_states(600.0, 0.5) == pytest.approx(nc, rel=1e-14)
    si = get_material("Si")
    assert si.nc(77.0) == pytest.approx(_nc_mpmath(77, si.electron_dos_mass), rel=1e-8)
    assert si.nv(450.0) == pytest.approx(_nc_mpmath(450, si.hole_dos_mass), rel=1e-8)


@pytest.mark.parametrize(("t", "eg"), [(77, 1.1661), (300, 1.1245), (500, 1.0659), (800, 0.9592)])
def test_varshni_silicon(t, eg):
    """Si, Eg(0) = 1.17 eV, alpha = 4.73e-4 eV/K, beta = 636 K (Levinshtein et al., Handbook
    Series on Semiconductor Parameters Vol. 1, 1996); values of the relation rounded to 4
    decimals (Y. P. Varshni, Physica 34, 149 (1967))."""
    assert varshni_band_gap(t, 1.17, 4.73e-4, 636.0) == pytest.approx(eg, abs=6e-5)
    assert get_material("Si").band_gap(t) == pytest.approx(eg, abs=6e-5)


def test_silicon_intrinsic_density_against_misiakos_tsamakis():
    """n_i(T) = 5.29e19 (T/300)^2.54 exp(-6726/T) cm^-3, 78-340 K (K. Misiakos, D. Tsamakis,
    J. Appl. Phys. 74, 3293 (1993)). Our n_i uses constant DOS masses and the Varshni gap, a
    different parameter set. Published n_i(300 K) spread by about 10 %: 9.65e9 (P. P. Altermatt
    et al., J. Appl. Phys. 93, 1598 (2003)), 1.00e10 (R. Sproul, M. A. Green, J. Appl. Phys.
    70, 846 (1991); the number from memory), 8.7e9 computed here from the Levinshtein et al.
    handbook's Nc, Nv and Varshni gap. So the level is checked to 15 % and the temperature
    dependence (the activation energy of n_i T^-3/2 over 200-340 K) to 2 %; both tolerances
    are our own choice."""
    si = get_material("Si")
    t = np.array([78.0, 100.0, 150.0, 200.0, 250.0, 300.0, 340.0])
    mt = 5.29e19 * (t / 300.0) ** 2.54 * np.exp(-6726.0 / t)
    ni = si.intrinsic_density(t)
    assert ni[5] == pytest.approx(9.7e9, rel=0.15)
    ratio = ni / mt
    assert np.all((ratio > 0.85) & (ratio < 1.15))
    hot = t >= 200
    k = 1.380649e-23 / 1.602176634e-19  # [eV/K], exact SI values (BIPM SI Brochure, 2019)
    ea = -2 * k * np.polyfit(1 / t[hot], np.log(ni[hot] * t[hot] ** -1.5), 1)[0]
    ea_mt = -2 * k * np.polyfit(1 / t[hot], np.log(mt[hot] * t[hot] ** -1.5), 1)[0]
    assert ea == pytest.approx(ea_mt, rel=0.02)


@pytest.mark.parametrize("name", ["Si", "Ge", "GaAs", "4H-SiC", "GaN", "InP"])
def test_library_sweep(name):
    """Every bundled material: finite, positive, broadcastable output from 2 K to 1500 K, and a
    source for every parameter (common practice, no source)."""
    m = get_material(name)
    t = np.geomspace(2.0, 1500.0, 50)
    for f in (m.band_gap, m.nc, m.nv):
        v = f(t)
        assert v.shape == t.shape and np.all(np.isfinite(v)) and np.all(v > 0)
    assert set(m.sources) >= set(MATERIAL_KEYS[1:6])
    assert all(len(s) > 10 for s in m.sources.values())


def test_library_room_temperature_values():
    """Tabulated 300 K values the masses were taken from (Levinshtein et al., Handbook Vol. 1
    and the 2001 volume): Si Nc 3.2e19, Ge Nc 1.0e19, GaAs Nc 4.7e17, GaN Nc 2.3e18;
    InP Eg(300 K) = 1.344 eV tabulated against 1.3507 from its Varshni row."""
    assert get_material("Si").nc(300) == pytest.approx(3.2e19, rel=0.02)
    assert get_material("Ge").nc(300) == pytest.approx(1.0e19, rel=0.02)
    assert get_material("GaAs").nc(300) == pytest.approx(4.7e17, rel=0.02)
    assert get_material("GaN").nc(300) == pytest.approx(2.3e18, rel=0.05)
    assert get_material("InP").band_gap(300) == pytest.approx(1.3507, abs=1e-3)
    assert len(library()) >= 6


def test_unknown_material_lists_known():
    with pytest.raises(InputError, match="known: Si"):
        get_material("unobtainium")


GOOD = """name = "AlGaX"
band_gap_0K_eV = 2.0
varshni_alpha_eV_per_K = 5e-4
varshni_beta_K = 300.0
electron_dos_mass = 0.3
hole_dos_mass = 0.8
relative_permittivity = 10.0
"""


def test_user_material_file(tmp_path):
    p = tmp_path / "m.toml"
    p.write_text(GOOD)
    m = read_material_file(p)
    assert m.name == "AlGaX" and m.band_gap(0) == 2.0


@pytest.mark.parametrize(
    ("text", "match"),
    [(GOOD + "colour = 'red'\n", "unknown material key"),
     (GOOD.replace("hole_dos_mass = 0.8\n", ""), "missing material key"),
     (GOOD.replace("0.3", "'heavy'"), "finite number"),
     (GOOD.replace("0.3", "-0.3"), "plausible range"),
     ("name = 'x'\nband_gap_0K_eV = [1\n", "not valid TOML")],
)
def test_bad_user_material(tmp_path, text, match):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(InputError, match=match) as info:
        read_material_file(p)
    assert "bad.toml" in str(info.value)
