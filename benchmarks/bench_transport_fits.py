"""Speed of the fits that use the resistivity beside the Hall data, 50 points each.

- joint fit of ln n and ln mu_H (``fit --mobility lattice+brooks-herring``) on an n-type Si
  run of the fictional Harrowgate lab;
- two-carrier fit of R_H(T) and rho(T) (``fit --carriers both``) on a p-type Ge run through
  the Hall sign reversal.

- the same two-carrier fit on the real Al-doped Ge sweep of sample_data/ge_al_mixed_conduction
  (56 points, E_A held at 10.2 meV as in tests/test_ge_two_carrier.py), whose R_H the model
  misses by about 60 % rms, so that its optimizer takes more steps.

Each is timed whole (the density-only start fit included) and, separately, without its
start (``base=`` given), in-process, median and minimum of 5 repeats after one warm-up.

Run: python benchmarks/bench_transport_fits.py
"""

from __future__ import annotations

import statistics
import time
from pathlib import Path

import numpy as np

from freezeout import api
from freezeout.fitting.fit import fit_run
from freezeout.fitting.joint import fit_run_joint
from freezeout.fitting.two_carrier import fit_run_two_carrier
from freezeout.physics.constants import Q
from freezeout.records.run import RunData

MECHANISMS = "lattice+brooks-herring"
GE_RUN = (Path(__file__).resolve().parents[1] / "sample_data" / "ge_al_mixed_conduction"
          / "ge_al_900uA.csv")


def _joint_run() -> RunData:
    t = np.sort(1000.0 / np.linspace(1000.0 / 30.0, 1000.0 / 400.0, 50))
    sim = api.simulate(material="Si", donors=[(1e16, 0.045, None)],
                       acceptors=[(2e14, None, None)], temperatures=t, mobility=MECHANISMS,
                       lattice_mu300=1400.0, lattice_exponent=2.4)
    tr = sim.transport
    rng = np.random.default_rng(5)
    rh = np.abs(tr.hall_coefficient) * (1 + 0.02 * rng.standard_normal(t.size))
    rho = tr.resistivity * (1 + 0.01 * rng.standard_normal(t.size))
    dens = 1.0 / (Q * rh)
    return RunData("harrowgate-si-joint.csv", "0" * 64, t, dens, 0.02 * dens, "n",
                   ("n",) * t.size, resistivity=rho, resistivity_err=0.01 * rho,
                   hall_coefficient=-rh, hall_coefficient_err=0.02 * rh)


def _two_carrier_run() -> RunData:
    t = np.linspace(30.0, 450.0, 50)
    tr = api.simulate(material="Ge", acceptors=[(5e13, 0.011, None)],
                      donors=[(1e13, None, None)], temperatures=t, mobility=MECHANISMS,
                      lattice_mu300=1900.0, lattice_exponent=2.33, minority_mu300=3900.0,
                      minority_exponent=1.66).transport
    rng = np.random.default_rng(5)
    floor = 0.05 * tr.resistivity * np.median(np.abs(tr.hall_coefficient) / tr.resistivity)
    s_r = 0.02 * np.sqrt(tr.hall_coefficient**2 + floor**2)
    rh = tr.hall_coefficient + s_r * rng.standard_normal(t.size)
    rho = tr.resistivity * np.exp(0.01 * rng.standard_normal(t.size))
    return RunData("harrowgate-ge-two.csv", "0" * 64, t, 1.0 / (Q * np.abs(rh)), None, "p",
                   tuple("p" if r > 0 else "n" for r in rh), resistivity=rho,
                   resistivity_err=0.01 * rho, hall_coefficient=rh, hall_coefficient_err=s_r)


def _time(fn, repeats: int = 5) -> tuple[float, float]:
    fn()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), min(times)


def main() -> None:
    si, ge = api.load_material("Si"), api.load_material("Ge")
    joint_run, two_run = _joint_run(), _two_carrier_run()
    base_joint = fit_run(joint_run, si)
    base_two = fit_run(two_run, ge, start_only=True)
    rows = {
        "joint fit, whole (50 pts)": lambda: fit_run_joint(joint_run, si, mobility=MECHANISMS),
        "joint fit, start given (50 pts)": lambda: fit_run_joint(joint_run, si, mobility=MECHANISMS,
                                                        base=base_joint),
        "two-carrier fit, whole (50 pts)": lambda: fit_run_two_carrier(two_run, ge,
                                                              mobility=MECHANISMS),
        "two-carrier fit, start given (50 pts)": lambda: fit_run_two_carrier(
            two_run, ge, mobility=MECHANISMS, base=base_two),
    }
    if GE_RUN.exists():
        real = api.load_run(GE_RUN)
        rows["two-carrier fit, real Ge (56 pts)"] = lambda: fit_run_two_carrier(
            real, ge, mobility=MECHANISMS, fix={"E_A1": 0.0102})
    for name, fn in rows.items():
        med, low = _time(fn)
        print(f"{name:38s} median {med * 1e3:7.1f} ms   min {low * 1e3:7.1f} ms")


if __name__ == "__main__":
    main()
