"""Mobility and Hall-factor evaluation speed: lattice + Brooks-Herring + neutral impurity and
r_H at 50 temperatures (the joint fit calls this once per model evaluation).

Run: python benchmarks/bench_mobility.py
"""

from __future__ import annotations

import timeit

import numpy as np

from freezeout.physics import hall_factor as hf
from freezeout.physics import mobility as mob


def main() -> None:
    t = np.linspace(20.0, 400.0, 50)
    nd = np.full_like(t, 1e16)
    exponents = [hf.LATTICE_EXPONENT, hf.IONIZED_IMPURITY_EXPONENT,
                 hf.NEUTRAL_IMPURITY_EXPONENT]

    def evaluate():
        mu_l = mob.lattice_mobility(t, 1400.0, 2.4)
        mu_i = mob.brooks_herring_mobility(t, 2e16, nd, 0.26, 11.7)
        mu_n = mob.erginsoy_mobility(nd, 0.26, 11.7)
        return hf.scattering_average([mu_l, mu_i, mu_n], exponents)

    evaluate()
    per_call = min(timeit.repeat(evaluate, number=50, repeat=7)) / 50
    print(f"mobilities + r_H at 50 temperatures: {per_call * 1e6:.0f} us per call")


if __name__ == "__main__":
    main()
