"""Snapshot of density-only fit results, to check that a speed change leaves them alone.

``python benchmarks/fit_snapshot.py write FILE`` fits a fixed set of runs (the bundled sample
runs and seeded synthetic ones: one to four levels, weighted and unweighted, a temperature
uncertainty, Boltzmann statistics, held and bounded parameters) and writes every fit's JSON
document (without the data arrays) to FILE; ``compare FILE`` fits them again and prints the
largest differences from FILE: relative for values, standard errors and interval ends (and
absolute for correlations), the warnings and interval methods compared as text.

Run before a change (``write``) and after it (``compare``); a few minutes.
"""

from __future__ import annotations

import json
import math
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

import freezeout.api as api
from freezeout.fitting.fit import fit_run
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_data"


def _synthetic(material: str, donors, acceptors, t_range, seed: int, noise: float = 0.02,
               weighted: bool = True, carrier: str = "n") -> RunData:
    sim = api.simulate(material, donors=donors, acceptors=acceptors, temperatures=t_range)
    rng = np.random.default_rng(seed)
    dens = sim.n if carrier == "n" else sim.p
    d = dens * np.exp(rng.normal(0.0, noise, dens.size))
    return RunData(f"snap-{seed}", "0", sim.temperature, d, noise * d if weighted else None,
                   carrier, (carrier,) * d.size)


def cases() -> dict:
    """Name -> a function giving the FitResult of that case."""
    si, sic = get_material("Si"), get_material("4H-SiC")
    one = _synthetic("Si", [(1e16, 0.045)], [(1e14, None)], (20.0, 600.0, 45), 45)
    unweighted = _synthetic("Si", [(3e15, 0.045)], [(5e13, None)], (25.0, 500.0, 40), 7,
                            weighted=False)
    t_err = replace(one, temperature_err=np.full(one.temperature.size, 0.3))
    heavy = _synthetic("Si", [(1e16, 0.045)], [(6e15, None)], (20.0, 500.0, 40), 11)
    three = _synthetic("4H-SiC", [(5e15, 0.05), (8e15, 0.1), (3e15, 0.2)], [(2e14, None)],
                       (30.0, 800.0, 50), 3)
    four = _synthetic("4H-SiC", [(4e15, 0.05), (6e15, 0.09), (3e15, 0.16), (2e15, 0.3)],
                      [(1e14, None)], (30.0, 900.0, 60), 4)
    p_type = _synthetic("Si", [(2e14, None)], [(5e16, 0.045)], (20.0, 500.0, 40), 5,
                        carrier="p")
    return {
        "si_sample": lambda: api.fit_file(SAMPLES / "harrowgate_si_n_run.csv"),
        "sic_sample_2": lambda: api.fit_file(SAMPLES / "harrowgate_4h_sic_two_site.csv",
                                             material="4H-SiC", donors=2),
        "gan_sample": lambda: api.fit_file(SAMPLES / "harrowgate_gan_p_epilayer.csv"),
        "one_level": lambda: fit_run(one, si),
        "one_boltzmann": lambda: fit_run(one, si, statistics="boltzmann"),
        "one_uncompensated": lambda: fit_run(one, si, acceptors=0),
        "one_fixed": lambda: fit_run(one, si, fix={"E_D1": 0.046}),
        "one_bounded": lambda: fit_run(one, si, bounds={"N_A": (1e12, 5e13)}),
        "unweighted": lambda: fit_run(unweighted, si),
        "temperature_err": lambda: fit_run(t_err, si),
        "heavy": lambda: fit_run(heavy, si),
        "p_type": lambda: fit_run(p_type, si),
        "two_level": lambda: fit_run(three, sic, donors=2),
        "three_level": lambda: fit_run(three, sic, donors=3),
        "four_level": lambda: fit_run(four, sic, donors=4),
    }


def snapshot() -> dict:
    out = {}
    for name, fn in cases().items():
        t0 = time.perf_counter()
        doc = fn().to_dict()
        for key in ("data", "provenance", "spectroscopy", "model_selection"):
            doc.pop(key, None)  # inputs, and what the fit does not compute
        out[name] = doc
        print(f"  {name}: {1e3 * (time.perf_counter() - t0):.0f} ms", file=sys.stderr)
    return out


def _diffs(a, b, path: str, found: list) -> None:
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k not in a or k not in b:
                found.append((math.inf, f"{path}.{k}", "missing on one side"))
            else:
                _diffs(a[k], b[k], f"{path}.{k}", found)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            found.append((math.inf, path, f"lengths {len(a)} != {len(b)}"))
        for i, (x, y) in enumerate(zip(a, b, strict=False)):
            _diffs(x, y, f"{path}[{i}]", found)
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) and not isinstance(
            a, bool):
        if "correlation" in path:
            d = abs(a - b)
        else:
            d = abs(a - b) / max(abs(a), abs(b), 1e-300) if a != b else 0.0
        found.append((d, path, f"{a!r} -> {b!r}"))
    elif a != b:
        found.append((math.inf, path, f"{a!r} -> {b!r}"))


def main() -> None:
    if len(sys.argv) != 3 or sys.argv[1] not in ("write", "compare"):
        sys.exit("usage: fit_snapshot.py write|compare FILE")
    path = Path(sys.argv[2])
    now = snapshot()
    if sys.argv[1] == "write":
        path.write_text(json.dumps(now, indent=1))
        return
    before = json.loads(path.read_text())
    for name in before:
        found: list = []
        _diffs(before[name], now.get(name), name, found)
        found.sort(key=lambda f: -f[0])
        worst = found[0] if found else (0.0, name, "")
        print(f"{name}: largest difference {worst[0]:.3g} at {worst[1]} {worst[2]}")
        for d, p, text in found[1:6]:
            if d > 1e-6:
                print(f"    {d:.3g} at {p} {text}")


if __name__ == "__main__":
    main()
