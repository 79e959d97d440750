"""Temperature-dependent density-of-states masses (silicon).

    m_n / m0 = 1.028 + 6.11e-4 T - 3.09e-7 T^2,
    m_p / m0 = 0.610 + 7.83e-4 T - 4.46e-7 T^2                                      [1]

(1.183 and 0.805 at 300 K), a fit to the mass values of [2]; with them
N_c = 2.510e19 (m_n/m0)^(3/2) (T/300)^(3/2) cm^-3. The masses grow with temperature (band
non-parabolicity and the thermal expansion of the lattice), so N_c and N_v grow faster than
T^(3/2).

References
----------
.. [1] R. F. Pierret, *Advanced Semiconductor Fundamentals*, 2nd ed. (Prentice Hall, 2003),
   Ch. 2 (the fit used for its N_c, N_v and n_i versus T figure).
.. [2] H. D. Barber, "Effective mass and intrinsic concentration in silicon", Solid-State
   Electron. 10, 1039 (1967) (from memory).
"""

from __future__ import annotations

import numpy as np

#: Names of the density-of-states mass models (``--dos-mass``).
DOS_MASS_MODELS = ("constant", "temperature")

#: (a0, a1 [1/K], a2 [1/K^2]) of m/m0 = a0 + a1 T + a2 T^2 for silicon electrons [1].
SILICON_ELECTRON_DOS_MASS = (1.028, 6.11e-4, -3.09e-7)
#: The same for silicon holes [1].
SILICON_HOLE_DOS_MASS = (0.610, 7.83e-4, -4.46e-7)

#: Materials that have a temperature-dependent set, with its (electron, hole) coefficients.
TEMPERATURE_DOS_MASSES = {"Si": (SILICON_ELECTRON_DOS_MASS, SILICON_HOLE_DOS_MASS)}

#: Citation of the temperature-dependent set.
SOURCE = ("R. F. Pierret, Advanced Semiconductor Fundamentals, 2nd ed. (2003), Ch. 2; fit "
          "to H. D. Barber, Solid-State Electron. 10, 1039 (1967) (from memory)")


def polynomial_dos_mass(temperature, coefficients):
    """m/m0 = a0 + a1 T + a2 T^2.

    Parameters
    ----------
    temperature
        Temperature. [K]
    coefficients
        (a0 [1], a1 [1/K], a2 [1/K^2]).

    Returns
    -------
    numpy.ndarray
        Density-of-states mass, valleys included. [m0]

    References
    ----------
    [1].
    """
    t = np.asarray(temperature, dtype=float)
    a0, a1, a2 = coefficients
    return a0 + t * (a1 + a2 * t)  # [1]
