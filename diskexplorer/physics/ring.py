"""Thin, inclined, axisymmetric dust rings: power-law surface density, and a temperature
that is either a prescribed power law or each species' radiative equilibrium in the star's light."""
from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..errors import ParameterError
from .equilibrium import equilibrium_sublimation_radius, equilibrium_temperature
from .opacity import as_opacity, opacity_parts
from .parameters import ParameterSpec, check_parameter, parameter, validate_parameters
from .planck import planck_nu

__all__ = ["Ring", "MODULATION_AMPLITUDE_SPEC", "MODULATION_ANGLE_SPEC", "SUBLIMATION_TEMPERATURE_SPEC",
           "TEMPERATURE_MODES", "INNER_EDGES"]

#: A ring's temperature: the prescribed power law, or each species' optically thin equilibrium.
TEMPERATURE_MODES = ("power_law", "equilibrium")
#: A ring's inner radius: ``r_in`` as given, or the sublimation front (equilibrium rings only).
INNER_EDGES = ("fixed", "sublimation")

#: Declaration of a species' sublimation temperature (one per species of an equilibrium ring).
SUBLIMATION_TEMPERATURE_SPEC = ParameterSpec(
    name="sublimation_temperature", unit="K", label="T_sub",
    description="temperature above which the species sublimates (absent there)",
    valid=(0.0, 5000.0), closed=(False, True), bounds=(800.0, 2500.0))

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
    temperature_mode : {"power_law", "equilibrium"}
        ``"power_law"`` (default): T(r) = t_in (r/r_in)^(−q) for every grain.
        ``"equilibrium"``: each species s of the dust takes its optically thin
        radiative-equilibrium temperature in the star's light,
        σ T_s⁴ κ_P,s(T_s) = L κ_*,s / (16 π r²) (:mod:`~diskexplorer.physics.equilibrium`);
        ``t_in`` and ``q`` are then unused, and the species is absent where T_s would
        exceed its sublimation temperature.
    inner_edge : {"fixed", "sublimation"}
        ``"sublimation"`` (equilibrium rings only) places the inner radius at the
        sublimation front of the ring's most refractory species (the one that survives
        closest to the star); ``r_in`` is then kept but unused, and ``sigma_in`` holds at
        the front. A front at or beyond ``r_out`` leaves the ring empty.
    sublimation : mapping or tuple of (species, K) pairs
        Sublimation temperatures that override the species' declared defaults
        (:meth:`sublimation_temperatures`). Stored sorted; entries for species the dust
        no longer holds are kept and ignored.

    Notes
    -----
    Power law: I_ν(r) = B_ν(T(r)) [1 − exp(−Σ(r) κ_ν / cos i)]. Equilibrium: each
    species emits at its own temperature,
    I_ν = (1 − e^(−τ_ν/cos i)) Σ_s (τ_ν,s/τ_ν) B_ν(T_s), with τ_ν,s = f_s κ_ν,s Σ(r) the
    optical depth of the species s present at r and τ_ν = Σ_s τ_ν,s (no scattering, no
    radiative transfer, optically thin heating).
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
    temperature_mode: str = "power_law"
    inner_edge: str = "fixed"
    sublimation: tuple = ()

    def __post_init__(self):
        validate_parameters(self)
        if self.temperature_mode not in TEMPERATURE_MODES:
            raise ParameterError(f"Ring {self.name!r}: temperature_mode = {self.temperature_mode!r}; "
                                 f"expected one of {TEMPERATURE_MODES}")
        if self.inner_edge not in INNER_EDGES:
            raise ParameterError(f"Ring {self.name!r}: inner_edge = {self.inner_edge!r}; expected one of "
                                 f"{INNER_EDGES}")
        if self.inner_edge == "sublimation" and self.temperature_mode != "equilibrium":
            raise ParameterError(f"Ring {self.name!r}: inner_edge = 'sublimation' needs "
                                 "temperature_mode = 'equilibrium' (a power-law ring has no sublimation front)")
        object.__setattr__(self, "sublimation", _canonical_sublimation(self.sublimation, self.name))
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

    # --- species, equilibrium and sublimation --------------------------------------------
    @property
    def is_equilibrium(self) -> bool:
        return self.temperature_mode == "equilibrium"

    def species(self):
        """The dust's species as :class:`~diskexplorer.physics.opacity.OpacityPart` tuples."""
        return opacity_parts(self.dust)

    def sublimation_temperatures(self):
        """{species: sublimation temperature in K}: declared defaults, then this ring's overrides."""
        over = dict(self.sublimation)
        return {p.name: float(over.get(p.name, p.sublimation_temperature)) for p in self.species()}

    def species_temperatures(self, r, star=None):
        """{species: T(r) in K} at radii ``r`` (au), before sublimation (no masking).

        A power-law ring gives every species :meth:`temperature`; an equilibrium ring
        each species' equilibrium temperature in the light of ``star`` (required).
        """
        r = np.asarray(r, dtype=float)
        if not self.is_equilibrium:
            t = self.temperature(r)
            return {p.name: t for p in self.species()}
        self._need_star(star)
        return {p.name: equilibrium_temperature(p.opacity, star, r) for p in self.species()}

    def sublimation_radii(self, star):
        """{species: radius in au where it reaches its sublimation temperature} around ``star``."""
        self._need_star(star)
        t_sub = self.sublimation_temperatures()
        return {p.name: float(equilibrium_sublimation_radius(p.opacity, star, t_sub[p.name]))
                for p in self.species()}

    def sublimation_front(self, star):
        """Inner edge of the dust in au: the smallest sublimation radius among the species."""
        return min(self.sublimation_radii(star).values())

    def sublimation_breaks(self, star):
        """Sorted sublimation radii (au) strictly inside (r_in, r_out): where the emission jumps."""
        if not self.is_equilibrium:
            return ()
        radii = self.sublimation_radii(star).values()
        return tuple(sorted({float(x) for x in radii if self.r_in < x < self.r_out}))

    def resolved(self, star=None):
        """This ring with a concrete inner radius, or ``None`` if it holds no dust.

        A ring whose ``inner_edge`` is ``"sublimation"`` gets ``r_in`` = its sublimation front
        (and ``inner_edge="fixed"``); ``None`` when the front lies at or beyond ``r_out``.
        Any other ring is returned unchanged.
        """
        if self.inner_edge != "sublimation":
            return self
        front = self.sublimation_front(star)
        if not front < self.r_out:
            return None
        return replace(self, r_in=front, inner_edge="fixed")

    def _need_star(self, star):
        if star is None:
            raise ParameterError(f"Ring {self.name!r}: equilibrium temperatures need a star, and the scene has none")

    def equilibrium_intensity(self, r, wavelength, inclination, star, kappa=None, temperatures=None):
        """Σ-weighted emission of the species at their own temperatures (no masking outside the ring).

        Parameters
        ----------
        r : ndarray
            Radii in au.
        wavelength : ndarray
            Wavelengths in µm.
        inclination : float
            Degrees.
        star : Star
        kappa : list of ndarray, optional
            κ of each species at ``wavelength`` (cm² g⁻¹), if already computed.
        temperatures : list of ndarray, optional
            T of each species at ``r`` (K), if already computed.

        Returns
        -------
        ndarray, shape (n_wavelength, n_r), Jy sr⁻¹
            (1 − e^(−τ/cos i)) Σ_s (τ_s/τ) B_ν(T_s), species absent where T_s > T_sub,s.
        """
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        r = np.atleast_1d(np.asarray(r, dtype=float))
        self._need_star(star)
        parts = self.species()
        t_sub = self.sublimation_temperatures()
        if temperatures is None:
            temperatures = [equilibrium_temperature(p.opacity, star, r) for p in parts]
        if self.dust is None:
            t = temperatures[0]
            return planck_nu(lam[:, None], t[None, :]) * (t <= t_sub[parts[0].name])[None, :]
        if kappa is None:
            kappa = [np.asarray(p.opacity.kappa(lam), dtype=float) for p in parts]
        sigma = self.surface_density(r)
        cos_i = math.cos(math.radians(inclination))
        tau = np.zeros((lam.size, r.size))
        source = np.zeros((lam.size, r.size))
        for p, kap, t in zip(parts, kappa, temperatures):
            present = t <= t_sub[p.name]
            if not np.any(present):
                continue
            tau_s = (p.fraction * kap)[:, None] * np.where(present, sigma, 0.0)[None, :]
            tau += tau_s
            source += tau_s * planck_nu(lam[:, None], t[None, :])
        with np.errstate(invalid="ignore", divide="ignore"):
            out = -np.expm1(-tau / cos_i) * np.where(tau > 0, source / tau, 0.0)
        return out

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

    def intensity(self, r, wavelength, inclination, star=None):
        """Azimuthally averaged I_ν(r) in Jy sr⁻¹, shape (n_wavelength, n_r); 0 outside the ring.

        ``star`` heats an equilibrium ring (required then; ignored by a power-law ring).
        """
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        r = np.atleast_1d(np.asarray(r, dtype=float))
        out = np.zeros((lam.size, r.size))
        ring = self.resolved(star) if self.enabled else None
        if ring is None:
            return out
        inside = (r >= ring.r_in) & (r <= ring.r_out)
        if not np.any(inside):
            return out
        ri = r[inside]
        if ring.is_equilibrium:
            out[:, inside] = ring.equilibrium_intensity(ri, lam, inclination, star)
            return out
        out[:, inside] = (planck_nu(lam[:, None], ring.temperature(ri)[None, :])
                          * ring.emissivity(ri, lam, inclination))
        return out


def _canonical_sublimation(raw, ring_name):
    """Sorted ((species, K), ...) from a mapping or pairs, each temperature checked."""
    items = list(raw.items()) if isinstance(raw, Mapping) else list(raw)
    out = {}
    for item in items:
        try:
            name, value = item
        except (TypeError, ValueError):
            raise ParameterError(f"Ring {ring_name!r}: sublimation entry {item!r} is not a (species, K) pair") from None
        if not isinstance(name, str):
            raise ParameterError(f"Ring {ring_name!r}: sublimation key {name!r} must be a species name")
        try:
            value = float(value)
        except (TypeError, ValueError):
            raise ParameterError(f"Ring {ring_name!r}: sublimation temperature of {name} = {value!r}; "
                                 "expected a number in K") from None
        check_parameter(SUBLIMATION_TEMPERATURE_SPEC, value, f"Ring {ring_name!r} sublimation of {name}")
        out[name] = value
    return tuple(sorted(out.items()))
