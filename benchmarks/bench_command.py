"""Speed of the fit command end to end, and of the fit report's figures.

* ``freezeout fit sample_data/harrowgate_si_n_run.csv -m Si --json``: the whole command in a
  new process each time (interpreter start, imports, reading, fit, the history record, the
  JSON on stdout), with its history in a throwaway SQLite file (``--db``); and the same with
  ``--no-history``, which shows what storing the record costs. Goal: 0.8 s.
  For comparison, the command writing its report (``-o`` a temporary folder, ``--no-history``).
* the fit report's figures: ``freezeout.reporting.fit_report.figure_files`` (every PNG of
  the report of that fit: density, residuals, Fermi level, ionization, level spectrum), in
  this process, after the fit, as the command draws them (a forked helper on a machine with
  two CPUs, ``reporting/figure_workers.py``) and drawn here alone (``workers=1``). The first
  call is shown apart (the first figures of a process load fonts and matplotlib's caches);
  the median and minimum are over the calls after it. Goal: 0.3 s.

Each figure is the median and the minimum over ``--repeat`` runs (the command's first run,
which writes byte-code caches, is not counted). The commands run as a user's shell runs them:
without ``PYTHONDONTWRITEBYTECODE``, which some sandboxes set and which makes Python compile
every module of an editable install anew at each start (about 70 ms more here).

Run: python benchmarks/bench_command.py [--repeat N]   (about half a minute)
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SI_RUN = ROOT / "sample_data" / "harrowgate_si_n_run.csv"
COMMAND_GOAL_S = 0.8
FIGURES_GOAL_S = 0.3


def freezeout_command() -> list[str]:
    """The installed ``freezeout`` script beside this interpreter, else ``python -m``."""
    script = Path(sys.executable).with_name("freezeout")
    if script.exists():
        return [str(script)]
    found = shutil.which("freezeout")
    return [found] if found else [sys.executable, "-m", "freezeout.cli.app"]


def command_timings(args: list[str], repeat: int) -> tuple[float, float]:
    """(median, min) wall seconds of running ``args`` to completion, after one uncounted run."""
    times = []
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    for i in range(repeat + 1):
        t0 = time.perf_counter()
        done = subprocess.run(args, capture_output=True, text=True, cwd=ROOT, env=env)
        elapsed = time.perf_counter() - t0
        if done.returncode != 0:
            raise SystemExit(f"{' '.join(args)} failed ({done.returncode}): {done.stderr}")
        if i:
            times.append(elapsed)
    return statistics.median(times), min(times)


def figure_timings(repeat: int, workers: int | None = None
                   ) -> tuple[float, float, float, list[str]]:
    """(first, median, min) seconds of the report figures of the silicon fit, and their names."""
    import freezeout.api as api
    from freezeout.fitting.curves import model_curves
    from freezeout.reporting.fit_report import figure_files

    result = api.fit_file(SI_RUN, material="Si")
    curves = model_curves(result)
    t0 = time.perf_counter()
    names = list(figure_files(result, curves, workers=workers))
    first = time.perf_counter() - t0
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        figure_files(result, curves, workers=workers)
        times.append(time.perf_counter() - t0)
    return first, statistics.median(times), min(times), names


def line(label: str, med: float, low: float, goal: float) -> str:
    verdict = "met" if med <= goal else "not met"
    return (f"  {label:<44} median {med:6.3f} s   min {low:6.3f} s   goal {goal:.1f} s "
            f"({verdict})")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7, help="runs of each measurement")
    rep = max(parser.parse_args().repeat, 1)

    base = [*freezeout_command(), "fit", str(SI_RUN), "-m", "Si", "--json"]
    with tempfile.TemporaryDirectory() as tmp:
        db = f"sqlite:///{os.path.join(tmp, 'history.db')}"
        cmd_med, cmd_min = command_timings([*base, "--db", db], rep)
    bare_med, bare_min = command_timings([*base, "--no-history"], rep)
    with tempfile.TemporaryDirectory() as tmp:
        report = [*freezeout_command(), "fit", str(SI_RUN), "-m", "Si", "--no-history", "-o",
                  os.path.join(tmp, "report")]
        rep_med, rep_min = command_timings(report, rep)
    first, fig_med, fig_min, names = figure_timings(rep)
    first1, one_med, one_min, _ = figure_timings(rep, workers=1)

    print(f"freezeout command benchmark ({os.cpu_count()} CPUs)")
    print(line("fit RUN -m Si --json (history in a temp file)", cmd_med, cmd_min,
               COMMAND_GOAL_S))
    print(line("fit RUN -m Si --json --no-history", bare_med, bare_min, COMMAND_GOAL_S))
    print(f"  {'fit RUN -m Si -o DIR --no-history (report)':<44} median {rep_med:6.3f} s   "
          f"min {rep_min:6.3f} s")
    print(line(f"report figures ({len(names)} PNG), as the command draws", fig_med, fig_min,
               FIGURES_GOAL_S))
    print(line("report figures, this process alone", one_med, one_min, FIGURES_GOAL_S))
    print(f"      first call in the process {first:.3f} s (alone {first1:.3f} s); "
          + ", ".join(names))


if __name__ == "__main__":
    main()
