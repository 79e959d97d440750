"""Moved to :mod:`freezeout.physics.simulation`; kept only until api imports it from there."""

from freezeout.physics.simulation import (  # noqa: F401
    SIM_SCHEMA_VERSION,
    Simulation,
    simulate,
    temperature_grid,
)
