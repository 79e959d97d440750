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

from freezeout.records.verdicts import RULES, ClaimVerdict, SpecWindow


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
        the purchase contract's specification (see :data:`freezeout.records.verdicts.DEFERENCE`).

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
        inside = (window.lower is None or _at_most(window.lower, y - big_u)) and (
            window.upper is None or _at_most(y + big_u, window.upper)
        )
        outside = (window.lower is not None and _at_most(y + big_u, window.lower)) or (
            window.upper is not None and _at_most(window.upper, y - big_u)
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


#: Relative tolerance of the comparisons of y +- U with a limit: a limit is inclusive, and
#: 0.3 - 0.2 is 0.09999999999999998 in binary floating point (project choice, no source).
LIMIT_TOLERANCE = 1e-12


def _at_most(a: float, b: float) -> bool:
    """a <= b, up to :data:`LIMIT_TOLERANCE` of their size (rounding of y +- U)."""
    return a <= b + LIMIT_TOLERANCE * max(abs(a), abs(b))


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
