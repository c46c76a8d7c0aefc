"""Thin, inclined, axisymmetric dust rings with power-law temperature and surface density."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ParameterError
from .opacity import as_opacity
from .parameters import ParameterSpec, parameter, validate_parameters
from .planck import planck_nu

__all__ = ["Ring", "MODULATION_AMPLITUDE_SPEC", "MODULATION_ANGLE_SPEC"]

#: Declarations of the modulation in polar form, (c1, s1) = A (cos φ_mod, sin φ_mod).
MODULATION_AMPLITUDE_SPEC = ParameterSpec(
    name="modulation_amplitude", unit="", label="A_mod",
    description="azimuthal modulation amplitude √(c1² + s1²)",
    valid=(0.0, 1.0), closed=(True, True), bounds=(0.0, 1.0))
MODULATION_ANGLE_SPEC = ParameterSpec(
    name="modulation_angle", unit="deg", label="φ_mod",
    description="azimuth of the brightest side in the disk plane, from the major axis",
    valid=(0.0, 360.0), closed=(True, True), bounds=(0.0, 360.0))


@dataclass(frozen=True)
class Ring:
    """A geometrically thin ring between ``r_in`` and ``r_out``.

    Parameters
    ----------
    r_in, r_out : float
        Inner and outer radius in au (0 < r_in < r_out).
    t_in : float
        Temperature at r_in in K; T(r) = t_in (r/r_in)^(−q).
    q : float
        Temperature power-law index.
    sigma_in : float
        Dust surface density at r_in in g cm⁻²; Σ(r) = sigma_in (r/r_in)^(−p).
    p : float
        Surface-density power-law index.
    dust : optional
        The dust opacity: ``None`` makes the ring optically thick at every wavelength
        (a blackbody surface); otherwise anything :func:`~diskexplorer.physics.opacity.as_opacity`
        accepts (an opacity object, a κ table path or (N, 2) array, a species name or a
        mixture once the dust library is loaded).
    c1, s1 : float
        Azimuthal modulation I(r, φ) = I(r) [1 + c1 cos φ + s1 sin φ], with φ the
        azimuth in the disk plane counted from the major axis (position angle PA)
        towards PA + 90°. Non-negative intensity requires √(c1² + s1²) ≤ 1.
    name : str
        Label for displays and exported documents.
    enabled : bool
        A disabled ring is kept in the scene but contributes nothing.

    Notes
    -----
    Intensity I_ν(r) = B_ν(T(r)) [1 − exp(−Σ(r) κ_ν / cos i)] (no scattering, no
    radiative transfer: the temperature is prescribed).
    """

    r_in: float = parameter(
        0.5, unit="au", label="r_in", description="inner radius of the ring",
        valid=(0, math.inf), bounds=(0.02, 200.0), scale="log")
    r_out: float = parameter(
        1.0, unit="au", label="r_out", description="outer radius of the ring",
        valid=(0, math.inf), bounds=(0.03, 300.0), scale="log")
    t_in: float = parameter(
        1500.0, unit="K", label="T_in", description="temperature at the inner radius",
        valid=(0, math.inf), bounds=(50.0, 2500.0))
    q: float = parameter(
        0.5, unit="", label="q", description="temperature power-law index, T ∝ r^-q",
        valid=(-2.0, 4.0), closed=(True, True), bounds=(0.0, 1.5))
    sigma_in: float = parameter(
        1e-3, unit="g / cm2", label="Σ_in", description="dust surface density at the inner radius",
        valid=(0, math.inf), bounds=(1e-7, 10.0), scale="log")
    p: float = parameter(
        1.0, unit="", label="p", description="surface-density power-law index, Σ ∝ r^-p",
        valid=(-4.0, 6.0), closed=(True, True), bounds=(-1.0, 3.0))
    dust: object = None
    c1: float = parameter(
        0.0, unit="", label="c1", description="cosine amplitude of the azimuthal modulation",
        valid=(-1.0, 1.0), closed=(True, True), bounds=(-1.0, 1.0))
    s1: float = parameter(
        0.0, unit="", label="s1", description="sine amplitude of the azimuthal modulation",
        valid=(-1.0, 1.0), closed=(True, True), bounds=(-1.0, 1.0))
    name: str = "ring"
    enabled: bool = True

    def __post_init__(self):
        validate_parameters(self)
        if not self.r_in < self.r_out:
            raise ParameterError(f"Ring {self.name!r}: r_in = {self.r_in!r} au must be smaller than "
                                 f"r_out = {self.r_out!r} au (allowed: 0 < r_in < r_out)")
        amp = math.hypot(self.c1, self.s1)
        if amp > 1.0 + 1e-12:
            raise ParameterError(f"Ring {self.name!r}: modulation amplitude √(c1²+s1²) = {amp:.4g} "
                                 "would make the intensity negative; allowed range [0, 1]")
        object.__setattr__(self, "dust", as_opacity(self.dust))

    # --- derived views -------------------------------------------------------------
    @property
    def modulation_amplitude(self) -> float:
        """√(c1² + s1²), between 0 and 1."""
        return math.hypot(self.c1, self.s1)

    @property
    def modulation_angle(self) -> float:
        """Azimuth of the brightness maximum in degrees from the major axis (disk plane)."""
        return math.degrees(math.atan2(self.s1, self.c1)) % 360.0

    @property
    def is_modulated(self) -> bool:
        return self.c1 != 0.0 or self.s1 != 0.0

    @staticmethod
    def modulation(amplitude, angle):
        """(c1, s1) for a modulation ``amplitude`` in [0, 1] peaking at ``angle`` degrees."""
        a = math.radians(angle)
        return amplitude * math.cos(a), amplitude * math.sin(a)

    # --- radial structure ------------------------------------------------------------
    def temperature(self, r):
        """T(r) in K at radii ``r`` in au (no masking outside the ring)."""
        return self.t_in * (np.asarray(r, dtype=float) / self.r_in) ** (-self.q)

    def surface_density(self, r):
        """Σ(r) in g cm⁻² at radii ``r`` in au (no masking outside the ring)."""
        return self.sigma_in * (np.asarray(r, dtype=float) / self.r_in) ** (-self.p)

    def optical_depth(self, r, wavelength):
        """Vertical optical depth Σ(r) κ_ν, shape (n_wavelength, n_r); ∞ for black rings."""
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        r = np.atleast_1d(np.asarray(r, dtype=float))
        if self.dust is None:
            return np.full((lam.size, r.size), np.inf)
        return np.asarray(self.dust.kappa(lam), dtype=float)[:, None] * self.surface_density(r)[None, :]

    def emissivity(self, r, wavelength, inclination):
        """1 − exp(−τ/cos i), shape (n_wavelength, n_r); ``inclination`` in degrees."""
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        r = np.atleast_1d(np.asarray(r, dtype=float))
        if self.dust is None:
            return np.ones((lam.size, r.size))
        tau = self.optical_depth(r, lam) / math.cos(math.radians(inclination))
        return -np.expm1(-tau)

    def intensity(self, r, wavelength, inclination):
        """Azimuthally averaged I_ν(r) in Jy sr⁻¹, shape (n_wavelength, n_r); 0 outside the ring."""
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        r = np.atleast_1d(np.asarray(r, dtype=float))
        inside = (r >= self.r_in) & (r <= self.r_out)
        out = np.zeros((lam.size, r.size))
        if not self.enabled or not np.any(inside):
            return out
        ri = r[inside]
        out[:, inside] = (planck_nu(lam[:, None], self.temperature(ri)[None, :])
                          * self.emissivity(ri, lam, inclination))
        return out
