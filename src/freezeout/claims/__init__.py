"""Incoming-lot qualification: lot files, silicon conversions, conformity decisions.

Verdicts apply the decision rule stated in the lot file and defer to the purchase contract's
specification.
"""

from __future__ import annotations

from freezeout.claims.conformity import (
    DEFERENCE,
    ClaimVerdict,
    LotVerdict,
    SpecWindow,
    WaferVerdict,
    aggregate_lot,
    aggregate_wafer,
    conformance_probability,
    decide,
    decide_type,
)
from freezeout.claims.evaluate import (
    evaluate_claim,
    evaluate_lot,
    evaluate_wafer,
    measured_from_fit,
    unmeasured_wafer,
)
from freezeout.claims.lotfile import (
    Claim,
    Decision,
    LotFile,
    Wafer,
    load_lot,
    lot_input_sha256,
    parse_lot,
)
from freezeout.claims.silicon import (
    density_with_uncertainty,
    dopant_density_from_resistivity,
    resistivity_from_dopant_density,
    resistivity_with_uncertainty,
)

__all__ = [
    "DEFERENCE",
    "Claim",
    "ClaimVerdict",
    "Decision",
    "LotFile",
    "LotVerdict",
    "SpecWindow",
    "Wafer",
    "WaferVerdict",
    "aggregate_lot",
    "aggregate_wafer",
    "conformance_probability",
    "decide",
    "decide_type",
    "density_with_uncertainty",
    "dopant_density_from_resistivity",
    "evaluate_claim",
    "evaluate_lot",
    "evaluate_wafer",
    "load_lot",
    "lot_input_sha256",
    "measured_from_fit",
    "parse_lot",
    "resistivity_from_dopant_density",
    "resistivity_with_uncertainty",
    "unmeasured_wafer",
]
