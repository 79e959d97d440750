"""Drawing a report's figures, in two processes where the machine allows it.

A report's figures are independent, and matplotlib draws on one core: with two CPUs, a
forked helper draws some of them while this process draws the rest (about 0.45 s -> 0.28 s
for the silicon sample's five figures, ``benchmarks/bench_command.py``). The figures are
handed out one at a time from a pipe holding their numbers (a one-byte read from a pipe is
atomic, so each figure is drawn once), and the helper sends its PNG (and SVG) bytes back
through another pipe. Whatever the helper did not deliver (it failed, or was killed) is
drawn here, so a failure shows as it would without the helper.

The helper is used only where ``os.fork`` exists, two CPUs are available, this process runs
no other thread (a fork copies no thread, and any lock another thread held would stay held)
and is not itself a worker of a process pool (``qualify``'s wafers).
"""

from __future__ import annotations

import os
import pickle
import sys
import threading
from collections.abc import Callable, Iterator, Sequence

from freezeout.reporting.figure_output import png_bytes

#: (stem, drawing): the drawing returns a Figure or an Axes, or None when there is nothing
#: to draw.
Job = tuple[str, Callable[[], object]]


def can_fork() -> bool:
    """True where a forked helper may draw: fork, two CPUs, one thread, not a pool worker."""
    if not hasattr(os, "fork") or threading.active_count() != 1:
        return False
    mp = sys.modules.get("multiprocessing")
    if mp is not None and mp.parent_process() is not None:
        return False
    cpus = (len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity")
            else os.cpu_count() or 1)
    return cpus >= 2


def render_figures(jobs: Sequence[Job], *, svg: bool = False, workers: int | None = None
                   ) -> dict[str, tuple[bytes, bytes | None]]:
    """stem -> (PNG bytes, SVG bytes or None) of every job whose drawing gave a figure.

    ``workers`` 1 draws everything here; 2 adds the forked helper; None (default) chooses 2
    where :func:`can_fork` allows. The bytes are the same either way.
    """
    if workers is None:
        workers = 2 if can_fork() else 1
    if workers < 2 or len(jobs) < 2:
        done = _render(jobs, range(len(jobs)), svg)
    else:
        done = _render_forked(jobs, svg)
    return {jobs[i][0]: done[i] for i in sorted(done) if done[i] is not None}


def _render(jobs: Sequence[Job], indices, svg: bool) -> dict[int, tuple | None]:
    """Draw the jobs of ``indices``: index -> (PNG, SVG or None), or None if not drawn."""
    out: dict[int, tuple | None] = {}
    for i in indices:
        fig = jobs[i][1]()
        out[i] = None if fig is None else (png_bytes(fig), png_bytes(fig, "svg") if svg
                                           else None)
    return out


def _claims(fd: int) -> Iterator[int]:
    """Job numbers read one byte at a time from the shared pipe, until it is empty."""
    while chunk := os.read(fd, 1):
        yield chunk[0]


def _render_forked(jobs: Sequence[Job], svg: bool) -> dict[int, tuple | None]:
    """Draw the jobs here and in one forked helper, sharing them out through a pipe."""
    if len(jobs) > 255:
        return _render(jobs, range(len(jobs)), svg)
    todo_r, todo_w = os.pipe()
    os.write(todo_w, bytes(range(len(jobs))))
    os.close(todo_w)
    out_r, out_w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the helper: draw what it claims, send the bytes, leave at once
        data = b""
        try:
            os.close(out_r)
            data = pickle.dumps(_render(jobs, _claims(todo_r), svg))
        except BaseException:  # the parent draws what is missing
            data = b""
        finally:
            try:
                with os.fdopen(out_w, "wb") as stream:
                    stream.write(data)
            finally:
                os._exit(0)
    os.close(out_w)
    try:
        done = _render(jobs, _claims(todo_r), svg)
    finally:
        os.close(todo_r)
        with os.fdopen(out_r, "rb") as stream:
            data = stream.read()
        os.waitpid(pid, 0)
    if data:
        done.update(pickle.loads(data))  # our own helper's bytes
    missing = [i for i in range(len(jobs)) if i not in done]
    done.update(_render(jobs, missing, svg))
    return done
