"""Physical constants, in SI, from one place (CODATA 2018 through scipy.constants).

Every module takes its constants from here so that a change of constant set is one edit.
"""
from scipy import constants as _c

ELEMENTARY_CHARGE_C = _c.e            # q [C]
BOLTZMANN_J_K = _c.k                  # k [J/K]
BOLTZMANN_EV_K = _c.k / _c.e          # k [eV/K]
PLANCK_J_S = _c.h                     # h [J s]
SPEED_OF_LIGHT_M_S = _c.c             # c [m/s]
VACUUM_PERMITTIVITY_F_M = _c.epsilon_0  # eps0 [F/m]
ELECTRON_MASS_KG = _c.m_e             # m0 [kg]

#: photon energy [eV] times wavelength [nm]: E = HC_EV_NM / lambda
HC_EV_NM = _c.h * _c.c / _c.e * 1e9

#: Richardson constant of the free electron, A = 4 pi q m0 k^2 / h^3 [A m^-2 K^-2]
#: (= 120.17 A cm^-2 K^-2; C. R. Crowell, Solid-State Electron. 8 (1965) 395)
RICHARDSON_FREE_A_M2_K2 = (
    4 * _c.pi * _c.e * _c.m_e * _c.k**2 / _c.h**3
)

#: standard reference temperature of the trade's test conditions [K] (IEC 60904-3: 25 degC)
STANDARD_TEMPERATURE_K = 298.15


def thermal_voltage_V(temperature_K):
    """kT/q [V] at ``temperature_K`` [K]; arrays broadcast."""
    return BOLTZMANN_J_K * temperature_K / ELEMENTARY_CHARGE_C
