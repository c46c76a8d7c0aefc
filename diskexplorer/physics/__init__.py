"""Pure physics: Planck function, star, rings, opacities, parameter declarations. No I/O, no widgets."""
from .opacity import KappaTable, Opacity, PowerLawOpacity, as_opacity, register_opacity_resolver
from .parameters import ParameterSpec, parameter_specs
from .planck import planck_lambda, planck_nu
from .ring import Ring
from .star import PhotosphereTable, Star

__all__ = [
    "planck_nu", "planck_lambda", "Star", "PhotosphereTable", "Ring",
    "Opacity", "KappaTable", "PowerLawOpacity", "as_opacity", "register_opacity_resolver",
    "ParameterSpec", "parameter_specs",
]
