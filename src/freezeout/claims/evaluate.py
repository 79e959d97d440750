"""From a wafer's measured quantities and the lot's claims to verdicts.

This module does not fit anything. It consumes one
:class:`~freezeout.records.measurement.Measurement` per wafer, from a fit
(:func:`freezeout.claims.measured.measurement_from_fit`) or a single room-temperature result
(:func:`freezeout.claims.room_point.room_point_measurement`).

How each claim is measured
--------------------------
``net_doping``
    Compared with ``|N_D - N_A|`` and its standard uncertainty, in cm^-3, for any material
    (no conversion). The sign must agree with the majority carrier (positive for n, negative
    for p); a net doping of the other sign is not silently taken as its magnitude: the claim
    is indeterminate, with the reason. The Hall factor's relative standard uncertainty
    ``u(r_H) / r_H`` is added in quadrature (the net doping comes from Hall densities, which
    scale with r_H). A single room-temperature result whose ionization check failed gives
    an indeterminate claim with its reason. The claim temperature does not enter: a fit gives
    N_D - N_A, which does not depend on T, and a single point is used only in saturation.
    (:func:`freezeout.claims.budget.net_doping_for_claim`.)
``resistivity``
    A measured resistivity within ``temperature_tolerance_K`` of the claim temperature, with a
    known uncertainty, is used as it is. Otherwise, for silicon with the claim's dopant boron
    or phosphorus, the net doping (with its uncertainty as above) is converted with ASTM F723
    (Thurber et al., NBS SP 400-64; :mod:`freezeout.claims.silicon`), the relation's stated
    uncertainty (3 % boron, 4.5 % phosphorus) added in quadrature. The relations refer to
    23 degC; claims within :data:`CONVERSION_TEMPERATURE_WINDOW_K` of it are treated as
    room-temperature claims. A net doping outside the relation's range gives an indeterminate
    verdict: the measurement cannot decide the claim. Either way no temperature correction
    is made from the temperature the value refers to (the measured point's, or 296.15 K for
    F723) to the claim temperature; the unknown correction is a type-B relative standard
    uncertainty :func:`freezeout.claims.budget.temperature_term`, added in quadrature and
    stated in the notes.
``type``
    Accepted when the measured majority carrier matches; no uncertainty is attached.

Verdicts defer to the purchase contract's specification (see
:data:`freezeout.records.verdicts.DEFERENCE`).

References
----------
.. [1] ASTM F723-99; W. R. Thurber et al., NBS Special Publication 400-64 (1981).
.. [2] JCGM 106:2012; ISO 14253-1:2017.
.. [3] JCGM 100:2008 (GUM), 4.3.7: a rectangular distribution of half-width a has standard
   uncertainty a / sqrt(3).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace

from freezeout.claims import silicon
from freezeout.claims.aggregate import aggregate_lot, aggregate_wafer
from freezeout.claims.budget import net_doping_for_claim, with_temperature_term
from freezeout.claims.decide import decide, decide_type, indeterminate
from freezeout.claims.dopants import claim_dopant, is_silicon
from freezeout.errors import InputError
from freezeout.numbers import finite_or_none
from freezeout.records.lot import Claim, Decision, LotFile
from freezeout.records.measurement import (
    DEFAULT_NET_DOPING_METHOD,
    Measurement,
    ResistivityPoint,
)
from freezeout.records.verdicts import ClaimVerdict, LotVerdict, WaferVerdict

#: Claims this close to the F723 reference temperature (23 degC) may use the conversion;
#: common practice for "room temperature" claims, no source. [K]
CONVERSION_TEMPERATURE_WINDOW_K = 5.0

#: Default tolerance for matching a measured resistivity point to a claim temperature. [K]
DEFAULT_TEMPERATURE_TOLERANCE_K = 1.0

#: Above this fitted compensation ratio the F723 conversion (made for uncompensated
#: silicon) gets a caveat note; common practice, no source. [1]
COMPENSATION_NOTE_THRESHOLD = 0.1


def _nearest_point(measured: Measurement, claim: Claim,
                   tolerance_K: float = math.inf) -> ResistivityPoint | None:
    """The measured resistivity closest to the claim temperature, if within the tolerance."""
    points = [q for p in measured.resistivity
              if (q := ResistivityPoint.usable(p.temperature_K, p.value, p.stderr))]
    if not points:
        return None
    best = min(points, key=lambda p: abs(p.temperature_K - claim.temperature_K))
    return best if abs(best.temperature_K - claim.temperature_K) <= tolerance_K else None


def _unmatched_note(measured: Measurement, claim: Claim, tolerance_K: float) -> str | None:
    """Why a measured resistivity the run has was not used for the claim, or None."""
    far = _nearest_point(measured, claim)
    if far is None or abs(far.temperature_K - claim.temperature_K) <= tolerance_K:
        return None
    return (f"the measured resistivity at {far.temperature_K:.2f} K is "
            f"{abs(far.temperature_K - claim.temperature_K):.2f} K from the claim's "
            f"{claim.temperature_K:g} K, beyond the {tolerance_K:g} K within which a measured "
            "point is taken: not used (give the claim's temperature_K to decide on it)")


def _converted_resistivity(claim: Claim, measured: Measurement, where: str,
                           near: ResistivityPoint | None, tolerance_K: float,
                           ctx: dict, common: dict) -> ClaimVerdict:
    """A resistivity claim decided through the ASTM F723 conversion of the net doping."""
    window = claim.window
    material = measured.material
    if not is_silicon(material):
        raise InputError(
            f"{where}: {claim.key} needs the ASTM F723 conversion, which is for silicon, "
            f"but the wafer is {material!r} and has no measured resistivity near "
            f"{claim.temperature_K:g} K", column=claim.key)
    dt = claim.temperature_K - silicon.REFERENCE_TEMPERATURE_K
    if abs(dt) > CONVERSION_TEMPERATURE_WINDOW_K:
        raise InputError(
            f"{where}: {claim.key} is at {claim.temperature_K:g} K, but the run has no "
            f"measured resistivity within {tolerance_K:g} K of it and the ASTM "
            "F723 conversion refers to 23 degC (296.15 K)", column=claim.key)
    method = f"ASTM F723 ({claim.dopant}) from net doping"
    nd = net_doping_for_claim(measured, where, claim, claim.dopant)
    notes = nd.notes
    unmatched = _unmatched_note(measured, claim, tolerance_K)
    if unmatched:
        notes.append(unmatched)
    if nd.reason is not None:
        return indeterminate(claim.quantity, window, nd.reason, method=method,
                             temperature_K=claim.temperature_K, notes=notes, **common)
    n, u_n = nd.value, nd.stderr
    comp = finite_or_none(measured.compensation_ratio)
    if comp is not None and comp > COMPENSATION_NOTE_THRESHOLD:
        notes.append(f"ASTM F723 is for uncompensated silicon; the fitted compensation "
                     f"ratio is {comp:.2g}, so the converted resistivity is a lower bound")
    carrier = measured.carrier
    implied = silicon.CARRIER_OF_DOPANT[claim.dopant]
    if carrier in ("n", "p") and carrier != implied:
        notes.append(f"the measured carrier type {carrier} does not match {claim.dopant} "
                     f"({implied}-type); the conversion uses the claimed dopant")
    if near is not None:
        notes.append(f"the measured resistivity at {near.temperature_K:.2f} K has no "
                     "uncertainty; the conversion is used instead")
    try:
        rho, u_rho = silicon.resistivity_with_uncertainty(n, u_n, claim.dopant)
    except InputError as exc:
        return indeterminate(
            claim.quantity, window,
            f"{where}: net doping {n:.4g} cm^-3 cannot be converted ({exc.message})",
            method=method, temperature_K=claim.temperature_K, notes=notes, **common)
    notes.append(f"includes the stated ASTM F723 uncertainty of "
                 f"{100 * silicon.RELATIVE_UNCERTAINTY[claim.dopant]:g} % ({claim.dopant})")
    u_rho = with_temperature_term(rho, u_rho, silicon.REFERENCE_TEMPERATURE_K,
                                  claim.temperature_K, "ASTM F723 (23 degC)", notes)
    return decide(rho, u_rho, window, method=method, notes=notes, **ctx)


def evaluate_claim(
    claim: Claim,
    measured: Measurement,
    decision: Decision,
    *,
    wafer_id: str = "",
    temperature_tolerance_K: float = DEFAULT_TEMPERATURE_TOLERANCE_K,
    dopant: str | None = None,
) -> ClaimVerdict:
    """Decide one claim for one wafer.

    Parameters
    ----------
    claim
        The claim (from :func:`freezeout.claims.lot_reader.load_lot`).
    measured
        The wafer's measured quantities.
    decision
        The lot's decision rule and coverage factor.
    wafer_id
        For messages.
    temperature_tolerance_K
        How far a measured resistivity point may be from the claim temperature. [K]
    dopant
        The dopant the net doping is taken to come from (for a single point's ionization
        check); default the claim's own (:func:`freezeout.claims.dopants.claim_dopant`
        resolves it over the lot).

    Returns
    -------
    ClaimVerdict
        The verdict, which says how the measured value was obtained. It defers to the
        purchase contract's specification.

    Raises
    ------
    InputError
        When the measurement cannot be compared with the claim at all (no net doping; a
        resistivity claim with neither a measured resistivity near its temperature nor a
        usable F723 conversion; no carrier type for a type claim).
    """
    where = f"wafer {wafer_id}" if wafer_id else "wafer"
    common = {"rule": decision.rule, "coverage_factor": decision.coverage_factor,
              "claim_key": claim.key}
    if claim.quantity == "type":
        carrier = measured.carrier
        if carrier not in ("n", "p"):
            raise InputError(f"{where}: the measurement gives no carrier type for {claim.key}",
                             column=claim.key)
        return decide_type(carrier, claim.carrier, **common)

    window = claim.window
    assert window is not None
    ctx = {"quantity": claim.quantity, "temperature_K": claim.temperature_K, **common}
    if dopant is None:
        dopant = claim.dopant

    if claim.quantity == "net_doping":
        method = measured.net_doping_method or DEFAULT_NET_DOPING_METHOD
        nd = net_doping_for_claim(measured, where, claim, dopant)
        if nd.reason is not None:
            return indeterminate(claim.quantity, window, nd.reason, method=method,
                                 temperature_K=claim.temperature_K, notes=nd.notes, **common)
        return decide(nd.value, nd.stderr, window, method=method, notes=nd.notes, **ctx)

    # resistivity
    near = _nearest_point(measured, claim, temperature_tolerance_K)
    if near is not None and near.stderr is not None:
        method = f"measured resistivity at {near.temperature_K:.2f} K"
        notes: list[str] = []
        u = with_temperature_term(near.value, near.stderr, near.temperature_K,
                                  claim.temperature_K, "the measured resistivity", notes)
        return decide(near.value, u, window, method=method, notes=notes, **ctx)
    if claim.dopant in silicon.DOPANTS:
        return _converted_resistivity(claim, measured, where, near, temperature_tolerance_K,
                                      ctx, common)
    if near is not None:
        method = f"measured resistivity at {near.temperature_K:.2f} K"
        notes = ["the measured resistivity has no uncertainty"]
        with_temperature_term(near.value, None, near.temperature_K, claim.temperature_K,
                              "the measured resistivity", notes)
        return decide(near.value, None, window, method=method, notes=notes, **ctx)
    unmatched = _unmatched_note(measured, claim, temperature_tolerance_K)
    raise InputError(
        f"{where}: {claim.key} (resistivity at {claim.temperature_K:g} K) needs a measured "
        f"resistivity within {temperature_tolerance_K:g} K of that temperature, or a dopant "
        "(boron or phosphorus, silicon only) for the ASTM F723 conversion"
        + (f"; {unmatched}" if unmatched else ""), column=claim.key)


def evaluate_wafer(
    wafer_id: str,
    measured: Measurement,
    claims: Sequence[Claim],
    decision: Decision,
    *,
    temperature_tolerance_K: float = DEFAULT_TEMPERATURE_TOLERANCE_K,
) -> WaferVerdict:
    """Decide every claim for one wafer and combine them.

    Parameters
    ----------
    wafer_id
        The wafer's id.
    measured
        Its measured quantities.
    claims
        The lot's claims.
    decision
        The lot's decision rule.
    temperature_tolerance_K
        See :func:`evaluate_claim`. [K]

    Returns
    -------
    WaferVerdict
        Reject if any claim is rejected, indeterminate if none is and any is indeterminate,
        else accept; with the deciding claim. The measurement's warnings become notes.
    """
    verdicts = [evaluate_claim(c, measured, decision, wafer_id=wafer_id,
                               temperature_tolerance_K=temperature_tolerance_K,
                               dopant=claim_dopant(c, claims)) for c in claims]
    return aggregate_wafer(wafer_id, verdicts, notes=[str(w) for w in measured.warnings])


def unmeasured_wafer(wafer_id: str, reason: str, claims: Sequence[Claim],
                     decision: Decision) -> WaferVerdict:
    """A wafer whose measurement could not be obtained (e.g. the fit failed).

    Parameters
    ----------
    wafer_id
        The wafer's id.
    reason
        Why there is no measurement.
    claims
        The lot's claims.
    decision
        The lot's decision rule.

    Returns
    -------
    WaferVerdict
        Every claim indeterminate (nothing proves conformity or nonconformity), hence the
        wafer indeterminate.
    """
    out = []
    for c in claims:
        if c.window is None:
            out.append(ClaimVerdict(
                quantity="type", measured=None, stderr=None,
                coverage_factor=decision.coverage_factor, expanded=None, window=None,
                rule=decision.rule, verdict="indeterminate", margin=None,
                conformance_probability=None,
                sentence=f"No measurement for wafer {wafer_id} ({reason}): indeterminate.",
                claimed=c.carrier, claim_key=c.key))
        else:
            out.append(indeterminate(c.quantity, c.window,
                                     f"no measurement for wafer {wafer_id} ({reason})",
                                     rule=decision.rule,
                                     coverage_factor=decision.coverage_factor, claim_key=c.key,
                                     temperature_K=c.temperature_K))
    # no claim decided it: the wafer was not measured, and its sentence says why
    return replace(aggregate_wafer(wafer_id, out, notes=[reason]), decided_by="",
                   sentence=f"Wafer {wafer_id} is indeterminate: it was not measured "
                            f"({reason}).")


def evaluate_lot(
    lot: LotFile,
    measured_by_wafer: Mapping[str, Measurement],
    *,
    unmeasured: Mapping[str, str] | None = None,
    temperature_tolerance_K: float = DEFAULT_TEMPERATURE_TOLERANCE_K,
) -> LotVerdict:
    """Decide a whole lot.

    Parameters
    ----------
    lot
        The parsed lot file.
    measured_by_wafer
        Wafer id -> measured quantities, for every wafer not in ``unmeasured``.
    unmeasured
        Wafer id -> reason, for wafers with no measurement (their verdict is indeterminate).
    temperature_tolerance_K
        See :func:`evaluate_claim`. [K]

    Returns
    -------
    LotVerdict
        Rejected if any wafer is, indeterminate if none is rejected and any is indeterminate,
        else accepted; naming the deciding wafer and claim. The verdict defers to the purchase
        contract's specification.

    Raises
    ------
    InputError
        If a wafer has neither a measurement nor a reason, or a claim cannot be compared with
        a measurement (see :func:`evaluate_claim`); ``file`` is the lot file.
    """
    unmeasured = unmeasured or {}
    claim_lines = {c.key: c.line for c in lot.claims}  # for errors that name a claim
    wafers = []
    for w in lot.wafers:
        if w.wafer_id in unmeasured:
            wafers.append(unmeasured_wafer(w.wafer_id, unmeasured[w.wafer_id], lot.claims,
                                           lot.decision))
            continue
        if w.wafer_id not in measured_by_wafer:
            raise InputError(f"no measurement given for wafer {w.wafer_id}",
                             file=str(lot.path), column=w.key)
        try:
            wafers.append(evaluate_wafer(w.wafer_id, measured_by_wafer[w.wafer_id], lot.claims,
                                         lot.decision,
                                         temperature_tolerance_K=temperature_tolerance_K))
        except InputError as exc:
            line = exc.line if exc.line is not None else claim_lines.get(exc.column)
            raise InputError(exc.message, file=str(lot.path), line=line,
                             column=exc.column) from None
    return aggregate_lot(wafers, lot=lot.lot, supplier=lot.supplier,
                         date=lot.date.isoformat(), rule=lot.decision.rule,
                         coverage_factor=lot.decision.coverage_factor)
