"""The uncertainty terms a claim's comparison adds: Hall factor, uncorrected temperature.

``net doping``
    :func:`net_doping_for_claim` gives ``|N_D - N_A|`` and its standard uncertainty from a
    :class:`~freezeout.records.measurement.Measurement`: the sign must agree with the majority
    carrier, a single room-temperature result must have passed its ionization check, and the
    Hall factor's relative standard uncertainty ``u(r_H) / r_H`` is added in quadrature (the
    net doping comes from Hall densities, which scale with r_H).
``temperature``
    No temperature correction is made from the temperature a resistivity refers to, to the
    claim temperature; the unknown correction is a type-B relative standard uncertainty
    :func:`temperature_term`, added in quadrature (:func:`with_temperature_term`).

Each term that enters, or is left out, is stated in the verdict's notes.

References
----------
.. [1] JCGM 100:2008 (GUM), 4.3.7: a rectangular distribution of half-width a has standard
   uncertainty a / sqrt(3).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from freezeout.errors import InputError
from freezeout.numbers import finite_or_none
from freezeout.records.lot import Claim
from freezeout.records.measurement import Measurement

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


def _temperature_note(what: str, t_ref: float, t_claim: float, rel: float) -> str:
    return (f"{what} refers to {t_ref:.2f} K, the claim to {t_claim:.2f} K: no temperature "
            f"correction applied; the unknown correction is a type-B relative standard "
            f"uncertainty |dT| c_T / sqrt(3) = {abs(t_claim - t_ref):.3g} K x "
            f"{RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K:g} /K / sqrt(3) = {100 * rel:.3g} % "
            "(rectangular; c_T of lightly doped silicon), added in quadrature")


def with_temperature_term(value: float, u: float | None, t_ref: float, t_claim: float,
                          what: str, notes: list[str]) -> float | None:
    """``u`` with :func:`temperature_term` of ``t_claim - t_ref`` added in quadrature.

    Parameters
    ----------
    value
        The resistivity. [ohm cm]
    u
        Its standard uncertainty, or None (unknown: stays None, the term is still noted).
        [ohm cm]
    t_ref, t_claim
        The temperature the value refers to, and the claim's. [K]
    what
        The value in words, for the note.
    notes
        The verdict's notes; the term's note is appended when it is not zero.

    Returns
    -------
    float or None
        The combined standard uncertainty. [ohm cm]
    """
    rel = temperature_term(t_claim - t_ref)
    if not rel > 0:
        return u
    notes.append(_temperature_note(what, t_ref, t_claim, rel))
    return None if u is None else math.hypot(u, value * rel)


def _hall_term(measured: Measurement, y: float, u: float | None,
               notes: list[str]) -> float | None:
    """Add u(r_H)/r_H in quadrature to the relative uncertainty of y (a net doping)."""
    hall = measured.hall_factor
    if hall is None:
        return u
    r = finite_or_none(hall.value)
    u_r = finite_or_none(hall.stderr) or 0.0
    source = hall.source or "not stated"
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


@dataclass
class NetDoping:
    """|N_D - N_A| with its uncertainty, or the reason it cannot be had.

    Attributes
    ----------
    value, stderr
        The magnitude and its standard uncertainty (None: unknown, or no value). [cm^-3]
    notes
        What entered the budget, in words.
    reason
        Why the claim cannot be decided from the measurement, or None.
    """

    value: float | None
    stderr: float | None
    notes: list[str] = field(default_factory=list)
    reason: str | None = None


def net_doping_for_claim(measured: Measurement, where: str, claim: Claim,
                         dopant: str | None) -> NetDoping:
    """The net doping a claim is compared with (or converted from), with its budget.

    Parameters
    ----------
    measured
        The wafer's measured quantities.
    where
        ``"wafer W01"``, for messages.
    claim
        The claim being decided.
    dopant
        The dopant the net doping is taken to come from (a single point's ionization check).

    Returns
    -------
    NetDoping
        With ``reason`` set when the sign contradicts the majority carrier or a single
        point's ionization check failed (or was not made for ``dopant``).

    Raises
    ------
    InputError
        When the measurement gives no net doping, or a negative uncertainty.
    """
    value = finite_or_none(measured.net_doping)
    if value is None:
        raise InputError(f"{where}: the measurement gives no net doping for {claim.key} "
                         f"({claim.quantity})", column=claim.key)
    notes: list[str] = []
    u = finite_or_none(measured.net_doping_stderr)
    if u is not None and u < 0:
        raise InputError(f"{where}: negative net-doping uncertainty {u:g}", column=claim.key)
    carrier = measured.carrier
    if (carrier == "n" and not value > 0) or (carrier == "p" and not value < 0):
        sign = "zero" if value == 0 else (
            f"{value:.4g} cm^-3, the sign of a {'p' if value < 0 else 'n'}-type sample")
        return NetDoping(None, None, notes, (
            f"{where}: the net doping N_D - N_A is {sign}, but the run's majority carrier is "
            f"{carrier}; the measurement contradicts itself and is not taken as a magnitude"))
    if measured.ionization is not None:
        check = measured.ionization.get(dopant or "")
        if check is None:
            return NetDoping(None, None, notes, (
                f"{where}: the single room-temperature result was not checked for the "
                f"ionization of {dopant or 'the dopant'}"))
        if check.reason:
            return NetDoping(None, None, notes, f"{where}: {check.reason}")
        note = check.note()
        if note:
            notes.append(note)
    y = abs(value)
    if u is None:
        notes.append("the measurement gives no finite uncertainty for the net doping")
    u = _hall_term(measured, y, u, notes)
    return NetDoping(y, u, notes)
