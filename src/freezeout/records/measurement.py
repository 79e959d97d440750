"""What a wafer's measurement used: the Hall factor and where it came from."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class HallFactorUsed:
    """The Hall scattering factor r_H a wafer's Hall densities were taken with.

    Attributes
    ----------
    value
        r_H. [1]
    stderr
        Its standard uncertainty, absolute (0 when none is stated). [1]
    source
        Where it came from, in words (``"lot file measurement.hall_factor"``, ``"default 1:
        ..."``).
    """

    value: float
    stderr: float = 0.0
    source: str = "default"

    def to_dict(self) -> dict:
        """Plain-JSON form ``{"value", "stderr", "source"}``."""
        return {"value": self.value, "stderr": self.stderr, "source": self.source}
