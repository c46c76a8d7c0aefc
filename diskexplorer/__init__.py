"""diskexplorer: live forward models of the inner regions of planet-forming disks.

The headless core (physics, dust, observables, data, fitting) imports no widget
library; ``diskexplorer.explore`` loads the application lazily.
"""
__version__ = "0.1.0"

# errors
from .errors import DataError, DiskExplorerError, DustError, ParameterError, SeedError

# model
from .physics import KappaTable, PhotosphereTable, PowerLawOpacity, Ring, Star, planck_nu
from .observables import Scene

# observables
from .observables import (
    Evaluator,
    model_image,
    normalized_silicate_band,
    radial_profiles,
)

__all__ = [
    # errors
    "DiskExplorerError", "ParameterError", "DataError", "DustError", "SeedError",
    # model
    "Star", "Ring", "Scene", "PhotosphereTable", "KappaTable", "PowerLawOpacity", "planck_nu",
    # observables
    "Evaluator", "model_image", "radial_profiles", "normalized_silicate_band",
]
