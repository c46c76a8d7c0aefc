"""The central star: a blackbody or tabulated photosphere, point-like or a uniform disk."""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ParameterError
from .constants import ARCSEC_RAD, AU_M, L_SUN_W, MAS_PER_RAD, R_SUN_M, SIGMA_SB
from .parameters import ParameterSpec, check_parameter, parameter, parameter_specs, validate_parameters
from .planck import planck_nu

__all__ = ["Star", "PhotosphereTable", "LUMINOSITY_SPEC"]

#: Declaration of the luminosity, an alternative to the radius (L = 4π R² σ T_eff⁴).
LUMINOSITY_SPEC = ParameterSpec(name="luminosity", unit="solLum", label="L★", description="stellar luminosity",
                                valid=(0.0, math.inf), closed=(False, False), bounds=(0.05, 5000.0),
                                scale="log")


class PhotosphereTable:
    """A tabulated stellar photosphere, interpolated in log F – log λ.

    Parameters
    ----------
    wavelength : array_like
        Strictly increasing wavelengths in µm.
    flux : array_like
        Flux density in Jy (> 0) as seen from ``reference_distance``.
    reference_distance : float
        Distance in pc at which ``flux`` holds; the star's flux at a scene distance d
        is ``flux * (reference_distance / d)**2``.
    label : str
        Name for displays and exports.

    Notes
    -----
    Outside the table the spectrum is extended with the Rayleigh–Jeans slope
    F ∝ λ⁻² at long wavelengths and held at zero below the first wavelength
    (photospheres beyond the table's blue end are not needed in the infrared).
    Compares by identity.
    """

    def __init__(self, wavelength, flux, reference_distance, label="photosphere table"):
        lam = np.asarray(wavelength, dtype=float)
        f = np.asarray(flux, dtype=float)
        if lam.ndim != 1 or lam.shape != f.shape or lam.size < 2:
            raise ParameterError(f"PhotosphereTable: need equal-length wavelength and flux columns "
                                 f"(≥ 2 rows), got {lam.shape} and {f.shape}")
        if np.any(np.diff(lam) <= 0) or np.any(lam <= 0):
            raise ParameterError("PhotosphereTable.wavelength must be positive and strictly increasing (µm)")
        if np.any(~np.isfinite(f)) or np.any(f <= 0):
            raise ParameterError("PhotosphereTable.flux must be finite and > 0 Jy")
        if not (reference_distance > 0):
            raise ParameterError(f"PhotosphereTable.reference_distance = {reference_distance!r} pc; "
                                 "allowed range (0, inf) pc")
        self.wavelength, self.flux = lam, f
        self.reference_distance = float(reference_distance)
        self.label = label

    def flux_at(self, wavelength, distance):
        """Flux density in Jy at ``wavelength`` (µm) seen from ``distance`` (pc)."""
        x = np.log(np.asarray(wavelength, dtype=float))
        lx, ly = np.log(self.wavelength), np.log(self.flux)
        y = np.interp(x, lx, ly)
        y = np.where(x > lx[-1], ly[-1] - 2.0 * (x - lx[-1]), y)
        out = np.exp(y) * (self.reference_distance / distance) ** 2
        return np.where(x < lx[0], 0.0, out)


@dataclass(frozen=True, init=False)
class Star:
    """The central star.

    Parameters
    ----------
    t_eff : float
        Effective temperature in K.
    radius : float, optional
        Radius in solar radii. Give either ``radius`` or ``luminosity``.
    luminosity : float, optional
        Luminosity in solar luminosities; the radius follows from L = 4π R² σ T_eff⁴.
    mass : float
        Mass in solar masses (used for Keplerian quantities, not for the emission).
    uniform_disk : bool
        If True (default) the star is a uniform disk of angular diameter 2R/d in the
        visibility; if False a point source.
    photosphere : PhotosphereTable, optional
        Replaces the blackbody photosphere π B_ν(T_eff) (R/d)².

    Examples
    --------
    >>> Star(t_eff=7500, luminosity=12.0).radius  # doctest: +ELLIPSIS
    2.05...
    """

    t_eff: float = parameter(
        7000.0, unit="K", label="T_eff", description="stellar effective temperature",
        valid=(0, math.inf), bounds=(2500.0, 30000.0), scale="log")
    radius: float = parameter(
        2.0, unit="solRad", label="R★", description="stellar radius",
        valid=(0, math.inf), bounds=(0.3, 30.0), scale="log")
    mass: float = parameter(
        2.0, unit="solMass", label="M★", description="stellar mass",
        valid=(0, math.inf), bounds=(0.1, 20.0), scale="log")
    uniform_disk: bool = True
    photosphere: object = None

    def __init__(self, t_eff=7000.0, radius=None, *, luminosity=None, mass=2.0,
                 uniform_disk=True, photosphere=None):
        if radius is not None and luminosity is not None:
            raise ParameterError("Star: give radius or luminosity, not both")
        object.__setattr__(self, "t_eff", t_eff)
        object.__setattr__(self, "mass", mass)
        object.__setattr__(self, "uniform_disk", bool(uniform_disk))
        object.__setattr__(self, "photosphere", photosphere)
        if luminosity is not None:
            check_parameter(LUMINOSITY_SPEC, luminosity, "Star")
            check_parameter(parameter_specs(Star)["t_eff"], t_eff, "Star")
            radius = math.sqrt(luminosity * L_SUN_W / (4 * math.pi * SIGMA_SB * t_eff**4)) / R_SUN_M
        object.__setattr__(self, "radius", 2.0 if radius is None else radius)
        validate_parameters(self)
        if photosphere is not None and not isinstance(photosphere, PhotosphereTable):
            raise ParameterError("Star.photosphere must be a PhotosphereTable or None")

    @property
    def luminosity(self) -> float:
        """Luminosity in solar luminosities, 4π R² σ T_eff⁴ / L☉."""
        r = self.radius * R_SUN_M
        return 4 * math.pi * r * r * SIGMA_SB * self.t_eff**4 / L_SUN_W

    def angular_diameter(self, distance) -> float:
        """Angular diameter 2R/d in mas for ``distance`` in pc."""
        return 2.0 * self.radius * R_SUN_M / AU_M / distance * ARCSEC_RAD * MAS_PER_RAD

    def flux(self, wavelength, distance):
        """Flux density in Jy at ``wavelength`` (µm) from ``distance`` (pc).

        Notes
        -----
        Blackbody: F★ = π B_ν(T_eff) (R★/d)²; with a photosphere table, the table.
        """
        if self.photosphere is not None:
            return self.photosphere.flux_at(wavelength, distance)
        half_angle = self.angular_diameter(distance) / 2.0 / MAS_PER_RAD
        return math.pi * planck_nu(wavelength, self.t_eff) * half_angle**2
