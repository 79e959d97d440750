"""Plain data shared by several layers: the run record, verdict records, shared limits."""

from freezeout.records.limits import (
    DEFAULT_GROUPING_TOLERANCE_K,
    HALL_FACTOR_RANGE,
    check_hall_factor,
)
from freezeout.records.run import RunData, run_carrier
from freezeout.records.verdicts import (
    DEFERENCE,
    RULE_IN_WORDS,
    RULES,
    VERDICTS,
    ClaimVerdict,
    LotVerdict,
    SpecWindow,
    WaferVerdict,
)

__all__ = ["DEFAULT_GROUPING_TOLERANCE_K", "DEFERENCE", "HALL_FACTOR_RANGE", "RULES",
           "RULE_IN_WORDS", "VERDICTS", "ClaimVerdict", "LotVerdict", "RunData",
           "SpecWindow", "WaferVerdict", "check_hall_factor", "run_carrier"]
