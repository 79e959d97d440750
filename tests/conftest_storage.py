"""Helpers for the storage and lot-report tests: synthetic typed records, child-process writers.

Child processes are started with the ``spawn`` method, so what they run must be importable
from a module: it lives here. All data are synthetic (fictional supplier "Kestrel Ridge
Wafers", fictional lab "Harrowgate Cryo Lab"). Records are built directly from the record
classes (the verdicts with :mod:`freezeout.claims.decide` and
:mod:`freezeout.claims.aggregate`), not through the command line.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import time
import traceback
from collections.abc import Mapping
from pathlib import Path

import numpy as np
from sqlalchemy import event

from freezeout.claims import (
    aggregate_lot,
    aggregate_wafer,
    decide,
    decide_type,
    unmeasured_wafer,
)
from freezeout.fitting.result import Estimate, FitData, FitResult, LevelEstimate
from freezeout.physics.materials import get_material
from freezeout.records.lot import Claim, Decision, LotFile, Wafer
from freezeout.records.measurement import HallFactorUsed
from freezeout.records.qualification import (
    FitSummary,
    LotProvenance,
    LotQualification,
    WaferInput,
)
from freezeout.records.verdicts import SpecWindow
from freezeout.storage import open_store

SUPPLIER = "Kestrel Ridge Wafers"
TOOL_VERSION = "0.1.0"


def sha(text: str) -> str:
    return hashlib.sha256(text.encode()).hexdigest()


def _estimate(value: float, stderr: float) -> Estimate:
    return Estimate(value, stderr, (value - 2 * stderr, value + 2 * stderr))


def fit_result(net: float = 5.0e14, stderr: float = 5.0e12, name: str = "w01.csv",
               key: str | None = None, options: Mapping | None = None) -> FitResult:
    """A synthetic fit of an n-type Si run: one donor level of ``net`` cm^-3.

    Its provenance names the input ``name`` with SHA-256 ``sha(key or name)`` and the
    ``options`` (default ``{"model": "donor"}``), which the store takes from it.
    """
    t = np.array([50.0, 300.0])
    density = np.array([1e14, net])
    data = FitData(carrier="n", temperature=t, density=density, density_err=None,
                   model_density=density.copy(), used=np.array([True, True]),
                   point_carrier=("n", "n"), flags=("", ""), severe=np.array([False, False]))
    level = LevelEstimate(kind="donor", concentration=_estimate(net, stderr),
                          energy=_estimate(0.045, 0.001), degeneracy=2.0, name="D1")
    return FitResult(
        carrier="n", levels=(level,), compensation_ratio=_estimate(0.01, 0.005),
        net_doping=_estimate(net, stderr), chi2=40.1, reduced_chi2=1.02, aic=10.0, bic=12.0,
        n_points=42, n_parameters=3, weighted=True, parameter_names=("N_D1", "E_D1", "N_A"),
        correlation=np.eye(3), warnings=(), hall_factor=1.0, statistics_model="fermi-dirac",
        material=get_material("Si"),
        provenance={"input": name, "sha256": sha(key or name), "tool_version": TOOL_VERSION,
                    "options": dict(options if options is not None else {"model": "donor"}),
                    "lab": "Harrowgate Cryo Lab (synthetic)"},
        data=data)


WINDOW = SpecWindow(8.0, 12.0, unit="ohm cm")
DOPING = SpecWindow(4.5e14, 5.5e14, nominal=5.0e14, unit="cm^-3")

CLAIMS = (
    Claim("claim[1]", "type", None, None, None, 300.0, carrier="n"),
    Claim("claim[2]", "resistivity", WINDOW, "ohm cm", "phosphorus", 296.15),
    Claim("claim[3]", "net_doping", DOPING, "cm^-3", "phosphorus", 300.0,
          tolerance_percent=10.0),
)


def lot_qualification(lot: str = "KRW-2611-07", date: str = "2026-11-03",
                      resistivities: tuple[float, ...] = (10.0, 11.75, 13.0),
                      rule: str = "guarded", *, supplier: str = SUPPLIER,
                      key: str = "lot-a", options: Mapping | None = None,
                      folder: str = "lots", note: str | None = None) -> LotQualification:
    """A synthetic qualified lot, one fitted wafer per resistivity.

    Each wafer has three claims: type n, resistivity 8..12 ohm cm (u = 0.25), net doping
    5e14 +- 10 % (measured 5e14, u = 5e12). The provenance gives the input SHA-256
    ``sha(key)`` and ``options`` (default ``{"rule": rule}``); the lot file is
    ``/synthetic/<folder>/lot.toml``.
    """
    base = Path("/synthetic") / folder
    wafers, verdicts, inputs = [], [], {}
    for i, rho in enumerate(resistivities, start=1):
        wid = f"W{i:02d}"
        claims = [
            decide_type("n", "n", rule=rule, claim_key="claim[1]"),
            decide(rho, 0.25, WINDOW, rule=rule, quantity="resistivity", claim_key="claim[2]",
                   temperature_K=296.15, method="measured resistivity"),
            decide(5.0e14, 5.0e12, DOPING, rule=rule, quantity="net_doping",
                   claim_key="claim[3]", temperature_K=300.0, method="fitted net doping"),
        ]
        verdicts.append(aggregate_wafer(wid, claims))
        wafers.append(Wafer(f"wafer[{i}]", wid, "Si", None, base / "runs" / f"{wid}.csv"))
        fit = FitSummary(5.0e14, 5.0e12, (4.9e14, 5.1e14), 0.01, 0.005, (0.0, 0.02), 42, 1.02)
        inputs[wid] = WaferInput(f"runs/{wid}.csv", sha(f"{key}-{wid}"), "Si", None, "fit",
                                 fit=fit, hall_factor=HallFactorUsed(1.0, 0.0, "default 1"))
    verdict = aggregate_lot(verdicts, lot=lot, supplier=supplier, date=date, rule=rule,
                            coverage_factor=2.0)
    lot_file = LotFile(base / "lot.toml", supplier, lot, dt.date.fromisoformat(date),
                       Decision(rule, 2.0), CLAIMS, tuple(wafers), certificate="C-0001",
                       note=note)
    prov = LotProvenance("lot.toml", sha(key), TOOL_VERSION, "2026-11-21T10:00:00+00:00",
                         dict(options if options is not None else {"rule": rule}))
    return LotQualification(lot_file, verdict, inputs, prov)


MIXED_CLAIMS = (
    *CLAIMS,
    Claim("claim[4]", "net_doping", SpecWindow(1.0e14, None, unit="cm^-3"), "cm-3", None, 300.0,
          note="one-sided: at least 1e14"),
)


def mixed_lot_qualification(supplier: str = SUPPLIER, note: str | None = None,
                            lot: str = "KRW-MIX-1") -> LotQualification:
    """A synthetic lot with one wafer of each kind, under the guarded rule.

    W01 fitted, every claim accepted; W02 a single room-temperature result whose resistivity
    has no uncertainty (indeterminate under the guarded rule), with a stated Hall factor
    uncertainty and remarks; W03 not measured (every claim indeterminate). Claim 4 is
    one-sided (net doping >= 1e14 cm^-3).
    """
    rule, base = "guarded", Path("/synthetic/mixed")
    decision = Decision(rule, 2.0)
    one_sided = MIXED_CLAIMS[3].window

    def numeric(rho, u_rho, net, u_net, notes=()):
        return [
            decide_type("n", "n", rule=rule, claim_key="claim[1]"),
            decide(rho, u_rho, WINDOW, rule=rule, quantity="resistivity", claim_key="claim[2]",
                   temperature_K=296.15, method="measured resistivity", notes=notes),
            decide(net, u_net, DOPING, rule=rule, quantity="net_doping", claim_key="claim[3]",
                   temperature_K=300.0, method="fitted net doping"),
            decide(net, u_net, one_sided, rule=rule, quantity="net_doping",
                   claim_key="claim[4]", temperature_K=300.0, method="fitted net doping"),
        ]

    reason = "the fit of W03.csv: too few points <2>"
    verdicts = (
        aggregate_wafer("W01", numeric(10.0, 0.2, 5.0e14, 4.0e12)),
        aggregate_wafer("W02", numeric(11.0, None, 5.1e14, 6.0e12,
                                       notes=("resistivity taken <as written> & unchecked",)),
                        notes=["single point at 296.15 K"]),
        unmeasured_wafer("W03", reason, MIXED_CLAIMS, decision),
    )
    verdict = aggregate_lot(verdicts, lot=lot, supplier=supplier, date="2026-11-20",
                            rule=rule, coverage_factor=2.0)
    wafers = tuple(Wafer(f"wafer[{i}]", f"W0{i}", "Si", None, base / f"W0{i}.csv",
                         note="edge <chipped>" if i == 2 else None) for i in (1, 2, 3))
    fit = FitSummary(5.0e14, 4.0e12, (4.9e14, 5.1e14), 0.02, 0.01, (0.0, 0.04), 40, 0.97)
    inputs = {
        "W01": WaferInput("W01.csv", sha("mix-W01"), "Si", None, "fit", fit=fit,
                          hall_factor=HallFactorUsed(1.0, 0.0, "default 1")),
        "W02": WaferInput("W02.csv", sha("mix-W02"), "Si", None,
                          "single room-temperature result",
                          hall_factor=HallFactorUsed(1.1, 0.02,
                                                     "lot file measurement.hall_factor"),
                          note="edge <chipped>"),
        "W03": WaferInput("W03.csv", sha("mix-W03"), "Si", None, "not measured", reason=reason),
    }
    lot_file = LotFile(base / "lot.toml", supplier, lot, dt.date(2026, 11, 20), decision,
                       MIXED_CLAIMS, wafers, certificate="C-<7>", note=note)
    prov = LotProvenance("lot.toml", sha("mixed"), TOOL_VERSION, "2026-11-21T10:00:00+00:00",
                         {"fit": {"donors": 1}, "label": "<options>"})
    return LotQualification(lot_file, verdict, inputs, prov)


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
            o = store.save_fit(fit_result(net=1e14 * (k + 1), name=f"shared{k}.csv",
                                          key=f"shared-{k}"))
            out.append(("fit", f"shared-{k}", o.record_id, o.created))
            if k < n_own:
                o = store.save_fit(fit_result(name=f"own{worker}-{k}.csv",
                                              key=f"own-{worker}-{k}"))
                out.append(("fit", f"own-{worker}-{k}", o.record_id, o.created))
        for name in ("lot-shared", f"lot-own-{worker}"):
            o = store.save_lot(lot_qualification(lot=name, key=name, options={}))
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
    store.save_lot(lot_qualification(key="killed", options={}))
