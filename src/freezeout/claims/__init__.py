"""Incoming-lot qualification: lot files, silicon conversions, conformity decisions.

Verdicts apply the decision rule stated in the lot file and defer to the purchase contract's
specification.
"""

from __future__ import annotations

from freezeout.claims.aggregate import aggregate_lot, aggregate_wafer
from freezeout.claims.budget import RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K, temperature_term
from freezeout.claims.decide import conformance_probability, decide, decide_type, indeterminate
from freezeout.claims.dopants import claim_dopant, is_silicon, net_doping_dopants
from freezeout.claims.evaluate import (
    DEFAULT_TEMPERATURE_TOLERANCE_K,
    evaluate_claim,
    evaluate_lot,
    evaluate_wafer,
    unmeasured_wafer,
)
from freezeout.claims.lot_hash import lot_input_sha256
from freezeout.claims.lot_reader import load_lot, parse_lot
from freezeout.claims.measured import measurement_from_fit
from freezeout.claims.room_point import ROOM_TEMPERATURE_RANGE_K, room_point_measurement
from freezeout.claims.silicon import (
    density_with_uncertainty,
    dopant_density_from_resistivity,
    resistivity_from_dopant_density,
    resistivity_with_uncertainty,
)
from freezeout.claims.single_point import FULL_IONIZATION, check_single_point, ionized_fraction
from freezeout.records.lot import Claim, Decision, LotFile, Wafer
from freezeout.records.measurement import Measurement
from freezeout.records.verdicts import (
    DEFERENCE,
    ClaimVerdict,
    LotVerdict,
    SpecWindow,
    WaferVerdict,
)

__all__ = [
    "DEFAULT_TEMPERATURE_TOLERANCE_K",
    "DEFERENCE",
    "FULL_IONIZATION",
    "RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K",
    "ROOM_TEMPERATURE_RANGE_K",
    "Claim",
    "ClaimVerdict",
    "Decision",
    "LotFile",
    "LotVerdict",
    "Measurement",
    "SpecWindow",
    "Wafer",
    "WaferVerdict",
    "aggregate_lot",
    "aggregate_wafer",
    "check_single_point",
    "claim_dopant",
    "conformance_probability",
    "decide",
    "decide_type",
    "density_with_uncertainty",
    "dopant_density_from_resistivity",
    "evaluate_claim",
    "evaluate_lot",
    "evaluate_wafer",
    "indeterminate",
    "ionized_fraction",
    "is_silicon",
    "load_lot",
    "lot_input_sha256",
    "measurement_from_fit",
    "net_doping_dopants",
    "parse_lot",
    "resistivity_from_dopant_density",
    "resistivity_with_uncertainty",
    "room_point_measurement",
    "temperature_term",
    "unmeasured_wafer",
]
