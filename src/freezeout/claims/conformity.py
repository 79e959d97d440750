"""Conformity decisions that take measurement uncertainty into account.

A claim on a certificate is a *specification* (tolerance) interval ``[T_L, T_U]``, possibly
one-sided. A measured value ``y`` with standard uncertainty ``u`` and expanded uncertainty
``U = k u`` is judged against it by one of two decision rules:

``simple``
    Simple acceptance (guard band ``w = 0`` in JCGM 106:2012): accept when
    ``T_L <= y <= T_U``, otherwise reject.
``guarded``
    Guarded acceptance with guard band ``w = U`` (JCGM 106:2012 acceptance limits
    ``A_L = T_L + w``, ``A_U = T_U - w``), with the matching guarded rejection of
    ISO 14253-1: accept when ``T_L + U <= y <= T_U - U`` (the whole interval ``y +- U`` lies
    inside the specification), reject when ``y <= T_L - U`` or ``y >= T_U + U`` (it lies wholly
    outside), indeterminate otherwise. All limits are inclusive; acceptance is tested first,
    which matters only in the degenerate case ``U = 0``.

Every verdict also reports the *margin*: the signed distance from ``y`` to the nearest
specification limit divided by ``U`` (positive inside the specification), so that a margin of
``>= 1`` is a guarded acceptance and ``<= -1`` a guarded rejection; and the conformance
probability ``p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u)`` for a Gaussian state of knowledge.

The verdicts apply the decision rule written in the lot file. They defer to the purchase
contract's specification: where the contract states another rule or other limits, the
contract governs.

References
----------
.. [1] JCGM 106:2012, Evaluation of measurement data - The role of measurement uncertainty in
   conformity assessment, BIPM (also ISO/IEC Guide 98-4:2012). Guarded acceptance and the
   conformance probability; clause numbers are not cited here (from memory only).
.. [2] ISO 14253-1:2017, Geometrical product specifications (GPS) - Inspection by measurement
   of workpieces and measuring equipment - Part 1: Decision rules for verifying conformity or
   nonconformity with specifications.
.. [3] ILAC-G8:09/2019, Guidelines on Decision Rules and Statements of Conformity.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

RULES = ("simple", "guarded")
VERDICTS = ("accept", "indeterminate", "reject")
_SEVERITY = {"accept": 0, "indeterminate": 1, "reject": 2}

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


def _phi(z: float) -> float:
    return 0.5 * math.erfc(-z / math.sqrt(2.0))


def _sf(z: float) -> float:
    return 0.5 * math.erfc(z / math.sqrt(2.0))


def conformance_probability(
    y: float, u: float, lower: float | None, upper: float | None
) -> float:
    """Probability that the measurand lies in the specification, for a Gaussian PDF.

    ``p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u)``, with a missing limit taken as infinite.

    Parameters
    ----------
    y
        Measured value (best estimate). [unit of the quantity]
    u
        Standard uncertainty, > 0. [unit of the quantity]
    lower, upper
        Specification limits T_L and T_U; None for a one-sided specification. [unit]

    Returns
    -------
    float
        Conformance probability in [0, 1]. [1]

    References
    ----------
    .. [1] JCGM 106:2012, conformance probability for a normal PDF (clause from memory: 7.2).
    """
    if not (u > 0.0) or not math.isfinite(u):
        raise ValueError(f"standard uncertainty must be finite and > 0, got {u!r}")
    a = math.inf if upper is None else (upper - y) / u
    b = -math.inf if lower is None else (lower - y) / u
    # Phi(a) - Phi(b) = sf(b) - sf(a); use the form that avoids cancellation.
    p = _sf(b) - _sf(a) if b > 0.0 else _phi(a) - _phi(b)
    return min(1.0, max(0.0, p))


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


def _fmt(x: float) -> str:
    return f"{x:.4g}"


def decide(
    y: float,
    u: float | None,
    window: SpecWindow,
    *,
    rule: str,
    coverage_factor: float = 2.0,
    quantity: str = "",
    claim_key: str = "",
    method: str = "",
    temperature_K: float | None = None,
    notes: Sequence[str] = (),
) -> ClaimVerdict:
    """Decide one claim on one measured value under a decision rule.

    Parameters
    ----------
    y
        Measured value. [canonical unit of the quantity]
    u
        Its standard uncertainty, >= 0, or None when unknown. Under ``guarded`` an unknown
        uncertainty makes the verdict indeterminate (conformity cannot be proven); under
        ``simple`` the verdict rests on ``y`` alone and no margin is reported.
        [canonical unit]
    window
        The specification.
    rule
        ``"simple"`` or ``"guarded"``.
    coverage_factor
        k in U = k u, > 0 (2 usual). [1]
    quantity
        Name of the quantity, for the record and the sentence.
    claim_key
        Where the claim came from (``"claim[1]"``).
    method
        How ``y`` was obtained.
    temperature_K
        The claim's temperature. [K]
    notes
        Further remarks to carry along.

    Returns
    -------
    ClaimVerdict
        The verdict with margin (in units of U) and conformance probability. It defers to
        the purchase contract's specification (see :data:`DEFERENCE`).

    References
    ----------
    .. [1] JCGM 106:2012 (guarded and simple acceptance); ISO 14253-1:2017 (proof of
       conformity and nonconformity); ILAC-G8:09/2019.
    """
    if rule not in RULES:
        raise ValueError(f"decision rule must be one of {RULES}, got {rule!r}")
    if not (coverage_factor > 0.0) or not math.isfinite(coverage_factor):
        raise ValueError(f"coverage factor must be finite and > 0, got {coverage_factor!r}")
    if not math.isfinite(y):
        raise ValueError(f"measured value must be finite, got {y!r}")
    if u is not None and (not math.isfinite(u) or u < 0.0):
        raise ValueError(f"standard uncertainty must be finite and >= 0, got {u!r}")

    unit = window.unit
    big_u = None if u is None else coverage_factor * u
    dist = window.distance_inside(y)
    margin = dist / big_u if big_u else None
    p_c = conformance_probability(y, u, window.lower, window.upper) if u else None
    name = quantity.replace("_", " ") or "value"
    spec = window.describe()

    if big_u is None:
        measured = f"measured {name} {_fmt(y)} {unit} (uncertainty unknown)".replace("  ", " ")
    else:
        measured = (
            f"measured {name} {_fmt(y)} {unit} with U = {_fmt(big_u)} {unit} "
            f"(k = {coverage_factor:g})"
        ).replace("  ", " ")

    if rule == "simple":
        verdict = "accept" if window.contains(y) else "reject"
        where = "inside" if verdict == "accept" else "outside"
        why = f"{measured} lies {where} the specification {spec}"
    elif big_u is None:
        verdict = "indeterminate"
        why = f"{measured}: guarded acceptance cannot prove conformity with {spec}"
    else:
        inside = (window.lower is None or y - big_u >= window.lower) and (
            window.upper is None or y + big_u <= window.upper
        )
        outside = (window.lower is not None and y + big_u <= window.lower) or (
            window.upper is not None and y - big_u >= window.upper
        )
        if inside:
            verdict = "accept"
            why = f"{measured}; y - U to y + U lies wholly inside the specification {spec}"
        elif outside:
            verdict = "reject"
            why = f"{measured}; y - U to y + U lies wholly outside the specification {spec}"
        else:
            verdict = "indeterminate"
            why = (
                f"{measured}; y - U to y + U straddles a limit of the specification {spec}, "
                "so neither conformity nor nonconformity is proven"
            )
    extra = []
    if margin is not None:
        extra.append(f"margin {margin:+.2f} U")
    if p_c is not None:
        extra.append(f"conformance probability {p_c:.4g}")
    sentence = f"{why[0].upper()}{why[1:]}: {verdict}" + (f" ({', '.join(extra)})." if extra
                                                          else ".")
    return ClaimVerdict(
        quantity=quantity,
        measured=float(y),
        stderr=None if u is None else float(u),
        coverage_factor=float(coverage_factor),
        expanded=None if big_u is None else float(big_u),
        window=window,
        rule=rule,
        verdict=verdict,
        margin=margin,
        conformance_probability=p_c,
        sentence=sentence,
        claim_key=claim_key,
        method=method,
        temperature_K=temperature_K,
        notes=tuple(notes),
    )


def decide_type(
    measured_carrier: str,
    claimed_carrier: str,
    *,
    rule: str,
    coverage_factor: float = 2.0,
    claim_key: str = "",
    method: str = "sign of the Hall coefficient",
    notes: Sequence[str] = (),
) -> ClaimVerdict:
    """Decide a conductivity-type claim: accept when the measured carrier type matches.

    No uncertainty is attached to a conductivity type: it is the sign of the Hall coefficient
    of the majority carrier, so the verdict is accept or reject under either rule, and no
    margin or conformance probability is reported.

    Parameters
    ----------
    measured_carrier
        ``"n"`` or ``"p"`` as measured.
    claimed_carrier
        ``"n"`` or ``"p"`` as claimed.
    rule
        The lot's decision rule (recorded only).
    coverage_factor
        The lot's k (recorded only). [1]
    claim_key
        Where the claim came from.
    method
        How the type was found.
    notes
        Further remarks.

    Returns
    -------
    ClaimVerdict
        ``quantity = "type"``, ``measured`` the measured type, ``claimed`` the claimed one.
    """
    for v in (measured_carrier, claimed_carrier):
        if v not in ("n", "p"):
            raise ValueError(f"carrier type must be 'n' or 'p', got {v!r}")
    if rule not in RULES:
        raise ValueError(f"decision rule must be one of {RULES}, got {rule!r}")
    verdict = "accept" if measured_carrier == claimed_carrier else "reject"
    sentence = (
        f"Measured conductivity type {measured_carrier} ({method}), claimed "
        f"{claimed_carrier}: {verdict} (no uncertainty is attached to a conductivity type)."
    )
    return ClaimVerdict(
        quantity="type",
        measured=measured_carrier,
        stderr=None,
        coverage_factor=float(coverage_factor),
        expanded=None,
        window=None,
        rule=rule,
        verdict=verdict,
        margin=None,
        conformance_probability=None,
        sentence=sentence,
        claimed=claimed_carrier,
        claim_key=claim_key,
        method=method,
        notes=tuple(notes),
    )


def indeterminate(
    quantity: str,
    window: SpecWindow,
    reason: str,
    *,
    rule: str,
    coverage_factor: float = 2.0,
    claim_key: str = "",
    method: str = "",
    temperature_K: float | None = None,
    measured: float | None = None,
    stderr: float | None = None,
    notes: Sequence[str] = (),
) -> ClaimVerdict:
    """An indeterminate verdict for a claim that the measurement cannot decide.

    Used when the measured value exists but the claimed quantity cannot be derived from it
    (e.g. a net doping outside the range of the ASTM F723 conversion).

    Parameters
    ----------
    quantity
        Name of the quantity.
    window
        The specification.
    reason
        Why no decision is possible, in plain words.
    rule
        The lot's decision rule.
    coverage_factor
        The lot's k. [1]
    claim_key
        Where the claim came from.
    method
        What was attempted.
    temperature_K
        The claim's temperature. [K]
    measured, stderr
        The measured value in the claim's quantity when one exists, else None. [canonical unit]
    notes
        Further remarks.

    Returns
    -------
    ClaimVerdict
        Verdict ``"indeterminate"``, no margin, no conformance probability.
    """
    return ClaimVerdict(
        quantity=quantity,
        measured=None if measured is None else float(measured),
        stderr=stderr,
        coverage_factor=float(coverage_factor),
        expanded=None if stderr is None else coverage_factor * stderr,
        window=window,
        rule=rule,
        verdict="indeterminate",
        margin=None,
        conformance_probability=None,
        sentence=f"{reason[0].upper()}{reason[1:]}: indeterminate.",
        claim_key=claim_key,
        method=method,
        temperature_K=temperature_K,
        notes=tuple(notes),
    )


def _rank_key(verdict: str, margin: float | None) -> tuple[int, float]:
    """Sort key: worst verdict first, then smallest margin.

    A missing margin (type claim, unknown or zero U) counts as the worst among rejections and
    indeterminate verdicts, and as the best among acceptances (nothing to be close to).
    """
    if margin is None:
        margin = math.inf if verdict == "accept" else -math.inf
    return (-_SEVERITY[verdict], margin)


def _rank(v: ClaimVerdict) -> tuple[int, float]:
    return _rank_key(v.verdict, v.margin)


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


def _margin_words(m: float | None) -> str:
    return "" if m is None else f" (margin {m:+.2f} U)"


def aggregate_wafer(
    wafer_id: str, verdicts: Sequence[ClaimVerdict], notes: Sequence[str] = ()
) -> WaferVerdict:
    """Combine the claim verdicts of one wafer.

    Parameters
    ----------
    wafer_id
        The wafer's id.
    verdicts
        One verdict per claim, at least one.
    notes
        Remarks to carry along (e.g. fit warnings).

    Returns
    -------
    WaferVerdict
        Reject if any claim is rejected, indeterminate if none is rejected and any is
        indeterminate, else accept; with the deciding claim.
    """
    if not verdicts:
        raise ValueError(f"wafer {wafer_id!r}: no claim verdicts to combine")
    worst = min(verdicts, key=_rank)
    label = f"{worst.claim_key} ({worst.quantity})" if worst.claim_key else worst.quantity
    if worst.verdict == "accept":
        text = f"Wafer {wafer_id} meets every claim; closest: {label}"
    elif worst.verdict == "reject":
        text = f"Wafer {wafer_id} is rejected on {label}"
    else:
        text = f"Wafer {wafer_id} is indeterminate on {label}"
    return WaferVerdict(
        wafer_id=wafer_id,
        verdict=worst.verdict,
        claims=tuple(verdicts),
        decided_by=worst.claim_key,
        margin=worst.margin,
        sentence=text + _margin_words(worst.margin) + ".",
        notes=tuple(notes),
    )


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


def aggregate_lot(
    wafers: Sequence[WaferVerdict],
    *,
    lot: str,
    supplier: str,
    date: str,
    rule: str,
    coverage_factor: float,
) -> LotVerdict:
    """Combine the wafer verdicts of a lot.

    Parameters
    ----------
    wafers
        One verdict per measured wafer, at least one.
    lot, supplier, date
        From the lot file (``date`` ISO 8601).
    rule
        ``"simple"`` or ``"guarded"``.
    coverage_factor
        k. [1]

    Returns
    -------
    LotVerdict
        Rejected if any wafer is rejected, indeterminate if none is rejected and any is
        indeterminate, else accepted; naming the wafer and claim that decided it. The verdict
        defers to the purchase contract's specification (:data:`DEFERENCE`).
    """
    if not wafers:
        raise ValueError(f"lot {lot!r}: no wafer verdicts to combine")
    if rule not in RULES:
        raise ValueError(f"decision rule must be one of {RULES}, got {rule!r}")

    worst = min(wafers, key=lambda w: _rank_key(w.verdict, w.margin))
    n = {v: sum(w.verdict == v for w in wafers) for v in VERDICTS}
    words = {"accept": "accepted", "reject": "rejected", "indeterminate": "indeterminate"}
    claim = next(c for c in worst.claims if c.claim_key == worst.decided_by)
    label = f"{claim.claim_key} ({claim.quantity})" if claim.claim_key else claim.quantity
    head = f"Lot {lot} from {supplier} is {words[worst.verdict]} under the {rule} rule"
    if worst.verdict == "accept":
        head += f": all {len(wafers)} wafers meet every claim; closest: wafer "
    else:
        head += f" ({n['reject']} rejected, {n['indeterminate']} indeterminate, "
        head += f"{n['accept']} accepted of {len(wafers)}); decided by wafer "
    head += f"{worst.wafer_id}, {label}{_margin_words(worst.margin)}. {DEFERENCE}"
    return LotVerdict(
        lot=lot,
        supplier=supplier,
        date=date,
        rule=rule,
        coverage_factor=float(coverage_factor),
        verdict=worst.verdict,
        wafers=tuple(wafers),
        decided_by_wafer=worst.wafer_id,
        decided_by_claim=worst.decided_by,
        margin=worst.margin,
        sentence=head,
    )
