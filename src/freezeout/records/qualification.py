"""The record of a lot qualification: the verdicts, how each wafer was measured, provenance.

Built by the qualification pipeline (:mod:`freezeout.api`), stored by
:mod:`freezeout.storage` and drawn by :mod:`freezeout.reporting`; :meth:`to_dict` is the lot
JSON (``lot.json``, ``freezeout qualify --json``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from freezeout.numbers import finite_or_none
from freezeout.records.lot import LotFile
from freezeout.records.measurement import HallFactorUsed
from freezeout.records.verdicts import LotVerdict


def _interval(value: float | None, stderr: float | None,
              ci95: tuple[float | None, float | None] | None) -> dict:
    lo, hi = ci95 if ci95 is not None else (None, None)
    return {"value": finite_or_none(value), "stderr": finite_or_none(stderr),
            "ci95": [finite_or_none(lo), finite_or_none(hi)]}


@dataclass(frozen=True)
class FitSummary:
    """The few numbers of a wafer's fit that the lot record keeps.

    Attributes
    ----------
    net_doping, net_doping_stderr, net_doping_ci95
        Fitted |N_D - N_A|, its standard error and 95 % interval. [cm^-3]
    compensation_ratio, compensation_ratio_stderr, compensation_ratio_ci95
        N_minority / N_majority, its standard error and 95 % interval. [1]
    n_points
        Points used by the fit.
    reduced_chi2
        Reduced chi^2 of the fit. [1]
    warnings
        The fit's plain-language warnings.
    """

    net_doping: float | None
    net_doping_stderr: float | None
    net_doping_ci95: tuple[float | None, float | None]
    compensation_ratio: float | None
    compensation_ratio_stderr: float | None
    compensation_ratio_ci95: tuple[float | None, float | None]
    n_points: int
    reduced_chi2: float | None
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        """Plain-JSON form (the ``fit`` of a wafer's ``input`` in the lot JSON)."""
        return {"net_doping_cm3": _interval(self.net_doping, self.net_doping_stderr,
                                            self.net_doping_ci95),
                "compensation_ratio": _interval(self.compensation_ratio,
                                                self.compensation_ratio_stderr,
                                                self.compensation_ratio_ci95),
                "n_points": self.n_points, "reduced_chi2": finite_or_none(self.reduced_chi2),
                "warnings": list(self.warnings)}


@dataclass(frozen=True)
class WaferInput:
    """How one wafer was measured.

    Attributes
    ----------
    run
        The run file, relative to the lot file's folder where it lies inside it.
    run_sha256
        SHA-256 of the run file, or None when it could not be read.
    material, material_file
        The material name, and the user material file (relative) or None.
    how
        ``"fit"``, ``"single room-temperature result"`` or ``"not measured"``.
    reason
        Why it was not measured, or None.
    fit
        The fit's summary, for fitted wafers.
    hall_factor
        The Hall factor the densities were taken with, or None when not measured.
    note
        The wafer's note from the lot file.
    """

    run: str
    run_sha256: str | None
    material: str | None
    material_file: str | None
    how: str
    reason: str | None = None
    fit: FitSummary | None = None
    hall_factor: HallFactorUsed | None = None
    note: str | None = None

    def to_dict(self) -> dict:
        """Plain-JSON form (a wafer's ``input`` in the lot JSON)."""
        return {"run": self.run, "run_sha256": self.run_sha256, "material": self.material,
                "material_file": self.material_file, "how": self.how, "reason": self.reason,
                "fit": None if self.fit is None else self.fit.to_dict(),
                "hall_factor": None if self.hall_factor is None else self.hall_factor.to_dict(),
                "note": self.note}


@dataclass(frozen=True)
class LotProvenance:
    """Where a qualification came from.

    Attributes
    ----------
    lot_file
        The lot file's name.
    lot_input_sha256
        SHA-256 over the lot file and every file it names.
    tool_version
        freezeout's version.
    date
        When the qualification ran (UTC, ISO 8601 to the second).
    options
        The settings that, with the inputs, determine the result (plain JSON values).
    recorded
        False for a trial run not stored in the history (``qualify --no-history``); the
        JSON then carries ``"recorded": false``.
    """

    lot_file: str
    lot_input_sha256: str
    tool_version: str
    date: str
    options: Mapping = field(default_factory=dict)
    recorded: bool = True

    def to_dict(self) -> dict:
        """Plain-JSON form (``provenance`` of the lot JSON)."""
        out = {"lot_file": self.lot_file, "lot_input_sha256": self.lot_input_sha256,
               "tool": "freezeout", "tool_version": self.tool_version, "date": self.date,
               "options": dict(self.options)}
        if not self.recorded:
            out["recorded"] = False
        return out


@dataclass(frozen=True)
class LotQualification:
    """A qualified lot: the lot file, the verdicts, each wafer's input, provenance.

    Attributes
    ----------
    lot
        The parsed lot file.
    verdict
        The lot's verdict with every wafer's and claim's.
    inputs
        How each wafer was measured, by wafer id (every wafer of the lot).
    provenance
        Where it came from.
    """

    lot: LotFile
    verdict: LotVerdict
    inputs: Mapping[str, WaferInput]
    provenance: LotProvenance

    def to_dict(self) -> dict:
        """The lot JSON: the verdict's form plus claims, each wafer's input, provenance."""
        doc = self.verdict.to_dict()
        doc["certificate"] = self.lot.certificate
        doc["note"] = self.lot.note
        doc["claims"] = [c.to_dict() for c in self.lot.claims]
        doc["measurement"] = self.lot.measurement.to_dict()
        for w in doc["wafers"]:
            w["input"] = self.inputs[w["id"]].to_dict()
        doc["provenance"] = self.provenance.to_dict()
        return doc
