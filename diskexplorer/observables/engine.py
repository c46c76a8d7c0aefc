"""The visibility engine: exact Hankel transforms of thin rings, cached by tier.

An :class:`Evaluator` is bound to one sampling (points in u, v, λ). Evaluating a
scene on it costs, per ring whose parameters changed, one Planck evaluation on the
radial nodes and one matrix product onto a fixed spatial-frequency grid per data
wavelength, then a sparse four-point interpolation to the data's spatial frequencies.
Everything that did not change (radial nodes, Bessel kernels, Planck tables, the
interpolation matrix of a viewing geometry) is reused from small caches keyed by value.
"""
from __future__ import annotations

import functools
import math
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np
from scipy import sparse, special

from ..errors import ParameterError
from ..physics.constants import ARCSEC_RAD, RAD_PER_MAS
from ..physics.equilibrium import equilibrium_temperature
from ..physics.planck import planck_nu
from .quadrature import cubic_weights, frequency_grid, radial_nodes

__all__ = ["Sampling", "Evaluator", "Evaluation", "direct_visibility"]


class _Cache:
    """A tiny LRU dictionary."""

    def __init__(self, size):
        self.size = size
        self.data = OrderedDict()

    def get(self, key, make):
        try:
            value = self.data.pop(key)
        except KeyError:
            value = make()
        self.data[key] = value
        if len(self.data) > self.size:
            self.data.popitem(last=False)
        return value


class Sampling:
    """A flat set of (u, v, λ) points.

    Parameters
    ----------
    u, v : array_like
        Baseline coordinates in m (OIFITS: u towards East, v towards North).
    wavelength : array_like
        Wavelength in µm. The three inputs are broadcast together.
    """

    def __init__(self, u, v, wavelength):
        u, v, lam = np.broadcast_arrays(np.asarray(u, float), np.asarray(v, float),
                                        np.asarray(wavelength, float))
        self.shape = u.shape
        self.u, self.v, self.wavelength = u.ravel().copy(), v.ravel().copy(), lam.ravel().copy()
        if np.any(~np.isfinite(self.wavelength)) or np.any(self.wavelength <= 0):
            raise ValueError("wavelengths must be finite and > 0 µm")
        self.wavelengths, self.wave_index = np.unique(self.wavelength, return_inverse=True)
        self.rho_full = np.hypot(self.u, self.v) / (self.wavelength * 1e-6)
        self.rho_max = float(self.rho_full.max(initial=0.0)) * 1.0001

    @property
    def size(self):
        return self.u.size


@dataclass
class Evaluation:
    """The model on a sampling.

    Attributes
    ----------
    numerator_real, numerator_imag : ndarray or None (read-only)
        Σ F_j V_j over the compact components at each point of the sampling (flat), in Jy:
        the visibility before normalisation by the total flux, as real and imaginary parts
        (``numerator_imag`` is ``None`` when no component breaks point symmetry; both are
        ``None`` for an evaluation of fluxes only).
    wave_index : ndarray of int
        The distinct wavelength of each point (``Sampling.wave_index``).
    shape : tuple
        Shape of the sampling.
    wavelengths : ndarray
        The sampling's distinct wavelengths in µm.
    flux_star, flux_extended : ndarray
        Flux densities in Jy at ``wavelengths``.
    flux_rings : list of ndarray
        One flux-density array (Jy) per ring of the scene (zeros for disabled rings).

    ``flux_total`` (Jy) and ``inverse_total`` (Jy⁻¹) per distinct wavelength are computed
    once, on first use.
    """

    numerator_real: np.ndarray | None
    numerator_imag: np.ndarray | None
    wave_index: np.ndarray
    shape: tuple
    wavelengths: np.ndarray
    flux_star: np.ndarray
    flux_rings: list
    flux_extended: np.ndarray

    @functools.cached_property
    def inverse_total(self):
        """1 / F_total in Jy⁻¹ per distinct wavelength (inf where the scene emits nothing)."""
        with np.errstate(divide="ignore"):
            return 1.0 / self.flux_total

    def normalised(self, points=slice(None)):
        """Complex visibility (a new array) at the flat ``points`` (a slice or indices)."""
        if self.numerator_real is None:
            raise ValueError("this evaluation holds fluxes only (Evaluator.evaluate(..., fluxes_only=True))")
        scale = self.inverse_total[self.wave_index[points]]
        out = np.empty(scale.size, complex)
        with np.errstate(invalid="ignore"):
            np.multiply(self.numerator_real[points], scale, out=out.real)
            if self.numerator_imag is None:
                out.imag = 0.0
            else:
                np.multiply(self.numerator_imag[points], scale, out=out.imag)
        return out

    @property
    def vis(self):
        """Normalised complex visibility at each point, shape of the sampling (a new array)."""
        return self.normalised().reshape(self.shape)

    @functools.cached_property
    def flux_total(self):
        return self.flux_star + sum(self.flux_rings, np.zeros_like(self.flux_star)) + self.flux_extended

    def components(self, ring_names, index=None):
        """Flux densities (Jy) by component: "star", one per ring name, "extended", "total".

        ``index`` maps points to the sampling's distinct wavelengths (``Sampling.wave_index``);
        without it the arrays are per distinct wavelength.
        """
        pick = (lambda a: a) if index is None else (lambda a: a[index])
        out = {"star": pick(self.flux_star)}
        for name, flux in zip(ring_names, self.flux_rings):
            out[name] = pick(flux)
        out["extended"] = pick(self.flux_extended)
        out["total"] = pick(self.flux_total)
        return out


def _geometry_frequencies(sampling, inclination, position_angle):
    """Face-on spatial frequency ρ (rad⁻¹) and its azimuth ψ in the disk frame."""
    pa = math.radians(position_angle)
    cos_i = math.cos(math.radians(inclination))
    lam_m = sampling.wavelength * 1e-6
    along = (sampling.u * math.sin(pa) + sampling.v * math.cos(pa)) / lam_m
    across = (sampling.u * math.cos(pa) - sampling.v * math.sin(pa)) * cos_i / lam_m
    return np.hypot(along, across), np.arctan2(across, along)


class Evaluator:
    """Evaluates scenes on one fixed sampling, reusing what did not change.

    Parameters
    ----------
    u, v, wavelength : array_like
        The sampling (m, m, µm), broadcast together; or pass ``sampling=``.
    accuracy : int
        Refinement factor of the radial quadrature and the frequency grid (1 is the
        live-use default, accurate to ~1e-5 in V).
    """

    def __init__(self, u=None, v=None, wavelength=None, *, sampling=None, accuracy=1):
        self.sampling = sampling if sampling is not None else Sampling(u, v, wavelength)
        self.accuracy = int(accuracy)
        self._nodes = _Cache(64)
        self._kernels = _Cache(16)
        self._planck = _Cache(16)
        self._emissivity = _Cache(16)
        self._kappa = _Cache(16)
        self._transforms = _Cache(16)
        self._interp = _Cache(4)
        self._points = _Cache(16)
        self._stars = _Cache(4)
        self._sums = _Cache(8)
        self._fluxes = _Cache(16)
        self._species = _Cache(32)
        self._fronts = _Cache(16)

    # ------------------------------------------------------------------ tiers
    def _grid(self, scene):
        rad_per_au = ARCSEC_RAD / scene.distance
        theta_max = max((r.r_out for r in scene.rings if r.enabled), default=1.0) * rad_per_au
        return frequency_grid(theta_max, self.sampling.rho_max, self.accuracy)

    def _breaks(self, ring, star):
        """Sublimation fronts inside an equilibrium ring (au), where panels of nodes end."""
        if not ring.is_equilibrium:
            return ()
        return self._fronts.get(("breaks", ring, star), lambda: ring.sublimation_breaks(star))

    def _ring_nodes(self, ring, distance, star=None):
        breaks = self._breaks(ring, star)
        key = (ring.r_in, ring.r_out, breaks, distance)
        return self._nodes.get(key, lambda: radial_nodes(
            ring.r_in, ring.r_out, ARCSEC_RAD / distance, self.sampling.rho_max, self.accuracy, breaks))

    def _kernel(self, ring, distance, grid, order, star=None):
        key = (ring.r_in, ring.r_out, self._breaks(ring, star), distance, grid, order)

        def make():
            _, theta, area = self._ring_nodes(ring, distance, star)
            step, n = grid
            rho = (np.arange(n) - 1) * step
            arg = 2.0 * math.pi * theta[:, None] * rho[None, :]
            bessel = special.j0(arg) if order == 0 else special.j1(arg)
            return np.ascontiguousarray(area[:, None] * bessel)

        return self._kernels.get(key, make)

    def _kappa_at(self, dust):
        return self._kappa.get(dust, lambda: np.asarray(dust.kappa(self.sampling.wavelengths), float))

    def _species_planck(self, ring, part, distance, star):
        """T (K) of one species on the ring's nodes in ``star``'s light, and its Planck table."""
        key = (ring.r_in, ring.r_out, self._breaks(ring, star), distance, part.opacity, star)

        def make():
            r, _, _ = self._ring_nodes(ring, distance, star)
            t = equilibrium_temperature(part.opacity, star, r)
            return t, planck_nu(self.sampling.wavelengths[:, None], t[None, :])

        return self._species.get(key, make)

    def _equilibrium_intensity(self, ring, distance, inclination, star):
        """I_ν of an equilibrium ring on its nodes: each species at its own temperature (Jy sr⁻¹)."""
        key = (ring.r_in, ring.r_out, distance, ring.sigma_in, ring.p, ring.dust, inclination, star,
               ring.sublimation)

        def make():
            if star is None:
                raise ParameterError(f"Ring {ring.name!r}: equilibrium temperatures need a star, "
                                     "and the scene has none")
            r, _, _ = self._ring_nodes(ring, distance, star)
            parts = ring.species()
            t_sub = ring.sublimation_temperatures()
            tables = [self._species_planck(ring, p, distance, star) for p in parts]
            if ring.dust is None:
                t, b = tables[0]
                return b * (t <= t_sub[parts[0].name])[None, :]
            sigma = ring.surface_density(r)
            tau = np.zeros((self.sampling.wavelengths.size, r.size))
            source = np.zeros_like(tau)
            for p, (t, b) in zip(parts, tables):
                present = t <= t_sub[p.name]
                if not np.any(present):
                    continue
                tau_s = (p.fraction * self._kappa_at(p.opacity))[:, None] * np.where(present, sigma, 0.0)[None, :]
                tau += tau_s
                source += tau_s * b
            with np.errstate(invalid="ignore", divide="ignore"):
                return -np.expm1(-tau / math.cos(math.radians(inclination))) * np.where(tau > 0, source / tau, 0.0)

        return self._emissivity.get(key, make)

    def _ring_planck(self, ring, distance):
        key = (ring.r_in, ring.r_out, distance, ring.t_in, ring.q)

        def make():
            r, _, _ = self._ring_nodes(ring, distance)
            return planck_nu(self.sampling.wavelengths[:, None], ring.temperature(r)[None, :])

        return self._planck.get(key, make)

    def _ring_emissivity(self, ring, distance, inclination):
        if ring.dust is None:
            return None
        key = (ring.r_in, ring.r_out, distance, ring.sigma_in, ring.p, ring.dust, inclination)

        def make():
            r, _, _ = self._ring_nodes(ring, distance)
            tau = self._kappa_at(ring.dust)[:, None] * ring.surface_density(r)[None, :]
            return -np.expm1(-tau / math.cos(math.radians(inclination)))

        return self._emissivity.get(key, make)

    def _projected_intensity(self, ring, distance, inclination, star=None):
        """cos i · I_ν on the ring's radial nodes, per distinct wavelength (Jy sr⁻¹)."""
        if ring.is_equilibrium:
            return self._equilibrium_intensity(ring, distance, inclination, star) * math.cos(math.radians(inclination))
        intensity = self._ring_planck(ring, distance)
        emiss = self._ring_emissivity(ring, distance, inclination)
        if emiss is not None:
            intensity = intensity * emiss
        return intensity * math.cos(math.radians(inclination))

    def _ring_transform(self, ring, distance, inclination, grid, star=None):
        """H_k[w, m] = cos i Σ_nodes area I J_k(2π θ ρ_m): unnormalised transforms in Jy."""
        key = (ring, distance, inclination, grid, star)

        def make():
            intensity = self._projected_intensity(ring, distance, inclination, star)
            h0 = intensity @ self._kernel(ring, distance, grid, 0, star)
            h1 = intensity @ self._kernel(ring, distance, grid, 1, star) if ring.is_modulated else None
            return h0, h1

        return self._transforms.get(key, make)

    def _interpolation(self, inclination, position_angle, grid):
        key = (inclination, position_angle, grid)

        def make():
            s = self.sampling
            rho, psi = _geometry_frequencies(s, inclination, position_angle)
            step, n = grid
            index, weight = cubic_weights(rho, step)
            flat = (s.wave_index[:, None] * n + index).ravel()
            matrix = sparse.csr_matrix(
                (weight.ravel(), flat, np.arange(0, 4 * s.size + 1, 4)),
                shape=(s.size, s.wavelengths.size * n))
            return matrix, np.cos(psi), np.sin(psi)

        return self._interp.get(key, make)

    def _ring_points(self, ring, scene, grid):
        """Unnormalised visibility (Jy) of one ring at every point, and its flux.

        Returns (key, even, odd, flux): the real part at every point; the imaginary part
        of a modulated ring (``None`` for an axisymmetric one, whose transform is real);
        the ring's flux density per distinct wavelength.
        """
        star = _heating_star(ring, scene)
        key = (ring, scene.distance, scene.inclination, scene.position_angle, grid, star)

        def make():
            h0, h1 = self._ring_transform(ring, scene.distance, scene.inclination, grid, star)
            matrix, cos_psi, sin_psi = self._interpolation(scene.inclination, scene.position_angle, grid)
            even = matrix @ h0.ravel()
            even.flags.writeable = False
            odd = None
            if h1 is not None:
                # The m = 1 term: ∫ cos φ e^{-iz cos(φ-ψ)} dφ = -2πi J1(z) cos ψ (per unit 2π).
                odd = -(ring.c1 * cos_psi + ring.s1 * sin_psi) * (matrix @ h1.ravel())
                odd.flags.writeable = False
            return key, even, odd, h0[:, 1].copy()

        return self._points.get(key, make)

    def _ring_flux(self, ring, distance, inclination, star=None):
        """Flux density (Jy) of one ring per distinct wavelength: cos i Σ_nodes area I."""
        def make():
            return (self._projected_intensity(ring, distance, inclination, star)
                    @ self._ring_nodes(ring, distance, star)[2])

        return self._fluxes.get((ring, distance, inclination, star), make)

    def _resolved(self, ring, star):
        """The ring with its inner edge placed (the sublimation front), or None if empty."""
        if ring.inner_edge == "fixed":
            return ring
        return self._fronts.get((ring, star), lambda: ring.resolved(star))

    def _star_points(self, star, distance):
        """The star's flux at the sampling's wavelengths (Jy) and F★ V★ at every point."""
        key = (star, distance)

        def make():
            s = self.sampling
            flux = np.asarray(star.flux(s.wavelengths, distance), float)
            per_point = flux[s.wave_index]
            if star.uniform_disk:
                x = math.pi * star.angular_diameter(distance) * RAD_PER_MAS * s.rho_full
                nz = x > 1e-8
                per_point = per_point.copy()
                per_point[nz] *= 2.0 * special.j1(x[nz]) / x[nz]
            per_point.flags.writeable = False
            return flux, per_point

        return self._stars.get(key, make)

    # ------------------------------------------------------------------ public
    def _numerator(self, even, odd):
        """Σ of the components' unnormalised visibilities (Jy): real and imaginary parts.

        ``even`` and ``odd`` list (key, values) of the real and imaginary parts. The sums of
        the last few scenes are kept; they are formed in the scene's order, so a result
        never depends on which scenes were evaluated before.
        """
        key = (tuple(k for k, _ in even), tuple(k for k, _ in odd))

        def make():
            re = _frozen_sum([v for _, v in even]) if even else np.zeros(self.sampling.size)
            return re, (_frozen_sum([v for _, v in odd]) if odd else None)

        return self._sums.get(key, make)

    def evaluate(self, scene, fluxes_only=False) -> Evaluation:
        """Complex visibilities and component fluxes of ``scene`` on this sampling.

        With ``fluxes_only`` only the fluxes are computed (an SED: no transforms needed).
        """
        s = self.sampling
        nwave = s.wavelengths.size
        grid = None if fluxes_only else self._grid(scene)
        even, odd, flux_rings = [], [], []
        for ring in scene.rings:
            if ring.enabled and ring.inner_edge != "fixed":
                ring = self._resolved(ring, scene.star)
            if ring is None or not ring.enabled:
                flux_rings.append(np.zeros(nwave))
            elif fluxes_only:
                flux_rings.append(self._ring_flux(ring, scene.distance, scene.inclination,
                                                  _heating_star(ring, scene)))
            else:
                key, re, im, flux = self._ring_points(ring, scene, grid)
                even.append((key, re))
                if im is not None:
                    odd.append((key, im))
                flux_rings.append(flux)
        if scene.star is not None:
            flux_star, star_points = self._star_points(scene.star, scene.distance)
            if not fluxes_only:
                even.append((("star", scene.star, scene.distance), star_points))
        else:
            flux_star = np.zeros(nwave)
        re, im = (None, None) if fluxes_only else self._numerator(even, odd)
        compact = flux_star + sum(flux_rings, np.zeros(nwave))
        f_ext = scene.extended_fraction
        flux_ext = compact * (f_ext / (1.0 - f_ext))
        return Evaluation(numerator_real=re, numerator_imag=im, wave_index=s.wave_index, shape=s.shape,
                          wavelengths=s.wavelengths, flux_star=flux_star, flux_rings=flux_rings,
                          flux_extended=flux_ext)


def _heating_star(ring, scene):
    """The star that heats an equilibrium ring (part of its cache keys); None for a power law."""
    return scene.star if ring.is_equilibrium else None


def _frozen_sum(arrays):
    """Element-wise sum of float arrays in the given order, returned read-only."""
    out = np.array(arrays[0], dtype=float, copy=True)
    for a in arrays[1:]:
        out += a
    out.flags.writeable = False
    return out


def direct_visibility(scene, u, v, wavelength, accuracy=2):
    """Reference evaluation with one Bessel function per point per radial node.

    Slow (no frequency grid, no interpolation); used by tests to check the engine.
    Returns the normalised complex visibility, shape of the broadcast inputs.
    """
    s = Sampling(u, v, wavelength)
    rho, psi = _geometry_frequencies(s, scene.inclination, scene.position_angle)
    cos_i = math.cos(math.radians(scene.inclination))
    rad_per_au = ARCSEC_RAD / scene.distance
    numerator = np.zeros(s.size, complex)
    total = np.zeros(s.size)
    for ring in scene.rings:
        ring = ring.resolved(scene.star) if ring.enabled else None
        if ring is None:
            continue
        breaks = ring.sublimation_breaks(scene.star) if ring.is_equilibrium else ()
        r, theta, area = radial_nodes(ring.r_in, ring.r_out, rad_per_au, s.rho_max, accuracy, breaks)
        inten = ring.intensity(r, s.wavelengths, scene.inclination, scene.star)[s.wave_index] * cos_i * area
        arg = 2 * math.pi * theta[None, :] * rho[:, None]
        numerator += np.sum(inten * special.j0(arg), axis=1)
        if ring.is_modulated:
            odd = np.sum(inten * special.j1(arg), axis=1)
            numerator += -1j * (ring.c1 * np.cos(psi) + ring.s1 * np.sin(psi)) * odd
        total += inten.sum(axis=1)
    if scene.star is not None:
        fs = scene.star.flux(s.wavelength, scene.distance)
        x = math.pi * scene.star.angular_diameter(scene.distance) * RAD_PER_MAS * s.rho_full
        vs = np.where(x > 1e-8, 2 * special.j1(x) / np.where(x > 1e-8, x, 1.0), 1.0) if scene.star.uniform_disk else 1.0
        numerator += fs * vs
        total += fs
    total = total / (1.0 - scene.extended_fraction)
    return (numerator / total).reshape(s.shape)
