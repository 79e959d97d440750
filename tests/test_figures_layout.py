"""Layout of the fit figures: what sets each axis, what is marked as extrapolated, where the
legends go, which lines are named, and the plain columns behind the curves and residuals.

Every check here is a project choice about the figures (no source): the physics they draw is
checked in tests/test_reporting_fit.py and the fitting tests.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from freezeout.fitting.curves import model_curves
from freezeout.fitting.fit import fit_run
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel
from freezeout.physics.simulation import simulate, temperature_grid
from freezeout.records.run import RunData
from freezeout.reporting import figures as fg
from freezeout.reporting.figure_layout import is_visible

SI = get_material("Si")
N = 30
SEVERE = 4  # index of the point that failed a severe check
PROVENANCE = {"input": "layout.csv", "sha256": "cd" * 32, "tool_version": "0.0",
              "date": "2000-01-01", "options": {}, "hall_factor": 1.0, "metadata": {}}


def _run(carrier: str) -> RunData:
    """Si run 20-600 K with 2 % seeded noise; point 4 severe and 3x off, the last of opposite
    Hall sign and 5x low: both far outside the scatter of the fitted points."""
    t = temperature_grid(20.0, 600.0, N)
    if carrier == "n":
        sim = simulate(SI, t, [DopantLevel("donor", 1e16, 0.045)],
                       [DopantLevel("acceptor", 1e13, None)])
        major = sim.n
    else:
        sim = simulate(SI, t, [DopantLevel("donor", 1e13, None)],
                       [DopantLevel("acceptor", 1e16, 0.045)])
        major = sim.p
    d = major * np.exp(np.random.default_rng(5).normal(0.0, 0.02, N))
    d[SEVERE] *= 3.0
    d[-1] *= 0.2
    carriers = [carrier] * N
    carriers[-1] = "p" if carrier == "n" else "n"
    severe = np.zeros(N, dtype=bool)
    severe[SEVERE] = True
    flags = tuple("contact" if i == SEVERE else "" for i in range(N))
    return RunData("layout.csv", "cd" * 32, t, d, 0.02 * d, carrier, tuple(carriers),
                   severe=severe, flags=flags)


@pytest.fixture(scope="module", params=["n", "p"])
def fitted(request):
    result = fit_run(_run(request.param), SI, provenance=dict(PROVENANCE))
    return result, model_curves(result)


def _fitted_range(result):
    t = result.data.temperature[result.data.used]
    return t.min(), t.max()


def _residuals(result):
    d = result.data
    return 100.0 * (d.density / d.model_density - 1.0), 100.0 * d.density_err / d.model_density


def _lines(ax, label):
    return [ln for ln in ax.get_lines() if ln.get_label() == label]


def _renderer(fig: Figure):
    FigureCanvasAgg(fig)
    fig.draw_without_rendering()  # runs the constrained layout, as saving does
    return fig.canvas.get_renderer()


# --- 1. residuals: scaled by the fitted points, against 1000/T like the density figure ---

def test_residual_scale_is_set_by_fitted_points(fitted):
    """The y range holds every fitted point with its error bar, not the left-out outliers."""
    result, _ = fitted
    ax = fg.residual_axes(result)
    r, e = _residuals(result)
    used = result.data.used
    lo, hi = ax.get_ylim()
    assert lo <= np.min(r[used] - e[used]) and np.max(r[used] + e[used]) <= hi
    span = np.max(np.abs(np.r_[r[used] - e[used], r[used] + e[used]]))
    assert hi - lo < 3.0 * span  # the +200 % and -80 % points would stretch it far more
    assert not (lo <= r[SEVERE] <= hi) and not (lo <= r[-1] <= hi)


def test_residual_outliers_sit_on_the_edge_pointing_out(fitted):
    """A left-out point beyond the axis is a triangle on the edge it went past, unclipped."""
    result, _ = fitted
    ax = fg.residual_axes(result)
    lo, hi = ax.get_ylim()
    x = 1000.0 / result.data.temperature
    up = _lines(ax, "failed a severe quality check (not fitted, off scale)")
    down = _lines(ax, "opposite Hall sign (not fitted, off scale)")
    assert len(up) == 1 and len(down) == 1
    assert up[0].get_marker() == "^" and down[0].get_marker() == "v"
    np.testing.assert_allclose(up[0].get_xdata(), x[[SEVERE]])
    np.testing.assert_allclose(up[0].get_ydata(), [hi])
    np.testing.assert_allclose(down[0].get_xdata(), x[[-1]])
    np.testing.assert_allclose(down[0].get_ydata(), [lo])
    assert not up[0].get_clip_on() and not down[0].get_clip_on()
    values = [t.get_text() for t in ax.texts]
    r, _ = _residuals(result)
    assert f"{r[SEVERE]:+.0f} %" in values  # a plus sign, and a minus (not a hyphen):
    assert f"{r[-1]:+.0f} %".replace("-", "−") in values


def test_residuals_share_the_density_x_axis(fitted):
    """Residuals against 1000/T, with the same limits and kelvin top axis as the density."""
    result, curves = fitted
    res = fg.residual_axes(result)
    dens = fg.density_axes(result, curves)
    assert res.get_xlabel() == dens.get_xlabel() == "1000 / T [1/K]"
    assert res.get_xscale() == "linear"
    np.testing.assert_allclose(res.get_xlim(), dens.get_xlim())
    assert [c.get_xlabel() for c in res.child_axes] == ["temperature [K]"]
    fitted_line = res.containers[0].lines[0]
    used = result.data.used
    np.testing.assert_allclose(fitted_line.get_xdata(), 1000.0 / result.data.temperature[used])


# --- 2. model curves: solid over the fitted range, marked outside it ---

def test_density_model_dashed_outside_the_fitted_range(fitted):
    """The fit line is solid only between the lowest and highest fitted temperature; the
    rest of the grid is a dashed line named as extrapolated; together they cover the grid."""
    result, curves = fitted
    ax = fg.density_axes(result, curves)
    t_lo, t_hi = _fitted_range(result)
    word = "electron" if result.carrier == "n" else "hole"
    (solid,) = _lines(ax, f"fit: {word} density")
    (dashed,) = _lines(ax, "model (extrapolated)")
    assert solid.get_linestyle() == "-" and dashed.get_linestyle() == "--"
    t = curves.temperature
    inside = (t >= t_lo) & (t <= t_hi)
    ys, yd = np.asarray(solid.get_ydata()), np.asarray(dashed.get_ydata())
    np.testing.assert_array_equal(np.isfinite(ys), inside)
    assert np.isfinite(yd[~inside]).all()
    assert np.isfinite(yd[inside]).sum() <= 2  # at most the joins at the two ends
    covered = np.where(np.isfinite(ys), ys, yd)
    np.testing.assert_allclose(covered, curves.majority)


def test_level_curves_fade_outside_the_fitted_range(fitted):
    """Each contribution is drawn in full strength inside the fitted range only."""
    result, curves = fitted
    ax = fg.density_axes(result, curves)
    t_lo, t_hi = _fitted_range(result)
    inside = (curves.temperature >= t_lo) & (curves.temperature <= t_hi)
    for ln in ax.get_lines():
        if ln.get_label().startswith("ionized N_"):
            assert np.array_equal(np.isfinite(np.asarray(ln.get_ydata())), inside)
    faded = [ln for ln in ax.get_lines() if (ln.get_alpha() or 1.0) < 0.5]
    assert faded, "no faded extrapolated parts drawn"


def test_fermi_and_ionization_shade_the_extrapolated_range(fitted):
    """Fermi panels and ionization: temperatures outside the fitted range are shaded."""
    result, curves = fitted
    t_lo, t_hi = _fitted_range(result)
    fig = fg.fermi_figure(result, curves)
    for ax in (*fig.axes, fg.ionization_axes(result, curves)):
        spans = [p for p in ax.patches if p.get_gid() == "extrapolated"]
        edges = sorted(round(float(v), 6) for p in spans for v in (p.get_x(),
                                                                   p.get_x() + p.get_width()))
        assert len(spans) == 2
        np.testing.assert_allclose([edges[1], edges[2]], [t_lo, t_hi], rtol=1e-6)


# --- 3. legends: only visible lines, never over the data ---

def _points_in(bbox, ax) -> int:
    """How many drawn vertices of the axes' lines fall inside ``bbox`` (display units)."""
    count = 0
    for ln in ax.get_lines():
        xy = np.column_stack([np.asarray(ln.get_xdata(), float),
                              np.asarray(ln.get_ydata(), float)])
        xy = xy[np.all(np.isfinite(xy), axis=1)]
        if xy.size == 0:
            continue
        with np.errstate(all="ignore"):
            px = ln.get_transform().transform(xy)
        px = px[np.all(np.isfinite(px), axis=1)]
        inside = ((px[:, 0] >= bbox.x0) & (px[:, 0] <= bbox.x1)
                  & (px[:, 1] >= bbox.y0) & (px[:, 1] <= bbox.y1))
        count += int(inside.sum())
    return count


def _figures(result, curves):
    return [fg.density_axes(result, curves).figure, fg.residual_axes(result).figure,
            fg.fermi_figure(result, curves), fg.ionization_axes(result, curves).figure]


def test_legends_cover_no_data_and_no_axis_label(fitted):
    """No legend box holds a data point or curve vertex, nor overlaps the x-axis label."""
    result, curves = fitted
    for fig in _figures(result, curves):
        renderer = _renderer(fig)
        for ax in fig.axes:
            legend = ax.get_legend()
            if legend is None:
                continue
            box = legend.get_window_extent(renderer)
            assert _points_in(box, ax) == 0, ax.get_ylabel()
            assert not box.overlaps(ax.xaxis.label.get_window_extent(renderer))


def test_no_legend_entry_without_a_visible_line(fitted):
    """A contribution far below the density axis gets no legend entry; every entry that is
    listed names a line with a visible stretch inside the axes."""
    result, curves = fitted
    (k,) = [i for i, f in enumerate(curves.ionized_fraction) if np.all(f == 1.0)]  # compensating
    hidden = replace(curves, ionized_density=tuple(
        d * 1e-30 if i == k else d for i, d in enumerate(curves.ionized_density)))
    ax = fg.density_axes(result, hidden)
    entries = [t.get_text() for t in ax.get_legend().get_texts()]
    assert not any("compensating" in e for e in entries)
    assert any("compensating" in e for e in [t.get_text() for t in
                                             fg.density_axes(result, curves)
                                             .get_legend().get_texts()])
    for fig in _figures(result, curves):
        for a in fig.axes:
            legend = a.get_legend()
            if legend is None:
                continue
            bars = {c.get_label(): [c.lines[0]] for c in a.containers}  # error-bar points
            for handle, text in zip(legend.legend_handles, legend.get_texts(), strict=True):
                if not hasattr(handle, "get_xdata"):
                    continue  # a patch entry (the shaded range), checked above
                owners = _lines(a, text.get_text()) or bars.get(text.get_text())
                assert owners and is_visible(a, owners), text.get_text()


# --- 4. Fermi panels: same temperature range, every level named ---

def test_fermi_panels_share_the_temperature_range(fitted):
    result, curves = fitted
    whole, edge = fg.fermi_figure(result, curves).axes
    assert whole.get_xlim() == edge.get_xlim()
    assert whole.get_xlim() == (curves.temperature[0], curves.temperature[-1])


def test_every_level_is_named_in_both_fermi_panels(fitted):
    """Each level with an energy has a text label on the whole-gap panel and a legend entry
    (or label) on the zoom; the labels of the whole-gap panel do not overlap each other."""
    result, curves = fitted
    fig = fg.fermi_figure(result, curves)
    whole, edge = fig.axes
    names = [f"E_{n}" for n, e in zip(curves.level_names, curves.level_energy, strict=True)
             if not np.all(np.isnan(e))]
    assert names
    texts = {t.get_text(): t for t in whole.texts}
    edge_names = {t.get_text() for t in edge.get_legend().get_texts()} | {
        t.get_text() for t in edge.texts}
    for name in names:
        assert name in texts and name in edge_names
    renderer = _renderer(fig)
    boxes = [t.get_window_extent(renderer) for t in whole.texts]
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert not a.overlaps(b)


# --- plain columns for a later CSV export ---

def test_curve_columns(fitted):
    """One equal-length column per curve, in the units of its name; a flag for the grid
    points outside the fitted range."""
    result, curves = fitted
    cols = fg.curve_columns(result, curves)
    n = curves.temperature.size
    assert all(isinstance(v, np.ndarray) and v.shape == (n,) for v in cols.values())
    np.testing.assert_array_equal(cols["temperature_K"], curves.temperature)
    np.testing.assert_array_equal(cols["majority_cm3"], curves.majority)
    np.testing.assert_array_equal(cols["fermi_level_eV"], curves.fermi_level)
    np.testing.assert_array_equal(cols["band_gap_eV"], curves.band_gap)
    for i, name in enumerate(curves.level_names):
        np.testing.assert_array_equal(cols[f"ionized_{name}_cm3"], curves.ionized_density[i])
        np.testing.assert_array_equal(cols[f"ionized_fraction_{name}"],
                                      curves.ionized_fraction[i])
    t_lo, t_hi = _fitted_range(result)
    np.testing.assert_array_equal(cols["extrapolated"], (curves.temperature < t_lo)
                                  | (curves.temperature > t_hi))


def test_residual_columns(fitted):
    """Per measured point: the data, the model, the residual the figure draws, and why a
    point was left out."""
    result, _ = fitted
    cols = fg.residual_columns(result)
    d = result.data
    assert {v.shape for v in cols.values()} == {(N,)}
    r, e = _residuals(result)
    np.testing.assert_allclose(cols["residual_percent"], r)
    np.testing.assert_allclose(cols["residual_err_percent"], e)
    np.testing.assert_allclose(cols["ln_residual"], np.log(d.density / d.model_density))
    np.testing.assert_array_equal(cols["used"], d.used)
    assert cols["left_out"][SEVERE] == "severe" and cols["left_out"][-1] == "mixed"
    assert set(cols["left_out"][d.used]) == {""}
    ax = fg.residual_axes(result)
    np.testing.assert_allclose(ax.containers[0].lines[0].get_ydata(), r[d.used])


def test_log_axis_labels_are_plain_text():
    """Project choice, no source: log-axis labels are written in Unicode superscripts, not
    mathtext (each mathtext label parsed on a new canvas cost about 7 ms)."""
    from matplotlib.figure import Figure

    from freezeout.reporting.figure_output import plain_power, png_bytes

    assert plain_power(r"$\mathdefault{10^{15}}$") == "10\u00b9\u2075"
    assert plain_power(r"$\mathdefault{10^{-3}}$") == "10\u207b\u00b3"
    assert plain_power(r"$\mathdefault{2\times10^{15}}$") == "2\u00d710\u00b9\u2075"
    assert plain_power("T [K]") == "T [K]"
    fig = Figure()
    ax = fig.add_subplot()
    ax.set_yscale("log")
    ax.set_ylim(1.5e15, 3e17)
    png_bytes(fig)
    labels = [t.get_text() for t in ax.get_yticklabels() + ax.yaxis.get_minorticklabels()]
    assert "10\u00b9\u2076" in labels and not any("$" in s for s in labels)


def _titled(offset: bool, top_ticks: bool = False):
    """A figure with a centred and a left title; y values that need an offset text or not."""
    fig = Figure(figsize=(4.0, 3.0), layout="constrained")
    ax = fig.add_subplot()
    ax.plot([0.0, 1.0], [1e15 + 1.0, 1e15 + 5.0] if offset else [1.0, 5.0])
    ax.set_title("a long centred title over the axes")
    ax.set_title("left", loc="left")
    if top_ticks:
        ax.xaxis.tick_top()
    return fig, ax


@pytest.mark.parametrize("offset,top_ticks", [(False, False), (True, False), (False, True)])
def test_pinned_titles_draw_as_matplotlib_places_them(offset, top_ticks):
    """Project choice, no source: a title is pinned to the top of axes with nothing above
    them (no search of matplotlib's for decorations in its way), the image is the same as
    matplotlib's own placement; with an offset text or top ticks it is left to matplotlib."""
    import io

    from matplotlib.image import imread

    from freezeout.reporting.figure_output import png_bytes

    pinned, ax = _titled(offset, top_ticks)
    png = png_bytes(pinned)
    assert ax._autotitlepos is (offset or top_ticks)
    auto, _ = _titled(offset, top_ticks)
    buf = io.BytesIO()
    auto.savefig(buf, format="png", dpi=130)
    a, b = imread(io.BytesIO(png)), imread(io.BytesIO(buf.getvalue()))
    assert a.shape == b.shape
    assert np.abs(a[..., :3] - b[..., :3]).max() == 0.0
