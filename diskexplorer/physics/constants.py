"""Physical constants and unit conversions used in the hot path, as plain floats.

All values come from :mod:`astropy.constants` and :mod:`astropy.units` at import
time so that the project never hard-codes a constant of its own.
"""
import astropy.constants as _c
import astropy.units as _u

__all__ = [
    "H", "C", "K_B", "SIGMA_SB", "AU_M", "PC_M", "R_SUN_M", "L_SUN_W", "M_SUN_KG",
    "M_EARTH_G", "G_SI", "MAS_PER_RAD", "RAD_PER_MAS", "ARCSEC_RAD", "JY_SI",
]

H = _c.h.si.value                 # J s
C = _c.c.si.value                 # m s^-1
K_B = _c.k_B.si.value             # J K^-1
SIGMA_SB = _c.sigma_sb.si.value   # W m^-2 K^-4
G_SI = _c.G.si.value              # m^3 kg^-1 s^-2
AU_M = _c.au.si.value             # m
PC_M = _c.pc.si.value             # m
R_SUN_M = _c.R_sun.si.value       # m
L_SUN_W = _c.L_sun.si.value       # W
M_SUN_KG = _c.M_sun.si.value      # kg
M_EARTH_G = _c.M_earth.cgs.value  # g
JY_SI = (1 * _u.Jy).si.value      # W m^-2 Hz^-1 per Jy
RAD_PER_MAS = (1 * _u.mas).to_value(_u.rad)
MAS_PER_RAD = 1.0 / RAD_PER_MAS
# 1 au seen from 1 pc subtends 1 arcsec (definition of the parsec).
ARCSEC_RAD = (1 * _u.arcsec).to_value(_u.rad)
