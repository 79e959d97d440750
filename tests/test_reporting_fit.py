"""The fit side of the reporting layer: each figure, the report files, the HTML page."""

from __future__ import annotations

import json
from dataclasses import dataclass, replace

import matplotlib.image as mpimg
import numpy as np
import pytest
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from freezeout.fitting.curves import model_curves
from freezeout.fitting.fit import fit_run
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel
from freezeout.physics.simulation import simulate, temperature_grid
from freezeout.records.run import RunData
from freezeout.reporting import figures as fg
from freezeout.reporting.fit_report import render_html, write_fit_report
from freezeout.reporting.transport_figure import transport_figure

SI = get_material("Si")


@dataclass(frozen=True)
class _Finding:
    """A stand-in for a reduction finding: what the report reads of one."""

    temperature: float
    severity: str
    code: str
    message: str

    def to_dict(self) -> dict:
        return {"temperature": self.temperature, "severity": self.severity, "code": self.code,
                "message": self.message}


def _run(n=30, transport=True):
    """Si:P run, 20-600 K, 2 % seeded noise; one severe point, one of opposite Hall sign."""
    t = temperature_grid(20.0, 600.0, n)
    sim = simulate(SI, t, [DopantLevel("donor", 1e16, 0.045)],
                   [DopantLevel("acceptor", 1e13, None)])
    rng = np.random.default_rng(3)
    d = sim.n * np.exp(rng.normal(0.0, 0.02, n))
    carriers = ["n"] * n
    carriers[-1] = "p"
    severe = np.zeros(n, dtype=bool)
    severe[4] = True
    extra = {}
    if transport:
        # arbitrary positive transport values: the figure only draws them
        extra = {"resistivity": 6.0e15 / d, "mobility": np.full(n, 1000.0),
                 "resistivity_err": np.full(n, 0.01), "mobility_err": np.full(n, 10.0)}
    return RunData("run <b>.csv", "ab" * 32, t, d, 0.02 * d, "n", tuple(carriers),
                   severe=severe, flags=("",) * 4 + ("contact",) + ("",) * (n - 5),
                   findings=(_Finding(float(t[4]), "severe", "contact", "bad <contact> & co"),),
                   **extra)


PROVENANCE = {"input": "run <b>.csv", "sha256": "ab" * 32, "tool_version": "0.0",
              "date": "2000-01-01", "options": {"note": "x < y"}, "hall_factor": 1.0,
              "metadata": {"operator": "<script>alert(1)</script>", "lab": "a & b"}}


@pytest.fixture(scope="module")
def result():
    return fit_run(_run(), SI, provenance=dict(PROVENANCE))


@pytest.fixture(scope="module")
def curves(result):
    return model_curves(result)


def _labels(ax) -> list[str]:
    return [ln.get_label() for ln in ax.get_lines()]


def test_new_axes_makes_or_passes_through():
    """new_axes(None) draws on a fresh Figure of the given size; an Axes passes through."""
    ax = fg.new_axes(None, (5.0, 3.0))
    assert isinstance(ax, Axes) and tuple(ax.figure.get_size_inches()) == (5.0, 3.0)
    assert fg.new_axes(ax) is ax


def test_density_axes(result, curves):
    """Log density against 1000/T with a kelvin axis on top; data, fit, levels, markers."""
    ax = fg.density_axes(result, curves)
    assert isinstance(ax, Axes)
    assert ax.get_xlabel() == "1000 / T [1/K]" and ax.get_ylabel() == "density [cm⁻³]"
    assert ax.get_yscale() == "log"
    labels = _labels(ax)
    assert "fit: electron density" in labels and "ionized N_D1+" in labels
    assert "N_A (compensating, fully ionized)" in labels
    assert "opposite Hall sign (not fitted)" in labels
    assert "failed a severe quality check (not fitted)" in labels
    fit = ax.get_lines()[labels.index("fit: electron density")]
    np.testing.assert_allclose(fit.get_xdata(), 1000.0 / curves.temperature)
    extrapolated = ax.get_lines()[labels.index("model (extrapolated)")]
    solid = np.isfinite(fit.get_ydata())  # the fitted range; the rest is dashed
    np.testing.assert_allclose(np.where(solid, fit.get_ydata(), extrapolated.get_ydata()),
                               curves.majority)
    flagged = ax.get_lines()[labels.index("failed a severe quality check (not fitted)")]
    np.testing.assert_allclose(flagged.get_xdata(), 1000.0 / result.data.temperature[[4]])
    assert [c.get_xlabel() for c in ax.child_axes] == ["temperature [K]"]
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "measured (fitted)" in legend


def test_residual_axes(result):
    """Residual in % of the fit against 1000/T, left-out points marked by their reason."""
    ax = fg.residual_axes(result)
    assert ax.get_xscale() == "linear" and ax.get_xlabel() == "1000 / T [1/K]"
    assert ax.get_ylabel() == "measured / fit − 1 [%]"
    d = result.data
    expected = 100.0 * (d.density / d.model_density - 1.0)
    crosses = ax.get_lines()[_labels(ax).index("failed a severe quality check (not fitted)")]
    np.testing.assert_allclose(crosses.get_ydata(), expected[[4]])
    flipped = ax.get_lines()[_labels(ax).index("opposite Hall sign (not fitted)")]
    np.testing.assert_allclose(flipped.get_ydata(), expected[[-1]])
    fitted = ax.containers[0].lines[0]  # the errorbar's data line
    np.testing.assert_allclose(fitted.get_ydata(), expected[d.used])


def test_fermi_and_edge_axes(result, curves):
    """Whole gap: E_c, E_v, E_D1, E_F in eV above E_v; the zoom measures from E_c, downward."""
    fig = fg.fermi_figure(result, curves)
    assert isinstance(fig, Figure) and len(fig.axes) == 2
    whole, edge = fig.axes
    assert whole.get_ylabel() == "energy above E_v [eV]" and whole.get_title() == "whole gap"
    labels = _labels(whole)
    assert labels == ["E_c", "E_v", "E_D1", "E_F"]  # no line for the fully ionized N_A
    np.testing.assert_allclose(whole.get_lines()[3].get_ydata(), curves.fermi_level)
    np.testing.assert_allclose(whole.get_lines()[0].get_ydata(), curves.band_gap)
    assert edge.get_ylabel() == "E_c − E [eV]"
    lo, hi = edge.get_ylim()
    assert lo > hi  # depth below E_c grows downward
    ef = edge.get_lines()[_labels(edge).index("E_F")]
    np.testing.assert_allclose(ef.get_ydata(), curves.band_gap - curves.fermi_level)


def test_ionization_axes(result, curves):
    """Ionized fraction per level in [0, 1], the compensating species dotted."""
    ax = fg.ionization_axes(result, curves)
    assert ax.get_ylabel() == "ionized fraction" and ax.get_ylim() == (-0.03, 1.05)
    labels = _labels(ax)
    assert labels[:2] == ["D1", "A (fully ionized by assumption)"]
    assert ax.get_lines()[1].get_linestyle() == ":"
    np.testing.assert_allclose(ax.get_lines()[0].get_ydata(), curves.ionized_fraction[0])


def test_transport_figure(result):
    """Resistivity and mobility on log axes; None for a run without either."""
    fig = transport_figure(result)
    assert [a.get_ylabel() for a in fig.axes] == ["resistivity [Ω cm]",
                                                  "Hall mobility [cm²/(V s)]"]
    assert all(a.get_yscale() == "log" and a.get_xscale() == "log" for a in fig.axes)
    bare = fit_run(_run(transport=False), SI, provenance=dict(PROVENANCE))
    assert transport_figure(bare) is None


def test_write_fit_report_files(result, tmp_path):
    """fit.json is the result's document, each PNG decodes, report.html embeds them."""
    paths = write_fit_report(result, tmp_path / "out")
    assert sorted(paths) == ["curves.csv", "density.png", "fermi_level.png", "fit.json",
                             "ionization.png", "report.html", "residuals.csv", "residuals.png",
                             "transport.png"]
    assert all(p.parent == tmp_path / "out" and p.is_file() for p in paths.values())
    assert json.loads(paths["fit.json"].read_text()) == json.loads(
        json.dumps(result.to_dict()))
    for name in paths:
        if name.endswith(".png"):
            img = mpimg.imread(paths[name])
            assert img.ndim == 3 and img.shape[0] > 100 and img.shape[1] > 100
    page = paths["report.html"].read_text()
    assert page.count("data:image/png;base64,") == 5
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == sorted(paths)


def test_html_escapes_text(result):
    """Metadata, file name, options and findings appear escaped, never as markup."""
    page = render_html(result, {"density.png": (b"\x89PNG", "caption <i> & more")})
    assert "<script>" not in page and "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "a &amp; b" in page
    assert "run &lt;b&gt;.csv" in page and "run <b>.csv" not in page
    assert "bad &lt;contact&gt; &amp; co" in page
    assert "x &lt; y" in page
    assert "caption &lt;i&gt; &amp; more" in page
    assert page.startswith("<!doctype html>") and page.rstrip().endswith("</html>")


def test_report_without_warnings_or_quality_section(result):
    """No warnings: the page says so; no findings or flags: no data-quality section."""
    clean = replace(result, warnings=(), data=replace(
        result.data, findings=(), flags=("",) * result.data.temperature.size))
    page = render_html(clean, {})
    assert "No warnings" in page and "Data quality" not in page
