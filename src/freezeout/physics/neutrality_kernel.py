"""Which path solves charge neutrality: the compiled kernel or numpy, and the call into C.

The compiled kernel (``_neutrality_kernel.c``, built at install time when a C compiler is at
hand) solves the same equation with the same expansions and iteration as the numpy path of
:func:`freezeout.physics.neutrality.solve_levels`, one element at a time, so each element
stops on its own instead of riding along until the last one of its batch has converged. The
two paths agree to the solve's tolerance (tests/test_neutrality_kernel.py). numpy stays the
path where the extension is missing, and either can be asked for by name:
``FREEZEOUT_KERNEL=numpy`` (or ``compiled``) in the environment, or :func:`use_kernel`.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from typing import TYPE_CHECKING

import numpy as np
from scipy import special

from freezeout.physics import fermi
from freezeout.physics.neutrality_terms import LevelTerms, extrinsic_start, log_fixed

if TYPE_CHECKING:
    from freezeout.physics.neutrality import BandState

try:
    from freezeout.physics import _neutrality_kernel as _compiled
except ImportError:  # pragma: no cover - an install without a C compiler
    _compiled = None

KERNELS = ("compiled", "numpy")

#: Environment variable naming the kernel (project choice, no source).
KERNEL_VARIABLE = "FREEZEOUT_KERNEL"

_tables_ready = False


def compiled_available() -> bool:
    """True when the compiled kernel was built and imports."""
    return _compiled is not None


def _from_environment() -> str:
    name = os.environ.get(KERNEL_VARIABLE, "").strip().lower()
    if name in KERNELS:
        return name
    return "compiled" if compiled_available() else "numpy"


_kernel = _from_environment()


def active_kernel() -> str:
    """``"compiled"`` or ``"numpy"``: the path solves take now."""
    return "compiled" if _kernel == "compiled" and compiled_available() else "numpy"


@contextlib.contextmanager
def use_kernel(name: str) -> Iterator[None]:
    """Solve with the named kernel inside the block (``"compiled"`` or ``"numpy"``).

    The choice is process-wide (not per thread), as ``FREEZEOUT_KERNEL`` is.

    Raises
    ------
    ValueError
        For an unknown name, or ``"compiled"`` where the extension was not built.
    """
    global _kernel
    if name not in KERNELS:
        raise ValueError(f"unknown kernel {name!r}; valid: {', '.join(KERNELS)}")
    if name == "compiled" and not compiled_available():
        raise ValueError("the compiled neutrality kernel was not built in this install")
    before, _kernel = _kernel, name
    try:
        yield
    finally:
        _kernel = before


def table_arguments() -> tuple:
    """The arguments of the kernel's ``set_tables``: the numpy path's Fermi-Dirac tables.

    Chebyshev rows of ln F_1/2 and ln F_-1/2 (interval by interval), the grid's start and
    width, the asymptotic coefficients of both, and ln Gamma(j + 2) of both.
    """
    tables = fermi.chebyshev_tables()
    return (np.ascontiguousarray(tables["1/2"].T), np.ascontiguousarray(tables["-1/2"].T),
            tables["lower"], tables["width"],
            np.ascontiguousarray(fermi.asymptotic_coefficients(0.5)),
            np.ascontiguousarray(fermi.asymptotic_coefficients(-0.5)),
            float(special.gammaln(2.5)), float(special.gammaln(1.5)))


def _hand_over_tables() -> None:
    """Give the kernel the Fermi-Dirac tables and coefficients the numpy path uses."""
    global _tables_ready
    _compiled.set_tables(*table_arguments())
    _tables_ready = True


def solve_compiled(rows: np.ndarray, n_donors: int, n_acceptors: int, fermi_dirac: bool,
                   tolerance: float, warm: bool) -> tuple[np.ndarray, int]:
    """Run the compiled solve on packed rows (the layout of ``_neutrality_kernel.c``).

    Parameters
    ----------
    rows
        float64, C-contiguous, ``(6 + 2 n_donors + 2 n_acceptors, *shape)``: ln N_c, ln N_v,
        E_g/kT, ln of the fixed donor and acceptor sums (-inf for none), the start u, then
        (ln N, offset) rows of the donors and then of the acceptors. [1]
    n_donors, n_acceptors
        Partially ionized levels of each kind.
    fermi_dirac
        Fermi-Dirac (True) or Boltzmann (False) band densities.
    tolerance
        Tolerance on u = (E_F - E_v)/kT. [1]
    warm
        The start is a previous solution (evaluated where it stands first).

    Returns
    -------
    out : numpy.ndarray
        ``(3 + n_donors + n_acceptors, *shape)``: u, ln p, ln n, then ln(ionized fraction)
        of each level. [1]
    iterations : int
        The most iterations any element took.
    """
    if not _tables_ready:
        _hand_over_tables()
    out = np.empty((3 + n_donors + n_acceptors, *rows.shape[1:]))
    iterations = _compiled.solve(rows, out, n_donors, n_acceptors, fermi_dirac, tolerance,
                                 warm)
    return out, iterations


def compiled_solution(bands: BandState, terms: LevelTerms, fermi_dirac: bool, start,
                      tolerance: float):
    """The solve of :func:`freezeout.physics.neutrality.solve_levels` in the compiled kernel.

    Parameters
    ----------
    bands
        Band state of the solve.
    terms
        Its levels in units of kT (:func:`freezeout.physics.neutrality_terms.level_terms`).
    fermi_dirac
        Fermi-Dirac (True) or Boltzmann (False) band densities.
    start
        A warm start u = (E_F - E_v)/kT, or None for the cold start of
        :func:`freezeout.physics.neutrality_terms.extrinsic_start`. [1]
    tolerance
        Tolerance on u. [1]

    Returns
    -------
    tuple
        (u, ln p, ln n, [ln ionized fraction of each donor], [... of each acceptor],
        iterations), as the numpy path returns them.
    """
    nd, na = len(terms.donors), len(terms.acceptors)
    rows = np.empty((6 + 2 * (nd + na), *terms.shape))
    rows[0], rows[1], rows[2] = bands.log_nc, bands.log_nv, bands.gap_kt
    for row, total in ((3, terms.fixed_pos), (4, terms.fixed_neg)):
        log_total = log_fixed(total)
        rows[row] = -np.inf if log_total is None else log_total
    rows[5] = extrinsic_start(bands, terms) if start is None else start
    for first, levels in ((6, terms.donors), (6 + 2 * nd, terms.acceptors)):
        for k, (log_concentration, offset) in enumerate(levels):
            rows[first + k] = log_concentration
            rows[first + len(levels) + k] = offset
    out, iterations = solve_compiled(rows, nd, na, fermi_dirac, tolerance, start is not None)
    return out[0], out[1], out[2], list(out[3:3 + nd]), list(out[3 + nd:]), iterations
