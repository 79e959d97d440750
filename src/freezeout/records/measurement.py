"""What a wafer's measurement gives the claims: the measured quantities and how they were had.

A :class:`Measurement` holds, for one wafer, the quantities the certificate claims are
decided on: the majority carrier, the signed net doping N_D - N_A with its uncertainty, the
resistivity at the temperatures measured, the compensation ratio, the Hall factor the Hall
densities were taken with and, for a single room-temperature result, whether its dopant is
fully ionized. It is built from a fit (:func:`freezeout.claims.measured.measurement_from_fit`)
or from a single point (:func:`freezeout.claims.room_point.room_point_measurement`) and
read by :mod:`freezeout.claims.evaluate`. :meth:`Measurement.to_dict` is its JSON form.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from freezeout.numbers import finite_or_none


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


@dataclass(frozen=True)
class ResistivityPoint:
    """A measured resistivity at one temperature.

    Attributes
    ----------
    temperature_K
        The point's temperature. [K]
    value
        The resistivity, > 0. [ohm cm]
    stderr
        Its standard uncertainty, or None when unknown. [ohm cm]
    """

    temperature_K: float
    value: float
    stderr: float | None = None

    @classmethod
    def usable(cls, temperature_K, value, stderr=None) -> ResistivityPoint | None:
        """The point when its temperature and value are finite and the value is > 0, else None.

        The one rule for which resistivity points a claim may use; a non-finite uncertainty
        becomes None (unknown).
        """
        t, v = finite_or_none(temperature_K), finite_or_none(value)
        if t is None or v is None or not v > 0:
            return None
        return cls(t, v, finite_or_none(stderr))

    def to_dict(self) -> dict:
        """Plain-JSON form ``{"temperature_K", "value", "stderr"}``."""
        return {"temperature_K": self.temperature_K, "value": self.value,
                "stderr": self.stderr}


@dataclass(frozen=True)
class IonizationCheck:
    """Whether a single room-temperature Hall density gives the net doping.

    Attributes
    ----------
    dopant
        The dopant checked (``"boron"``, ``"phosphorus"``, another name, or None).
    material
        The host's name.
    temperature_K
        The point's temperature. [K]
    density_cm3
        The measured majority density. [cm^-3]
    energy_eV
        The dopant's ionization energy used, or None when none is known. [eV]
    fraction
        Ionized fraction of the majority dopant at the measured density, or None when it
        could not be computed. [1]
    reason
        None when the point gives the net doping; else why it does not, in plain words.
    """

    dopant: str | None
    material: str
    temperature_K: float
    density_cm3: float
    energy_eV: float | None
    fraction: float | None
    reason: str | None

    def note(self) -> str | None:
        """The remark for a verdict that uses the point, or None."""
        if self.reason is not None or self.fraction is None:
            return None
        return (f"{self.dopant} ({1e3 * self.energy_eV:g} meV) is {100 * self.fraction:.2f} % "
                f"ionized at {self.temperature_K:g} K at the measured density "
                f"{self.density_cm3:.3g} cm^-3 (charge neutrality of the tool's model): the "
                f"single point is taken as the net doping, its un-ionized "
                f"{100 * (1 - self.fraction):.2g} % not corrected")

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {"dopant": self.dopant, "material": self.material,
                "temperature_K": self.temperature_K, "density_cm3": self.density_cm3,
                "energy_eV": self.energy_eV, "fraction": self.fraction, "reason": self.reason}


#: How a net doping was obtained when the measurement does not say. [text]
DEFAULT_NET_DOPING_METHOD = "net doping |N_D - N_A|"


def signed_net_doping(majority_excess: float | None, carrier: str | None) -> float | None:
    """N_D - N_A, signed, from the majority dopants' excess over the minority ones.

    The one sign rule of the net doping (project choice, no source): a fit
    (:attr:`freezeout.fitting.result.FitResult.net_doping`, majority minus minority
    concentration) and a single room-temperature point (majority minus minority carrier
    density, ``m - n_i^2 / m``) both give the excess of the majority dopants, >= 0 for a
    consistent measurement. A :class:`Measurement` holds N_D - N_A signed: positive for an
    n-type wafer, negative for a p-type one. A negative excess (a measurement that
    contradicts its own carrier type) keeps the sign of the other type, so that the claims
    see the contradiction (:func:`freezeout.claims.budget.net_doping_for_claim`).

    Parameters
    ----------
    majority_excess
        Majority minus minority dopant concentration (or carrier density), or None. [cm^-3]
    carrier
        The majority carrier, ``"n"`` or ``"p"``; anything else leaves the value as given.

    Returns
    -------
    float or None
        N_D - N_A. [cm^-3]
    """
    if majority_excess is None:
        return None
    return -majority_excess if carrier == "p" else majority_excess


@dataclass(frozen=True)
class Measurement:
    """A wafer's measured quantities, as the claims are decided on them.

    Attributes
    ----------
    material
        The host's name (``"Si"``), or None when not known.
    carrier
        Majority carrier, ``"n"`` or ``"p"``, or None when not known.
    net_doping
        N_D - N_A, signed (positive for n-type, negative for p-type; the one rule
        :func:`signed_net_doping`), or None. [cm^-3]
    net_doping_stderr
        Its standard uncertainty, or None when unknown. [cm^-3]
    net_doping_method
        How the net doping was obtained, for the record.
    resistivity
        Measured resistivities by temperature (only usable points, see
        :meth:`ResistivityPoint.usable`).
    compensation_ratio
        N_minority / N_majority, or None when not known. [1]
    hall_factor
        The r_H of the Hall densities and its uncertainty, or None when not stated.
    ionization
        For a single room-temperature result: each dopant the claims rest on (``""`` when the
        lot names none) -> its :class:`IonizationCheck`; None for a temperature run.
    warnings
        Remarks carried into the wafer's verdict as notes.
    source
        The run the measurement came from (file name), or None.
    """

    material: str | None = None
    carrier: str | None = None
    net_doping: float | None = None
    net_doping_stderr: float | None = None
    net_doping_method: str = DEFAULT_NET_DOPING_METHOD
    resistivity: tuple[ResistivityPoint, ...] = ()
    compensation_ratio: float | None = None
    hall_factor: HallFactorUsed | None = None
    ionization: Mapping[str, IonizationCheck] | None = None
    warnings: tuple[str, ...] = ()
    source: str | None = None

    def to_dict(self) -> dict:
        """Plain-JSON form (the measured-quantities dict).

        Keys ``material``, ``carrier``, ``net_doping_cm3`` (``{"value", "stderr"}``),
        ``net_doping_method``, ``resistivity_ohm_cm_at_T`` (a list of points, or None),
        ``compensation_ratio``, ``hall_factor`` (or None), ``ionization`` (dopant -> check,
        or None), ``warnings``, ``source``.
        """
        return {
            "material": self.material,
            "carrier": self.carrier,
            "net_doping_cm3": {"value": self.net_doping, "stderr": self.net_doping_stderr},
            "net_doping_method": self.net_doping_method,
            "resistivity_ohm_cm_at_T": [p.to_dict() for p in self.resistivity] or None,
            "compensation_ratio": self.compensation_ratio,
            "hall_factor": None if self.hall_factor is None else self.hall_factor.to_dict(),
            "ionization": None if self.ionization is None else {
                k: v.to_dict() for k, v in self.ionization.items()},
            "warnings": list(self.warnings),
            "source": self.source,
        }
