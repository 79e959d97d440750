"""Lot-file records: a lot's decision rule, its certificate claims and its wafers.

Plain data in canonical units, produced by the lot-file reader (:mod:`freezeout.claims`) and
read by the layers that decide, store and report a qualification.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from pathlib import Path

from freezeout.records.verdicts import SpecWindow


@dataclass(frozen=True)
class Decision:
    """The lot's decision rule.

    Attributes
    ----------
    rule
        ``"simple"`` or ``"guarded"``.
    coverage_factor
        k in U = k u. [1]
    """

    rule: str
    coverage_factor: float = 2.0

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {"rule": self.rule, "coverage_factor": self.coverage_factor}


@dataclass(frozen=True)
class Claim:
    """One certificate claim, in canonical units.

    Attributes
    ----------
    key
        Key path in the lot file, ``"claim[N]"`` (1-based).
    quantity
        ``"net_doping"`` (magnitude of N_D - N_A), ``"resistivity"`` or ``"type"``.
    window
        The specification in canonical units (cm^-3 or ohm cm); None for a type claim.
    unit
        The unit as written in the file, or None for a type claim.
    dopant
        The dopant, normalised to ``"boron"``/``"phosphorus"`` where ASTM F723 applies; as
        written (lower case) otherwise; None when not given.
    temperature_K
        Temperature at which the claim holds. [K]
    carrier
        For a type claim, ``"n"`` or ``"p"``; else None.
    tolerance_percent
        The tolerance when it was given in percent, else None. [%]
    note
        Free text from the file.
    line
        The line of its ``[[claim]]`` table in the lot file, for errors found later (when it
        is compared with a measurement); None when not read from a file.
    """

    key: str
    quantity: str
    window: SpecWindow | None
    unit: str | None
    dopant: str | None
    temperature_K: float
    carrier: str | None = None
    tolerance_percent: float | None = None
    note: str | None = None
    line: int | None = field(default=None, compare=False)

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {
            "key": self.key,
            "quantity": self.quantity,
            "spec": None if self.window is None else self.window.to_dict(),
            "unit_as_written": self.unit,
            "dopant": self.dopant,
            "temperature_K": self.temperature_K,
            "value": self.carrier,
            "tolerance_percent": self.tolerance_percent,
            "note": self.note,
        }


@dataclass(frozen=True)
class HallFactor:
    """The Hall scattering factor r_H with which a wafer's Hall densities are taken.

    The Hall density of a run is r_H / (q |R_H|); every net doping derived from it scales with
    r_H, so its relative uncertainty u(r_H) / r_H adds in quadrature to theirs (not to a
    measured resistivity, which does not involve r_H).

    Attributes
    ----------
    value
        r_H as the lot file states it, or None: then the run's own (its ``# hall_factor:``
        line, else 1). [1]
    stderr
        Standard uncertainty of r_H, absolute; 0 when the lot file states none. [1]
    value_key, stderr_key
        Key paths the two came from (``"measurement.hall_factor"``,
        ``"wafer[2].hall_factor_uncertainty"``), or None when not given.
    """

    value: float | None = None
    stderr: float = 0.0
    value_key: str | None = None
    stderr_key: str | None = None

    @property
    def relative_uncertainty(self) -> float:
        """u(r_H) / r_H; 0 when no uncertainty is stated. [1]"""
        if not self.stderr > 0 or self.value is None:
            return 0.0
        return self.stderr / self.value

    def to_dict(self) -> dict:
        """Plain-JSON form (``value`` None: the run's own r_H)."""
        return {"value": self.value, "stderr": self.stderr, "value_key": self.value_key,
                "stderr_key": self.stderr_key}


@dataclass(frozen=True)
class Wafer:
    """One measured wafer.

    Attributes
    ----------
    key
        Key path in the lot file, ``"wafer[N]"`` (1-based).
    wafer_id
        The wafer's id (unique in the lot).
    material
        Material name: the bundled material's name (e.g. ``"Si"``), or the ``name`` inside
        ``material_file``.
    material_file
        Resolved path of a user material file, or None for a bundled material.
    run
        Resolved path of the run (a temperature run, reduced run, raw run or single
        room-temperature result).
    note
        Free text from the file.
    hall_factor
        The Hall factor for this wafer: its own keys over the lot's ``[measurement]``.
    """

    key: str
    wafer_id: str
    material: str
    material_file: Path | None
    run: Path
    note: str | None = None
    hall_factor: HallFactor = HallFactor()

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {
            "key": self.key,
            "id": self.wafer_id,
            "material": self.material,
            "material_file": None if self.material_file is None else str(self.material_file),
            "run": str(self.run),
            "note": self.note,
            "hall_factor": self.hall_factor.to_dict(),
        }


@dataclass(frozen=True)
class LotFile:
    """A parsed lot file.

    Attributes
    ----------
    path
        The lot file's path (resolved).
    supplier, lot
        From the file.
    date
        The lot (certificate) date.
    decision
        The decision rule.
    claims, wafers
        In file order.
    certificate, note
        Optional free text (certificate number, remarks).
    measurement
        The lot-wide Hall factor of the optional ``[measurement]`` table (each wafer's own,
        resolved, is :attr:`Wafer.hall_factor`).
    """

    path: Path
    supplier: str
    lot: str
    date: _dt.date
    decision: Decision
    claims: tuple[Claim, ...]
    wafers: tuple[Wafer, ...]
    certificate: str | None = None
    note: str | None = None
    measurement: HallFactor = HallFactor()

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {
            "path": str(self.path),
            "supplier": self.supplier,
            "lot": self.lot,
            "date": self.date.isoformat(),
            "certificate": self.certificate,
            "note": self.note,
            "decision": self.decision.to_dict(),
            "measurement": self.measurement.to_dict(),
            "claims": [c.to_dict() for c in self.claims],
            "wafers": [w.to_dict() for w in self.wafers],
        }
