"""The run record and the one rule that decides a run's carrier type.

A run in memory, whatever file it came from.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class RunData:
    """A reduced temperature run in canonical units, ready for fitting.

    Attributes
    ----------
    source
        Path of the file the run was read from, as given.
    sha256
        SHA-256 of that file's bytes (hex).
    temperature
        Temperatures, ascending. [K]
    density
        Hall carrier density of the majority carrier, r_H already applied. [cm^-3]
    density_err
        Point-to-point standard uncertainty of ``density``, or None when the file gave none.
        [cm^-3]
    carrier
        Majority carrier of the run, ``"n"`` or ``"p"``.
    point_carrier
        Carrier type per point (``"n"`` or ``"p"``); differs from ``carrier`` where the Hall
        coefficient changed sign (mixed conduction).
    resistivity, resistivity_err
        Resistivity and its uncertainty per point, or None. [ohm cm]
    mobility, mobility_err
        Hall mobility and its uncertainty per point, or None. [cm^2/(V s)]
    hall_coefficient, hall_coefficient_err
        Hall coefficient (signed) per point, or None. [cm^3/C]
    flags
        Data-quality finding codes per point (empty string when clean).
    severe
        True for points that failed a severe data-quality check.
    metadata
        ``key: value`` pairs from the file's comment lines, as provenance.
    notes
        Plain-language remarks the importer made (e.g. mixed conduction found).
    findings
        Data-quality findings (objects with ``to_dict()``) from a reduction, if any.
    ignored_columns
        Header names of columns the reader did not use.
    scale_uncertainty
        Relative standard uncertainty common to every density (the sample thickness, for a
        reduced Hall run), kept out of ``density_err`` because it moves all points together;
        the fit adds it to the concentrations afterwards. [1]
    hall_factor
        Hall scattering factor r_H the densities carry. [1]
    temperature_err
        Standard uncertainty of each temperature, or None. [K]
    """

    source: str
    sha256: str
    temperature: np.ndarray
    density: np.ndarray
    density_err: np.ndarray | None
    carrier: str
    point_carrier: tuple[str, ...]
    resistivity: np.ndarray | None = None
    resistivity_err: np.ndarray | None = None
    mobility: np.ndarray | None = None
    mobility_err: np.ndarray | None = None
    hall_coefficient: np.ndarray | None = None
    hall_coefficient_err: np.ndarray | None = None
    flags: tuple[str, ...] = ()
    severe: np.ndarray | None = None
    metadata: dict[str, str] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    findings: tuple = ()
    ignored_columns: tuple[str, ...] = ()
    scale_uncertainty: float = 0.0
    hall_factor: float = 1.0
    temperature_err: np.ndarray | None = None

    @property
    def n_points(self) -> int:
        """Number of temperature points in the run."""
        return int(self.temperature.size)

    @property
    def mixed(self) -> np.ndarray:
        """True where the point's carrier type differs from the run's majority carrier."""
        return np.array([c != self.carrier for c in self.point_carrier], dtype=bool)


def run_carrier(point_carrier, temperature, stated: str | None = None) -> str:
    """The run's carrier type: the type of most points in the colder half of the run.

    The one rule every path uses (a reduced CSV's ``# carrier`` line, a raw file reduced on
    the way into a fit, a reduced CSV read back). The cold (extrinsic) points carry the
    doping type; at the hot end intrinsic electrons, more mobile than holes in most hosts,
    can turn the Hall sign of a p-type sample (common practice, no source). A tie in the
    colder half goes to the coldest point. A type stated in the file decides a mixed run.

    Parameters
    ----------
    point_carrier
        ``"n"`` or ``"p"`` per point, from the sign of the Hall coefficient.
    temperature
        Temperature per point. [K]
    stated
        The type the file states (``"n"``/``"p"``), or None.
    """
    types = np.asarray(point_carrier)
    t = np.asarray(temperature, dtype=float)
    if types.size == 0:
        raise ValueError("a run needs at least one point to have a carrier type")
    cold = types[t <= np.median(t)] if t.size > 2 else types
    n_n = int(np.sum(cold == "n"))
    n_p = int(cold.size - n_n)
    carrier = "n" if n_n > n_p else "p" if n_p > n_n else str(types[np.argmin(t)])
    if stated in ("n", "p") and len(set(types.tolist())) > 1:
        carrier = stated
    return carrier
