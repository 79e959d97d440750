"""The report of a joint density and mobility fit: the mobility figure and the sentence on how
much the mobility narrowed the compensation. Synthetic run as in tests/test_joint_fit.py."""

from __future__ import annotations

import re

import matplotlib.image as mpimg
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
    assert "Hall mobility" in top.get_ylabel() and bottom.get_ylabel() == "r_H"
    labels = [t.get_text() for t in top.get_legend().get_texts()]
    assert "measured μ_H" in labels and any("lattice" in x for x in labels)
    r_h = bottom.get_lines()[0].get_ydata()
    assert 1.0 < r_h.min() and r_h.max() < 1.94  # between 1 and 315 pi/512 (BH alone)


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
