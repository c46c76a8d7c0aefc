"""From optical constants to mass absorption: methods, sizes, crystal axes, density.

One entry point, :func:`kappa_abs`, turns optical constants (one isotropic data set,
or one per crystal axis) into κ_abs(λ) in cm² g⁻¹ for a grain-shape method and a grain
size or size distribution:

* ``"mie"`` — homogeneous spheres (miepython);
* ``"dhs"`` — distribution of hollow spheres (Min et al. 2005), vacuum fraction
  uniform on [0, f_max];
* ``"cde"`` — continuous distribution of ellipsoids in the Rayleigh limit (B&H eq.
  12.36). **Size-independent**: the CDE is a small-grain result, κ per mass does not
  depend on the radius, and a radius (or size distribution) given with it is ignored.
  It is valid for 2πa|m|/λ ≪ 1, i.e. sub-micron grains in the 10 µm band; for larger
  grains use ``"dhs"``, which also mimics irregular shapes.

Anisotropic crystals (e.g. forsterite, one data set per crystallographic axis): κ is
computed for each axis separately, each with its own ε, as if an isotropic grain of
that ε, and the three results are averaged with weight 1/3 each. For the CDE in the
Rayleigh limit this is exact for randomly oriented grains (the polarisability tensor
is diagonal in the crystal frame and the orientation average weights each axis 1/3);
for Mie and DHS it is the usual approximation.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import DustError
from .cde import cde_cabs_per_volume
from .coated import dhs_cabs_per_volume
from .mie import mie_cabs_per_volume
from .optical_constants import OpticalConstants

__all__ = ["METHODS", "PowerLawSizes", "cabs_per_volume", "kappa_abs"]

METHODS = ("cde", "mie", "dhs")


@dataclass(frozen=True)
class PowerLawSizes:
    """Grain-size distribution n(a) ∝ a^(−p) on [a_min, a_max].

    Parameters
    ----------
    a_min, a_max : float
        Radii in µm (0 < a_min ≤ a_max).
    p : float
        Power-law index (3.5 for the interstellar MRN distribution).
    n_sizes : int
        Sizes of the logarithmic quadrature grid.
    """

    a_min: float
    a_max: float
    p: float = 3.5
    n_sizes: int = 30

    def __post_init__(self):
        if not (0 < self.a_min <= self.a_max and np.isfinite(self.a_max)):
            raise DustError(f"size distribution {self.a_min!r}–{self.a_max!r} µm: need 0 < a_min ≤ a_max")
        if int(self.n_sizes) < 1:
            raise DustError(f"size distribution n_sizes = {self.n_sizes!r}: need ≥ 1")

    def radii_and_mass_weights(self):
        """Radii (µm) and weights ∝ n(a) a³ da (mass per size bin), summing to 1.

        κ of the distribution is Σ wᵢ (C_abs/V)(aᵢ) / ρ: absorption per total mass.
        """
        if self.a_min == self.a_max or self.n_sizes == 1:
            return np.array([np.sqrt(self.a_min * self.a_max)]), np.ones(1)
        # Trapezoid rule in ln a: n(a) a³ da = a^(4−p) d ln a.
        a = np.geomspace(self.a_min, self.a_max, int(self.n_sizes))
        lna = np.log(a)
        w = a ** (4.0 - self.p)
        dl = np.diff(lna)
        tw = np.zeros_like(a)
        tw[:-1] += 0.5 * dl
        tw[1:] += 0.5 * dl
        w = w * tw
        return a, w / w.sum()


def cabs_per_volume(m, wavelength, method, radius=None, f_max=0.8, n_fractions=16):
    """C_abs/V (cm⁻¹) of grains of refractive index ``m`` (n + ik) at ``wavelength`` (µm).

    ``radius`` in µm (ignored by ``"cde"``); see the module notes for the methods.
    """
    lam = np.asarray(wavelength, dtype=float)
    m = np.asarray(m, dtype=complex)
    if method == "cde":
        return cde_cabs_per_volume(m ** 2, lam)
    if radius is None:
        raise DustError(f"method {method!r} needs a grain radius in µm")
    if method == "mie":
        return mie_cabs_per_volume(m, radius, lam)
    if method == "dhs":
        return dhs_cabs_per_volume(m, radius, lam, f_max=f_max, n_fractions=n_fractions)
    raise DustError(f"grain method {method!r}: expected one of {METHODS}")


def kappa_abs(constants, density, wavelength, method="dhs", grain_size=None, sizes=None,
              f_max=0.8, n_fractions=16):
    """Mass absorption coefficient κ_abs = C_abs / (ρ V) in cm² g⁻¹.

    Parameters
    ----------
    constants : OpticalConstants or sequence of OpticalConstants
        One isotropic data set, or one per crystal axis (averaged 1/3 each).
    density : float
        Bulk material density ρ in g cm⁻³.
    wavelength : array_like
        Wavelengths in µm.
    method : {"cde", "mie", "dhs"}
        Grain shape model (see module notes; ``"cde"`` ignores size).
    grain_size : float, optional
        Single grain radius in µm (volume-equivalent radius for ``"dhs"``).
    sizes : PowerLawSizes, optional
        Size distribution instead of ``grain_size`` (mass-weighted average).
    f_max, n_fractions : float, int
        DHS parameters (largest vacuum fraction, quadrature nodes).

    Returns
    -------
    ndarray
        κ_abs in cm² g⁻¹ at ``wavelength``.

    Examples
    --------
    >>> kappa_abs(olivine, 3.71, [9.8, 10.0], method="cde")   # doctest: +SKIP
    """
    rho = float(density)
    if not (np.isfinite(rho) and rho > 0):
        raise DustError(f"material density {density!r} g/cm3: expected > 0")
    if method not in METHODS:
        raise DustError(f"grain method {method!r}: expected one of {METHODS}")
    axes = [constants] if isinstance(constants, OpticalConstants) else list(constants)
    if not axes or not all(isinstance(a, OpticalConstants) for a in axes):
        raise DustError("kappa_abs needs OpticalConstants (or one per crystal axis)")
    lam = np.asarray(wavelength, dtype=float)
    if method == "cde":
        radii, weights = [None], np.ones(1)
    elif sizes is not None:
        radii, weights = sizes.radii_and_mass_weights()
    elif grain_size is not None:
        radii, weights = [float(grain_size)], np.ones(1)
    else:
        raise DustError(f"method {method!r} needs grain_size (µm) or a size distribution")
    total = np.zeros(lam.shape)
    for oc in axes:
        m = oc.m(lam)
        for a, w in zip(radii, weights):
            total += w * cabs_per_volume(m, lam, method, a, f_max=f_max, n_fractions=n_fractions)
    return total / len(axes) / rho
