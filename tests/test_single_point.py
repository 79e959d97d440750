"""A single room-temperature result in a lot: ionization, thickness and Hall factor.

Every run here is synthetic: invented single-point results written into tmp_path, or the
tool's own simulation of a doped wafer at 296.15 K; lots are of the fictional supplier
"Kestrel Ridge Wafers". Expected numbers are worked by hand in the comments.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest

import freezeout
from cli_runner import cli
from freezeout.claims.single_point import (
    FULL_IONIZATION,
    check_single_point,
    ionized_fraction,
)
from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import get_material

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_RUN = ROOT / "sample_data" / "lot_kestrel_2026-11" / "runs" / "w01_temperature_run.csv"
T23 = 296.15


def simulated_majority(material: str, kind: str, conc: float, energy: float) -> float:
    """The tool's own model: majority density at 296.15 K of one uncompensated level."""
    kw = {"donors": [(conc, energy)]} if kind == "donor" else {"acceptors": [(conc, energy)]}
    sim = freezeout.simulate(material, temperatures=np.array([T23]), **kw)
    return float(sim.n[0] if kind == "donor" else sim.p[0])


# ---------------------------------------------------------------------------------------------
# the ionized fraction


def test_ionized_fraction_matches_the_boltzmann_formula():
    # f = 1 / (1 + g (m / N_c) exp(E_D / kT)) for a non-degenerate donor (S. M. Sze, K. K. Ng,
    # Physics of Semiconductor Devices, 3rd ed., Eq. (1.30) with n = N_c exp(-(E_c-E_F)/kT);
    # from memory). Si at 296.15 K (the tool's masses): N_c = 3.155e19 cm^-3, kT = 25.52 meV;
    # P at 45 meV (C. Kittel, Introduction to Solid State Physics, donor table; from memory),
    # g = 2, m = 9e14: 2 * 9e14 / 3.155e19 = 5.705e-5, exp(45 / 25.52) = 5.832,
    # f = 1 / (1 + 3.327e-4) = 0.999667 (by hand)
    si = get_material("Si")
    kt = float(thermal_energy(T23))
    f_hand = 1.0 / (1.0 + 2.0 * 9e14 / float(si.nc(T23)) * math.exp(0.045 / kt))
    assert f_hand == pytest.approx(0.999667, abs=2e-6)
    f = ionized_fraction(si, "donor", 0.045, 9e14, T23)
    assert f == pytest.approx(f_hand, rel=1e-6)  # Fermi-Dirac ~ Boltzmann at E_F - E_c ~ -10 kT
    # acceptors, g = 4: B at 45 meV, p = 8.955e16; N_v = 1.794e19:
    # 4 * 8.955e16 / 1.794e19 = 0.019967, x 5.832 = 0.11645, f = 1 / 1.11645 = 0.8957 (by hand;
    # Boltzmann, which at E_F - E_v ~ -5.4 kT is within 0.2 % of Fermi-Dirac)
    f = ionized_fraction(si, "acceptor", 0.045, 8.955e16, T23)
    assert f == pytest.approx(0.8957, abs=2e-3)


@pytest.mark.parametrize(("material", "kind", "conc", "energy", "ratio"), [
    # (single-point estimate) / (true net doping) from the tool's own model at 296 K, as the
    # review reported them (own numbers of this program, no outside source)
    ("Si", "acceptor", 1e17, 0.045, 0.90),
    ("Si", "acceptor", 1e18, 0.045, 0.57),
])
def test_fraction_is_the_single_point_shortfall(material, kind, conc, energy, ratio):
    m = simulated_majority(material, kind, conc, energy)
    assert m / conc == pytest.approx(ratio, abs=0.01)
    # the fraction at the measured density is the shortfall of the uncompensated wafer
    assert ionized_fraction(get_material(material), kind, energy, m, T23) == pytest.approx(
        m / conc, rel=1e-6)


def test_check_single_point():
    si = get_material("Si")
    # phosphorus at 9e14: 99.97 % ionized (above) -> the point gives the net doping
    ok = check_single_point(si, "phosphorus", "n", 9e14, T23)
    assert ok.reason is None and ok.fraction > FULL_IONIZATION
    assert "99.97 % ionized" in ok.note()
    # boron at 1e17 (p = 8.955e16): 89.6 % -> cannot
    bad = check_single_point(si, "boron", "p", 8.955e16, T23)
    assert bad.fraction == pytest.approx(0.8957, abs=2e-3)
    assert "only 89.6 % ionized at 296.15 K" in bad.reason
    assert bad.reason.startswith("a single room-temperature point cannot give the net doping "
                                 "here") and bad.reason.endswith("measure a temperature run")
    # no known level: another host, another dopant, or none named
    for mat, dopant, carrier in (("4H-SiC", "nitrogen", "n"), ("GaN", "magnesium", "p"),
                                 ("Si", "arsenic", "n"), ("Si", None, "n")):
        c = check_single_point(get_material(mat), dopant, carrier, 1e17, T23)
        assert c.fraction is None and "knows no ionization energy" in c.reason
    # a claimed dopant of the other type does not supply the majority carriers
    c = check_single_point(si, "boron", "n", 9e14, T23)
    assert "boron makes silicon p-type" in c.reason


# ---------------------------------------------------------------------------------------------
# end to end: freezeout qualify on small synthetic lots


def write_lot(folder: Path, claims: str, wafers: list[tuple[str, str, str]],
              measurement: str = "") -> Path:
    text = ('# synthetic test lot (fictional supplier)\nsupplier = "Kestrel Ridge Wafers"\n'
            'lot = "KRW-TEST-SP"\ndate = 2026-11-20\n\n[decision]\nrule = "guarded"\n'
            + measurement + claims)
    for wid, material, run in wafers:
        text += f'\n[[wafer]]\nid = "{wid}"\nmaterial = "{material}"\nrun = "{run}"\n'
    p = folder / "lot.toml"
    p.write_text(text)
    return p


def point_file(path: Path, header: str, row: list, meta: str = "") -> Path:
    path.write_text("# data: SYNTHETIC test result, not a measurement\n" + meta + header
                    + "\n" + ",".join(str(c) for c in row) + "\n")
    return path


def claim_of(doc, wafer, key):
    w = next(w for w in doc["wafers"] if w["id"] == wafer)
    return next(c for c in w["claims"] if c["claim"] == key)


P_CLAIMS = """
[[claim]]
quantity = "resistivity"
min = 0.1
max = 0.2
unit = "ohm cm"
dopant = "boron"
temperature_K = 296.15

[[claim]]
quantity = "net_doping"
nominal = 1e17
tolerance = "20%"
unit = "cm^-3"
"""


def test_partly_ionized_boron_makes_the_net_doping_indeterminate(monkeypatch, capsys,
                                                                 tmp_path):
    p = simulated_majority("Si", "acceptor", 1e17, 0.045)  # 8.955e16: 89.6 % ionized
    header = "T [K],p [cm^-3],p_err [cm^-3],rho [ohm cm],rho_err [ohm cm]"
    # with a measured resistivity 0.15 +- 0.0015 ohm cm: U = 0.003, margin 0.05/0.003 = 16.7
    point_file(tmp_path / "a.csv", header, [T23, p, 0.015 * p, 0.15, 0.0015])
    point_file(tmp_path / "b.csv", "T [K],p [cm^-3],p_err [cm^-3]", [T23, p, 0.015 * p])
    lot = write_lot(tmp_path, P_CLAIMS, [("A", "Si", "a.csv"), ("B", "Si", "b.csv")])
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json", "--workers", 1)
    assert code == 4, err
    doc = json.loads(out)
    for wafer in ("A", "B"):
        net = claim_of(doc, wafer, "claim[2]")
        assert net["verdict"] == "indeterminate" and net["measured"]["value"] is None
        assert "only 89.6 % ionized at 296.15 K" in net["sentence"]
        assert "measure a temperature run" in net["sentence"]
    # the measured resistivity is unaffected; the F723 conversion of the net doping is not
    rho_a = claim_of(doc, "A", "claim[1]")
    assert (rho_a["verdict"], rho_a["margin_U"]) == ("accept", pytest.approx(16.667, rel=1e-4))
    rho_b = claim_of(doc, "B", "claim[1]")
    assert rho_b["verdict"] == "indeterminate" and "89.6 %" in rho_b["sentence"]


@pytest.mark.parametrize(("material", "dopant", "carrier"), [
    ("4H-SiC", "nitrogen", "n"), ("GaN", "magnesium", "p")])
def test_no_known_level_outside_silicon(monkeypatch, capsys, tmp_path, material, dopant,
                                        carrier):
    claims = (f'\n[[claim]]\nquantity = "net_doping"\nmin = 5e16\nmax = 2e17\nunit = "cm^-3"\n'
              f'dopant = "{dopant}"\n')
    point_file(tmp_path / "r.csv", f"T [K],{carrier} [cm^-3],{carrier}_err [cm^-3]",
               [T23, 1e17, 1e15])
    lot = write_lot(tmp_path, claims, [("W1", material, "r.csv")])
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json")
    assert code == 4, err
    c = claim_of(json.loads(out), "W1", "claim[1]")
    assert c["verdict"] == "indeterminate"
    assert f"no ionization energy for {dopant} in {material}" in c["sentence"]


N_CLAIMS = """
[[claim]]
quantity = "type"
value = "n"

[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = 296.15

[[claim]]
quantity = "net_doping"
nominal = 9e14
tolerance = "30%"
unit = "cm^-3"
"""

REDUCED_META = ("# produced_by: freezeout 0.1.0 reduce\n# thickness: 350 um +- 5 um\n"
                "# material: Si\n")
REDUCED_HEADER = "T [K],rho [ohm cm],rho_err [ohm cm],n [cm^-3],n_err [cm^-3]"


def test_thickness_uncertainty_of_a_reduced_point_is_kept(monkeypatch, capsys, tmp_path):
    # Reduced files (our own `reduce` output) hold the total density uncertainty; the reader
    # splits the thickness part s = 5/350 = 0.0142857 out of it as a common scale.
    # R1: 1.14e15 with 0.5 % point-to-point: total hypot(0.005, 0.0142857) = 0.0151354,
    #     n_err = 1.72544e13; U = 3.45088e13; margin (1.17e15 - 1.14e15)/U = 0.8693:
    #     indeterminate (with the point-to-point part only, U = 1.14e13, it would be +2.63)
    # R2: 1.1e15 whose error is the thickness alone: n_err = 1.1e15 * 0.0142857 = 1.57143e13;
    #     U = 3.14286e13; margin 7e13 / U = 2.2273 (the reader's 1e-6 floor alone would give
    #     U = 2.2e9 and a margin of about +31800)
    point_file(tmp_path / "r1.csv", REDUCED_HEADER, [T23, 5.0, 0.07298, 1.14e15, 1.72544e13],
               REDUCED_META)
    point_file(tmp_path / "r2.csv", REDUCED_HEADER, [T23, 5.0, 0.07298, 1.1e15, 1.571429e13],
               REDUCED_META)
    lot = write_lot(tmp_path, N_CLAIMS, [("R1", "Si", "r1.csv"), ("R2", "Si", "r2.csv")])
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json")
    assert code == 4, err
    doc = json.loads(out)
    r1, r2 = claim_of(doc, "R1", "claim[3]"), claim_of(doc, "R2", "claim[3]")
    assert r1["measured"]["stderr"] == pytest.approx(1.72544e13, rel=1e-5)
    assert (r1["verdict"], r1["margin_U"]) == ("indeterminate", pytest.approx(0.8693, abs=1e-3))
    assert r2["measured"]["stderr"] == pytest.approx(1.57143e13, rel=1e-5)
    assert (r2["verdict"], r2["margin_U"]) == ("accept", pytest.approx(2.2273, abs=1e-3))
    w = next(w for w in doc["wafers"] if w["id"] == "R1")
    assert any("1.43 % common to every point" in n for n in w["notes"])
    # the resistivity's uncertainty is not split by the readers: used whole
    rho = claim_of(doc, "R1", "claim[2]")
    assert rho["measured"] == {"value": 5.0, "stderr": 0.07298}


def test_lot_hall_factor_applies_to_a_single_point(monkeypatch, capsys, tmp_path):
    header = "T [K],n [cm^-3],n_err [cm^-3],rho [ohm cm],rho_err [ohm cm]"
    point_file(tmp_path / "r.csv", header, [T23, 8.0e14, 8.0e12, 5.0, 0.05])
    measurement = "\n[measurement]\nhall_factor = 1.15\nhall_factor_uncertainty = 0.05\n"
    lot = write_lot(tmp_path, N_CLAIMS, [("H1", "Si", "r.csv"), ("H2", "Si", "r.csv")],
                    measurement)
    lot.write_text(lot.read_text().replace(
        'id = "H2"', 'id = "H2"\nhall_factor = 1.0\nhall_factor_uncertainty = 0.0'))
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json")
    assert code == 0, err
    doc = json.loads(out)
    # H1: the file's Hall density 8e14 (r_H = 1) taken with r_H = 1.15: 9.2e14;
    # u_rel = hypot(0.01, 0.05/1.15) = 0.0446135, u = 4.10444e13, U = 8.20888e13;
    # margin (1.17e15 - 9.2e14) / U = 3.0455 (by hand)
    h1 = claim_of(doc, "H1", "claim[3]")
    assert h1["measured"]["value"] == pytest.approx(9.2e14, rel=1e-9)
    assert h1["measured"]["stderr"] == pytest.approx(4.10444e13, rel=1e-5)
    assert h1["margin_U"] == pytest.approx(3.0455, abs=1e-4)
    # the measured resistivity does not involve r_H
    assert claim_of(doc, "H1", "claim[2]")["measured"] == {"value": 5.0, "stderr": 0.05}
    # H2 overrides the lot: r_H = 1 with no uncertainty: 8e14 +- 8e12
    h2 = claim_of(doc, "H2", "claim[3]")
    assert h2["measured"] == {"value": pytest.approx(8.0e14, rel=1e-9),
                              "stderr": pytest.approx(8.0e12, rel=1e-6)}
    wafers = {w["id"]: w for w in doc["wafers"]}
    assert wafers["H1"]["input"]["hall_factor"]["value"] == 1.15
    assert doc["measurement"]["value"] == 1.15


def test_lot_hall_factor_is_passed_to_the_fit_only_when_stated(monkeypatch, capsys, tmp_path):
    from freezeout.api import fits

    seen = []
    real = fits.fit_run_record  # what a wafer's measurement calls on its loaded run

    def recording(*args, **kwargs):
        seen.append(kwargs)
        return real(*args, **kwargs)

    monkeypatch.setattr(fits, "fit_run_record", recording)
    shutil.copy(SAMPLE_RUN, tmp_path / "w.csv")
    lot = write_lot(tmp_path, N_CLAIMS, [("F1", "Si", "w.csv")])
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json", "--workers", 1)
    assert code == 0, err
    assert "hall_factor" not in seen[-1]  # the run's own r_H (the fit's default)
    plain = json.loads(out)

    lot = write_lot(tmp_path, N_CLAIMS, [("F1", "Si", "w.csv")],
                    "\n[measurement]\nhall_factor = 1.15\nhall_factor_uncertainty = 0.05\n")
    code, out, err = cli(monkeypatch, capsys, "qualify", lot, "--json", "--workers", 1)
    assert seen[-1]["hall_factor"] == 1.15
    doc = json.loads(out)
    w = doc["wafers"][0]
    fit_net = w["input"]["fit"]["net_doping_cm3"]
    c = claim_of(doc, "F1", "claim[3]")
    # the densities scale with r_H, so the fitted net doping does, to within what the
    # freeze-out shape moves (N_c is not scaled): about 1.15 x
    assert c["measured"]["value"] == pytest.approx(
        1.15 * claim_of(plain, "F1", "claim[3]")["measured"]["value"], rel=0.02)
    # u = hypot(u_fit, y * 0.05 / 1.15)
    assert c["measured"]["stderr"] == pytest.approx(
        math.hypot(fit_net["stderr"], abs(fit_net["value"]) * 0.05 / 1.15), rel=1e-9)
