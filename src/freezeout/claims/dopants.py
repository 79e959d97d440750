"""Which dopant a lot's claims rest on, and whether a host is silicon.

The ASTM F723 conversion and the single-point ionization check need the dopant a net doping
comes from; a lot names it on a claim (``dopant = "phosphorus"``), possibly on another claim
than the one being decided. These rules say which dopant is meant.
"""

from __future__ import annotations

from collections.abc import Sequence

from freezeout.claims import silicon
from freezeout.records.lot import Claim, LotFile

_SILICON_NAMES = {"si", "silicon"}


def is_silicon(material: str | None) -> bool:
    """Whether a material name denotes silicon (``"Si"``, ``"silicon"``, any case)."""
    return material is not None and material.strip().lower() in _SILICON_NAMES


def claim_dopant(claim: Claim, claims: Sequence[Claim]) -> str | None:
    """The dopant that the net doping behind ``claim`` is taken to come from.

    The claim's own ``dopant`` when it names one; otherwise the single boron or phosphorus
    dopant that the lot's claims name (e.g. a resistivity claim's ``dopant = "phosphorus"``);
    otherwise None (none, or both, named).

    Parameters
    ----------
    claim
        The claim being decided.
    claims
        All the lot's claims.

    Returns
    -------
    str or None
        ``"boron"``, ``"phosphorus"``, another dopant as written (lower case), or None.
    """
    if claim.dopant:
        return claim.dopant
    named = {c.dopant for c in claims if c.dopant in silicon.DOPANTS}
    return named.pop() if len(named) == 1 else None


def net_doping_dopants(lot: LotFile) -> list[str | None]:
    """The dopants the lot's claims that rest on a net doping are taken to come from.

    A net-doping claim, and a resistivity claim converted with ASTM F723 (dopant boron or
    phosphorus), rest on the net doping; each contributes :func:`claim_dopant`, once, in claim
    order. A single room-temperature result is checked for the ionization of each.

    Parameters
    ----------
    lot
        The parsed lot file.

    Returns
    -------
    list of str or None
        The dopants; ``[None]`` when no claim rests on a net doping.
    """
    out: list[str | None] = []
    for c in lot.claims:
        if c.quantity == "net_doping" or (c.quantity == "resistivity"
                                          and c.dopant in silicon.DOPANTS):
            d = claim_dopant(c, lot.claims)
            if d not in out:
                out.append(d)
    return out or [None]
