"""Unit conversions between the trade's units at the edges and SI inside.

Inside the code current density is A/m^2, resistance-area is ohm m^2, lengths are m
(wavelengths nm, band energies eV). Files and reports use mA/cm^2, ohm cm^2, nm, um, cm^-3.
"""

MA_CM2_TO_A_M2 = 10.0          # 1 mA/cm^2 = 10 A/m^2
A_M2_TO_MA_CM2 = 0.1
A_CM2_TO_A_M2 = 1e4
OHM_CM2_TO_OHM_M2 = 1e-4       # 1 ohm cm^2 = 1e-4 ohm m^2
OHM_M2_TO_OHM_CM2 = 1e4
NM_TO_M = 1e-9
UM_TO_M = 1e-6
PER_CM3_TO_PER_M3 = 1e6
W_M2_PER_PCT_AT_1000 = 10.0    # 1 % of 1000 W/m^2


def ma_cm2(current_A_m2):
    """A/m^2 -> mA/cm^2."""
    return current_A_m2 * A_M2_TO_MA_CM2


def a_m2(current_mA_cm2):
    """mA/cm^2 -> A/m^2."""
    return current_mA_cm2 * MA_CM2_TO_A_M2
