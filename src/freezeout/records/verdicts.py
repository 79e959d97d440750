"""Verdict records: a specification window and the decisions on a claim, a wafer and a lot.

Plain data shared by the layers that decide (:mod:`freezeout.claims`), store
(:mod:`freezeout.storage`) and report (:mod:`freezeout.reporting`) them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

RULES = ("simple", "guarded")
VERDICTS = ("accept", "indeterminate", "reject")
#: Order of the verdicts from best to worst.
SEVERITY = {"accept": 0, "indeterminate": 1, "reject": 2}

#: The sentence every report shows beside a verdict.
DEFERENCE = (
    "Verdicts apply the decision rule stated in the lot file; they defer to the purchase "
    "contract's specification, which governs where it says otherwise."
)

RULE_IN_WORDS = {
    "simple": (
        "Simple acceptance (JCGM 106:2012, guard band w = 0): a wafer conforms to a claim when "
        "the measured value lies inside the specification limits, and does not conform "
        "otherwise; the measurement uncertainty is reported but does not move the limits."
    ),
    "guarded": (
        "Guarded acceptance (JCGM 106:2012, guard band w = U; ISO 14253-1): a wafer conforms "
        "to a claim when the measured value minus and plus its expanded uncertainty U = k u "
        "lies wholly inside the specification, does not conform when it lies wholly outside, "
        "and is indeterminate when the interval straddles a limit."
    ),
}


@dataclass(frozen=True)
class SpecWindow:
    """A specification (tolerance) interval, possibly one-sided.

    Attributes
    ----------
    lower
        Lower specification limit T_L, or None. [canonical unit of the quantity]
    upper
        Upper specification limit T_U, or None. [canonical unit]
    nominal
        The nominal value when the claim was given as nominal and tolerance, else None.
        [canonical unit]
    unit
        Canonical unit of the limits (``"cm^-3"``, ``"ohm cm"``).
    """

    lower: float | None
    upper: float | None
    nominal: float | None = None
    unit: str = ""

    def __post_init__(self) -> None:
        if self.lower is None and self.upper is None:
            raise ValueError("a specification needs at least one limit")
        for name in ("lower", "upper", "nominal"):
            v = getattr(self, name)
            if v is not None and not math.isfinite(v):
                raise ValueError(f"specification {name} limit must be finite, got {v!r}")
        if self.lower is not None and self.upper is not None and not self.lower < self.upper:
            raise ValueError(
                f"lower limit {self.lower:g} must be below upper limit {self.upper:g}"
            )

    @classmethod
    def from_nominal(
        cls, nominal: float, tolerance: float, *, percent: bool = False, unit: str = ""
    ) -> SpecWindow:
        """Build ``[nominal - t, nominal + t]``.

        Parameters
        ----------
        nominal
            Nominal value. [canonical unit]
        tolerance
            Half-width of the window: absolute in the unit, or in percent of ``nominal`` when
            ``percent`` is True; must be > 0. [canonical unit or %]
        percent
            Whether ``tolerance`` is in percent of the nominal value. [1]
        unit
            Canonical unit of the quantity.

        Returns
        -------
        SpecWindow
            The symmetric window.
        """
        if not (tolerance > 0.0) or not math.isfinite(tolerance):
            raise ValueError(f"tolerance must be finite and > 0, got {tolerance!r}")
        half = abs(nominal) * tolerance / 100.0 if percent else tolerance
        return cls(nominal - half, nominal + half, nominal, unit)

    def contains(self, y: float) -> bool:
        """Whether ``y`` (in the window's unit) lies in the closed interval."""
        return (self.lower is None or y >= self.lower) and (self.upper is None or y <= self.upper)

    def distance_inside(self, y: float) -> float:
        """Signed distance from ``y`` to the nearest limit (window's unit), positive inside."""
        d = math.inf
        if self.lower is not None:
            d = min(d, y - self.lower)
        if self.upper is not None:
            d = min(d, self.upper - y)
        return d

    def reference(self) -> float:
        """The claimed value a measurement is compared with in trends.

        The nominal value when given; else the midpoint of a two-sided window; else the one
        limit of a one-sided window. [unit]
        """
        if self.nominal is not None:
            return self.nominal
        if self.lower is not None and self.upper is not None:
            return 0.5 * (self.lower + self.upper)
        return self.lower if self.lower is not None else self.upper  # type: ignore[return-value]

    def describe(self) -> str:
        """The window in words, e.g. ``"8 to 12 ohm cm"`` or ``">= 1e+15 cm^-3"``."""
        if self.lower is not None and self.upper is not None:
            return f"{self.lower:.4g} to {self.upper:.4g} {self.unit}".rstrip()
        if self.lower is not None:
            return f">= {self.lower:.4g} {self.unit}".rstrip()
        return f"<= {self.upper:.4g} {self.unit}".rstrip()

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {"min": self.lower, "max": self.upper, "nominal": self.nominal, "unit": self.unit}


@dataclass(frozen=True)
class ClaimVerdict:
    """The decision on one claim for one wafer.

    Attributes
    ----------
    quantity
        ``"net_doping"``, ``"resistivity"`` or ``"type"``.
    measured
        Measured value y [canonical unit], the measured carrier type for a type claim, or None
        when no value in the claim's quantity could be derived.
    stderr
        Standard uncertainty u, or None (type claims; or unknown). [canonical unit]
    coverage_factor
        k. [1]
    expanded
        U = k u, or None. [canonical unit]
    window
        The specification, or None for a type claim.
    claimed
        For a type claim, the claimed carrier type (``"n"``/``"p"``); else None.
    rule
        ``"simple"`` or ``"guarded"``.
    verdict
        ``"accept"``, ``"reject"`` or ``"indeterminate"``.
    margin
        Signed distance from y to the nearest limit over U (positive inside); None when U is
        zero or unknown, or for a type claim. [U]
    conformance_probability
        p_c, or None when u is zero or unknown, or for a type claim. [1]
    sentence
        The verdict in plain words.
    claim_key
        Where the claim came from, e.g. ``"claim[2]"``.
    method
        How y was obtained (e.g. "fitted net doping", "ASTM F723 from fitted net doping").
    temperature_K
        The claim's temperature. [K]
    notes
        Further remarks (conversion caveats and the like).
    """

    quantity: str
    measured: float | str | None
    stderr: float | None
    coverage_factor: float
    expanded: float | None
    window: SpecWindow | None
    rule: str
    verdict: str
    margin: float | None
    conformance_probability: float | None
    sentence: str
    claimed: str | None = None
    claim_key: str = ""
    method: str = ""
    temperature_K: float | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_dict(self) -> dict:
        """Plain-JSON form (the ``claims`` entries of the lot JSON)."""
        w = self.window
        return {
            "claim": self.claim_key,
            "quantity": self.quantity,
            "unit": w.unit if w is not None else None,
            "temperature_K": self.temperature_K,
            "measured": {"value": self.measured, "stderr": self.stderr},
            "coverage_factor": self.coverage_factor,
            "expanded_uncertainty": self.expanded,
            "spec": w.to_dict() if w is not None else {"value": self.claimed},
            "claimed_reference": w.reference() if w is not None else None,
            "rule": self.rule,
            "verdict": self.verdict,
            "margin_U": self.margin,
            "conformance_probability": self.conformance_probability,
            "method": self.method,
            "sentence": self.sentence,
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class WaferVerdict:
    """The decision for one wafer over all claims.

    Attributes
    ----------
    wafer_id
        The wafer's id.
    verdict
        ``"reject"`` if any claim is rejected, else ``"indeterminate"`` if any is
        indeterminate, else ``"accept"``.
    claims
        The per-claim verdicts, in claim order.
    decided_by
        The claim that decided the verdict: among the claims with the wafer's verdict, the one
        with the smallest margin (a claim without margin counts as the worst rejection or
        indeterminate verdict, and as the safest acceptance).
    margin
        That claim's margin, or None. [U]
    sentence
        The verdict in plain words.
    """

    wafer_id: str
    verdict: str
    claims: tuple[ClaimVerdict, ...]
    decided_by: str
    margin: float | None
    sentence: str
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_dict(self) -> dict:
        """Plain-JSON form (the ``wafers`` entries of the lot JSON)."""
        return {
            "id": self.wafer_id,
            "verdict": self.verdict,
            "decided_by": self.decided_by,
            "margin_U": self.margin,
            "sentence": self.sentence,
            "claims": [c.to_dict() for c in self.claims],
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class LotVerdict:
    """The decision for a lot.

    Attributes
    ----------
    lot, supplier, date
        From the lot file (``date`` ISO 8601).
    rule, coverage_factor
        The decision rule and k.
    verdict
        ``"reject"`` if any wafer is rejected, else ``"indeterminate"`` if any is
        indeterminate, else ``"accept"``.
    wafers
        The wafer verdicts.
    decided_by_wafer, decided_by_claim, margin
        The wafer and claim that decided the verdict and its margin [U].
    sentence
        The verdict in plain words, ending with :data:`DEFERENCE`.
    """

    lot: str
    supplier: str
    date: str
    rule: str
    coverage_factor: float
    verdict: str
    wafers: tuple[WaferVerdict, ...]
    decided_by_wafer: str
    decided_by_claim: str
    margin: float | None
    sentence: str

    def counts(self) -> dict[str, int]:
        """Number of wafers per verdict."""
        return {v: sum(w.verdict == v for w in self.wafers) for v in VERDICTS}

    def to_dict(self) -> dict:
        """Plain-JSON form: the lot JSON that ``freezeout qualify --json`` prints."""
        return {
            "lot": self.lot,
            "supplier": self.supplier,
            "date": self.date,
            "verdict": self.verdict,
            "decision": {
                "rule": self.rule,
                "coverage_factor": self.coverage_factor,
                "in_words": RULE_IN_WORDS[self.rule],
            },
            "decided_by": {
                "wafer": self.decided_by_wafer,
                "claim": self.decided_by_claim,
                "margin_U": self.margin,
            },
            "counts": self.counts(),
            "sentence": self.sentence,
            "deference": DEFERENCE,
            "wafers": [w.to_dict() for w in self.wafers],
        }
