"""When a single room-temperature Hall density is the net doping, and when it is not.

A single Hall point at room temperature gives the majority density m. With every dopant
ionized (the saturation range) and non-degenerate statistics, charge neutrality and
n p = n_i^2 give the net doping as m - n_i^2 / m. Whether room temperature lies in the
saturation range depends on the host, the dopant's ionization energy and its density: for
boron in silicon at 1e17 cm^-3 only about 90 % of the acceptors are ionized at 296 K, for
magnesium in GaN at 1e19 cm^-3 a few per cent. Below saturation the single point understates
the net doping, and by how much depends on the compensation, which one point cannot give.

:func:`check_single_point` therefore asks the tool's own equilibrium model how much of the
majority dopant is ionized at the measured density: it solves charge neutrality
(:func:`freezeout.physics.neutrality.solve_levels`, Fermi-Dirac statistics) for one level of
the dopant whose concentration makes the majority density equal to the measured one. The
Fermi level is then the one the measured density fixes, whatever the compensation, so the
ionized fraction f of that level is the wafer's (under the model's assumptions: one level,
its ionization energy independent of the doping, no impurity band). For a donor-doped wafer
with N_A compensating acceptors, n + N_A = f N_D gives N_D - N_A = m / f + N_A (1/f - 1)
>= m / f: the point is at most f of the net doping. When f >= :data:`FULL_IONIZATION` the
point is used as the net doping; below it, or when no level is known for the material and
dopant (only boron and phosphorus in silicon are), the net-doping claim cannot be decided
from the point.

We chose not to correct the point by 1/f: the correction needs the compensation and an
ionization energy whose concentration dependence the model leaves out, and neither has a
stated uncertainty here; a temperature run measures both.

References
----------
.. [1] C. Kittel, Introduction to Solid State Physics (Wiley), donor and acceptor ionization
   energies in silicon (from memory); see :data:`freezeout.claims.silicon.IONIZATION_ENERGY_EV`.
.. [2] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. (Wiley, 2007),
   Sec. 1.4.3 (ionized fraction of a donor or acceptor level).
"""

from __future__ import annotations

import math

from freezeout.claims import silicon
from freezeout.claims.dopants import is_silicon
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import BandState, DopantLevel, solve_levels
from freezeout.records.measurement import IonizationCheck

#: A single room-temperature point is taken as the net doping when at least this fraction of
#: the majority dopant is ionized; the un-ionized rest (at most 1 %) is small against the
#: usual few per cent of a Hall density's uncertainty. Project choice, no source. [1]
FULL_IONIZATION = 0.99

_KIND = {"boron": "acceptor", "phosphorus": "donor"}


def ionized_fraction(material: Material, kind: str, energy_eV: float, majority_density: float,
                     temperature: float, degeneracy: float | None = None) -> float:
    """Ionized fraction of a single dopant level when the majority density is given.

    Solves charge neutrality with one level of ``kind`` (no compensation) for the level
    concentration at which the majority density (electrons for a donor, holes for an
    acceptor) equals ``majority_density``, and returns that level's ionized fraction there.
    As the Fermi level is fixed by the majority density, the fraction holds for any
    compensation.

    Parameters
    ----------
    material
        The host.
    kind
        ``"donor"`` or ``"acceptor"``.
    energy_eV
        Ionization energy from the band edge. [eV]
    majority_density
        Measured majority-carrier density, above the intrinsic density. [cm^-3]
    temperature
        Temperature. [K]
    degeneracy
        Ground-state degeneracy; None for the default (2 donors, 4 acceptors). [1]

    Returns
    -------
    float
        N_D+/N_D or N_A-/N_A. [1]

    Raises
    ------
    ValueError
        If the density is not above the intrinsic density or no concentration up to 1e8
        times the density gives it.
    """
    from scipy.optimize import brentq

    m = float(majority_density)
    bands = BandState.from_material(material, [float(temperature)])
    donor = kind == "donor"

    def solve(log10_conc: float):
        level = DopantLevel(kind, 10.0**log10_conc, float(energy_eV), degeneracy)
        return solve_levels(bands, [level], []) if donor else solve_levels(bands, [], [level])

    def excess(log10_conc: float) -> float:
        res = solve(log10_conc)
        return float((res.log_n if donor else res.log_p)[0]) - math.log(m)

    lo = math.log10(m) - 6.0  # majority density ~ max(level, n_i) < m there
    if not excess(lo) < 0:
        raise ValueError(f"density {m:.4g} cm^-3 is not above the intrinsic density")
    hi = math.log10(m)
    while excess(hi) < 0:
        hi += 1.0
        if hi > math.log10(m) + 8.0:
            raise ValueError(f"no level concentration gives the density {m:.4g} cm^-3")
    root = brentq(excess, lo, hi, xtol=1e-10, rtol=1e-12)
    res = solve(root)
    return float((res.donor_ionized if donor else res.acceptor_ionized)[0][0])


def check_single_point(material: Material, dopant: str | None, carrier: str,
                       majority_density: float, temperature: float) -> IonizationCheck:
    """Whether a single Hall density at ``temperature`` gives the net doping.

    Parameters
    ----------
    material
        The wafer's host.
    dopant
        The claimed dopant (see :func:`freezeout.claims.dopants.claim_dopant`), or None.
    carrier
        The point's majority carrier, ``"n"`` or ``"p"``.
    majority_density
        Its Hall density. [cm^-3]
    temperature
        Its temperature. [K]

    Returns
    -------
    IonizationCheck
        With ``reason`` None when at least :data:`FULL_IONIZATION` of the dopant is ionized.
    """
    t, m = float(temperature), float(majority_density)
    head = "a single room-temperature point cannot give the net doping here: "
    tail = "; measure a temperature run"

    def result(energy, fraction, reason):
        return IonizationCheck(dopant, material.name, t, m, energy, fraction, reason)

    if not is_silicon(material.name) or dopant not in silicon.IONIZATION_ENERGY_EV:
        what = dopant if dopant else "the dopant (the lot names none)"
        return result(None, None, (
            f"{head}freezeout knows no ionization energy for {what} in {material.name} (it "
            f"knows boron and phosphorus in silicon), so it cannot check that the dopant is "
            f"fully ionized at {t:g} K{tail}"))
    implied = silicon.CARRIER_OF_DOPANT[dopant]
    energy = silicon.IONIZATION_ENERGY_EV[dopant]
    if carrier != implied:
        return result(energy, None, (
            f"{head}the point is {carrier}-type, but {dopant} makes silicon {implied}-type, so "
            f"the majority carriers do not come from the claimed dopant{tail}"))
    try:
        f = ionized_fraction(material, _KIND[dopant], energy, m, t)
    except ValueError as exc:
        return result(energy, None, f"{head}{exc}{tail}")
    if f < FULL_IONIZATION:
        return result(energy, f, (
            f"{head}{dopant} ({1e3 * energy:g} meV) is only {100 * f:.1f} % ionized at {t:g} K "
            f"at the measured density {m:.3g} cm^-3 (charge neutrality of the tool's model), "
            f"so the point is at most {100 * f:.1f} % of the net doping (less with "
            f"compensation){tail}"))
    return result(energy, f, None)
