"""The compiled neutrality kernel against the numpy path it stands in for.

Both paths solve the same equation with the same expansions and stopping test; each stops
within the tolerance 1e-11 (in u = (E_F - E_v)/kT) of the root, so they agree to a few
times that. The numpy path is itself checked against textbook numbers and identities in
tests/test_neutrality.py; here it is the reference (project choice, no source).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from freezeout.fitting.fit import fit_run
from freezeout.io.reduced_csv_reader import read_reduced_csv
from freezeout.physics import neutrality_kernel
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import BandState, DopantLevel, solve_levels
from freezeout.physics.neutrality_kernel import active_kernel, use_kernel

ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.skipif(not neutrality_kernel.compiled_available(),
                                reason="the compiled kernel was not built in this install")

SI = get_material("Si")
SIC = get_material("4H-SiC")


def _both(bands, donors, acceptors, statistics="fermi-dirac", start=None):
    out = []
    for name in ("numpy", "compiled"):
        with use_kernel(name):
            out.append(solve_levels(bands, donors, acceptors, statistics, start))
    return out


def _balance(res, donors, acceptors):
    """|p + N_D+ - n - N_A-| / (largest side) of a solution."""
    pos = res.p + sum(f * d.concentration for f, d in zip(res.donor_ionized, donors,
                                                          strict=True))
    neg = res.n + sum(f * a.concentration for f, a in zip(res.acceptor_ionized, acceptors,
                                                          strict=True))
    return np.abs(pos - neg) / np.maximum(pos, neg)


def _assert_same(a, b, donors, acceptors):
    # u within 5e-10 (50 times the tolerance of each solve), or, where the residual is so
    # flat that its stopping test |h| <= 1e-13 accepts points further apart (an exactly
    # compensated deep level, say), both points balance the charges to 1e-12
    # (project choice, no source)
    kt = a.temperature * 8.617333262e-5
    apart = np.abs(a.fermi_level - b.fermi_level) / kt > 5e-10
    if apart.any():
        for res in (a, b):
            assert (_balance(res, donors, acceptors)[apart] < 1e-12).all()
    close = ~apart
    np.testing.assert_allclose(a.log_n[close], b.log_n[close], rtol=0, atol=1e-9)
    np.testing.assert_allclose(a.log_p[close], b.log_p[close], rtol=0, atol=1e-9)
    for fa, fb in zip((*a.donor_ionized, *a.acceptor_ionized),
                      (*b.donor_ionized, *b.acceptor_ionized), strict=True):
        np.testing.assert_allclose(np.broadcast_to(fa, close.shape)[close],
                                   np.broadcast_to(fb, close.shape)[close], rtol=1e-8,
                                   atol=1e-300)


levels = st.lists(st.tuples(st.floats(10.0, 21.0), st.one_of(st.none(), st.floats(0.005, 1.2))),
                  min_size=0, max_size=3)


@settings(max_examples=150, deadline=None)
@given(donors=levels, acceptors=levels, t_low=st.floats(2.0, 300.0),
       t_high=st.floats(300.0, 1500.0), boltzmann=st.booleans(), sic=st.booleans())
def test_compiled_and_numpy_solve_alike(donors, acceptors, t_low, t_high, boltzmann, sic):
    """Random level sets from 2 K to 1500 K, 1e10-1e21 cm^-3, Fermi-Dirac and Boltzmann,
    partly and fully ionized levels: the same solution from both kernels, cold and warm."""
    material = SIC if sic else SI
    bands = BandState.from_material(material, np.geomspace(t_low, t_high, 40))
    d = [DopantLevel("donor", 10.0**c, e) for c, e in donors]
    a = [DopantLevel("acceptor", 10.0**c, e) for c, e in acceptors]
    statistics = "boltzmann" if boltzmann else "fermi-dirac"
    cold = _both(bands, d, a, statistics)
    _assert_same(*cold, d, a)
    # a warm start from a nearby solution, and one from far off (a root, clipped starts)
    for shift in (1e-6, 0.3):
        warm = _both(bands, d, a, statistics, cold[0].fermi_level + shift)
        _assert_same(*warm, d, a)


def test_batched_levels_and_a_degenerate_band():
    """A batch of parameter sets on axis 0 (as the fit solves them), with fully ionized donors
    heavy enough to push E_F past E_c + 26 kT (the Sommerfeld branch) at the low end."""
    bands = BandState.from_material(SI, np.geomspace(2.0, 900.0, 60))
    conc = np.array([[1e14], [1e17], [1e20], [1e21]])
    energy = np.array([[0.045], [0.02], [0.01], [0.001]])
    d = [DopantLevel("donor", conc, energy), DopantLevel("donor", 0.1 * conc, 0.3),
         DopantLevel("donor", conc)]
    a = [DopantLevel("acceptor", 1e13), DopantLevel("acceptor", 2e12, 0.05)]
    numpy_res, compiled_res = _both(bands, d, a)
    assert compiled_res.log_n.shape == (4, 60)
    eta = (compiled_res.fermi_level - compiled_res.band_gap) / (bands.kt)
    assert eta.max() > 26.0  # the asymptotic branch was exercised
    _assert_same(numpy_res, compiled_res, d, a)


def test_not_finite_raises_in_both_paths():
    """A NaN density of states makes the residual NaN: both kernels refuse, neither loops."""
    good = BandState.from_material(SI, np.array([100.0, 300.0]))
    bands = BandState(good.temperature, good.kt, good.band_gap,
                      np.array([good.log_nc[0], np.nan]), good.log_nv)
    d = [DopantLevel("donor", 1e15, 0.045)]
    for name in ("numpy", "compiled"):
        with use_kernel(name), pytest.raises((RuntimeError, ValueError)):
            solve_levels(bands, d, [])


def test_kernel_choice():
    """use_kernel names the path and restores it; an unknown name is refused with the list."""
    before = active_kernel()
    with use_kernel("numpy"):
        assert active_kernel() == "numpy"
    assert active_kernel() == before
    with pytest.raises(ValueError, match="compiled, numpy"):
        with use_kernel("fortran"):
            pass


def test_bundled_fit_alike_on_both_kernels():
    """The bundled silicon run fits to the same parameters and intervals on either kernel."""
    run = read_reduced_csv(ROOT / "sample_data" / "harrowgate_si_n_run.csv")
    fits = []
    for name in ("numpy", "compiled"):
        with use_kernel(name):
            fits.append(fit_run(run, SI))
    a, b = fits
    # the same chi^2 minimum; the point where the optimizer stops on it (its relative
    # chi^2-reduction test, 1.5e-8) may move along the valley by rounding, far inside the
    # standard error: 1e-3 of it (project choice, no source)
    assert a.chi2 == pytest.approx(b.chi2, rel=1e-9)
    for la, lb in zip(a.levels, b.levels, strict=True):
        for ea, eb in ((la.concentration, lb.concentration), (la.energy, lb.energy)):
            if ea is None:
                continue
            assert abs(ea.value - eb.value) < 1e-3 * ea.stderr
            assert np.allclose(ea.ci95, eb.ci95, rtol=0, atol=1e-3 * ea.stderr)


def test_a_fit_names_the_kernel_that_solved_it():
    """The fit's provenance, and the report's, say which path solved neutrality."""
    import freezeout.api as api
    from freezeout.reporting.fit_report import render_html

    for name in ("numpy", "compiled"):
        with use_kernel(name):
            result = api.fit_file(ROOT / "sample_data" / "harrowgate_si_n_run.csv",
                                  material="Si")
        assert result.provenance["neutrality_kernel"] == name
        assert f"solved by the {name} kernel" in render_html(result, {})


def test_threads_solve_alike():
    """The kernel runs without the GIL: solves from several threads at once give what one
    thread gives (its tables are set once and only read)."""
    from concurrent.futures import ThreadPoolExecutor

    bands = BandState.from_material(SIC, np.geomspace(30.0, 800.0, 200))
    sets = [[DopantLevel("donor", 10.0 ** (15 + 0.1 * k), 0.05 + 0.01 * k)] for k in range(16)]
    acceptors = [DopantLevel("acceptor", 1e14)]
    with use_kernel("compiled"):
        serial = [solve_levels(bands, d, acceptors).log_n for d in sets]
        with ThreadPoolExecutor(4) as pool:
            threaded = list(pool.map(lambda d: solve_levels(bands, d, acceptors).log_n, sets))
    for a, b in zip(serial, threaded, strict=True):
        np.testing.assert_array_equal(a, b)


def test_environment_and_an_install_without_the_extension(monkeypatch):
    """FREEZEOUT_KERNEL picks the path; without the built extension numpy is the only one."""
    monkeypatch.setenv("FREEZEOUT_KERNEL", "numpy")
    assert neutrality_kernel._from_environment() == "numpy"
    monkeypatch.setenv("FREEZEOUT_KERNEL", "")
    assert neutrality_kernel._from_environment() == "compiled"
    monkeypatch.setattr(neutrality_kernel, "_compiled", None)
    assert neutrality_kernel._from_environment() == "numpy"
    assert active_kernel() == "numpy"
    with pytest.raises(ValueError, match="not built"):
        with use_kernel("compiled"):
            pass
    bands = BandState.from_material(SI, np.array([50.0, 300.0]))
    res = solve_levels(bands, [DopantLevel("donor", 1e15, 0.045)], [])
    assert np.isfinite(res.log_n).all()


def _bad_solve_inputs():
    """Calls of the extension's solve that must raise (each named)."""
    rows = np.zeros((6, 4))
    rows[:3] = 40.0
    rows[3:5] = -np.inf
    unaligned = np.frombuffer(bytearray(rows.nbytes + 1), dtype=np.float64, offset=1,
                              count=rows.size)
    read_only = np.zeros((3, 4))
    read_only.flags.writeable = False
    return {
        "negative count": (rows, np.empty((2, 4)), -1, 0, 1e-11),
        "counts summing to no rows": (rows, np.empty((3, 4)), -1, -2, 1e-11),
        "counts that overflow": (np.zeros((2, 4)), np.empty((1, 4)), 2**31 - 1, 2**31 - 1,
                                 1e-11),
        "int64 rows": (np.zeros((6, 4), dtype=np.int64), np.empty((3, 4)), 0, 0, 1e-11),
        "big-endian rows": (rows.astype(">f8"), np.empty((3, 4)), 0, 0, 1e-11),
        "unaligned rows": (unaligned, np.empty((3, 4)), 0, 0, 1e-11),
        "read-only out": (rows, read_only, 0, 0, 1e-11),
        "short rows": (rows[:5].copy(), np.empty((3, 4)), 0, 0, 1e-11),
        "zero tolerance": (rows, np.empty((3, 4)), 0, 0, 0.0),
        "NaN tolerance": (rows, np.empty((3, 4)), 0, 0, float("nan")),
    }


@pytest.mark.parametrize("case", list(_bad_solve_inputs()))
def test_bad_arguments_raise_instead_of_crashing(case):
    """Bad buffers and counts handed straight to the extension raise ValueError, BufferError
    or TypeError; none reads or writes out of bounds (project choice, no source)."""
    neutrality_kernel._hand_over_tables()
    rows, out, nd, na, tol = _bad_solve_inputs()[case]
    with pytest.raises((ValueError, BufferError, TypeError)):
        neutrality_kernel._compiled.solve(rows, out, nd, na, True, tol, False)


def test_tables_are_checked_before_they_are_set():
    """In a new process: a solve before the tables raises, tables of a wrong length or grid are
    refused (and not kept), and the right ones then solve."""
    import subprocess
    import sys

    code = """
import numpy as np
from freezeout.physics import _neutrality_kernel as k
from freezeout.physics.neutrality_kernel import table_arguments
half, minus, lower, width, *a, g1, g2 = table_arguments()
g = (g1, g2)
rows = np.array([[40.0], [40.0], [1.0], [-np.inf], [-np.inf], [1.0]])
out = np.empty((3, 1))
def refused(f, *args):
    try:
        f(*args)
    except (ValueError, RuntimeError):
        return True
    return False
assert refused(k.solve, rows, out, 0, 0, True, 1e-11, False)
assert refused(k.set_tables, np.zeros(15), np.zeros(15), -2.0, 1.0, *a, *g)
assert refused(k.set_tables, np.zeros(0), np.zeros(0), -2.0, 1.0, *a, *g)
assert refused(k.set_tables, half, minus, 0.0, 1.0, *a, *g)
assert refused(k.set_tables, half.astype(np.int64), minus, -2.0, 1.0, *a, *g)
k.set_tables(half, minus, lower, width, *a, *g)
k.solve(rows, out, 0, 0, True, 1e-11, False)
assert abs(out[0, 0] - 0.5) < 1e-9  # equal bands, no dopants: mid-gap, E_g/2kT
print("ok")
"""
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "ok"
