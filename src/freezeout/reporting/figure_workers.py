"""Drawing a report's figures, in two processes where the machine allows it.

A report's figures are independent, and matplotlib draws on one core: with two CPUs, a
forked helper draws some of them while this process draws the rest (about 0.45 s -> 0.28 s
for the silicon sample's five figures, ``benchmarks/bench_command.py``). The figures are
handed out one at a time from a pipe holding their numbers (a one-byte read from a pipe is
atomic, so each figure is drawn once), and the helper sends its PNG (and SVG) bytes back
through another pipe, in one message once it has drawn all it claimed. Whatever the helper
did not deliver is drawn here, so a failure shows as it would without the helper: the helper
raised, was killed (also halfway through sending: a message that does not decode is not
used), exited with a code other than 0, or could not be forked (EAGAIN, ENOMEM; the pipes
are closed again). If this process is interrupted or a drawing raises here, the helper is
ended with SIGTERM and waited for (also when a second interrupt comes meanwhile) before the
exception goes on; Ctrl-C itself is ignored by the helper and left to this process.

:func:`can_fork` uses the helper only on Linux (elsewhere, macOS for one, system libraries
are not safe in a forked child that does not exec), with two CPUs available, when this
process runs no other *Python* thread (``threading.active_count() == 1``: a fork copies only
the calling thread, and a lock another thread held would stay held) and is not itself a
worker of a process pool (``qualify``'s wafers). Threads that native libraries start on
their own are not counted: numpy's OpenBLAS starts a pool when it is loaded (two OS threads
for one Python thread here), and it registers a ``pthread_atfork`` handler that stops the
pool before a fork and restarts it on next use (measured: one thread in /proc/self/task
after the fork, in parent and helper). Other native threads would not be seen.
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import threading
import warnings
from collections.abc import Callable, Iterator, Sequence
from typing import NoReturn

from freezeout.reporting.figure_output import png_bytes

#: (stem, drawing): the drawing returns a Figure or an Axes, or None when there is nothing
#: to draw.
Job = tuple[str, Callable[[], object]]

#: Signals held back across the fork, so that neither process is interrupted before it is in
#: the code that cleans up after the other.
_HELD = frozenset({signal.SIGINT, signal.SIGTERM})


def can_fork() -> bool:
    """True where a forked helper may draw: Linux, two CPUs, one Python thread, no pool worker."""
    if sys.platform != "linux" or threading.active_count() != 1:
        return False
    mp = sys.modules.get("multiprocessing")
    if mp is not None and mp.parent_process() is not None:
        return False
    return len(os.sched_getaffinity(0)) >= 2


def render_figures(jobs: Sequence[Job], *, svg: bool = False, workers: int | None = None
                   ) -> dict[str, tuple[bytes, bytes | None]]:
    """stem -> (PNG bytes, SVG bytes or None) of every job whose drawing gave a figure.

    ``workers`` 1 draws everything here; 2 adds the forked helper; None (default) chooses 2
    where :func:`can_fork` allows. The bytes are the same either way.
    """
    if workers is None:
        workers = 2 if can_fork() else 1
    if workers < 2 or not 2 <= len(jobs) <= 255 or not hasattr(os, "fork"):
        done = _render(jobs, range(len(jobs)), svg)  # job numbers are sent as single bytes
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
    started = _fork_helper(jobs, svg)
    if started is None:  # no pipe or no process to be had: everything is drawn here
        return _render(jobs, range(len(jobs)), svg)
    pid, todo_r, out_r, mask = started
    finished = False
    try:
        signal.pthread_sigmask(signal.SIG_SETMASK, mask)
        done = _render(jobs, _claims(todo_r), svg)
        data = _read_all(out_r)
        finished = True
    finally:
        code = _finish(pid, (todo_r, out_r), stop=not finished)
    if code in (0, None):
        done.update(_decode(data))
    missing = [i for i in range(len(jobs)) if i not in done]
    done.update(_render(jobs, missing, svg))
    return done


def _fork_helper(jobs: Sequence[Job], svg: bool) -> tuple[int, int, int, set] | None:
    """Fork the helper: (its pid, job pipe, result pipe, signal mask to restore), or None.

    None, with no pipe left open and the signal mask as it was, when no pipe or no process
    could be made (EMFILE, EAGAIN, ENOMEM). Otherwise SIGINT and SIGTERM are still held
    back here; the caller restores ``mask`` inside the block that ends with waiting for the
    helper.
    """
    fds: list[int] = []
    mask = None
    try:
        fds += os.pipe()
        os.write(fds[1], bytes(range(len(jobs))))  # at most 255 bytes: one atomic write
        os.close(fds.pop())  # readers see the end once every number is claimed
        fds += os.pipe()
        mask = signal.pthread_sigmask(signal.SIG_BLOCK, _HELD)
        with warnings.catch_warnings():
            # Python 3.12+ warns of a fork beside other OS threads; the only ones here are
            # OpenBLAS's pool, which registers its own fork handler (see can_fork)
            warnings.filterwarnings("ignore", category=DeprecationWarning,
                                    message=".*fork.*")
            pid = os.fork()
    except BaseException as exc:
        if mask is not None:
            signal.pthread_sigmask(signal.SIG_SETMASK, mask)
        for fd in fds:
            os.close(fd)
        if isinstance(exc, OSError):
            return None
        raise
    todo_r, out_r, out_w = fds
    if pid == 0:
        _serve(jobs, svg, todo_r, out_r, out_w, mask)
    os.close(out_w)
    return pid, todo_r, out_r, mask


def _serve(jobs: Sequence[Job], svg: bool, todo_r: int, out_r: int, out_w: int,
           mask) -> NoReturn:
    """The helper: draw what it claims, send the bytes in one message, leave at once.

    Exit code 0 once the whole message is written, 1 if anything failed (nothing is sent
    then; the parent draws what is missing). Ctrl-C is left to the parent, which ends the
    helper with SIGTERM.
    """
    code = 1
    try:
        signal.signal(signal.SIGINT, signal.SIG_IGN)
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        signal.pthread_sigmask(signal.SIG_SETMASK, mask)
        os.close(out_r)
        data = pickle.dumps(_render(jobs, _claims(todo_r), svg))
        with os.fdopen(out_w, "wb") as stream:
            stream.write(data)
        code = 0
    finally:
        os._exit(code)


def _read_all(fd: int) -> bytes:
    """Everything read from ``fd`` until its end."""
    chunks = []
    while chunk := os.read(fd, 1 << 20):
        chunks.append(chunk)
    return b"".join(chunks)


def _decode(data: bytes) -> dict:
    """The helper's message, index -> (PNG, SVG or None) or None; {} if it does not decode."""
    try:
        got = pickle.loads(data)  # our own helper's bytes
    except Exception:  # cut short (the helper was killed while sending) or empty
        return {}
    return got if isinstance(got, dict) else {}


def _finish(pid: int, fds, stop: bool) -> int | None:
    """End the helper with SIGTERM if ``stop``, close ``fds``, wait for it: its exit code.

    None when the exit code is unknown (the helper was reaped elsewhere, as with SIGCHLD
    ignored). An exception raised while waiting (a second Ctrl-C) ends the helper too and is
    raised once it has been waited for, so that no helper is left a zombie.
    """
    if stop:
        _terminate(pid)
    for fd in fds:
        os.close(fd)
    pending = None
    while True:
        try:
            status = os.waitpid(pid, 0)[1]
            break
        except ChildProcessError:
            status = None
            break
        except BaseException as exc:  # e.g. KeyboardInterrupt: stop the helper, wait again
            pending = pending or exc
            _terminate(pid)
    if pending is not None:
        raise pending
    return None if status is None else os.waitstatus_to_exitcode(status)


def _terminate(pid: int) -> None:
    try:
        os.kill(pid, signal.SIGTERM)
    except ProcessLookupError:  # already reaped elsewhere
        pass
