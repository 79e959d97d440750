"""The lot report written from typed records: files, charts, escaping, the CSV export.

The qualifications are synthetic (tests/conftest_storage.py: built from the record classes,
not through the command line). What the report must show is the project's own layout
(project choice, no source); the decision-rule words are JCGM 106:2012's guarded and simple
acceptance.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
import io
import json

import matplotlib.image as mpimg
import pytest

import conftest_storage as cs
from freezeout.records.verdicts import DEFERENCE, RULE_IN_WORDS
from freezeout.reporting.lot_figures import claim_axes
from freezeout.reporting.lot_report import CSV_COLUMNS, lot_csv, write_lot_report
from freezeout.reporting.trend_figures import trend_axes, write_trend_png
from freezeout.storage import TrendPoint

TRICKY = "<b>A&B</b>"  # a supplier name that is also markup


@pytest.fixture(scope="module")
def mixed():
    return cs.mixed_lot_qualification(supplier=TRICKY, note="remark <i>in italics</i> & more")


@pytest.fixture(scope="module")
def report(mixed, tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    return folder, write_lot_report(mixed, folder / "KRW-MIX-1")


def test_every_file_is_written_and_the_pngs_decode(report, mixed):
    _, written = report
    assert set(written) == {"lot.json", "lot.csv", "lot_report.html", "chart_claim2.png",
                            "chart_claim3.png", "chart_claim4.png"}  # no chart of a type claim
    for name, path in written.items():
        assert path.is_file() and path.stat().st_size > 0, name
        if name.endswith(".png"):
            img = mpimg.imread(path)
            assert img.ndim == 3 and img.shape[0] > 200 and img.shape[1] > 400, name
    # lot.json is the record's JSON form, exactly
    assert json.loads(written["lot.json"].read_text()) == mixed.to_dict()


def test_charts_have_their_axes_labels(mixed):
    rho = claim_axes(mixed.verdict, "claim[2]")
    assert rho.get_xlabel() == "wafer"
    assert rho.get_ylabel() == "resistivity ρ [Ω cm]"
    assert rho.get_title(loc="left") == "claim[2]: resistivity at 296.15 K"
    ticks = [t.get_text() for t in rho.get_xticklabels()]
    assert ticks == ["W01\naccept", "W02\nindeterminate", "W03\nindeterminate\n(no value)"]
    net = claim_axes(mixed.verdict, "claim[3]")
    assert net.get_yscale() == "log"  # net doping always on a log axis
    assert net.get_ylabel() == "net doping |N$_D$ − N$_A$| [cm⁻³]"
    assert net.get_title(loc="left") == "claim[3]: net doping"
    legend = [t.get_text() for t in net.get_legend().get_texts()]
    assert "±U (k = 2)" in legend and "±u" in legend
    with pytest.raises(ValueError, match="no specification window"):
        claim_axes(mixed.verdict, "claim[1]")  # the type claim
    with pytest.raises(ValueError, match="no wafer has claim"):
        claim_axes(mixed.verdict, "claim[9]")


def test_html_escapes_the_text_of_the_lot_file(report):
    _, written = report
    page = written["lot_report.html"].read_text()
    assert TRICKY not in page
    assert "supplier &lt;b&gt;A&amp;B&lt;/b&gt;" in page
    assert "remark &lt;i&gt;in italics&lt;/i&gt; &amp; more" in page
    assert "certificate C-&lt;7&gt;" in page
    assert "resistivity taken &lt;as written&gt; &amp; unchecked" in page  # a claim's note
    assert "too few points &lt;2&gt;" in page  # the unmeasured wafer's reason
    assert "&lt;options&gt;" in page and "<options>" not in page
    # the rule in words, and the deference sentence once, in bold
    assert html.escape(RULE_IN_WORDS["guarded"]) in page
    deference = html.escape(DEFERENCE)
    assert page.count(deference) == 1 and f"<strong>{deference}</strong>" in page
    for name in ("chart_claim2.png", "chart_claim3.png", "chart_claim4.png"):
        assert f"({name})</figcaption>" in page
    assert page.count("src='data:image/png;base64,") == 3


def test_html_gives_the_reason_of_every_indeterminate_verdict(report, mixed):
    # project choice, no source: the reason stands in the page, not only in lot.json
    _, written = report
    page = written["lot_report.html"].read_text()
    reasons = page.split("<h2>Why indeterminate</h2>", 1)[1].split("<h2>", 1)[0]
    for w in mixed.verdict.wafers:
        for c in w.claims:
            if c.verdict != "indeterminate":
                continue
            sentence = html.escape(c.sentence)
            assert sentence in page, (w.wafer_id, c.claim_key)  # beside the claim's row
            if w.wafer_id == "W02":
                assert sentence in reasons
    # W02's resistivity has no uncertainty: guarded acceptance cannot prove conformity
    assert "W02" in reasons and "cannot prove conformity" in reasons
    # the unmeasured wafer: one line with its reason, not one per claim
    assert "W03" in reasons and reasons.count("too few points &lt;2&gt;") == 1
    assert "W01" not in reasons  # every claim of W01 is accepted


def test_csv_rows_match_the_verdicts(report, mixed):
    _, written = report
    text = written["lot.csv"].read_text()
    assert text == lot_csv(mixed)
    rows = list(csv.DictReader(io.StringIO(text)))
    assert tuple(rows[0]) == CSV_COLUMNS
    pairs = [(w, c) for w in mixed.verdict.wafers for c in w.claims]
    assert len(rows) == len(pairs) == 12
    for row, (w, c) in zip(rows, pairs, strict=True):
        assert (row["lot"], row["supplier"], row["lot_date"]) == ("KRW-MIX-1", TRICKY,
                                                                  "2026-11-20")
        assert (row["wafer"], row["claim"], row["quantity"]) == (w.wafer_id, c.claim_key,
                                                                 c.quantity)
        assert (row["verdict"], row["rule"], row["method"]) == (c.verdict, "guarded", c.method)
        for col, value in (("measured", c.measured), ("stderr", c.stderr), ("U", c.expanded),
                           ("margin_in_U", c.margin),
                           ("p_conformance", c.conformance_probability)):
            if value is None:
                assert row[col] == "", (w.wafer_id, c.claim_key, col)
            elif isinstance(value, str):
                assert row[col] == value
            else:
                assert float(row[col]) == value  # full precision: repr round-trips
    by = {(r["wafer"], r["claim"]): r for r in rows}
    assert by[("W01", "claim[1]")]["claimed_type"] == "n"
    assert by[("W01", "claim[1]")]["spec_min"] == by[("W01", "claim[1]")]["unit"] == ""
    assert (by[("W01", "claim[2]")]["spec_min"], by[("W01", "claim[2]")]["spec_max"]) == (
        "8.0", "12.0")
    assert by[("W01", "claim[4]")]["spec_max"] == ""  # one-sided window
    assert by[("W02", "claim[2]")]["stderr"] == ""  # no uncertainty given
    assert by[("W02", "claim[2]")]["verdict"] == "indeterminate"  # guarded, u unknown
    assert all(by[("W03", k)]["verdict"] == "indeterminate"
               for k in ("claim[1]", "claim[2]", "claim[3]", "claim[4]"))


def _point(lot, day, quantity, mean, spec=(0.8, 1.2), temperature=None):
    return TrendPoint(supplier=TRICKY, lot=lot, lot_date=day, quantity=quantity,
                      unit="ohm cm" if quantity == "resistivity" else "cm^-3",
                      temperature_K=temperature, n_wafers=3, mean_ratio=mean,
                      min_ratio=mean - 0.05, max_ratio=mean + 0.05, spec_min_ratio=spec[0],
                      spec_max_ratio=spec[1], lot_verdict="accept", lot_record_id=1)


def test_trend_figure_from_trend_points(tmp_path):
    points = [_point("L1", dt.date(2026, 9, 1), "resistivity", 1.0, temperature=296.15),
              _point("L1", dt.date(2026, 9, 1), "net_doping", 0.95, spec=(0.9, 1.1)),
              _point("L2", dt.date(2026, 10, 1), "net_doping", 1.05, spec=(0.9, 1.1))]
    ax = trend_axes(points, TRICKY)
    assert ax.get_xlabel() == "lot (date, lot verdict)"
    assert ax.get_ylabel() == "measured / claimed [1]"
    assert ax.get_title(loc="left") == f"{TRICKY}: measured over claimed, per lot"
    assert [t.get_text() for t in ax.get_xticklabels()] == ["L1\n2026-09-01\naccept",
                                                            "L2\n2026-10-01\naccept"]
    path = write_trend_png(points, TRICKY, tmp_path / "new folder" / "trend.png")
    assert path == tmp_path / "new folder" / "trend.png"
    assert mpimg.imread(path).ndim == 3
    with pytest.raises(ValueError, match="no trend points"):
        write_trend_png([], TRICKY, tmp_path / "none.png")
    assert not (tmp_path / "none.png").exists()


def test_uncertainty_bars_stand_beside_their_markers(mixed):
    """The ±U bars are drawn beside each wafer's marker, so a U smaller than the marker is
    still seen (project choice, no source)."""
    from matplotlib.collections import LineCollection

    from freezeout.reporting.lot_figures import BAR_OFFSET

    ax = claim_axes(mixed.verdict, "claim[2]")
    markers = [x for line in ax.get_lines() if line.get_linestyle() in ("None", "none", "")
               for x in line.get_xdata()]
    bars = [seg[0][0] for c in ax.collections if isinstance(c, LineCollection)
            for seg in c.get_segments() if len(seg) == 2 and seg[0][0] == seg[1][0]]
    assert markers and bars
    for x in bars:
        assert min(abs(x - m - BAR_OFFSET) for m in markers) < 1e-9


def test_group_labels_drop_the_shared_prefix_and_stay_short():
    """Long wafer ids would run into each other under 20 groups (project choice, no
    source): the prefix all share is named once, each label keeps its end."""
    from freezeout.reporting.lot_summary_figure import ID_CHARS, id_labels

    prefix, short = id_labels([f"KRW-BIG-120-W{i:03d}" for i in range(1, 121)])
    assert prefix == "KRW-BIG-120-" and short("KRW-BIG-120-W007") == "W007"
    prefix, short = id_labels(["W1", "W2"])  # no separator in the shared part: kept whole
    assert prefix == "" and short("W2") == "W2"
    prefix, short = id_labels(["alpha-wafer-number-0001", "beta-wafer-number-0002"])
    assert prefix == "" and short("alpha-wafer-number-0001") == "…mber-0001"
    assert len(short("alpha-wafer-number-0001")) == ID_CHARS
