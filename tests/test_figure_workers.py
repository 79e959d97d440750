"""Figures drawn with a forked helper (reporting/figure_workers.py) are the serial ones.

No outside reference: the checks are that the two ways of drawing give byte-identical PNGs,
that the helper really draws some of them, and that whatever the helper fails to deliver
(it raised, was killed, its message was cut short, or it could not be forked) is drawn by
the calling process, with no helper left unreaped and no pipe left open (project choice,
no source).

Which process drew a figure is seen two ways: each drawing tags its figure with the drawing
process's pid as the figure's gid, which appears in the SVG only (the PNG bytes do not
depend on it), and writes ``"pid stem"`` to a log file when it starts, so a test sees the
helper's work even when the helper delivers nothing.
"""

from __future__ import annotations

import errno
import os
import pickle
import re
import signal
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from matplotlib.figure import Figure

from freezeout.api import fit_file
from freezeout.reporting import figure_workers
from freezeout.reporting.fit_report import figure_files

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"
needs_fork = pytest.mark.skipif(not hasattr(os, "fork") or sys.platform != "linux",
                                reason="the helper is forked on Linux only")
WAIT = 10.0  # [s] longest wait for the other process; only reached when something is broken


def _line(slope: float):
    """A drawing of a small figure: one line of the given slope."""
    def draw():
        fig = Figure(figsize=(2.0, 1.5), layout="constrained")
        ax = fig.add_subplot()
        ax.plot([0.0, 1.0], [0.0, slope])
        ax.set_title(f"slope {slope:g}")
        return fig
    return draw


def _noise(seed: int):
    """A drawing whose PNG hardly compresses (about 76 kB, more than a pipe holds)."""
    def draw():
        fig = Figure(figsize=(2.0, 1.5))
        fig.add_subplot().imshow(np.random.default_rng(seed).random((120, 160)),
                                 interpolation="nearest")
        return fig
    return draw


def _until(condition, what: str):
    """Wait until ``condition()`` is true; fail after WAIT seconds."""
    end = time.monotonic() + WAIT
    while not condition():
        if time.monotonic() > end:
            raise AssertionError(f"gave up waiting for {what}")
        time.sleep(0.005)


class Drawings:
    """Jobs whose drawings record which process drew them (see the module docstring).

    ``first(self)`` runs in this process before its first drawing. A drawing in the helper
    first waits until this process has begun a drawing, so this process's first job is one
    of the first two and the helper gets the others.
    """

    def __init__(self, tmp_path: Path, first=None):
        self.log = tmp_path / "drawn.log"
        self.log.write_text("")
        self.parent = os.getpid()
        self.first = first
        self.here: list[str] = []  # stems drawn in this process (the helper has its own copy)

    def job(self, stem: str, figure=None, in_helper=None):
        """(stem, drawing); ``in_helper()`` runs before the drawing when the helper draws."""
        figure = figure or _line(float(len(stem)))

        def drawing():
            pid = os.getpid()
            with self.log.open("a") as stream:
                stream.write(f"{pid} {stem}\n")
            if pid == self.parent:
                self.here.append(stem)
                first, self.first = self.first, None
                if first is not None:
                    first(self)
            else:
                _until(lambda: str(self.parent) in self.pids(), "the parent's first drawing")
                if in_helper is not None:
                    in_helper()
            fig = figure()
            if fig is not None:
                fig.set_gid(f"drawn-by-{pid}")
            return fig
        return stem, drawing

    def lines(self, n: int = 5):
        return [self.job(f"line{i}", _line(i + 1.0)) for i in range(n)]

    def entries(self) -> list[tuple[str, str]]:
        return [tuple(line.split()) for line in self.log.read_text().splitlines()]

    def pids(self) -> set[str]:
        return {pid for pid, _ in self.entries()}

    def helper_stems(self) -> list[str]:
        return [stem for pid, stem in self.entries() if pid != str(self.parent)]

    def helper_pids(self) -> set[int]:
        return {int(pid) for pid in self.pids() - {str(self.parent)}}

    def wait_for_helper(self, stems: int = 1) -> int:
        """Wait until the helper has begun ``stems`` drawings; its pid."""
        _until(lambda: len(self.helper_stems()) >= stems, f"{stems} drawings in the helper")
        (pid,) = self.helper_pids()
        return pid


def _drawn_by(svg: bytes) -> int:
    return int(re.search(rb'id="drawn-by-(\d+)"', svg).group(1))


def _assert_reaped(pids):
    """Each helper has been waited for: no zombie, nothing still running."""
    assert pids, "no helper drew anything"
    for pid in pids:
        try:
            got = os.waitpid(pid, os.WNOHANG)
        except ChildProcessError:
            continue
        if got == (0, 0):  # still running: end it so that the failure leaves nothing behind
            os.kill(pid, signal.SIGKILL)
            os.waitpid(pid, 0)
        pytest.fail(f"helper {pid} was not waited for: waitpid gave {got}")


def _open_fds() -> int:
    return len(os.listdir("/proc/self/fd"))


def _serial_pngs(jobs) -> dict[str, bytes]:
    return {stem: png for stem, (png, _) in
            figure_workers.render_figures(jobs, workers=1).items()}


def _assert_forked_draws_fall_back_here(d: Drawings, jobs):
    """Rendered with the helper, every figure still comes, drawn here; the helper reaped."""
    forked = figure_workers.render_figures(jobs, workers=2)
    _assert_all_drawn_here(d, jobs, forked)
    _assert_reaped(d.helper_pids())


def _assert_all_drawn_here(d: Drawings, jobs, forked):
    """Every figure is delivered, drawn by this process, and is the serial PNG."""
    here = sorted(d.here)
    serial = _serial_pngs(jobs)
    assert list(forked) == list(serial)
    assert all(forked[stem][0] == png for stem, png in serial.items())
    assert here == sorted(stem for stem, _ in jobs)


@needs_fork
def test_forked_drawing_gives_the_serial_bytes(tmp_path):
    """The helper delivers some figures (their SVG carries its pid), with the serial bytes."""
    d = Drawings(tmp_path, first=Drawings.wait_for_helper)
    jobs = [*d.lines(), d.job("empty", lambda: None)]
    forked = figure_workers.render_figures(jobs, svg=True, workers=2)
    here = list(d.here)
    serial = figure_workers.render_figures(jobs, svg=True, workers=1)
    assert list(serial) == [f"line{i}" for i in range(5)]  # the empty drawing is left out
    assert list(forked) == list(serial)
    drawn_by = {stem: _drawn_by(svg) for stem, (_, svg) in forked.items()}
    helper = {stem for stem, pid in drawn_by.items() if pid != os.getpid()}
    assert helper, "the helper delivered no figure"
    assert drawn_by[next(iter(helper))] in d.helper_pids()
    assert helper.isdisjoint(here)  # each figure drawn once
    assert set(d.helper_stems()) == helper | ({"empty"} - set(here))
    for stem, (png, svg) in serial.items():
        assert png.startswith(b"\x89PNG")
        assert forked[stem][0] == png
        assert svg is not None
    _assert_reaped(d.helper_pids())


@needs_fork
def test_what_the_helper_fails_to_draw_is_drawn_here(tmp_path):
    def refuse():
        raise RuntimeError("helper failure")

    d = Drawings(tmp_path, first=lambda d: _until(lambda: "picky" in d.helper_stems(),
                                                  "the helper to try picky"))
    jobs = [*d.lines(), d.job("picky", _line(9.0), in_helper=refuse)]
    forked = figure_workers.render_figures(jobs, workers=2)
    assert "picky" in d.helper_stems()  # the helper tried it and failed
    _assert_all_drawn_here(d, jobs, forked)  # and sent nothing: this process drew them all
    _assert_reaped(d.helper_pids())


@needs_fork
def test_a_drawing_that_fails_everywhere_raises_here(tmp_path):
    def broken():
        raise ValueError("cannot draw")

    d = Drawings(tmp_path, first=Drawings.wait_for_helper)
    with pytest.raises(ValueError, match="cannot draw"):
        figure_workers.render_figures([*d.lines(), d.job("broken", broken)], workers=2)
    _assert_reaped(d.helper_pids())


@needs_fork
def test_report_figures_same_with_and_without_the_helper(tmp_path, monkeypatch):
    """The report's PNGs are the serial ones, and this process drew only some of them."""
    result = fit_file(SAMPLE, material="Si")
    serial = figure_files(result, workers=1)
    parent, marker, here = os.getpid(), tmp_path / "helper-drew", []
    real = figure_workers.png_bytes

    def spy(fig, fmt="png"):
        if os.getpid() != parent:
            marker.touch()
        else:
            if not here:  # let the helper claim a figure before this process goes on
                _until(marker.exists, "the helper's first figure")
            here.append(fmt)
        return real(fig, fmt)

    monkeypatch.setattr(figure_workers, "png_bytes", spy)
    forked = figure_files(result, workers=2)
    assert list(forked) == list(serial)
    assert all(forked[name] == serial[name] for name in serial)
    assert 0 < len(here) < len(serial), "the helper delivered none of the report's figures"


def _wait_blocked_writing(pid: int):
    """Wait until ``pid`` waits for room in a pipe, as /proc/PID/wchan shows."""
    end = time.monotonic() + WAIT
    while time.monotonic() < end:
        with open(f"/proc/{pid}/wchan") as stream:
            if "pipe_write" in stream.read():
                return
        time.sleep(0.005)
    with open(f"/proc/{pid}/stat") as stream:
        state = stream.read().rpartition(")")[2].split()[0]
    assert state != "Z", "the helper left without waiting to send (more than a pipe holds)"
    pytest.skip("this kernel does not show a process waiting in pipe_write (/proc/PID/wchan)")


@needs_fork
@pytest.mark.parametrize("when", ["sending", "drawing"])
def test_a_killed_helper_leaves_the_figures_to_this_process(tmp_path, when):
    """Killed with its message half sent (more than a pipe holds), or between drawings."""
    def kill_helper(d):
        if when == "sending":  # the helper drew the rest and waits for room in the pipe
            pid = d.wait_for_helper(len(jobs) - 1)
            _wait_blocked_writing(pid)
            os.kill(pid, signal.SIGKILL)
        else:  # the helper died on its way through the jobs
            _until(lambda: "fatal" in d.helper_stems(), "the helper to reach fatal")

    def die():
        os.kill(os.getpid(), signal.SIGKILL)

    d = Drawings(tmp_path, first=kill_helper)
    jobs = [d.job(f"noise{i}", _noise(i)) for i in range(4)]
    if when == "drawing":
        jobs.append(d.job("fatal", in_helper=die))
    _assert_forked_draws_fall_back_here(d, jobs)


@needs_fork
@pytest.mark.parametrize("cut", [lambda b: b[: len(b) // 2], lambda b: b[:-1],
                                 lambda b: b"not a pickle"], ids=["half", "no-stop", "garbled"])
def test_a_cut_or_garbled_message_leaves_the_figures_to_this_process(tmp_path, monkeypatch,
                                                                    cut):
    real = pickle.dumps
    monkeypatch.setattr(figure_workers.pickle, "dumps", lambda obj: cut(real(obj)))
    d = Drawings(tmp_path, first=Drawings.wait_for_helper)
    jobs = d.lines()
    _assert_forked_draws_fall_back_here(d, jobs)


@needs_fork
def test_a_helper_that_exits_with_an_error_is_not_trusted(tmp_path, monkeypatch):
    """A complete message from a helper whose exit code is not 0 is not used."""
    real_exit = os._exit
    monkeypatch.setattr(figure_workers.os, "_exit", lambda code: real_exit(3))
    d = Drawings(tmp_path, first=Drawings.wait_for_helper)
    jobs = d.lines()
    _assert_forked_draws_fall_back_here(d, jobs)


@needs_fork
@pytest.mark.parametrize("code", [errno.EAGAIN, errno.ENOMEM])
def test_a_failed_fork_draws_everything_here_and_leaves_no_pipe(tmp_path, monkeypatch, code):
    def no_fork():
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(figure_workers.os, "fork", no_fork)
    d = Drawings(tmp_path)
    jobs = d.lines()
    fds, mask = _open_fds(), signal.pthread_sigmask(signal.SIG_BLOCK, [])
    forked = figure_workers.render_figures(jobs, workers=2)
    assert _open_fds() == fds
    assert signal.pthread_sigmask(signal.SIG_BLOCK, []) == mask  # signals not left held
    _assert_all_drawn_here(d, jobs, forked)


@needs_fork
def test_an_interrupt_here_stops_the_helper(tmp_path):
    """The interrupt does not wait for the helper's remaining figures (12 x 0.25 s)."""
    def interrupt(d):
        d.wait_for_helper()
        raise KeyboardInterrupt

    d = Drawings(tmp_path, first=interrupt)
    jobs = [d.job(f"slow{i}", in_helper=lambda: time.sleep(0.25)) for i in range(12)]
    fds = _open_fds()
    with pytest.raises(KeyboardInterrupt):
        figure_workers.render_figures(jobs, workers=2)
    assert len(d.helper_stems()) < 6  # the old behaviour: the helper drew all 11 others
    assert _open_fds() == fds
    _assert_reaped(d.helper_pids())


@needs_fork
def test_a_second_interrupt_while_waiting_still_reaps_the_helper(tmp_path):
    """The helper holds SIGTERM off for 1 s; a second interrupt comes 0.3 s into the wait."""
    held = tmp_path / "sigterm-held"

    def slow_to_stop():
        signal.pthread_sigmask(signal.SIG_BLOCK, [signal.SIGTERM])
        held.touch()
        time.sleep(1.0)
        signal.pthread_sigmask(signal.SIG_UNBLOCK, [signal.SIGTERM])

    def second(signum, frame):
        raise KeyboardInterrupt("second")

    def interrupt(d):
        _until(held.exists, "the helper to hold SIGTERM")
        signal.signal(signal.SIGALRM, second)
        signal.setitimer(signal.ITIMER_REAL, 0.3)
        raise KeyboardInterrupt("first")

    d = Drawings(tmp_path, first=interrupt)
    jobs = [d.job(f"line{i}", in_helper=slow_to_stop) for i in range(4)]
    previous = signal.getsignal(signal.SIGALRM)
    try:
        with pytest.raises(KeyboardInterrupt) as raised:
            figure_workers.render_figures(jobs, workers=2)
        assert raised.value.args == ("second",)  # it came while the helper was waited for
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    _assert_reaped(d.helper_pids())


def test_the_helper_is_used_on_linux_only(monkeypatch):
    monkeypatch.setattr(figure_workers.sys, "platform", "darwin")
    assert not figure_workers.can_fork()


@needs_fork
def test_the_helper_is_not_used_beside_another_thread():
    stop = threading.Event()
    other = threading.Thread(target=stop.wait)
    other.start()
    try:
        assert not figure_workers.can_fork()
    finally:
        stop.set()
        other.join()
