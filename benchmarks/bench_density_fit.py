"""Speed of the density-only fit: the bundled silicon run, a 3-level run, one model evaluation.

* bundled silicon fit: ``fit_run`` of ``sample_data/harrowgate_si_n_run.csv`` (one donor
  level plus compensation, Fermi-Dirac statistics, 45 points, weighted): guess, global stage,
  local fits, intervals, warnings; and the whole in-process ``freezeout.api.fit_file`` call
  (reading the file and what the API adds to the fit), and the level spectrum it adds;
* 3-level fit: ``fit_run`` of a synthetic n-type 4H-SiC run from ``freezeout.api.simulate``
  (three donor levels and a compensating acceptor, 50 points from 30 K to 800 K, 2 %
  log-normal noise, seeded; fictional Harrowgate sample), ``donors=3``;
* model evaluation: ``CarrierModel.log_density`` of the silicon model on 50 temperatures,
  from a cold start and from a warm start (the previous solution, a parameter moved by 1e-7).

Each figure is the median and the minimum over repeats in this process (the first call, which
loads tables and warms caches, is not counted). The neutrality solve runs on the compiled
kernel where it was built (the default); ``--kernel numpy`` times the numpy path instead,
``--kernel both`` one after the other.

Run: python benchmarks/bench_density_fit.py [--repeat N] [--kernel compiled|numpy|both]
(about half a minute a kernel)
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import numpy as np

import freezeout.api as api
from freezeout.fitting.fit import fit_run
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.spectroscopy import fit_spectrum
from freezeout.io.reduced_csv_reader import read_reduced_csv
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality_kernel import active_kernel, use_kernel
from freezeout.records.run import RunData

ROOT = Path(__file__).resolve().parents[1]
SI_RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"

#: The 3-level run (fictional Harrowgate 4H-SiC epilayer; project choice, no source).
THREE_LEVELS = [(5e15, 0.05), (8e15, 0.1), (3e15, 0.2)]
THREE_COMPENSATION = 2e14


def three_level_run() -> RunData:
    """A synthetic n-type 4H-SiC run with three donor levels, 2 % noise, seeded."""
    sim = api.simulate("4H-SiC", donors=THREE_LEVELS, acceptors=[(THREE_COMPENSATION, None)],
                       temperatures=(30.0, 800.0, 50))
    rng = np.random.default_rng(3)
    n = sim.n * np.exp(rng.normal(0.0, 0.02, sim.n.size))
    return RunData("bench-3-level", "0", sim.temperature, n, 0.02 * n, "n", ("n",) * n.size)


def timings(fn, repeat: int) -> tuple[float, float]:
    """(median, min) seconds of ``fn()`` over ``repeat`` calls after one uncounted call."""
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=20, help="repeats of each fit")
    parser.add_argument("--kernel", choices=("compiled", "numpy", "both"), default=None,
                        help="the neutrality solve's path (default: the installed default)")
    args = parser.parse_args()
    kernels = (("compiled", "numpy") if args.kernel == "both"
               else (args.kernel or active_kernel(),))
    for kernel in kernels:
        with use_kernel(kernel):
            measure(max(args.repeat, 1), kernel)


def measure(rep: int, kernel: str) -> None:
    """Time the fits and evaluations with the named kernel and print the figures."""

    si_run = read_reduced_csv(SI_RUN)
    si_material = get_material("Si")
    si = fit_run(si_run, si_material)
    si_med, si_min = timings(lambda: fit_run(si_run, si_material), rep)
    file_med, file_min = timings(lambda: api.fit_file(SI_RUN), rep)
    spec_med, spec_min = timings(lambda: fit_spectrum(si), rep)

    run3 = three_level_run()
    sic = get_material("4H-SiC")
    res3 = fit_run(run3, sic, donors=3)
    t3_med, t3_min = timings(lambda: fit_run(run3, sic, donors=3), max(rep // 4, 3))

    material = get_material("Si")
    temps = np.linspace(20.0, 600.0, 50)
    model = CarrierModel(material, temps, "n", 1, True)
    values = {"log10_N_D1": 15.3, "E_D1": 0.0455, "log10_N_A": 13.6}
    cold_med, cold_min = timings(lambda: model.log_density(values, warm=False), 50 * rep)
    model.log_density(values)
    nudged = dict(values, log10_N_D1=values["log10_N_D1"] + 1e-7)
    warm_med, warm_min = timings(lambda: model.log_density(nudged, warm=True), 50 * rep)

    lv = si.levels
    print(f"freezeout density-only fit benchmark (neutrality kernel: {kernel})")
    print(f"  bundled silicon fit (fit_run, 45 points, 1 donor + N_A):"
          f"   median {si_med * 1e3:7.2f} ms   min {si_min * 1e3:7.2f} ms")
    print(f"  the same through freezeout.api.fit_file:"
          f"                   median {file_med * 1e3:7.2f} ms   min {file_min * 1e3:7.2f} ms")
    print(f"  its level spectrum (fit_spectrum, part of fit_file):"
          f"       median {spec_med * 1e3:7.2f} ms   min {spec_min * 1e3:7.2f} ms")
    print(f"      E_D = {lv[0].energy.value * 1e3:.3f} meV, N_D = "
          f"{lv[0].concentration.value:.4e}, N_A = {lv[1].concentration.value:.4e} cm^-3, "
          f"chi2 = {si.chi2:.4f}")
    print(f"  3-level fit (fit_run, 50 points, 3 donors + N_A):"
          f"          median {t3_med * 1e3:7.2f} ms   min {t3_min * 1e3:7.2f} ms")
    print("      E_D = " + ", ".join(f"{x.energy.value * 1e3:.2f}" for x in res3.levels[:3])
          + f" meV, chi2 = {res3.chi2:.4f}")
    print(f"  model evaluation, 50 points, cold start:"
          f"                   median {cold_med * 1e6:7.1f} us   min {cold_min * 1e6:7.1f} us")
    print(f"  model evaluation, 50 points, warm start:"
          f"                   median {warm_med * 1e6:7.1f} us   min {warm_min * 1e6:7.1f} us")


if __name__ == "__main__":
    main()
