"""One estimator per number: a net doping "from the saturation plateau" takes its value and
its interval from the plateau, and only points flat within their errors are plateau."""

from __future__ import annotations

import numpy as np
import pytest

import freezeout

PLATEAU = 1.73e13  # [cm^-3]


def _ge_csv(path, seed=3, n=24):
    """n-type Ge, after a measured case: flat at 1.73e13 cm^-3 within 1 % noise from 93 K to
    135 K, then rising smoothly to 2.9e13 cm^-3 at 263 K (synthetic; project choice)."""
    t = np.linspace(93.0, 263.0, n)
    x = np.clip((t - 135.0) / 128.0, 0.0, None)
    d = PLATEAU * (1.0 + (2.9e13 / PLATEAU - 1.0) * x**1.5)
    d = d * (1.0 + np.random.default_rng(seed).normal(0.0, 0.01, n))
    lines = ["# material: Ge", "T [K],n [cm^-3],n_err [cm^-3]"]
    lines += [f"{float(a)!r},{float(b)!r},{float(0.01 * b)!r}" for a, b in zip(t, d,
                                                                              strict=True)]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def ge_fit(tmp_path_factory):
    return freezeout.fit_file(_ge_csv(tmp_path_factory.mktemp("ge") / "ge.csv"),
                              material="Ge")


def test_plateau_value_and_interval_cover_the_cold_plateau(ge_fit):
    """Reproducer: the tool reported 2.12e13 cm^-3 with an interval 1.95e13-2.30e13 (the fit's
    value, the plateau's error), which excludes the cold plateau. Now both come from the
    points flat within their errors, and the interval covers 1.73e13 (project choice, no
    source)."""
    note = next(w for w in ge_fit.warnings if "saturation plateau" in w)
    assert "flat within their errors" in note
    net = ge_fit.net_doping
    assert net.ci95[0] <= PLATEAU <= net.ci95[1]
    assert net.value == pytest.approx(PLATEAU, rel=0.02)
    assert net.ci95[0] < net.value < net.ci95[1]


def test_rising_points_are_not_called_plateau(ge_fit):
    """The plateau named in the warning ends before the rise (at the latest a little past
    135 K, where the rise is still within the noise), and the points left out are said to be
    no plateau (common practice, no source)."""
    import re

    note = next(w for w in ge_fit.warnings if "saturation plateau" in w)
    lo, hi = (float(x) for x in re.search(r"from ([\d.]+) K to ([\d.]+) K", note).groups())
    assert lo < 135.0 and hi < 150.0
    assert "not plateau" in note


def test_trend_test_finds_a_rise_and_keeps_a_flat_run():
    """Weighted regression of ln n on T: a 1 %/10 K rise over 20 points with 0.2 % errors is
    significant; pure noise of the stated size is not (common practice, no source)."""
    from freezeout.fitting.plateau import _flat, _trend

    rng = np.random.default_rng(5)
    t = np.linspace(100.0, 290.0, 20)
    s = np.full(t.size, 0.002)
    rising = np.log(1e15) + 1e-3 * (t - 100.0) + rng.normal(0.0, 0.002, t.size)
    slope, significant = _trend(t, rising, s)
    assert significant and slope == pytest.approx(1e-3, rel=0.1)
    flat = np.log(1e15) + rng.normal(0.0, 0.002, t.size)
    assert _flat(t, flat, s)
    assert not _flat(t, rising, s)


def test_a_run_with_no_flat_stretch_has_no_plateau_estimate():
    """Every extrinsic point rises: no window is flat, so no estimate comes from a plateau
    and the warning says the points are not flat (project choice, no source)."""
    from freezeout.fitting.model import CarrierModel
    from freezeout.fitting.plateau import plateau_net_doping
    from freezeout.fitting.problem import Problem
    from freezeout.physics.materials import get_material

    t = np.linspace(100.0, 300.0, 12)
    y = np.log(1e15) + 3e-3 * (t - 100.0)
    model = CarrierModel(get_material("Si"), t, "n", 1, True)
    problem = Problem(model, y, np.full(t.size, 0.002))
    res = model.solve({"log10_N_D1": 15.0, "E_D1": 0.045, "log10_N_A": 10.0})
    plateau = plateau_net_doping(problem, res, True, 0.0)
    assert plateau is not None and not plateau.flat
    assert "no saturation plateau" in plateau.note() and "rise" in plateau.note()
