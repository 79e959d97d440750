"""Figures drawn with a forked helper (reporting/figure_workers.py) are the serial ones.

No outside reference: the check is that the two ways of drawing give byte-identical files,
and that what the helper fails to deliver is drawn by the calling process (project choice,
no source).
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from matplotlib.figure import Figure

from freezeout.api import fit_file
from freezeout.reporting import figure_workers
from freezeout.reporting.fit_report import figure_files

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"
needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no os.fork here")


def _line(slope: float):
    """A drawing of a small figure: one line of the given slope."""
    def draw():
        fig = Figure(figsize=(2.0, 1.5), layout="constrained")
        ax = fig.add_subplot()
        ax.plot([0.0, 1.0], [0.0, slope])
        ax.set_title(f"slope {slope:g}")
        return fig
    return draw


def _jobs():
    return [(f"line{i}", _line(i + 1.0)) for i in range(5)] + [("empty", lambda: None)]


@needs_fork
def test_forked_drawing_gives_the_serial_bytes():
    serial = figure_workers.render_figures(_jobs(), svg=True, workers=1)
    forked = figure_workers.render_figures(_jobs(), svg=True, workers=2)
    assert list(serial) == [f"line{i}" for i in range(5)]  # the empty drawing is left out
    assert list(forked) == list(serial)
    for stem, (png, svg) in serial.items():
        assert png.startswith(b"\x89PNG")
        assert forked[stem][0] == png
        assert svg is not None and forked[stem][1] is not None


@needs_fork
def test_what_the_helper_fails_to_draw_is_drawn_here():
    parent = os.getpid()

    def only_here():
        if os.getpid() != parent:
            raise RuntimeError("helper failure")
        return _line(9.0)()

    jobs = [*_jobs(), ("picky", only_here)]
    forked = figure_workers.render_figures(jobs, workers=2)
    assert forked["picky"][0] == figure_workers.render_figures([jobs[-1]], workers=1)[
        "picky"][0]
    assert set(forked) == {*(f"line{i}" for i in range(5)), "picky"}


@needs_fork
def test_a_drawing_that_fails_everywhere_raises_here():
    def broken():
        raise ValueError("cannot draw")

    with pytest.raises(ValueError, match="cannot draw"):
        figure_workers.render_figures([*_jobs(), ("broken", broken)], workers=2)


@needs_fork
def test_report_figures_same_with_and_without_the_helper():
    result = fit_file(SAMPLE, material="Si")
    serial = figure_files(result, workers=1)
    forked = figure_files(result, workers=2)
    assert list(forked) == list(serial)
    assert all(forked[name] == serial[name] for name in serial)
