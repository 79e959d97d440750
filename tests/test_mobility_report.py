"""The report of a joint density and mobility fit: the mobility figure and the sentence on how
much the mobility narrowed the compensation. Synthetic run as in tests/test_joint_fit.py."""

from __future__ import annotations

import re

import matplotlib.image as mpimg
import numpy as np
import pytest

import freezeout
from freezeout.reporting.fit_report import render_html, write_fit_report
from freezeout.reporting.mobility_figure import mobility_figure
from test_joint_fit import MECH, _run


@pytest.fixture(scope="module")
def run_file(tmp_path_factory):
    """The synthetic joint-fit run of tests/test_joint_fit.py written as a run file."""
    run = _run()
    path = tmp_path_factory.mktemp("mob") / "joint_run.csv"
    rows = ["T [K],n [cm^-3],n_err [cm^-3],mu_H [cm^2/(V s)],mu_H_err [cm^2/(V s)]"]
    for row in zip(run.temperature, run.density, run.density_err, run.mobility,
                   run.mobility_err, strict=True):
        rows.append(",".join(repr(float(x)) for x in row))
    path.write_text("# material: Si\n" + "\n".join(rows) + "\n")
    return path


@pytest.fixture(scope="module")
def joint(run_file):
    return freezeout.fit_file(run_file, mobility=MECH)


def test_mobility_figure_has_mu_and_hall_factor_panels(joint):
    fig = mobility_figure(joint)
    top, bottom = fig.axes
    assert top.get_xscale() == "log" and top.get_yscale() == "log"
    assert "mobility" in top.get_ylabel() and bottom.get_ylabel() == "Hall factor"
    labels = [t.get_text() for t in top.get_legend().get_texts()]
    assert "measured μ_H" in labels and any("lattice + brooks-herring" in x for x in labels)
    assert "lattice alone" in labels and "ionized impurities alone (Brooks-Herring)" in labels
    # the legend stands beside the axes, off the data (its left edge right of the axes)
    fig.canvas.draw()
    assert (top.get_legend().get_window_extent().x0
            > top.get_window_extent().x1)
    r_h = bottom.get_lines()[0].get_ydata()
    assert 1.0 < r_h.min() and r_h.max() < 1.94  # between 1 and 315 pi/512 (BH alone)
    assert "applied to n and μ_H" in bottom.get_legend().get_texts()[0].get_text()


def test_mechanism_curves_are_the_physics_functions(joint):
    # each dashed curve is that mechanism's mobility from freezeout.physics.mobility at the
    # fitted levels and lattice term (computed here with the same functions, independently
    # of the fit's batch path)
    from freezeout.physics.majority_mobility import majority_mobility
    from freezeout.physics.mobility import brooks_herring_mobility, lattice_mobility
    from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality
    from freezeout.physics.screening import ionized_impurity_density, screening_density

    mob = joint.mobility
    t = mob.curve_temperature
    d_lv, a_lv = joint.levels
    donors = [DopantLevel("donor", d_lv.concentration.value, d_lv.energy.value,
                          d_lv.degeneracy)]
    acceptors = [DopantLevel("acceptor", a_lv.concentration.value, None)]
    res = solve_charge_neutrality(t, joint.material, donors, acceptors, "fermi-dirac")
    mu300, a = mob.lattice_mu300.value, mob.lattice_exponent.value
    np.testing.assert_allclose(mob.mechanism_mobility["lattice"],
                               lattice_mobility(t, mu300, a), rtol=1e-9)
    levels = [(res.donor_ionized[0] * donors[0].concentration, donors[0].concentration),
              (res.acceptor_ionized[0] * acceptors[0].concentration,
               acceptors[0].concentration)]
    n_i = ionized_impurity_density([x for x, _ in levels], 0.0)
    n_s = screening_density(res.n, levels, minority=res.p)
    mass = joint.material.conductivity_mass("n")
    bh = brooks_herring_mobility(t, n_i, n_s, mass, joint.material.relative_permittivity)
    np.testing.assert_allclose(mob.mechanism_mobility["brooks-herring"], bh, rtol=1e-6)
    cm = majority_mobility(joint.material, "n", donors, acceptors, res, MECH, mu300, a)
    np.testing.assert_allclose(mob.curve_hall_mobility, cm.hall, rtol=1e-6)
    np.testing.assert_allclose(mob.curve_hall_factor, cm.hall_factor, rtol=1e-6)
    # and the figure draws them
    top = mobility_figure(joint).axes[0]
    drawn = {ln.get_label(): ln.get_ydata() for ln in top.get_lines()}
    np.testing.assert_allclose(drawn["lattice alone"], mob.mechanism_mobility["lattice"])
    np.testing.assert_allclose(drawn["ionized impurities alone (Brooks-Herring)"], bh,
                               rtol=1e-6)
    block = joint.to_dict()["mobility"]["electron"]["mechanism_mobility_cm2_per_Vs"]
    assert set(block) == {"lattice", "brooks-herring"} and len(block["lattice"]) == t.size


def test_report_draws_it_and_states_the_narrowing(joint, tmp_path):
    paths = write_fit_report(joint, tmp_path / "rep")
    img = mpimg.imread(paths["mobility.png"])
    assert img.shape[0] > 300
    page = render_html(joint, {})
    m = re.search(r"narrowed the 95 % interval of N_A from (.*?) \(density only\) to (.*?) "
                  r"\(joint fit\)", page)
    assert m and "…" in m.group(2)


def test_density_only_fit_has_no_mobility_figure(run_file):
    base = freezeout.fit_file(run_file)
    assert mobility_figure(base) is None and "narrowed" not in render_html(base, {})
