"""freezeout: fit temperature-dependent Hall runs to an equilibrium carrier model."""

from __future__ import annotations

__version__ = "0.1.0"
