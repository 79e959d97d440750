"""From a wafer's measured quantities and the lot's claims to verdicts.

This module does not fit anything. It consumes a plain *measured-quantities* dict per wafer::

    {
        "material": "Si",
        "carrier": "n",                                   # majority carrier, "n" or "p"
        "net_doping_cm3": {"value": 4.9e14, "stderr": 1.2e13},   # N_D - N_A, signed
        "net_doping_method": "fitted net doping",         # optional, for the record
        "resistivity_ohm_cm_at_T": [                      # or one such dict, or None
            {"temperature_K": 296.2, "value": 9.7, "stderr": 0.1},
        ],
        "compensation_ratio": 0.02,                       # optional, N_minor / N_major
        "hall_factor": {"value": 1.0, "stderr": 0.0,      # optional: r_H of the Hall
                        "source": "default"},             #   densities, its uncertainty
        "ionization": {"phosphorus": {...}},              # optional, single points only
        "warnings": [],                                   # optional, carried as notes
    }

:func:`measured_from_fit` builds it from the fit result JSON (``freezeout.fit_file(...)
.to_dict()``); a single room-temperature result gives the same dict directly, with
``ionization`` mapping each dopant the claims need (``""`` for none named) to the
:meth:`freezeout.claims.single_point.IonizationCheck.to_dict` of the point.

How each claim is measured
--------------------------
``net_doping``
    Compared with ``|N_D - N_A|`` and its standard uncertainty, in cm^-3, for any material
    (no conversion). The sign must agree with the majority carrier (positive for n, negative
    for p); a net doping of the other sign is not silently taken as its magnitude: the claim
    is indeterminate, with the reason. The Hall factor's relative standard uncertainty
    ``u(r_H) / r_H`` is added in quadrature (the net doping comes from Hall densities, which
    scale with r_H). A single room-temperature result whose ``ionization`` check failed gives
    an indeterminate claim with its reason. The claim temperature does not enter: a fit gives
    N_D - N_A, which does not depend on T, and a single point is used only in saturation.
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
    uncertainty :func:`temperature_term`, added in quadrature and stated in the notes.
``type``
    Accepted when the measured majority carrier matches; no uncertainty is attached.

Verdicts defer to the purchase contract's specification (see
:data:`freezeout.claims.conformity.DEFERENCE`).

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
from dataclasses import dataclass, field

from freezeout.claims import silicon
from freezeout.claims.conformity import (
    ClaimVerdict,
    LotVerdict,
    WaferVerdict,
    aggregate_lot,
    aggregate_wafer,
    decide,
    decide_type,
    indeterminate,
)
from freezeout.claims.lotfile import Claim, Decision, LotFile, claim_dopant, is_silicon
from freezeout.claims.single_point import IonizationCheck
from freezeout.errors import InputError
from freezeout.numbers import finite_or_none

#: Claims this close to the F723 reference temperature (23 degC) may use the conversion;
#: common practice for "room temperature" claims, no source. [K]
CONVERSION_TEMPERATURE_WINDOW_K = 5.0

#: Default tolerance for matching a measured resistivity point to a claim temperature. [K]
DEFAULT_TEMPERATURE_TOLERANCE_K = 1.0

#: Above this fitted compensation ratio the F723 conversion (made for uncompensated
#: silicon) gets a caveat note; common practice, no source. [1]
COMPENSATION_NOTE_THRESHOLD = 0.1

#: Relative temperature coefficient of the resistivity of lightly doped silicon near room
#: temperature, d ln(rho) / dT ~ 0.008 /K (from memory: the lattice-scattering mobility goes
#: about as T^-2.4 in Si, C. Jacoboni et al., Solid-State Electron. 20, 77 (1977), from
#: memory; 2.4 / 300 K = 0.008 /K). Used for every material, as no other is stated here. [1/K]
RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K = 0.008


def temperature_term(delta_t_K: float) -> float:
    """Relative standard uncertainty of an uncorrected resistivity temperature offset.

    The correction from the temperature the value refers to, to the claim temperature, is
    not made; it is taken as unknown within +- |dT| c_T (c_T =
    :data:`RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K`), a rectangular distribution, whose
    standard uncertainty is |dT| c_T / sqrt(3) (JCGM 100:2008, 4.3.7).

    Parameters
    ----------
    delta_t_K
        Claim temperature minus the temperature the value refers to. [K]

    Returns
    -------
    float
        Relative standard uncertainty. [1]
    """
    return abs(delta_t_K) * RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K / math.sqrt(3.0)


def measured_from_fit(fit: Mapping) -> dict:
    """Build a wafer's measured-quantities dict from a fit result JSON.

    Parameters
    ----------
    fit
        The dict of ``freezeout.fit_file(...).to_dict()``: uses ``material.name``,
        ``carrier``, ``net_doping_cm3``, ``compensation_ratio``, ``warnings``,
        ``hall_factor`` and, from ``data``, ``temperature_K`` with ``resistivity_ohm_cm`` and
        (when present) ``resistivity_err_ohm_cm`` (standard uncertainty per point) and
        ``severe`` (points that failed a severe data-quality check are left out).

    Returns
    -------
    dict
        The measured-quantities dict described in this module's docstring. Its
        ``hall_factor`` is the fit's r_H with no uncertainty (the lot file's, when it states
        one, is put in by the caller).
    """
    material = fit.get("material")
    name = material.get("name") if isinstance(material, Mapping) else material
    net = fit.get("net_doping_cm3") or {}
    comp = fit.get("compensation_ratio")
    comp_v = finite_or_none(comp.get("value")) if isinstance(comp, Mapping) else \
        finite_or_none(comp)
    data = fit.get("data") or {}
    temps = data.get("temperature_K") or []
    rhos = data.get("resistivity_ohm_cm") or []
    errs = data.get("resistivity_err_ohm_cm") or [None] * len(rhos)
    severe = data.get("severe") or [False] * len(rhos)
    points = []
    for t, r, e, bad in zip(temps, rhos, errs, severe, strict=False):
        t, r = finite_or_none(t), finite_or_none(r)
        if t is not None and r is not None and r > 0 and not bad:
            points.append({"temperature_K": t, "value": r, "stderr": finite_or_none(e)})
    provenance = fit.get("provenance") or {}
    r_h = finite_or_none(fit.get("hall_factor"))
    return {
        "material": name,
        "carrier": fit.get("carrier"),
        "net_doping_cm3": {"value": net.get("value"), "stderr": net.get("stderr")},
        "net_doping_method": "fitted net doping |N_D - N_A|",
        "resistivity_ohm_cm_at_T": points or None,
        "compensation_ratio": comp_v,
        "hall_factor": {"value": r_h, "stderr": 0.0, "source": "the fit"},
        "warnings": list(fit.get("warnings") or []),
        "source": provenance.get("input"),
    }


def _resistivity_points(measured: Mapping) -> list[dict]:
    r = measured.get("resistivity_ohm_cm_at_T")
    if r is None:
        return []
    items = [r] if isinstance(r, Mapping) else list(r)
    out = []
    for p in items:
        t, v = finite_or_none(p.get("temperature_K")), finite_or_none(p.get("value"))
        if t is not None and v is not None and v > 0:
            out.append({"temperature_K": t, "value": v, "stderr": finite_or_none(
                p.get("stderr"))})
    return out


@dataclass
class _NetDoping:
    """|N_D - N_A| with its uncertainty, or the reason it cannot be had."""

    value: float | None
    stderr: float | None
    notes: list[str] = field(default_factory=list)
    reason: str | None = None


def _hall_term(measured: Mapping, y: float, u: float | None, notes: list[str]) -> float | None:
    """Add u(r_H)/r_H in quadrature to the relative uncertainty of y (a net doping)."""
    hall = measured.get("hall_factor")
    if not isinstance(hall, Mapping):
        return u
    r = finite_or_none(hall.get("value"))
    u_r = finite_or_none(hall.get("stderr")) or 0.0
    source = hall.get("source") or "not stated"
    if r is None or not r > 0:
        return u
    if not u_r > 0:
        notes.append(f"Hall factor r_H = {r:g} ({source}) with no stated uncertainty: none "
                     "in the budget (r_H depends on material, doping, temperature and "
                     "scattering; see docs/lot_format.md)")
        return u
    rel = u_r / r
    if u is None:
        notes.append(f"the Hall factor's relative uncertainty u(r_H)/r_H = {100 * rel:.3g} % "
                     f"(r_H = {r:g} +- {u_r:g}, {source}) is not added: the net doping has no "
                     "known uncertainty")
        return None
    notes.append(f"includes the Hall factor's relative standard uncertainty u(r_H)/r_H = "
                 f"{u_r:g}/{r:g} = {100 * rel:.3g} % ({source}) in quadrature")
    return math.hypot(u, y * rel)


def _net_doping(measured: Mapping, where: str, claim: Claim, dopant: str | None
                ) -> _NetDoping:
    nd = measured.get("net_doping_cm3")
    value = finite_or_none(nd.get("value")) if isinstance(nd, Mapping) else None
    if value is None:
        raise InputError(f"{where}: the measurement gives no net doping for {claim.key} "
                         f"({claim.quantity})", column=claim.key)
    notes: list[str] = []
    u = finite_or_none(nd.get("stderr"))
    if u is not None and u < 0:
        raise InputError(f"{where}: negative net-doping uncertainty {u:g}", column=claim.key)
    carrier = measured.get("carrier")
    if (carrier == "n" and not value > 0) or (carrier == "p" and not value < 0):
        sign = "zero" if value == 0 else (
            f"{value:.4g} cm^-3, the sign of a {'p' if value < 0 else 'n'}-type sample")
        return _NetDoping(None, None, notes, (
            f"{where}: the net doping N_D - N_A is {sign}, but the run's majority carrier is "
            f"{carrier}; the measurement contradicts itself and is not taken as a magnitude"))
    ionization = measured.get("ionization")
    if isinstance(ionization, Mapping):
        check = ionization.get(dopant or "")
        if not isinstance(check, Mapping):
            return _NetDoping(None, None, notes, (
                f"{where}: the single room-temperature result was not checked for the "
                f"ionization of {dopant or 'the dopant'}"))
        if check.get("reason"):
            return _NetDoping(None, None, notes, f"{where}: {check['reason']}")
        note = IonizationCheck(**check).note()
        if note:
            notes.append(note)
    y = abs(value)
    if u is None:
        notes.append("the measurement gives no finite uncertainty for the net doping")
    u = _hall_term(measured, y, u, notes)
    return _NetDoping(y, u, notes)


def _temperature_note(what: str, t_ref: float, t_claim: float, rel: float) -> str:
    return (f"{what} refers to {t_ref:.2f} K, the claim to {t_claim:.2f} K: no temperature "
            f"correction applied; the unknown correction is a type-B relative standard "
            f"uncertainty |dT| c_T / sqrt(3) = {abs(t_claim - t_ref):.3g} K x "
            f"{RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K:g} /K / sqrt(3) = {100 * rel:.3g} % "
            "(rectangular; c_T of lightly doped silicon), added in quadrature")


def _with_temperature_term(value: float, u: float | None, t_ref: float, t_claim: float,
                           what: str, notes: list[str]) -> float | None:
    rel = temperature_term(t_claim - t_ref)
    if not rel > 0:
        return u
    notes.append(_temperature_note(what, t_ref, t_claim, rel))
    return None if u is None else math.hypot(u, value * rel)


def evaluate_claim(
    claim: Claim,
    measured: Mapping,
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
        The claim (from :func:`freezeout.claims.lotfile.load_lot`).
    measured
        The wafer's measured-quantities dict (see the module docstring).
    decision
        The lot's decision rule and coverage factor.
    wafer_id
        For messages.
    temperature_tolerance_K
        How far a measured resistivity point may be from the claim temperature. [K]
    dopant
        The dopant the net doping is taken to come from (for a single point's ionization
        check); default the claim's own (:func:`freezeout.claims.lotfile.claim_dopant`
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
        carrier = measured.get("carrier")
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
        method = str(measured.get("net_doping_method") or "net doping |N_D - N_A|")
        nd = _net_doping(measured, where, claim, dopant)
        if nd.reason is not None:
            return indeterminate(claim.quantity, window, nd.reason, method=method,
                                 temperature_K=claim.temperature_K, notes=nd.notes, **common)
        return decide(nd.value, nd.stderr, window, method=method, notes=nd.notes, **ctx)

    # resistivity
    points = _resistivity_points(measured)
    near = None
    if points:
        best = min(points, key=lambda p: abs(p["temperature_K"] - claim.temperature_K))
        if abs(best["temperature_K"] - claim.temperature_K) <= temperature_tolerance_K:
            near = best
    if near is not None and near["stderr"] is not None:
        method = f"measured resistivity at {near['temperature_K']:.2f} K"
        notes: list[str] = []
        u = _with_temperature_term(near["value"], near["stderr"], near["temperature_K"],
                                   claim.temperature_K, "the measured resistivity", notes)
        return decide(near["value"], u, window, method=method, notes=notes, **ctx)

    if claim.dopant in silicon.DOPANTS:
        material = measured.get("material")
        if not is_silicon(material):
            raise InputError(
                f"{where}: {claim.key} needs the ASTM F723 conversion, which is for silicon, "
                f"but the wafer is {material!r} and has no measured resistivity near "
                f"{claim.temperature_K:g} K", column=claim.key)
        dt = claim.temperature_K - silicon.REFERENCE_TEMPERATURE_K
        if abs(dt) > CONVERSION_TEMPERATURE_WINDOW_K:
            raise InputError(
                f"{where}: {claim.key} is at {claim.temperature_K:g} K, but the run has no "
                f"measured resistivity within {temperature_tolerance_K:g} K of it and the ASTM "
                "F723 conversion refers to 23 degC (296.15 K)", column=claim.key)
        method = f"ASTM F723 ({claim.dopant}) from net doping"
        nd = _net_doping(measured, where, claim, claim.dopant)
        notes = nd.notes
        if nd.reason is not None:
            return indeterminate(claim.quantity, window, nd.reason, method=method,
                                 temperature_K=claim.temperature_K, notes=notes, **common)
        n, u_n = nd.value, nd.stderr
        comp = finite_or_none(measured.get("compensation_ratio"))
        if comp is not None and comp > COMPENSATION_NOTE_THRESHOLD:
            notes.append(f"ASTM F723 is for uncompensated silicon; the fitted compensation "
                         f"ratio is {comp:.2g}, so the converted resistivity is a lower bound")
        carrier = measured.get("carrier")
        implied = silicon.CARRIER_OF_DOPANT[claim.dopant]
        if carrier in ("n", "p") and carrier != implied:
            notes.append(f"the measured carrier type {carrier} does not match {claim.dopant} "
                         f"({implied}-type); the conversion uses the claimed dopant")
        if near is not None:
            notes.append(f"the measured resistivity at {near['temperature_K']:.2f} K has no "
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
        u_rho = _with_temperature_term(rho, u_rho, silicon.REFERENCE_TEMPERATURE_K,
                                       claim.temperature_K, "ASTM F723 (23 degC)", notes)
        return decide(rho, u_rho, window, method=method, notes=notes, **ctx)

    if near is not None:
        method = f"measured resistivity at {near['temperature_K']:.2f} K"
        notes = ["the measured resistivity has no uncertainty"]
        _with_temperature_term(near["value"], None, near["temperature_K"],
                               claim.temperature_K, "the measured resistivity", notes)
        return decide(near["value"], None, window, method=method, notes=notes, **ctx)
    raise InputError(
        f"{where}: {claim.key} (resistivity at {claim.temperature_K:g} K) needs a measured "
        f"resistivity within {temperature_tolerance_K:g} K of that temperature, or a dopant "
        "(boron or phosphorus, silicon only) for the ASTM F723 conversion", column=claim.key)


def evaluate_wafer(
    wafer_id: str,
    measured: Mapping,
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
        Its measured-quantities dict.
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
        else accept; with the deciding claim. Warnings in ``measured`` become notes.
    """
    verdicts = [evaluate_claim(c, measured, decision, wafer_id=wafer_id,
                               temperature_tolerance_K=temperature_tolerance_K,
                               dopant=claim_dopant(c, claims)) for c in claims]
    return aggregate_wafer(wafer_id, verdicts, notes=[str(w) for w in
                                                      measured.get("warnings") or []])


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
    return aggregate_wafer(wafer_id, out, notes=[reason])


def evaluate_lot(
    lot: LotFile,
    measured_by_wafer: Mapping[str, Mapping],
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
        Wafer id -> measured-quantities dict, for every wafer not in ``unmeasured``.
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
            raise InputError(exc.message, file=str(lot.path), line=exc.line,
                             column=exc.column) from None
    return aggregate_lot(wafers, lot=lot.lot, supplier=lot.supplier,
                         date=lot.date.isoformat(), rule=lot.decision.rule,
                         coverage_factor=lot.decision.coverage_factor)
