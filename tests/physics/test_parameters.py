"""Parameter validation: every rule raises a ParameterError naming the parameter."""
import pytest

from diskexplorer import ParameterError, Ring, Scene, Star
from diskexplorer.physics.parameters import parameter_specs


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(r_in=1.0, r_out=0.5), r"r_in = 1.0 au must be smaller than r_out = 0.5"),
    (dict(r_in=-0.1, r_out=0.5), r"Ring.r_in = -0.1 au is outside the allowed range \(0, inf\)"),
    (dict(t_in=0.0), r"Ring.t_in = 0.0 K is outside"),
    (dict(t_in=-50.0), r"Ring.t_in = -50.0 K"),
    (dict(sigma_in=0.0), r"Ring.sigma_in = 0.0 g / cm2 is outside"),
    (dict(c1=0.8, s1=0.8), r"modulation amplitude .* = 1.131 .* allowed range \[0, 1\]"),
    (dict(c1=1.5), r"Ring.c1 = 1.5 is outside the allowed range \[-1, 1\]"),
    (dict(t_in=float("nan")), r"Ring.t_in = nan"),
])
def test_ring_rules(kwargs, pattern):
    with pytest.raises(ParameterError, match=pattern):
        Ring(**kwargs)


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(distance=0.0), r"Scene.distance = 0.0 pc is outside the allowed range \(0, inf\)"),
    (dict(distance=-3.0), r"Scene.distance = -3.0 pc"),
    (dict(inclination=90.0), r"Scene.inclination = 90.0 deg is outside the allowed range \[0, 90\)"),
    (dict(inclination=-1.0), r"Scene.inclination = -1.0 deg"),
    (dict(extended_fraction=1.0), r"Scene.extended_fraction = 1.0 is outside the allowed range \[0, 1\)"),
    (dict(rings=[1.0]), r"Scene.rings\[0\] must be a Ring"),
])
def test_scene_rules(kwargs, pattern):
    with pytest.raises(ParameterError, match=pattern):
        Scene(**kwargs)


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(t_eff=-10.0), r"Star.t_eff = -10.0 K is outside"),
    (dict(t_eff=7000, radius=0.0), r"Star.radius = 0.0 solRad is outside"),
    (dict(t_eff=7000, luminosity=-1.0), r"Star.luminosity = -1.0 solLum"),
    (dict(t_eff=7000, radius=2.0, luminosity=10.0), r"radius or luminosity, not both"),
    (dict(t_eff=7000, mass=0.0), r"Star.mass = 0.0 solMass"),
])
def test_star_rules(kwargs, pattern):
    with pytest.raises(ParameterError, match=pattern):
        Star(**kwargs)


def test_parameter_error_is_value_error():
    with pytest.raises(ValueError):
        Scene(distance=-1)


def test_star_luminosity_round_trip():
    # L = 4 pi R^2 sigma T^4 (astropy constants).
    star = Star(t_eff=9000.0, luminosity=23.644)
    assert star.luminosity == pytest.approx(23.644, rel=1e-12)
    # CHECK_VALUES §4 (COMPUTED): R = 2 R_sun, T = 9000 K -> L = 23.644 L_sun.
    assert star.radius == pytest.approx(2.0, rel=2e-5)


def test_every_declared_parameter_has_unit_bounds_and_words():
    for cls in (Ring, Scene, Star):
        specs = parameter_specs(cls)
        assert specs, cls
        for spec in specs.values():
            lo, hi = spec.bounds
            assert lo < hi and spec.contains(lo) and spec.contains(hi), spec
            assert spec.label and spec.description
            assert spec.scale in ("linear", "log")
