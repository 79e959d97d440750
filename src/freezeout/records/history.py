"""What the history store hands back: save outcomes, listed records, trend points.

Plain frozen data with a ``to_dict()`` for JSON output; built by
:class:`freezeout.storage.store.Store`.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from typing import NamedTuple


@dataclass(frozen=True)
class SaveOutcome:
    """What a save did.

    Attributes
    ----------
    record_id
        The id of the record (new or existing).
    created
        False when the same input and options were stored before (nothing was written).
    """

    record_id: int
    created: bool


@dataclass(frozen=True)
class Record:
    """One stored fit or lot qualification, as listed by :meth:`Store.list_records`.

    Attributes
    ----------
    kind
        ``"fit"`` or ``"lot"``.
    record_id
        Its id within its kind.
    created_at
        When it was stored (UTC).
    input_name, input_sha256, tool_version, options
        Provenance.
    supplier, lot, lot_date, verdict, decision_rule
        For lot records (None for fits).
    material, carrier, net_doping, net_doping_stderr
        For fit records (None for lots); net doping in [cm^-3].
    """

    kind: str
    record_id: int
    created_at: _dt.datetime
    input_name: str
    input_sha256: str
    tool_version: str
    options: dict
    supplier: str | None = None
    lot: str | None = None
    lot_date: _dt.date | None = None
    verdict: str | None = None
    decision_rule: str | None = None
    material: str | None = None
    carrier: str | None = None
    net_doping: float | None = None
    net_doping_stderr: float | None = None

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {
            "kind": self.kind,
            "id": self.record_id,
            "created_at": self.created_at.isoformat(),
            "input_name": self.input_name,
            "input_sha256": self.input_sha256,
            "tool_version": self.tool_version,
            "options": self.options,
            "supplier": self.supplier,
            "lot": self.lot,
            "lot_date": None if self.lot_date is None else self.lot_date.isoformat(),
            "verdict": self.verdict,
            "decision_rule": self.decision_rule,
            "material": self.material,
            "carrier": self.carrier,
            "net_doping_cm3": self.net_doping,
            "net_doping_stderr_cm3": self.net_doping_stderr,
        }


@dataclass(frozen=True)
class TrendPoint:
    """Measured against claimed for one lot and one claimed quantity.

    Attributes
    ----------
    supplier, lot, lot_date
        The lot.
    quantity, unit, temperature_K
        The claimed quantity, its canonical unit, and the claim temperature [K].
    n_wafers
        Wafers with a measured value for this claim.
    mean_ratio, min_ratio, max_ratio
        measured / claimed over those wafers, where claimed is the nominal value, else the
        midpoint of a two-sided window, else the one limit. [1]
    spec_min_ratio, spec_max_ratio
        The specification limits over the claimed value (None when one-sided). [1]
    lot_verdict
        The lot's verdict.
    lot_record_id
        The lot record.
    """

    supplier: str
    lot: str
    lot_date: _dt.date
    quantity: str
    unit: str | None
    temperature_K: float | None
    n_wafers: int
    mean_ratio: float
    min_ratio: float
    max_ratio: float
    spec_min_ratio: float | None
    spec_max_ratio: float | None
    lot_verdict: str
    lot_record_id: int

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        d = dict(self.__dict__)
        d["lot_date"] = self.lot_date.isoformat()
        return d


class QualificationSaved(NamedTuple):
    """What saving a qualification with its fits did; unpacks as ``(lot, fits_new)``.

    Attributes
    ----------
    lot
        The lot record's outcome.
    fits_new
        How many of the fits were written now (the others were stored before).
    """

    lot: SaveOutcome
    fits_new: int
