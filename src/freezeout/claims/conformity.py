"""Old import path of the conformity decisions (re-exports only).

They live in :mod:`freezeout.claims.decide`, :mod:`freezeout.claims.aggregate` and
:mod:`freezeout.records.verdicts`.

Kept only while ``freezeout.reporting.lot_report`` and ``tests/conftest_storage.py`` import
from here; delete it once they import from ``freezeout.records.verdicts`` and
``freezeout.claims``.
"""

from freezeout.claims.aggregate import aggregate_lot, aggregate_wafer
from freezeout.claims.decide import conformance_probability, decide, decide_type, indeterminate
from freezeout.records.verdicts import (
    DEFERENCE,
    RULE_IN_WORDS,
    RULES,
    SEVERITY,
    VERDICTS,
    ClaimVerdict,
    LotVerdict,
    SpecWindow,
    WaferVerdict,
)

__all__ = ["DEFERENCE", "RULES", "RULE_IN_WORDS", "SEVERITY", "VERDICTS", "ClaimVerdict",
           "LotVerdict", "SpecWindow", "WaferVerdict", "aggregate_lot", "aggregate_wafer",
           "conformance_probability", "decide", "decide_type", "indeterminate"]
