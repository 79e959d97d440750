"""History database round trips, idempotence, concurrency, interruption and migrations.

Every test runs on a SQLite file and on PostgreSQL (a real server: start one with
``.ci/postgres.sh`` which exports FREEZEOUT_TEST_POSTGRES_URL; without it the PostgreSQL
variants are skipped). Each PostgreSQL test gets a database of its own. Data are synthetic.
"""

from __future__ import annotations

import datetime as dt
import multiprocessing
import os
import signal
import uuid

import pytest
from sqlalchemy import create_engine, event, func, inspect, select, text
from sqlalchemy.engine import make_url

import conftest_storage as cs
from freezeout.errors import InputError
from freezeout.storage import (
    LATEST_VERSION,
    MIGRATIONS,
    Migration,
    StorageError,
    canonical_json,
    default_url,
    make_engine,
    migrate,
    normalize_url,
    open_history,
    open_store,
    options_hash,
)
from freezeout.storage import engine as engine_module
from freezeout.storage.rows import claim_rows, claim_rows_from_document
from freezeout.storage.schema import claim_records, fit_records, lot_records, schema_version

PG_ENV = "FREEZEOUT_TEST_POSTGRES_URL"


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def store_url(request, tmp_path):
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'history.sqlite3'}"
        return
    base = os.environ.get(PG_ENV)
    if not base:
        pytest.skip(f"{PG_ENV} is not set (start a server with .ci/postgres.sh)")
    name = f"fz_{uuid.uuid4().hex[:12]}"
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"'))
        yield make_url(base).set(database=name).render_as_string(hide_password=False)
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
    finally:
        admin.dispose()


@pytest.fixture
def store(store_url):
    s = open_store(store_url)
    yield s
    s.close()


def count(store, table) -> int:
    with store.engine.begin() as conn:
        return conn.execute(select(func.count()).select_from(table)).scalar_one()


def save_lot(store, qualification=None):
    return store.save_lot(qualification or cs.lot_qualification())


# ---------------------------------------------------------------------------------------------


def test_fit_round_trip_and_idempotence(store):
    def fit(key="w01", options=None):
        return cs.fit_result(name="w01.csv", key=key,
                             options=options or {"model": "donor", "hall_factor": 1.0})

    result = fit()
    first = store.save_fit(result)
    assert first.created
    # full JSON kept, exactly
    assert store.get_result("fit", first.record_id) == result.to_dict()
    # the same input and options: nothing stored twice, same record returned
    again = store.save_fit(fit(options={"hall_factor": 1.0, "model": "donor"}))
    assert (again.record_id, again.created) == (first.record_id, False)
    assert count(store, fit_records) == 1
    # other options, or another input: a new record
    assert store.save_fit(fit(options={"model": "two donors"})).created
    assert store.save_fit(fit(key="w02")).created
    assert count(store, fit_records) == 3
    (rec, *_) = store.list_records(kind="fit")
    assert (rec.kind, rec.input_name, rec.input_sha256, rec.tool_version) == (
        "fit", "w01.csv", cs.sha("w01"), "0.1.0")
    assert rec.options == {"model": "donor", "hall_factor": 1.0}
    assert (rec.material, rec.carrier, rec.net_doping, rec.net_doping_stderr) == (
        "Si", "n", 5.0e14, 5.0e12)
    assert rec.created_at.tzinfo is not None
    assert abs(rec.created_at - dt.datetime.now(dt.UTC)) < dt.timedelta(minutes=5)
    with pytest.raises(KeyError):
        store.get_result("fit", 999)


def test_options_hash_is_canonical():
    assert options_hash({"a": 1, "b": [1, 2]}) == options_hash({"b": [1, 2], "a": 1})
    assert options_hash({"a": 1}) != options_hash({"a": 2})


def test_lot_round_trip_with_claim_rows(store):
    result = cs.lot_qualification()
    first = save_lot(store, result)
    assert first.created
    assert store.get_result("lot", first.record_id) == result.to_dict()
    assert not save_lot(store, result).created  # nothing stored twice
    assert count(store, lot_records) == 1
    rows = store.claim_rows(first.record_id)
    assert len(rows) == 9 == count(store, claim_records)  # 3 wafers x 3 claims, not doubled
    # wafer W03 resistivity 13.0, u = 0.25 -> U = 0.5, y - U = 12.5 >= 12: reject, margin -2
    r = next(r for r in rows if r["wafer_id"] == "W03" and r["quantity"] == "resistivity")
    assert (r["measured"], r["stderr"], r["spec_min"], r["spec_max"]) == (13.0, 0.25, 8.0, 12.0)
    assert (r["verdict"], r["margin"], r["claimed"], r["unit"]) == ("reject", -2.0, 10.0,
                                                                    "ohm cm")
    t = next(r for r in rows if r["wafer_id"] == "W01" and r["quantity"] == "type")
    assert (t["measured_text"], t["claimed_text"], t["measured"]) == ("n", "n", None)
    (rec,) = store.list_records()
    assert (rec.kind, rec.supplier, rec.lot, rec.lot_date, rec.verdict, rec.decision_rule) == (
        "lot", cs.SUPPLIER, "KRW-2611-07", dt.date(2026, 11, 3), "reject", "guarded")
    # provenance from the qualification: <folder>/<file> of the lot file, its input SHA-256,
    # options and tool version
    assert (rec.input_name, rec.input_sha256, rec.options, rec.tool_version) == (
        "lots/lot.toml", cs.sha("lot-a"), {"rule": "guarded"}, cs.TOOL_VERSION)


def test_typed_claim_rows_equal_the_rows_from_the_stored_json():
    # the claim rows written from the verdict records are those the schema step 2 backfill
    # derives from the stored lot JSON (project choice, no source: one meaning per column)
    for q in (cs.lot_qualification(), cs.lot_qualification(rule="simple",
                                                           resistivities=(7.0, 12.1))):
        assert claim_rows(q.verdict, 7) == claim_rows_from_document(q.to_dict(), 7)


def test_list_filters(store):
    save_lot(store, cs.lot_qualification(lot="L1", date="2026-09-01", key="L1"))
    save_lot(store, cs.lot_qualification(lot="L2", date="2026-11-01", key="L2"))
    save_lot(store, cs.lot_qualification(lot="X1", date="2026-10-01", key="X1",
                                         supplier="Another Fictional Supplier"))
    store.save_fit(cs.fit_result(name="w.csv", options={}))
    assert [r.lot for r in store.list_records(kind="lot")] == ["L1", "X1", "L2"]
    assert [r.lot for r in store.list_records(supplier=cs.SUPPLIER)] == ["L1", "L2"]
    assert [r.lot for r in store.list_records(supplier=cs.SUPPLIER, since="2026-10-15")] == [
        "L2"]
    assert [r.kind for r in store.list_records(since=dt.date(2026, 10, 15))] == ["lot", "fit"]
    with pytest.raises(ValueError, match="not a date"):
        store.list_records(since="last tuesday")


def test_trend_of_measured_over_claimed(store):
    # resistivity claim 8..12 (claimed 10 = midpoint): lot L1 measured 10, 11, 12 -> ratios
    # 1.0, 1.1, 1.2, mean 1.1; lot L2 measured 11, 12.5 -> 1.1, 1.25, mean 1.175.
    # Net doping claimed nominal 5e14, measured 5e14 -> ratio 1.
    save_lot(store, cs.lot_qualification(lot="L1", date="2026-09-01",
                                         resistivities=(10.0, 11.0, 12.0), key="L1"))
    save_lot(store, cs.lot_qualification(lot="L2", date="2026-11-01",
                                         resistivities=(11.0, 12.5), key="L2"))
    # L1 qualified again with other options: the latest record counts (one wafer, 9.0)
    save_lot(store, cs.lot_qualification(lot="L1", date="2026-09-01", resistivities=(9.0,),
                                         rule="simple", key="L1"))
    points = store.trend(cs.SUPPLIER)
    res = [p for p in points if p.quantity == "resistivity"]
    assert [(p.lot, p.n_wafers) for p in res] == [("L1", 1), ("L2", 2)]
    assert res[0].mean_ratio == pytest.approx(0.9)  # 9.0 / 10
    assert res[1].mean_ratio == pytest.approx(1.175)
    assert (res[1].min_ratio, res[1].max_ratio) == (pytest.approx(1.1), pytest.approx(1.25))
    assert (res[1].spec_min_ratio, res[1].spec_max_ratio) == (0.8, 1.2)  # 8/10, 12/10
    # L2 wafer 2: 12.5, U = 2 * 0.25 = 0.5, y - U = 12.0 >= T_U = 12 -> guarded reject
    assert res[1].lot_verdict == "reject"
    dop = [p for p in points if p.quantity == "net_doping"]
    assert all(p.mean_ratio == pytest.approx(1.0) for p in dop)
    assert not [p for p in points if p.quantity == "type"]
    assert store.trend("Nobody") == []


def test_schema_version_table_records_each_step(store):
    with store.engine.begin() as conn:
        rows = conn.execute(select(schema_version.c.version, schema_version.c.description)
                            .order_by(schema_version.c.version)).all()
    assert [v for v, _ in rows] == [m.version for m in MIGRATIONS] == [1, 2]
    assert store.schema_version() == LATEST_VERSION == 2


def test_opening_a_v1_database_migrates_and_backfills(store_url):
    engine = make_engine(store_url)
    try:
        assert migrate(engine, target=1) == 1
        with engine.begin() as conn:
            cols = {c["name"] for c in inspect(conn).get_columns("lot_records")}
            assert "decision_rule" not in cols
            assert not inspect(conn).has_table("claim_records")
            # a lot record as version 1 wrote it
            result = cs.lot_qualification().to_dict()
            created, day = dt.datetime(2026, 11, 4, tzinfo=dt.UTC), dt.date(2026, 11, 3)
            if store_url.startswith("sqlite"):
                # the text sqlite3's default adapters wrote (deprecated as of Python 3.12)
                created, day = created.isoformat(" "), day.isoformat()
            conn.execute(text(
                "INSERT INTO lot_records (created_at, supplier, lot, lot_date, verdict, "
                "input_name, input_sha256, options_json, options_hash, tool_version, "
                "result_json) VALUES (:t, :s, :l, :d, :v, 'lot.toml', :h, '{}', :oh, '0.0.9', "
                ":r)"), {"t": created, "s": cs.SUPPLIER,
                         "l": "KRW-2611-07", "d": day, "v": "reject",
                         "h": cs.sha("v1"), "oh": options_hash({}),
                         "r": canonical_json(result)})
    finally:
        engine.dispose()
    with open_store(store_url) as store:
        assert store.schema_version() == 2
        (rec,) = store.list_records()
        assert rec.decision_rule == "guarded" and rec.tool_version == "0.0.9"
        assert len(store.claim_rows(rec.record_id)) == 9  # backfilled from result_json
        assert [p.lot for p in store.trend(cs.SUPPLIER)][:1] == ["KRW-2611-07"]
        # and the v1 record still deduplicates new saves of the same input and options
        assert not store.save_lot(cs.lot_qualification(key="v1", options={})).created


def test_newer_database_is_refused(store):
    with store.engine.begin() as conn:
        conn.execute(schema_version.insert().values(
            version=99, description="from the future", applied_at=dt.datetime.now(dt.UTC)))
    with pytest.raises(StorageError, match="newer"):
        open_store(str(store.engine.url.render_as_string(hide_password=False)))


def test_failed_migration_step_rolls_back(store):
    def broken(conn):
        conn.execute(text("CREATE TABLE half_done (x INTEGER)"))
        conn.execute(text("INSERT INTO half_done (x) VALUES (1)"))
        raise RuntimeError("power cut (simulated) in migration 3")

    steps = (*MIGRATIONS, Migration(3, "broken step", broken))
    with pytest.raises(RuntimeError, match="power cut"):
        migrate(store.engine, migrations=steps)
    assert store.schema_version() == 2
    with store.engine.begin() as conn:
        assert not inspect(conn).has_table("half_done")


def test_exception_mid_transaction_leaves_no_partial_record(store):
    # fail on the claim rows, after the lot row was inserted in the same transaction
    def fail_on_claims(conn, cursor, statement, parameters, context, executemany):
        if statement.lstrip().upper().startswith("INSERT INTO CLAIM_RECORDS"):
            raise RuntimeError("disk full (simulated)")

    event.listen(store.engine, "before_cursor_execute", fail_on_claims)
    try:
        with pytest.raises(RuntimeError, match="disk full"):
            save_lot(store)
    finally:
        event.remove(store.engine, "before_cursor_execute", fail_on_claims)
    assert count(store, lot_records) == 0 and count(store, claim_records) == 0
    outcome = save_lot(store)  # the same save now succeeds, completely
    assert outcome.created and len(store.claim_rows(outcome.record_id)) == 9


def test_qualification_and_its_fits_in_one_transaction(store):
    q = cs.lot_qualification()
    fits = [cs.fit_result(name=f"W0{i}.csv", key=f"fit-{i}") for i in (1, 2, 3)]
    store.save_fit(fits[0])  # one of them stored before: not new
    lot, fits_new = store.save_qualification(q, fits)
    assert lot.created and fits_new == 2
    assert count(store, fit_records) == 3 and len(store.claim_rows(lot.record_id)) == 9
    assert store.get_result("lot", lot.record_id) == q.to_dict()
    again = store.save_qualification(q, fits)
    assert (again.lot, again.fits_new) == (type(lot)(lot.record_id, False), 0)


def test_failed_qualification_save_leaves_no_fit_either(store):
    def fail_on_claims(conn, cursor, statement, parameters, context, executemany):
        if statement.lstrip().upper().startswith("INSERT INTO CLAIM_RECORDS"):
            raise RuntimeError("disk full (simulated)")

    fits = [cs.fit_result(name="W01.csv", key="fit-1")]
    event.listen(store.engine, "before_cursor_execute", fail_on_claims)
    try:
        with pytest.raises(RuntimeError, match="disk full"):
            store.save_qualification(cs.lot_qualification(), fits)
    finally:
        event.remove(store.engine, "before_cursor_execute", fail_on_claims)
    assert count(store, fit_records) == count(store, lot_records) == 0


def test_fit_without_provenance_is_refused(store):
    from dataclasses import replace

    fit = cs.fit_result()
    with pytest.raises(InputError, match="'options'"):
        store.save_fit(replace(fit, provenance={k: v for k, v in fit.provenance.items()
                                                if k != "options"}))
    with pytest.raises(InputError, match="64-digit"):
        store.save_fit(replace(fit, provenance={**fit.provenance, "sha256": "abc"}))
    assert count(store, fit_records) == 0


def test_writer_killed_mid_transaction_leaves_no_partial_record(store_url):
    ctx = multiprocessing.get_context("spawn")
    ready = ctx.Event()
    child = ctx.Process(target=cs.write_then_hang, args=(store_url, ready))
    child.start()
    try:
        assert ready.wait(60), "the child never reached the lot insert"
        os.kill(child.pid, signal.SIGKILL)
    finally:
        child.join(30)
    assert child.exitcode == -signal.SIGKILL
    with open_store(store_url) as store:
        assert count(store, lot_records) == 0 and count(store, claim_records) == 0
        # the record the child was writing can be written whole now
        outcome = store.save_lot(cs.lot_qualification(key="killed", options={}))
        assert outcome.created and len(store.claim_rows(outcome.record_id)) == 9


def test_two_processes_writing_at_once_lose_nothing(store_url):
    ctx = multiprocessing.get_context("spawn")
    barrier, queue = ctx.Barrier(2), ctx.Queue()
    n_shared, n_own = 20, 10
    procs = [ctx.Process(target=cs.concurrent_writer,
                         args=(store_url, w, barrier, queue, n_shared, n_own))
             for w in (0, 1)]
    for p in procs:
        p.start()
    results = dict(queue.get(timeout=120) for _ in procs)
    for p in procs:
        p.join(30)
    for w, out in results.items():
        assert not isinstance(out, str), f"writer {w} failed:\n{out}"
    assert [p.exitcode for p in procs] == [0, 0]
    with open_store(store_url) as store:
        # 20 shared fits stored once + 10 own fits per writer; 1 shared lot + 1 own per writer
        assert count(store, fit_records) == n_shared + 2 * n_own
        assert count(store, lot_records) == 3
        assert count(store, claim_records) == 3 * 9
        stored = {(r.kind, r.input_sha256): r.record_id for r in store.list_records()}
    both = results[0] + results[1]
    for kind, key, rid, _ in both:
        assert stored[(kind, cs.sha(key))] == rid  # every writer got the stored record's id
    for key in [f"shared-{k}" for k in range(n_shared)] + ["lot-shared"]:
        created = [c for _, k, _, c in both if k == key]
        assert sorted(created) == [False, True], key  # written exactly once


def test_urls(tmp_path, monkeypatch):
    assert normalize_url("postgresql://u@h:5/d") == "postgresql+psycopg://u@h:5/d"
    assert normalize_url("postgres://u@h/d") == "postgresql+psycopg://u@h/d"
    assert normalize_url(str(tmp_path / "h.db")) == f"sqlite:///{tmp_path / 'h.db'}"
    monkeypatch.setenv("FREEZEOUT_DB", str(tmp_path / "env.sqlite3"))
    assert default_url() == f"sqlite:///{tmp_path / 'env.sqlite3'}"
    with open_store() as s:
        assert s.schema_version() == 2
    assert (tmp_path / "env.sqlite3").exists()
    monkeypatch.delenv("FREEZEOUT_DB")
    monkeypatch.setattr(engine_module.platformdirs, "user_data_dir",
                        lambda app: str(tmp_path / app))
    assert default_url() == f"sqlite:///{tmp_path / 'freezeout' / 'history.sqlite3'}"
    with pytest.raises(StorageError, match="unsupported"):
        make_engine("mysql://u@h/d")
    # the same refusal as bad input, naming the option (what the commands report)
    with pytest.raises(InputError, match=r"^--db: history database: unsupported database"):
        open_history("mysql://u@h/d")
