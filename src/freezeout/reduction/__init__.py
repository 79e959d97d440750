"""Reduction of raw van der Pauw and Hall readings to a reduced temperature run.

The pipeline, all on numpy arrays in canonical units (K, T, A, V, cm, ohm cm, cm^3/C,
cm^-3, cm^2/(V s)):

1. :func:`readings_from_arrays` (or :func:`readings_from_table` for the table that
   :func:`freezeout.io.raw_reader.read_raw` reads from a raw CSV) checks the readings and
   groups them by temperature set point (:func:`group_temperatures`) into a
   :class:`~freezeout.records.readings.RawReadings` (:mod:`.readings`, :mod:`.validation`).
2. :func:`reduce_readings` reduces each set point (:mod:`.reduce`): per configuration a
   straight line ``V = R I + V_0`` through all readings, whose slope is free of
   thermoelectric offsets, with the uncertainty rule of :mod:`.line_fits`; van der Pauw's
   equation for the sheet resistance (:mod:`.vanderpauw`); the field-reversed slopes of
   both Hall diagonals for the Hall coefficient (:mod:`.hall`); data-quality findings
   (:mod:`.quality`).
3. :func:`run_from_reduction` turns the reduced run into the run a fit takes (:mod:`.to_run`).

The records (:class:`RawReadings`, :class:`ReducedRun`, :class:`Finding`) live in
:mod:`freezeout.records.readings`; they are re-exported here for existing callers.

References
----------
.. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
   discs of arbitrary shape", Philips Res. Rep. 13, 1-9 (1958).
.. [2] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement (GUM).
"""

from freezeout.records.readings import Finding, RawReadings, RawTable, ReducedRun
from freezeout.reduction import hall, quality, vanderpauw
from freezeout.reduction.hall import (
    carrier_type,
    field_reversed_slope,
    hall_coefficient,
    hall_density,
    hall_mobility,
    sheet_density,
)
from freezeout.reduction.line_fits import CURRENT_LEVEL_TOLERANCE
from freezeout.reduction.quality import QualityThresholds
from freezeout.reduction.readings import (
    group_temperatures,
    readings_from_arrays,
    readings_from_table,
)
from freezeout.reduction.reduce import reduce_readings
from freezeout.reduction.to_run import run_from_reduction
from freezeout.reduction.validation import ZERO_FIELD, validate_configurations
from freezeout.reduction.vanderpauw import (
    GEOMETRIES,
    classify_configurations,
    configuration_label,
    correction_factor,
    hall_bar_sheet_resistance,
    members,
    resistivity,
    sheet_resistance,
    sheet_resistance_gradient,
    sheet_resistance_uncertainty,
)

__all__ = [
    "CURRENT_LEVEL_TOLERANCE",
    "GEOMETRIES",
    "ZERO_FIELD",
    "Finding",
    "QualityThresholds",
    "RawReadings",
    "RawTable",
    "ReducedRun",
    "carrier_type",
    "classify_configurations",
    "configuration_label",
    "correction_factor",
    "field_reversed_slope",
    "group_temperatures",
    "hall",
    "hall_bar_sheet_resistance",
    "hall_coefficient",
    "hall_density",
    "hall_mobility",
    "members",
    "quality",
    "readings_from_arrays",
    "readings_from_table",
    "reduce_readings",
    "resistivity",
    "run_from_reduction",
    "sheet_density",
    "sheet_resistance",
    "sheet_resistance_gradient",
    "sheet_resistance_uncertainty",
    "validate_configurations",
    "vanderpauw",
]
