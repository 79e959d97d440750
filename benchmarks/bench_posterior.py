"""Speed of the posterior sampling: an MCMC of 50,000 model evaluations on the silicon run.

The density fit of ``sample_data/harrowgate_si_n_run.csv`` (one donor level plus
compensation, Fermi-Dirac statistics, 45 points, weighted) is done once, then
``sample_posterior`` runs 64 walkers x 781 steps (64 x 782 = 50,048 evaluations with the
starting ensemble), walkers evaluated together in one vectorized neutrality solve per
half-ensemble. Goal: at most 5 s. Also shown: the default chain (64 x 1000), its
autocorrelation time and the cost per independent sample.

Each figure is the median and the minimum over repeats (wall-clock; the machine may be
shared, so the minimum is the better estimate of the cost).

Run: python benchmarks/bench_posterior.py [--repeat N]   (about half a minute)
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import freezeout.api as api
from freezeout.api.fits import fit_run_record
from freezeout.fitting.posterior import DEFAULT_STEPS, DEFAULT_WALKERS, sample_posterior

ROOT = Path(__file__).resolve().parents[1]
SI_RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"
GOAL_S = 5.0


def _time(fn, repeat: int) -> tuple[float, float, object]:
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), min(times), out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    run = api.load_run(SI_RUN)
    result = fit_run_record(run, input_name=SI_RUN.name, input_path=str(SI_RUN))
    walkers, steps = 64, 50_000 // 64
    sample_posterior(result, run, steps=20, walkers=walkers)  # warm-up, not counted
    med, low, post = _time(lambda: sample_posterior(result, run, steps=steps, walkers=walkers),
                           args.repeat)
    evals = post.to_dict()["model_evaluations"]
    verdict = "meets" if low <= GOAL_S else "misses"
    print(f"MCMC of {evals} evaluations ({walkers} walkers x {steps} steps): median "
          f"{med:.2f} s, min {low:.2f} s ({1e6 * low / evals:.0f} us per evaluation); "
          f"goal <= {GOAL_S:g} s: {verdict}")
    med, low, post = _time(lambda: sample_posterior(result, run), args.repeat)
    d = post.to_dict()
    tau = max(d["autocorr_time_steps"].values())
    print(f"default chain ({DEFAULT_WALKERS} walkers x {DEFAULT_STEPS} steps): median "
          f"{med:.2f} s, min {low:.2f} s; tau_max {tau:.3g} steps, "
          f"{d['effective_samples']:.0f} independent samples "
          f"({1e3 * low / d['effective_samples']:.2f} ms each), acceptance "
          f"{d['acceptance_fraction']:.2f}")


if __name__ == "__main__":
    main()
