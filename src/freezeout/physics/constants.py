"""Physical constants in the units freezeout uses, all taken from scipy.constants (CODATA).

Every other module takes its constants from here, never from scipy.constants directly.
"""

from __future__ import annotations

from scipy import constants as _c

#: Boltzmann constant. [J/K]
K_B = _c.k
#: Boltzmann constant. [eV/K]
K_B_EV = _c.k / _c.e
#: Elementary charge. [C]
Q = _c.e
#: Free-electron mass. [kg]
M0 = _c.m_e
#: Planck constant. [J s]
H = _c.h
#: Reduced Planck constant h / (2 pi). [J s]
HBAR = _c.hbar
#: Vacuum permittivity. [F/m]
EPS0 = _c.epsilon_0
