"""Large lots and long histories: figures of bounded size, history written in one batch.

The qualifications are synthetic (tests/conftest_storage.py: the fictional supplier "Kestrel
Ridge Wafers"), replicated to 1,000 wafers and 10,000 lots. The size limits (about 2,000
pixels wide at most, one size at any count) are a project choice, no source.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import io

import matplotlib.image as mpimg
import pytest
from sqlalchemy import event, func, select

import conftest_storage as cs
from freezeout.records.history import TrendPoint
from freezeout.reporting.figures import png_bytes
from freezeout.reporting.lot_figures import claim_axes
from freezeout.reporting.lot_report import lot_figures
from freezeout.reporting.lot_summary_figure import wafer_groups
from freezeout.reporting.trend_figures import trend_axes
from freezeout.storage import open_store
from freezeout.storage.schema import claim_records, lot_records

MAX_WIDTH_PX = 2000


def pixels(ax) -> tuple[int, int]:
    png = png_bytes(ax)
    ax.figure.clear()
    h, w = mpimg.imread(io.BytesIO(png), format="png").shape[:2]
    return w, h


def big_lot(n: int):
    q = cs.mixed_lot_qualification()
    v = q.verdict
    wafers = tuple(dataclasses.replace(v.wafers[i % len(v.wafers)], wafer_id=f"W{i + 1:04d}")
                   for i in range(n))
    return dataclasses.replace(q, verdict=dataclasses.replace(v, wafers=wafers))


def test_groups_cover_every_wafer_once():
    for n in (1, 7, 20, 21, 999, 1000):
        groups = wafer_groups(n)
        assert [i for g in groups for i in g] == list(range(n))
        assert len(groups) <= 20 and max(map(len, groups)) - min(map(len, groups)) <= 1


def test_lot_charts_stay_bounded_at_1000_wafers():
    sizes = {n: [pixels(claim_axes(big_lot(n).verdict, key)) for key in ("claim[2]", "claim[3]")]
             for n in (20, 21, 1000)}
    for n, dims in sizes.items():
        for w, h in dims:
            assert w <= MAX_WIDTH_PX and h <= 1000, (n, w, h)
    assert sizes[1000] == sizes[21]  # one size above the per-wafer chart, whatever the count


def test_lot_report_figures_of_a_large_lot_say_they_are_grouped():
    figures = lot_figures(big_lot(1000))
    assert figures and all("groups of consecutive wafers" in cap
                           for _, cap in figures.values())


def trend_points(n_lots: int) -> list[TrendPoint]:
    start = dt.date(2000, 1, 1)
    return [TrendPoint(supplier=cs.SUPPLIER, lot=f"L{i:05d}",
                       lot_date=start + dt.timedelta(days=i), quantity="net_doping",
                       unit="cm^-3", temperature_K=None, n_wafers=3,
                       mean_ratio=1.0 + 0.01 * (i % 11), min_ratio=0.95, max_ratio=1.12,
                       spec_min_ratio=0.7, spec_max_ratio=1.3,
                       lot_verdict="reject" if i % 9 == 0 else "accept", lot_record_id=i)
            for i in range(n_lots)]


def test_trend_figure_stays_bounded_at_10000_lots():
    small = pixels(trend_axes(trend_points(14), cs.SUPPLIER))
    big = pixels(trend_axes(trend_points(10_000), cs.SUPPLIER))
    mid = pixels(trend_axes(trend_points(15), cs.SUPPLIER))
    assert small[0] <= MAX_WIDTH_PX and big[0] <= MAX_WIDTH_PX
    assert big == mid


def lots(n: int):
    return [cs.lot_qualification(lot=f"KRW-B{i:03d}", key=f"lot-{i}") for i in range(n)]


def test_save_lots_is_one_transaction(tmp_path):
    with open_store(f"sqlite:///{tmp_path / 'h.sqlite'}") as store:
        commits = []
        event.listen(store.engine, "commit", lambda conn: commits.append(1))
        batch = lots(30)
        outcomes = store.save_lots(batch)
        assert len(commits) == 1
        assert all(o.created for o in outcomes)
        assert len({o.record_id for o in outcomes}) == 30
        again = store.save_lots(batch[:5])  # stored once: the same ids, nothing new
        assert [o.record_id for o in again] == [o.record_id for o in outcomes[:5]]
        assert not any(o.created for o in again)
        twice = store.save_lots(lots(32)[30:] * 2)  # a lot given twice is stored once
        assert [o.created for o in twice] == [True, True, False, False]
        with store.engine.connect() as conn:
            n_claims = conn.execute(select(func.count()).select_from(claim_records)).scalar()
        assert n_claims == sum(len(cs_rows) for cs_rows in
                               ([c for w in q.verdict.wafers for c in w.claims]
                                for q in lots(32)))


def test_save_lots_failing_midway_stores_nothing(tmp_path, monkeypatch):
    import freezeout.storage.store as store_module

    real = store_module.claim_rows

    def broken(verdict, lot_record_id):  # a claim row the schema refuses (no verdict)
        rows = real(verdict, lot_record_id)
        if verdict.lot == "KRW-B007":
            rows[0]["verdict"] = None
        return rows

    monkeypatch.setattr(store_module, "claim_rows", broken)
    with open_store(f"sqlite:///{tmp_path / 'h.sqlite'}") as store:
        with pytest.raises(Exception):  # noqa: B017, PT011 - the database's own error
            store.save_lots(lots(10))
        with store.engine.connect() as conn:
            assert conn.execute(select(func.count()).select_from(lot_records)).scalar() == 0
            assert conn.execute(select(func.count()).select_from(claim_records)).scalar() == 0


def test_save_qualification_writes_its_fits_in_one_transaction(tmp_path):
    with open_store(f"sqlite:///{tmp_path / 'h.sqlite'}") as store:
        commits = []
        event.listen(store.engine, "commit", lambda conn: commits.append(1))
        fits = [cs.fit_result(name=f"w{i:02d}.csv") for i in range(12)]
        saved = store.save_qualification(cs.lot_qualification(), fits)
        assert len(commits) == 1 and saved.fits_new == 12 and saved.lot.created
        assert store.save_qualification(cs.lot_qualification(), fits).fits_new == 0
