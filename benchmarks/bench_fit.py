"""Speed of the model and of a complete fit, against the same fit done the plain way.

The problem: 45 points from 20 K to 600 K of an n-type silicon run (one donor level plus a
fully ionized compensating acceptor, Fermi-Dirac statistics), 2 % log-normal noise, seeded.

* freezeout: one model evaluation (cold start and warm start) and one complete fit
  (data-driven guess, vectorized global stage, lmfit local fit, uncertainties, warnings),
  each the median of repeated runs in this process.
* plain way: per temperature a scipy.optimize.brentq root of the neutrality equation, F_1/2
  by scipy.integrate.quad, and scipy.optimize.least_squares over (log10 N_D, E_D, log10 N_A)
  from the same starting values freezeout's guess gives (no multi-start: the comparison
  favours the plain way).

Run: python benchmarks/bench_fit.py   (about a minute; prints the figures)
"""

from __future__ import annotations

import math
import statistics
import time

import numpy as np
from scipy import integrate, optimize

import freezeout
from freezeout.fitting.fit import fit_run, guess
from freezeout.fitting.model import CarrierModel
from freezeout.physics.constants import K_B_EV
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData

SI = get_material("Si")
TRUE = {"N_D": 1e16, "E_D": 0.045, "N_A": 1e14}


def make_run() -> RunData:
    sim = freezeout.simulate("Si", donors=[(TRUE["N_D"], TRUE["E_D"])],
                             acceptors=[(TRUE["N_A"], None)], temperatures=(20.0, 600.0, 45))
    rng = np.random.default_rng(45)
    n = sim.n * np.exp(rng.normal(0, 0.02, sim.n.size))
    return RunData("bench", "0", sim.temperature, n, 0.02 * n, "n", ("n",) * n.size)


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


# ---- the plain way -----------------------------------------------------------------------
def f_half_quad(eta: float) -> float:
    val, _ = integrate.quad(lambda x: math.sqrt(x) / (1.0 + math.exp(min(x - eta, 700.0))),
                            0.0, max(eta, 0.0) + 60.0, limit=200)
    return 2.0 / math.sqrt(math.pi) * val


def plain_log_n(t_arr, nd, ed, na):
    out = []
    for t in t_arr:
        kt = K_B_EV * t
        eg = float(SI.band_gap(t))
        nc, nv = float(SI.nc(t)), float(SI.nv(t))

        def balance(ef, kt=kt, eg=eg, nc=nc, nv=nv):  # ef = E_F - E_v [eV], scaled charge
            n = nc * f_half_quad((ef - eg) / kt)
            p = nv * f_half_quad(-ef / kt)
            ndp = nd / (1.0 + 2.0 * math.exp(min((ef - (eg - ed)) / kt, 700.0)))
            return (p + ndp - n - na) / (nd + na)

        ef = optimize.brentq(balance, -0.5, eg + 0.5, xtol=1e-14, rtol=1e-13)
        out.append(math.log(nc * f_half_quad((ef - eg) / kt)))
    return np.array(out)


def plain_fit(run: RunData, start):
    y = np.log(run.density)
    sig = run.density_err / run.density

    def resid(x):
        return (plain_log_n(run.temperature, 10 ** x[0], x[1], 10 ** x[2]) - y) / sig

    return optimize.least_squares(resid, start, method="trf",
                                  bounds=([8, 1e-4, 8], [22, 1.0, 22]))


def fermi_rate() -> tuple[float, float]:
    """Values of F_1/2 per second on 1e6 points: uniform in [-100, 200] and in [-2, 26]."""
    from freezeout.physics.fermi import fermi_dirac_half

    rng = np.random.default_rng(0)
    wide = rng.uniform(-100, 200, 1_000_000)
    mid = rng.uniform(-2, 26, 1_000_000)
    fermi_dirac_half(wide[:10])
    return (1e6 / median_time(lambda: fermi_dirac_half(wide), 5),
            1e6 / median_time(lambda: fermi_dirac_half(mid), 5))


def main() -> None:
    rate_wide, rate_mid = fermi_rate()
    run = make_run()
    model = CarrierModel(SI, run.temperature, "n", 1, True)
    values = {"log10_N_D1": 16.0, "E_D1": 0.045, "log10_N_A": 14.0}
    model.log_density(values, warm=False)
    cold = median_time(lambda: model.log_density(values, warm=False), 200)
    warm_values = {"log10_N_D1": 16.0 + 1e-7, "E_D1": 0.045, "log10_N_A": 14.0}
    warm = median_time(lambda: model.log_density(warm_values, warm=True), 200)
    fit_run(run, SI)
    fit_time = median_time(lambda: fit_run(run, SI), 30)
    res = fit_run(run, SI)

    g = guess(run.temperature, run.density, SI)
    start = np.array([math.log10(g["net_doping"] / 0.99), g["energy"],
                      math.log10(0.01 * g["net_doping"])])
    t0 = time.perf_counter()
    plain = plain_fit(run, start)
    plain_time = time.perf_counter() - t0
    print("freezeout benchmark (45 points, one donor + compensation, Fermi-Dirac)")
    print(f"  F_1/2: {rate_wide:.3g} values/s on [-100, 200], {rate_mid:.3g} values/s on "
          "[-2, 26] (target >= 1e6)")
    print(f"  model evaluation, cold start:   {cold * 1e6:8.0f} us")
    print(f"  model evaluation, warm start:   {warm * 1e6:8.0f} us")
    print(f"  complete fit (median of 30):    {fit_time * 1e3:8.1f} ms   "
          f"E_D = {res.levels[0].energy.value * 1e3:.2f} meV, "
          f"N_D = {res.levels[0].concentration.value:.3e} cm^-3, "
          f"N_A = {res.levels[1].concentration.value:.3e} cm^-3")
    print(f"  plain way (brentq+quad+least_squares): {plain_time:8.2f} s   "
          f"E_D = {plain.x[1] * 1e3:.2f} meV, N_D = {10 ** plain.x[0]:.3e} cm^-3, "
          f"N_A = {10 ** plain.x[2]:.3e} cm^-3, {plain.nfev} evaluations")
    print(f"  speed-up: {plain_time / fit_time:8.0f}x   (target: fit <= 30 ms and >= 100x)")


if __name__ == "__main__":
    main()
