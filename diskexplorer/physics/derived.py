"""Derived quantities: sublimation radius, scales, periods, dust masses, optical depths, gaps.

Plain functions of the model's parameters (no I/O, no widgets). Inputs are floats or
arrays in the project's internal units (au, pc, mas, K, solar units); every function
says which unit it returns.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import astropy.constants as _c
import astropy.units as _u
import numpy as np

from ..errors import ParameterError
from .constants import ARCSEC_RAD, AU_M, G_SI, L_SUN_W, M_EARTH_G, M_SUN_KG, RAD_PER_MAS, SIGMA_SB

__all__ = [
    "sublimation_radius", "angular_to_physical", "physical_to_angular", "keplerian_period",
    "dust_mass", "optical_depth_at", "gap_width", "gap_mass_ratio", "gap_planet_mass",
    "kanagawa_validity", "gaps_of", "Gap", "GapRelationWarning", "KANAGAWA_COEFFICIENT",
    "KANAGAWA_RANGE", "species_sublimation_radii",
]

# Taken from astropy like the hot-path constants (constants.py has no Jupiter mass or year).
_M_JUP_KG = _c.M_jup.si.value
_YEAR_S = (1 * _u.yr).to_value(_u.s)  # Julian year (astropy's "yr")
_AU_CM = AU_M * 100.0

#: Coefficient of the Kanagawa et al. (2016) gap-width relation. FROM MEMORY (see
#: CHECK_VALUES §5): the exponents are confirmed from the paper's abstract, the 0.41 is not.
KANAGAWA_COEFFICIENT = 0.41

#: Approximate parameter range of the simulations behind the gap-width relation, as
#: (low, high) for q = M_p/M★, h = h_p/R_p and α. FROM MEMORY, deliberately generous;
#: check the paper before leaning on the edges.
KANAGAWA_RANGE = {"q": (1e-4, 1e-2), "h": (0.03, 0.1), "alpha": (1e-4, 1e-2)}


class GapRelationWarning(UserWarning):
    """A gap-width relation was used outside the range it was calibrated on."""


def _positive(name, value, unit=""):
    a = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(a)) or np.any(a <= 0):
        u = f" {unit}" if unit else ""
        raise ParameterError(f"{name} = {value!r}{u}: expected finite values > 0")
    return a


def _out(a):
    """A float for scalar input, an array otherwise."""
    return float(a) if np.ndim(a) == 0 else a


# ------------------------------------------------------------------------------ inner rim
def sublimation_radius(luminosity_lsun, t_sub=1500.0, q_r=1.0, *, epsilon=None, backwarming=1.0):
    """Radius at which optically thin dust reaches its sublimation temperature.

    Parameters
    ----------
    luminosity_lsun : float or array_like
        Stellar luminosity in L☉ (IAU nominal 3.828e26 W, from astropy).
    t_sub : float or array_like
        Dust sublimation temperature in K (1500 K for silicates is the usual choice;
        up to ~2000 K for refractory dust).
    q_r : float or array_like
        Q_R = Q_abs(T★)/Q_abs(T_sub), the ratio of the grain's absorption efficiency at the
        stellar temperature to that at its own temperature (1 for grey grains; ≫ 1 for small
        silicates, which absorb starlight well but cool poorly).
    epsilon : float, optional
        Cooling efficiency ε = κ(T_dust)/κ(T★) = 1/Q_R, an alternative to ``q_r``
        (give one of the two).
    backwarming : float
        Factor C_bw ≥ 1 multiplying the heating inside the square root, for the inner rim of
        an optically thick disk that is also heated by its own diffuse emission (1: none).

    Returns
    -------
    float or ndarray
        Sublimation radius in au.

    Raises
    ------
    ParameterError
        Non-positive input, or both ``q_r`` (≠ 1) and ``epsilon`` given.

    Notes
    -----
    R_s = √(C_bw Q_R L★ / (16 π σ T_s⁴)), which with L★ = 4π R★² σ T★⁴ is the optically thin
    equilibrium R_s = ½ √Q_R (T★/T_s)² R★ (Monnier & Millan-Gabet 2002, ApJ 579, 694,
    eq. 1) and, with ε = 1/Q_R, the form of Dullemond & Monnier (2010, ARA&A 48, 205).
    The equation forms and the backwarming factor are FROM MEMORY (CHECK_VALUES §4); the
    numbers below are COMPUTED with astropy's constants.

    Examples
    --------
    >>> round(sublimation_radius(10.0), 6)
    0.108877
    >>> round(sublimation_radius(10.0, t_sub=2000.0), 6)
    0.061243
    """
    if epsilon is not None:
        if np.any(np.asarray(q_r) != 1.0):
            raise ParameterError("sublimation_radius: give q_r or epsilon (= 1/q_r), not both")
        q_r = 1.0 / _positive("epsilon", epsilon)
    lum = _positive("luminosity_lsun", luminosity_lsun, "L_sun")
    t = _positive("t_sub", t_sub, "K")
    q = _positive("q_r", q_r)
    if np.any(np.asarray(backwarming, float) < 1.0):
        raise ParameterError(f"sublimation_radius: backwarming = {backwarming!r}; expected ≥ 1")
    r_m = np.sqrt(backwarming * q * lum * L_SUN_W / (16.0 * math.pi * SIGMA_SB * t**4))
    return _out(r_m / AU_M)


# ------------------------------------------------------------------------------ scales
def species_sublimation_radii(scene, enabled_only=True):
    """Each dust species' optically thin sublimation radius around the scene's star.

    Parameters
    ----------
    scene : Scene
    enabled_only : bool
        Skip disabled rings.

    Returns
    -------
    list of dict
        One per species of each ring (black rings count as one grey species):
        ``ring`` (index), ``ring_name``, ``species``, ``t_sub`` (K: the ring's value),
        ``q_r`` = κ_*/κ_P(T_sub), ``r_sub`` (au) — R_s = √(Q_R L★/(16πσT_sub⁴)), the radius
        where the species' equilibrium temperature reaches T_sub, whatever the ring's own
        temperature mode. Empty without a star.
    """
    from .equilibrium import planck_mean, stellar_mean

    star = scene.star
    if star is None:
        return []
    out = []
    for k, ring in enumerate(scene.rings):
        if enabled_only and not ring.enabled:
            continue
        t_sub = ring.sublimation_temperatures()
        radii = ring.sublimation_radii(star)
        for part in ring.species():
            q_r = 1.0 if part.opacity is None else (stellar_mean(part.opacity, star)
                                                    / float(planck_mean(part.opacity, t_sub[part.name])))
            out.append({"ring": k, "ring_name": ring.name, "species": part.name, "t_sub": t_sub[part.name],
                        "q_r": q_r, "r_sub": radii[part.name]})
    return out


def angular_to_physical(theta_mas, distance_pc):
    """Projected size in au of an angle ``theta_mas`` (mas) at ``distance_pc`` (pc).

    Notes
    -----
    1 au at 1 pc subtends 1″ (definition of the parsec), so r [au] = θ [″] d [pc]; the
    small-angle approximation is exact to far better than the data for these angles.

    Examples
    --------
    >>> round(angular_to_physical(5.0, 140.0), 9)
    0.7
    """
    theta = np.asarray(theta_mas, dtype=float)
    d = _positive("distance_pc", distance_pc, "pc")
    return _out(theta * RAD_PER_MAS / ARCSEC_RAD * d)


def physical_to_angular(r_au, distance_pc):
    """Angle in mas subtended by ``r_au`` (au) at ``distance_pc`` (pc); inverse of
    :func:`angular_to_physical`."""
    r = np.asarray(r_au, dtype=float)
    d = _positive("distance_pc", distance_pc, "pc")
    return _out(r / d * ARCSEC_RAD / RAD_PER_MAS)


def keplerian_period(r_au, m_star_msun):
    """Keplerian orbital period in years (Julian) at radius ``r_au`` (au) around ``m_star_msun`` (M☉).

    Notes
    -----
    P = 2π √(r³ / (G M★)), the planet's mass neglected. 1 au around 1 M☉ gives
    1.0000 yr to the precision of G M☉ and the Julian year.

    Examples
    --------
    >>> round(keplerian_period(1.0, 1.0), 3)
    1.0
    """
    r = _positive("r_au", r_au, "au") * AU_M
    m = _positive("m_star_msun", m_star_msun, "M_sun") * M_SUN_KG
    return _out(2.0 * math.pi * np.sqrt(r**3 / (G_SI * m)) / _YEAR_S)


# ------------------------------------------------------------------------------ rings
def dust_mass(ring):
    """Dust mass of a ring in Earth masses.

    Parameters
    ----------
    ring : Ring
        Uses ``r_in``, ``r_out`` (au), ``sigma_in`` (g cm⁻²) and ``p``; the mass is that of
        the model's surface density whether or not the ring is enabled.

    Returns
    -------
    float
        M = ∫ Σ(r) 2π r dr over [r_in, r_out], in M⊕ (astropy's Earth mass).

    Notes
    -----
    With Σ = Σ_in (r/r_in)^(−p) and x = r_out/r_in:
    M = 2π Σ_in r_in² (x^(2−p) − 1)/(2 − p), and 2π Σ_in r_in² ln x for p = 2. The first
    form is evaluated as expm1((2−p) ln x)/(2−p), which tends smoothly to ln x, so values
    of p close to 2 lose no precision. A "black" ring (no dust opacity) still has the
    dust mass of its Σ.
    """
    x = ring.r_out / ring.r_in
    lnx = math.log(x)
    k = 2.0 - ring.p
    shape = lnx if abs(k * lnx) < 1e-12 else math.expm1(k * lnx) / k
    grams = 2.0 * math.pi * ring.sigma_in * (ring.r_in * _AU_CM) ** 2 * shape
    return grams / M_EARTH_G


def optical_depth_at(ring, wavelength=10.0, inclination=0.0):
    """Optical depth of a ring at its inner and outer radius.

    Parameters
    ----------
    ring : Ring
    wavelength : float or array_like
        Wavelength in µm (default 10 µm, in the silicate band).
    inclination : float
        Inclination in degrees; 0 gives the vertical τ = Σ κ_ν, otherwise the line-of-sight
        τ / cos i that enters the emission.

    Returns
    -------
    (tau_in, tau_out) : tuple of float or ndarray
        Dimensionless optical depths at r_in and r_out (arrays of the shape of
        ``wavelength`` for array input; ``inf`` for rings without dust opacity, which
        the model treats as optically thick).
    """
    if not 0.0 <= inclination < 90.0:
        raise ParameterError(f"optical_depth_at: inclination = {inclination!r} deg; allowed [0, 90)")
    lam = np.asarray(wavelength, dtype=float)
    tau = ring.optical_depth([ring.r_in, ring.r_out], lam.ravel()) / math.cos(math.radians(inclination))
    tau_in, tau_out = tau[:, 0].reshape(lam.shape), tau[:, 1].reshape(lam.shape)
    return _out(tau_in), _out(tau_out)


# ------------------------------------------------------------------------------ gaps
def kanagawa_validity(q, h, alpha):
    """Words on whether (q, h, α) lie inside :data:`KANAGAWA_RANGE` ("" if they do).

    Parameters
    ----------
    q, h, alpha : float
        Planet-to-star mass ratio, aspect ratio h_p/R_p and viscosity parameter.

    Returns
    -------
    str
        Empty inside the (FROM MEMORY) calibration range, else which values are outside.
    """
    notes = []
    for name, value in (("q", q), ("h", h), ("alpha", alpha)):
        lo, hi = KANAGAWA_RANGE[name]
        v = np.asarray(value, dtype=float)
        if np.any(v < lo) or np.any(v > hi):
            notes.append(f"{name} = {value!r} outside [{lo:g}, {hi:g}]")
    if not notes:
        return ""
    return ("Kanagawa et al. 2016 gap-width relation used outside its approximate calibration "
            "range: " + "; ".join(notes))


def _warn_validity(q, h, alpha):
    note = kanagawa_validity(q, h, alpha)
    if note:
        # stacklevel 3: point at the caller of gap_width/gap_mass_ratio, not at this helper.
        warnings.warn(note, GapRelationWarning, stacklevel=3)
    return note


def gap_width(q, h, alpha, *, warn=True):
    """Gap width in units of the planet's orbital radius, Δ_gap / R_p.

    Parameters
    ----------
    q : float or array_like
        Planet-to-star mass ratio M_p / M★.
    h : float or array_like
        Disk aspect ratio h_p / R_p at the planet.
    alpha : float or array_like
        Shakura–Sunyaev viscosity parameter.
    warn : bool
        Emit a :class:`GapRelationWarning` outside :data:`KANAGAWA_RANGE`.

    Returns
    -------
    float or ndarray
        Δ_gap / R_p, dimensionless; Δ_gap is measured where Σ = ½ Σ₀.

    Notes
    -----
    Kanagawa et al. 2016, PASJ 68, 43 (doi:10.1093/pasj/psw037):
    Δ_gap/R_p = 0.41 q^{1/2} h^{−3/4} α^{−1/4} = 0.41 K′^{1/4}, K′ = q² h⁻³ α⁻¹.
    The exponents are CONFIRMED (paper abstract); the coefficient 0.41 and the ½ Σ₀
    definition are FROM MEMORY (CHECK_VALUES §5). Validity: 2-D viscous hydrodynamics of a
    single planet on a fixed circular orbit, roughly 1e-4 ≲ q ≲ 1e-2, 0.03 ≲ h ≲ 0.1,
    1e-4 ≲ α ≲ 1e-2 (range FROM MEMORY); gas gaps, not dust gaps, which trapping widens.

    Examples
    --------
    >>> round(gap_width(1e-3, 0.1, 1e-3), 12)
    0.41
    """
    q = _positive("q", q)
    h = _positive("h", h)
    a = _positive("alpha", alpha)
    if warn:
        _warn_validity(q, h, a)
    return _out(KANAGAWA_COEFFICIENT * np.sqrt(q) * h**-0.75 * a**-0.25)


def gap_mass_ratio(gap_width_over_r, aspect_ratio, alpha, *, warn=True):
    """Planet-to-star mass ratio q implied by a gap width (inverse of :func:`gap_width`).

    Parameters
    ----------
    gap_width_over_r : float or array_like
        Δ_gap / R_p (dimensionless).
    aspect_ratio : float or array_like
        h_p / R_p.
    alpha : float or array_like
        Viscosity parameter.
    warn : bool
        Warn if the resulting q or the inputs lie outside :data:`KANAGAWA_RANGE`.

    Returns
    -------
    float or ndarray
        q = (Δ/(0.41 R_p))² h^{3/2} α^{1/2}.

    Examples
    --------
    >>> round(gap_mass_ratio(0.5, 0.07, 1e-3), 7)
    0.000871
    """
    w = _positive("gap_width_over_r", gap_width_over_r)
    h = _positive("aspect_ratio", aspect_ratio)
    a = _positive("alpha", alpha)
    q = (w / KANAGAWA_COEFFICIENT) ** 2 * h**1.5 * np.sqrt(a)
    if warn:
        _warn_validity(q, h, a)
    return _out(q)


def gap_planet_mass(gap_width_over_r, aspect_ratio, alpha, m_star=1.0, *, warn=True):
    """Planet mass in Jupiter masses implied by a gap width (Kanagawa et al. 2016).

    Parameters
    ----------
    gap_width_over_r, aspect_ratio, alpha : float or array_like
        As in :func:`gap_mass_ratio`.
    m_star : float
        Stellar mass in M☉.
    warn : bool
        Warn outside the relation's calibration range.

    Returns
    -------
    float or ndarray
        M_p in M_J (astropy's M_jup), q · M★.

    Notes
    -----
    See :func:`gap_width` for the relation, its FROM MEMORY coefficient and validity.
    """
    m = _positive("m_star", m_star, "M_sun")
    q = gap_mass_ratio(gap_width_over_r, aspect_ratio, alpha, warn=warn)
    return _out(np.asarray(q) * m * M_SUN_KG / _M_JUP_KG)


@dataclass(frozen=True)
class Gap:
    """An empty annulus between two consecutive rings and the planet it would imply.

    Attributes
    ----------
    inner_ring, outer_ring : str
        Names of the rings bounding the gap.
    r_start, r_end : float
        Outer edge of the inner ring and inner edge of the outer ring, au.
    width : float
        r_end − r_start, au.
    centre : float
        (r_start + r_end)/2, au — where the planet is assumed to orbit.
    width_over_r : float
        width / centre.
    mass_ratio : float
        Implied q = M_p/M★ (Kanagawa et al. 2016).
    planet_mass : float
        Implied M_p in Jupiter masses.
    validity : str
        "" inside the relation's range, else a note saying what is outside.
    """

    inner_ring: str
    outer_ring: str
    r_start: float
    r_end: float
    width: float
    centre: float
    width_over_r: float
    mass_ratio: float
    planet_mass: float
    validity: str = ""


def gaps_of(scene, aspect_ratio=0.05, alpha=1e-3, m_star=None, enabled_only=True):
    """The gaps between consecutive rings of a scene and the planet masses they imply.

    Parameters
    ----------
    scene : Scene
        Uses ``scene.rings`` and, unless ``m_star`` is given, ``scene.star.mass``.
    aspect_ratio : float
        Disk aspect ratio h/r assumed at every gap.
    alpha : float
        Viscosity parameter assumed at every gap.
    m_star : float, optional
        Stellar mass in M☉ (default: the scene's star).
    enabled_only : bool
        Ignore disabled rings.

    Returns
    -------
    list of Gap
        Ordered outwards; rings are sorted by inner radius, and overlapping or touching
        neighbours leave no gap.

    Raises
    ------
    ParameterError
        No stellar mass available.

    Notes
    -----
    Treating the space between two model rings as a planet-carved gas gap is an
    interpretation, not a measurement: the rings' edges trace dust emission, and the
    planet is placed at the gap's centre. The validity note of each gap says when the
    relation is extrapolated; no warning is emitted here (the notes carry it).
    """
    if m_star is None:
        if getattr(scene, "star", None) is None:
            raise ParameterError("gaps_of: the scene has no star; pass m_star (M_sun)")
        m_star = scene.star.mass
    rings = [r for r in scene.rings if r.enabled or not enabled_only]
    rings.sort(key=lambda r: r.r_in)
    out = []
    for a, b in zip(rings, rings[1:]):
        if b.r_in <= a.r_out:
            continue
        width = b.r_in - a.r_out
        centre = 0.5 * (a.r_out + b.r_in)
        w = width / centre
        q = gap_mass_ratio(w, aspect_ratio, alpha, warn=False)
        out.append(Gap(inner_ring=a.name, outer_ring=b.name, r_start=a.r_out, r_end=b.r_in,
                       width=width, centre=centre, width_over_r=w, mass_ratio=q,
                       planet_mass=gap_planet_mass(w, aspect_ratio, alpha, m_star, warn=False),
                       validity=kanagawa_validity(q, aspect_ratio, alpha)))
    return out
