"""Pure physics: Planck function, star, rings, opacities, parameter declarations. No I/O, no widgets."""
from .derived import (Gap, GapRelationWarning, angular_to_physical, dust_mass, gap_mass_ratio, gap_planet_mass,
                      gap_width, gaps_of, kanagawa_validity, keplerian_period, optical_depth_at,
                      physical_to_angular, sublimation_radius)
from .equilibrium import (equilibrium_sublimation_radius, equilibrium_temperature, grey_temperature,
                          planck_mean, stellar_mean)
from .opacity import (KappaTable, Opacity, OpacityPart, PowerLawOpacity, as_opacity, opacity_parts,
                      register_opacity_resolver)
from .parameters import ParameterSpec, parameter_specs
from .planck import planck_lambda, planck_nu
from .ring import Ring
from .star import PhotosphereTable, Star

__all__ = [
    "planck_nu", "planck_lambda", "Star", "PhotosphereTable", "Ring",
    "Opacity", "KappaTable", "PowerLawOpacity", "as_opacity", "register_opacity_resolver",
    "OpacityPart", "opacity_parts",
    # optically thin grain temperatures
    "planck_mean", "stellar_mean", "equilibrium_temperature", "grey_temperature",
    "equilibrium_sublimation_radius",
    "ParameterSpec", "parameter_specs",
    # derived quantities
    "sublimation_radius", "angular_to_physical", "physical_to_angular", "keplerian_period", "dust_mass",
    "optical_depth_at", "gap_width", "gap_mass_ratio", "gap_planet_mass", "kanagawa_validity", "gaps_of",
    "Gap", "GapRelationWarning",
]
