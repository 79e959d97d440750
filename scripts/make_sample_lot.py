"""Generate the synthetic sample lot in sample_data/lot_kestrel_2026-11/.

SYNTHETIC DATA, fictional scenario: the fictional supplier "Kestrel Ridge Wafers" ships lot
KRW-2611-07 of phosphorus-doped silicon wafers, certified n-type, 4 to 6 ohm cm at 23 degC and
net doping 9e14 cm^-3 +- 30 %; the fictional "Harrowgate Cryo Lab" checks five wafers. Every
run says in its header that it is synthetic.

* W01, W02: full temperature runs (accepted by design);
* W03: a single room-temperature result (n and rho, each with its uncertainty; accepted);
* W04: a full run of a wafer doped about twice too high (clearly out of specification);
* W05: a full run whose net doping converts (ASTM F723) to about 4.1 ohm cm, within the
  expanded uncertainty of the 4 ohm cm limit: indeterminate under the guarded rule.

Full runs are freezeout.simulate output with seeded log-normal noise of the stated relative
size on the density, and that size as the per-point standard uncertainty ``n_err``. The
single-point result's resistivity is the ASTM F723 value of its true doping with 1 % noise
(an invented "measured" value, consistent with the density by construction).

Run: python scripts/make_sample_lot.py (reproducible: seeded numpy Generator).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

import freezeout
from freezeout.claims import silicon
from freezeout.io.atomic import atomic_write_text
from freezeout.io.writers import write_csv

OUT = Path(__file__).resolve().parents[1] / "sample_data" / "lot_kestrel_2026-11"
SEED = 20261103
NOISE = 0.015  # relative standard uncertainty of each density point [1]
COMMON = {
    "lab": "Harrowgate Cryo Lab (fictional)",
    "supplier": "Kestrel Ridge Wafers (fictional)",
    "lot": "KRW-2611-07",
    "data": "SYNTHETIC - made by scripts/make_sample_lot.py with freezeout simulate plus "
            "noise; not a measurement",
    "material": "Si",
    "carrier": "n",
    "thickness": "525 um",
    "field": "0.5 T",
}

# wafer id -> (N_D [cm^-3], E_D [eV], N_A [cm^-3]) of the full temperature runs
FULL_RUNS = {
    "W01": (9.2e14, 0.0455, 1.5e13),   # net 9.05e14 -> F723 about 4.93 ohm cm
    "W02": (8.7e14, 0.0452, 1.0e13),   # net 8.6e14 -> about 5.2 ohm cm
    "W04": (2.15e15, 0.0450, 4.0e13),  # net 2.11e15 -> about 2.2 ohm cm: out of spec
    "W05": (1.115e15, 0.0455, 1.5e13),  # net 1.10e15 -> about 4.09 ohm cm: near 4
}
# the single room-temperature result: true net doping [cm^-3] at 296.15 K
SINGLE = ("W03", 9.6e14)

LOT_TOML = """\
# SYNTHETIC sample lot (fictional scenario), written by scripts/make_sample_lot.py.
# Supplier "Kestrel Ridge Wafers" and lab "Harrowgate Cryo Lab" are fictional; the runs are
# simulated with freezeout plus noise, not measurements.
supplier = "Kestrel Ridge Wafers"
lot = "KRW-2611-07"
date = 2026-11-03
certificate = "KRW-C-55812 (fictional)"
note = "synthetic sample lot; measured (simulated) at Harrowgate Cryo Lab (fictional)"

[decision]
rule = "guarded"
coverage_factor = 2

[[claim]]
quantity = "type"
value = "n"

[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = 296.15      # 23 degC, the reference temperature of ASTM F723
note = "certificate: 4-6 ohm cm at 23 degC"

[[claim]]
quantity = "net_doping"
nominal = 9e14
tolerance = "30%"
unit = "cm^-3"
note = "certificate: 9e14 cm^-3 +- 30 %"

[[wafer]]
id = "W01"
material = "Si"
run = "runs/w01_temperature_run.csv"

[[wafer]]
id = "W02"
material = "Si"
run = "runs/w02_temperature_run.csv"

[[wafer]]
id = "W03"
material = "Si"
run = "runs/w03_room_temperature.csv"
note = "single room-temperature Hall and resistivity result"

[[wafer]]
id = "W04"
material = "Si"
run = "runs/w04_temperature_run.csv"

[[wafer]]
id = "W05"
material = "Si"
run = "runs/w05_temperature_run.csv"
"""


def noisy(values, rel, rng):
    return values * np.exp(rng.normal(0.0, rel, values.size))


def full_run(wafer: str, nd: float, ed: float, na: float, rng) -> None:
    sim = freezeout.simulate("Si", donors=[(nd, ed)], acceptors=[(na, None)],
                             temperatures=(25.0, 600.0, 40))
    n = noisy(sim.n, NOISE, rng)
    meta = {**COMMON, "sample": f"KRW-2611-07-{wafer} (fictional)",
            "truth": f"N_D = {nd:.4g} cm^-3, E_D = {1e3 * ed:g} meV, N_A = {na:.4g} cm^-3"}
    write_csv(OUT / "runs" / f"{wafer.lower()}_temperature_run.csv",
              {"T [K]": sim.temperature, "n [cm^-3]": n, "n_err [cm^-3]": NOISE * n}, meta)


def single_point(wafer: str, net: float, rng, out: Path = OUT, lot: str = "KRW-2611-07"
                 ) -> None:
    t = silicon.REFERENCE_TEMPERATURE_K
    n = float(noisy(np.array([net]), NOISE, rng)[0])
    rho_true = float(silicon.resistivity_from_dopant_density(net, "phosphorus"))
    rho = float(noisy(np.array([rho_true]), 0.01, rng)[0])
    meta = {**COMMON, "lot": lot, "sample": f"{lot}-{wafer} (fictional)",
            "note": "single room-temperature result (Hall and van der Pauw at 23 degC)",
            "truth": f"N_D - N_A = {net:.4g} cm^-3; rho from ASTM F723 of it, +-1 % noise"}
    write_csv(out / "runs" / f"{wafer.lower()}_room_temperature.csv",
              {"T [K]": np.array([t]), "n [cm^-3]": np.array([n]),
               "n_err [cm^-3]": np.array([NOISE * n]), "rho [ohm cm]": np.array([rho]),
               "rho_err [ohm cm]": np.array([0.01 * rho])}, meta)


def main() -> None:
    rng = np.random.default_rng(SEED)
    for wafer, (nd, ed, na) in FULL_RUNS.items():
        full_run(wafer, nd, ed, na, rng)
    single_point(*SINGLE, rng)
    atomic_write_text(OUT / "lot.toml", LOT_TOML)
    print(f"wrote the sample lot to {OUT}")


if __name__ == "__main__":
    main()
