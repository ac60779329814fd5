"""Physical constants, in SI, from one place (CODATA 2022, the values scipy.constants 1.15+ gives).

Every module takes its constants from here so that a change of constant set is one edit. Written
out rather than read from scipy.constants, whose import costs a command about 0.1 s of start-up;
tests/test_constants.py checks each against scipy.constants (and hence CODATA) to the bit.
The first four are exact by the definition of the SI (2019); eps0 and m_e are measured.
"""
import math

ELEMENTARY_CHARGE_C = 1.602176634e-19     # q [C], exact (SI 2019)
BOLTZMANN_J_K = 1.380649e-23              # k [J/K], exact (SI 2019)
BOLTZMANN_EV_K = BOLTZMANN_J_K / ELEMENTARY_CHARGE_C  # k [eV/K]
PLANCK_J_S = 6.62607015e-34               # h [J s], exact (SI 2019)
SPEED_OF_LIGHT_M_S = 299792458.0          # c [m/s], exact
VACUUM_PERMITTIVITY_F_M = 8.8541878188e-12  # eps0 [F/m], CODATA 2022
ELECTRON_MASS_KG = 9.1093837139e-31       # m0 [kg], CODATA 2022

_e, _k, _h, _c, _m_e = (ELEMENTARY_CHARGE_C, BOLTZMANN_J_K, PLANCK_J_S, SPEED_OF_LIGHT_M_S,
                        ELECTRON_MASS_KG)

#: photon energy [eV] times wavelength [nm]: E = HC_EV_NM / lambda
HC_EV_NM = _h * _c / _e * 1e9

#: Richardson constant of the free electron, A = 4 pi q m0 k^2 / h^3 [A m^-2 K^-2]
#: (= 120.17 A cm^-2 K^-2; C. R. Crowell, Solid-State Electron. 8 (1965) 395)
RICHARDSON_FREE_A_M2_K2 = (
    4 * math.pi * _e * _m_e * _k**2 / _h**3
)

#: standard reference temperature of the trade's test conditions [K] (IEC 60904-3: 25 degC)
STANDARD_TEMPERATURE_K = 298.15


def thermal_voltage_V(temperature_K):
    """kT/q [V] at ``temperature_K`` [K]; arrays broadcast."""
    return BOLTZMANN_J_K * temperature_K / ELEMENTARY_CHARGE_C
