"""Generate the synthetic sample runs in sample_data/ (fictional lab, fictional wafers).

Each run is made with freezeout.simulate plus seeded log-normal noise of the stated size,
and says in its header that it is synthetic. Run: python scripts/make_sample_runs.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

import freezeout
from freezeout.io.writers import write_csv
from freezeout.physics.constants import Q

OUT = Path(__file__).resolve().parents[1] / "sample_data"
COMMON = {"lab": "Harrowgate Cryo Lab (fictional)", "data": "SYNTHETIC - made by "
          "scripts/make_sample_runs.py with freezeout simulate plus noise; not a measurement"}


def noisy(values, rel, rng):
    return values * np.exp(rng.normal(0.0, rel, values.size))


def si_wafer(rng):
    sim = freezeout.simulate("Si", donors=[(2.1e15, 0.0455)], acceptors=[(4.0e13, None)],
                             temperatures=(20.0, 650.0, 45))
    n = noisy(sim.n, 0.02, rng)
    meta = {**COMMON, "sample": "HCL-Si-0413 (phosphorus-doped float-zone wafer, fictional)",
            "material": "Si", "carrier": "n", "thickness": "380 um", "field": "0.5 T",
            "operator": "T. Varga (fictional)",
            "truth": "N_D = 2.1e15 cm^-3, E_D = 45.5 meV, N_A = 4.0e13 cm^-3"}
    write_csv(OUT / "harrowgate_si_n_run.csv",
              {"T [K]": sim.temperature, "n [cm^-3]": n, "n_err [cm^-3]": 0.02 * n}, meta)


def gan_epilayer(rng):
    sim = freezeout.simulate("GaN", donors=[(3.0e17, None)], acceptors=[(2.0e19, 0.17)],
                             temperatures=(160.0, 750.0, 36))
    p = noisy(sim.p, 0.03, rng)
    meta = {**COMMON, "sample": "HCL-GaN-E117 (Mg-doped epilayer on sapphire, fictional)",
            "material": "GaN", "thickness": "2.0 um", "field": "1.0 T",
            "truth": "N_A = 2.0e19 cm^-3, E_A = 170 meV (g = 4), N_D = 3.0e17 cm^-3"}
    write_csv(OUT / "harrowgate_gan_p_epilayer.csv",
              {"T (K)": sim.temperature, "p (cm-3)": p, "p_err (cm-3)": 0.03 * p}, meta)


def sic_epilayer(rng):
    sim = freezeout.simulate("4H-SiC", donors=[(3.0e15, 0.052), (5.0e15, 0.092)],
                             acceptors=[(2.0e14, None)], temperatures=(40.0, 800.0, 48))
    n = noisy(sim.n, 0.015, rng)
    r_h = -1.0 / (Q * n * 1e6)  # m^3/C, negative for electrons
    meta = {**COMMON, "sample": "HCL-SiC-N22 (nitrogen-doped 4H epilayer, fictional)",
            "material": "4H-SiC", "thickness": "10 um", "field": "0.8 T",
            "truth": "N_D(h) = 3.0e15 cm^-3 at 52 meV, N_D(k) = 5.0e15 cm^-3 at 92 meV, "
                     "N_A = 2.0e14 cm^-3; fit with --donors 2"}
    write_csv(OUT / "harrowgate_4h_sic_two_site.csv",
              {"Temperature_K": sim.temperature, "R_H [m^3/C]": r_h,
               "R_H_err [m^3/C]": 0.015 * np.abs(r_h)}, meta)


def main() -> None:
    rng = np.random.default_rng(20261201)
    si_wafer(rng)
    gan_epilayer(rng)
    sic_epilayer(rng)
    print(f"wrote sample runs to {OUT}")


if __name__ == "__main__":
    main()
