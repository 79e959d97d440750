"""Helpers for tests/test_storage.py: synthetic records and child-process writers.

Child processes are started with the ``spawn`` method, so what they run must be importable
from a module: it lives here. All data are synthetic (fictional supplier "Kestrel Ridge
Wafers", fictional lab "Harrowgate Cryo Lab").
"""

from __future__ import annotations

import hashlib
import time
import traceback

from sqlalchemy import event

from freezeout.claims.conformity import (
    SpecWindow,
    aggregate_lot,
    aggregate_wafer,
    decide,
    decide_type,
)
from freezeout.storage import open_store

SUPPLIER = "Kestrel Ridge Wafers"
TOOL_VERSION = "0.1.0"


def sha(text: str) -> str:
    return hashlib.sha256(text.encode()).hexdigest()


def fit_result(net: float = 5.0e14, stderr: float = 5.0e12, name: str = "w01.csv") -> dict:
    """A synthetic result shaped like the fit result JSON contract (schema_version 1)."""
    return {
        "schema_version": 1,
        "carrier": "n",
        "material": {"name": "Si"},
        "levels": [{"kind": "donor", "concentration_cm3": {"value": net, "stderr": stderr,
                                                           "ci95": [net - 2 * stderr,
                                                                    net + 2 * stderr]},
                    "energy_eV": {"value": 0.045, "stderr": 0.001, "ci95": [0.043, 0.047]},
                    "degeneracy": 2}],
        "compensation_ratio": {"value": 0.01, "stderr": 0.005, "ci95": [0.0, 0.02]},
        "net_doping_cm3": {"value": net, "stderr": stderr,
                           "ci95": [net - 2 * stderr, net + 2 * stderr]},
        "statistics": {"chi2": 40.1, "reduced_chi2": 1.02, "aic": 10.0, "bic": 12.0,
                       "n_points": 42},
        "warnings": [],
        "hall_factor": 1.0,
        "provenance": {"input": name, "sha256": sha(name), "tool_version": TOOL_VERSION,
                       "lab": "Harrowgate Cryo Lab (synthetic)"},
        "data": {"temperature_K": [50.0, 300.0], "density_cm3": [1e14, net],
                 "resistivity_ohm_cm": None},
    }


WINDOW = SpecWindow(8.0, 12.0, unit="ohm cm")
DOPING = SpecWindow(4.5e14, 5.5e14, nominal=5.0e14, unit="cm^-3")


def lot_result(lot: str = "KRW-2611-07", date: str = "2026-11-03",
               resistivities: tuple[float, ...] = (10.0, 11.75, 13.0),
               rule: str = "guarded") -> dict:
    """A synthetic lot result (``LotVerdict.to_dict()``), one wafer per resistivity.

    Each wafer has three claims: type n, resistivity 8..12 ohm cm (u = 0.25), net doping
    5e14 +- 10 % (measured 5e14, u = 5e12).
    """
    wafers = []
    for i, rho in enumerate(resistivities, start=1):
        claims = [
            decide_type("n", "n", rule=rule, claim_key="claim[1]"),
            decide(rho, 0.25, WINDOW, rule=rule, quantity="resistivity", claim_key="claim[2]",
                   temperature_K=296.15),
            decide(5.0e14, 5.0e12, DOPING, rule=rule, quantity="net_doping",
                   claim_key="claim[3]", temperature_K=300.0),
        ]
        wafers.append(aggregate_wafer(f"W{i:02d}", claims))
    return aggregate_lot(wafers, lot=lot, supplier=SUPPLIER, date=date, rule=rule,
                         coverage_factor=2.0).to_dict()


def concurrent_writer(url: str, worker: int, barrier, queue, n_shared: int, n_own: int):
    """Open the store (racing the other worker, migrations included) and write records.

    Puts ``(worker, list of (kind, key, record id, created))`` on the queue, or
    ``(worker, "error: ...")`` when anything fails, so the parent never waits in vain.
    """
    try:
        barrier.wait(timeout=60)
        queue.put((worker, _write_records(url, worker, n_shared, n_own)))
    except BaseException:
        queue.put((worker, "error: " + traceback.format_exc()))
        raise


def _write_records(url: str, worker: int, n_shared: int, n_own: int) -> list:
    store = open_store(url)
    out = []
    try:
        for k in range(n_shared):
            o = store.save_fit(fit_result(net=1e14 * (k + 1)), input_name=f"shared{k}.csv",
                               input_sha256=sha(f"shared-{k}"), options={"model": "donor"},
                               tool_version=TOOL_VERSION)
            out.append(("fit", f"shared-{k}", o.record_id, o.created))
            if k < n_own:
                o = store.save_fit(fit_result(), input_name=f"own{worker}-{k}.csv",
                                   input_sha256=sha(f"own-{worker}-{k}"),
                                   options={"model": "donor"}, tool_version=TOOL_VERSION)
                out.append(("fit", f"own-{worker}-{k}", o.record_id, o.created))
        for name in ("lot-shared", f"lot-own-{worker}"):
            o = store.save_lot(lot_result(lot=name), input_name="lot.toml",
                               input_sha256=sha(name), options={}, tool_version=TOOL_VERSION)
            out.append(("lot", name, o.record_id, o.created))
    finally:
        store.close()
    return out


def write_then_hang(url: str, ready) -> None:
    """Start saving a lot, signal once the lot row is written, then hang inside the transaction.

    The parent kills this process there: nothing of the lot may survive.
    """
    store = open_store(url)

    def after(conn, cursor, statement, parameters, context, executemany):
        if statement.lstrip().upper().startswith("INSERT INTO LOT_RECORDS"):
            ready.set()
            time.sleep(600)

    event.listen(store.engine, "after_cursor_execute", after)
    store.save_lot(lot_result(), input_name="lot.toml", input_sha256=sha("killed"),
                   options={}, tool_version=TOOL_VERSION)
