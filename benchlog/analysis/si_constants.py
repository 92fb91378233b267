"""Physical constants the analysis needs, exact by the 2019 SI definition (BIPM SI Brochure, 9th ed.).

Written out, not taken from scipy.constants (which has the same values), so a
command that only fits or judges a run never waits for scipy to import.
"""

BOLTZMANN_J_PER_K = 1.380649e-23
ELEMENTARY_CHARGE_C = 1.602176634e-19
ZERO_C_K = 273.15  # the Celsius scale's zero in kelvin
