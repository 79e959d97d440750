"""Combining claim verdicts into a wafer's verdict, and wafer verdicts into the lot's.

The worst verdict decides (reject over indeterminate over accept); among equals the one with
the smallest margin, so the verdict names the claim and wafer closest to failing. The lot's
sentence ends with :data:`freezeout.records.verdicts.DEFERENCE`: the purchase contract's
specification governs where it states another rule or other limits.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from freezeout.records.verdicts import (
    DEFERENCE,
    RULES,
    SEVERITY,
    VERDICTS,
    ClaimVerdict,
    LotVerdict,
    WaferVerdict,
)


def _rank_key(verdict: str, margin: float | None) -> tuple[int, float]:
    """Sort key: worst verdict first, then smallest margin.

    A missing margin (type claim, unknown or zero U) counts as the worst among rejections and
    indeterminate verdicts, and as the best among acceptances (nothing to be close to).
    """
    if margin is None:
        margin = math.inf if verdict == "accept" else -math.inf
    return (-SEVERITY[verdict], margin)


def _rank(v: ClaimVerdict) -> tuple[int, float]:
    return _rank_key(v.verdict, v.margin)


def _margin_words(m: float | None) -> str:
    return "" if m is None else f" (margin {m:+.2f} U)"


def _label(v: ClaimVerdict) -> str:
    """``claim[2] (net_doping)``, or the quantity alone when the claim has no key."""
    return f"{v.claim_key} ({v.quantity})" if v.claim_key else v.quantity


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
    label = _label(worst)
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
    claim = next((c for c in worst.claims if c.claim_key == worst.decided_by), None)
    if worst.decided_by and claim is not None:
        label = _label(claim)
    else:  # an unmeasured wafer: no claim decided it
        label = "which was not measured" + (f" ({worst.notes[0]})" if worst.notes else "")
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
