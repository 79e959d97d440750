"""Effective-mass (hydrogenic) estimates of a host: donor/acceptor energy, Bohr radius, Mott
density, and the material keys they need."""

from __future__ import annotations

import pytest

from freezeout.errors import InputError
from freezeout.io.material_file import read_material_file
from freezeout.physics.hydrogenic import (
    HYDROGEN_BOHR_RADIUS_NM,
    RYDBERG_EV,
    bohr_radius_nm,
    hydrogenic_energy_ev,
    mott_density_cm3,
)
from freezeout.physics.materials import get_material, library

NEW_KEYS = ("relative_permittivity", "electron_conductivity_mass", "hole_conductivity_mass")


def test_constants():
    """Rydberg energy 13.606 eV and Bohr radius 0.0529177 nm (CODATA 2018, from memory)."""
    assert RYDBERG_EV == pytest.approx(13.6057, rel=1e-5)
    assert HYDROGEN_BOHR_RADIUS_NM == pytest.approx(0.0529177, rel=1e-6)


def test_si_donor_estimates():
    """Si, m* = 0.26, eps_r = 11.7: E_H = 13.606 * 0.26 / 11.7^2 = 25.8 meV (measured P is
    45 meV, the central-cell shift; Kittel ch. 8, from memory); a_B = 2.38 nm;
    (0.26/a_B)^3 = 1.30e18 cm^-3 (computed here). The measured Si:P transition is near
    3.7e18 cm^-3 (T. F. Rosenbaum et al., Phys. Rev. Lett. 45, 1723 (1980), from memory):
    the effective-mass estimate is low by a factor of about 3, the spread of the rule."""
    assert hydrogenic_energy_ev(0.26, 11.7) == pytest.approx(0.02584, rel=1e-3)
    assert bohr_radius_nm(0.26, 11.7) == pytest.approx(2.3813, rel=1e-4)
    n = mott_density_cm3(0.26, 11.7)
    assert n == pytest.approx(1.30e18, rel=0.01)
    assert 1 / 3.5 < n / 3.7e18 < 1.0


def test_other_hosts():
    """GaAs donor 5.5 meV vs measured 5.8 meV; Ge donor ~6 meV vs 10-13 meV (from memory)."""
    gaas = get_material("GaAs")
    e = hydrogenic_energy_ev(gaas.electron_conductivity_mass, gaas.relative_permittivity)
    assert e == pytest.approx(0.00548, rel=0.01)
    ge = get_material("Ge")
    e = hydrogenic_energy_ev(ge.electron_conductivity_mass, ge.relative_permittivity)
    assert 0.005 < e < 0.007


@pytest.mark.parametrize("name", ["Si", "Ge", "GaAs", "4H-SiC", "GaN", "InP"])
def test_every_bundled_material_has_the_keys_with_a_source(name):
    m = library()[name]
    for key in NEW_KEYS:
        assert key in m.sources and m.sources[key].strip()
    d = m.to_dict()
    assert d["electron_conductivity_mass"] == m.conductivity_mass("n")
    assert d["hole_conductivity_mass"] == m.conductivity_mass("p")


def test_si_masses_from_the_library():
    si = get_material("Si")
    assert si.conductivity_mass("n") == 0.26 and si.conductivity_mass("p") == 0.36
    assert si.relative_permittivity == 11.7


BASE = """name = "X"
band_gap_0K_eV = 1.0
varshni_alpha_eV_per_K = 4e-4
varshni_beta_K = 300.0
electron_dos_mass = 0.5
hole_dos_mass = 0.5
"""


def test_keys_optional_in_user_files_but_named_when_needed(tmp_path):
    p = tmp_path / "m.toml"
    p.write_text(BASE)
    m = read_material_file(p)
    assert m.electron_conductivity_mass is None
    with pytest.raises(InputError, match="electron_conductivity_mass"):
        m.conductivity_mass("n")
    with pytest.raises(InputError, match="hole_conductivity_mass"):
        m.conductivity_mass("p")
    p.write_text(BASE + "electron_conductivity_mass = 0.3\nhole_conductivity_mass = 0.4\n")
    m = read_material_file(p)
    assert m.conductivity_mass("n") == 0.3 and m.conductivity_mass("p") == 0.4


def test_conductivity_mass_out_of_range_is_bad_input(tmp_path):
    p = tmp_path / "m.toml"
    p.write_text(BASE + "electron_conductivity_mass = 0.0\n")
    with pytest.raises(InputError, match="electron_conductivity_mass"):
        read_material_file(p)


def test_user_material_without_the_keys_still_fits(tmp_path):
    """No conductivity mass: the host check is skipped, the fit runs as before."""
    import numpy as np

    import freezeout
    from freezeout.fitting.fit import fit_run
    from freezeout.physics.materials import material_from_mapping
    from freezeout.records.run import RunData

    si = get_material("Si").to_dict()
    flat = {k: si[k] for k in ("name", "band_gap_0K_eV", "varshni_alpha_eV_per_K",
                               "varshni_beta_K", "electron_dos_mass", "hole_dos_mass")}
    m = material_from_mapping(flat)
    sim = freezeout.simulate("Si", donors=[(1e16, 0.045)], acceptors=[(1e13, None)],
                             temperatures=(20, 600, 30))
    run = RunData("s.csv", "0" * 64, sim.temperature, sim.n, 0.02 * sim.n, "n",
                  ("n",) * sim.n.size)
    res = fit_run(run, m)
    assert not any("hydrogenic" in w or "Mott" in w for w in res.warnings)
    assert np.isfinite(res.levels[0].energy.value)
