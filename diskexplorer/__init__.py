"""diskexplorer: live forward models of the inner regions of planet-forming disks.

The headless core (physics, dust, observables, data, fitting) imports no widget
library; ``diskexplorer.explore`` loads the application lazily.
"""
__version__ = "0.1.0"

# errors
from .errors import DataError, DiskExplorerError, DustError, ParameterError, SeedError

# model (importing dust registers species names and mixtures as ring opacities)
from . import dust  # noqa: F401 - importing it registers the species
from .dust import DustMix, compute_kappa, compute_kappa_table
from .physics import KappaTable, PhotosphereTable, PowerLawOpacity, Ring, Star, planck_nu
from .observables import Scene

# observables
from .observables import (
    Evaluator,
    Observer,
    model_image,
    model_silicate_band,
    normalized_silicate_band,
    radial_profiles,
)

# data
from .data import ObservationSet, read_oifits, read_photometry, read_spectrum, write_oifits

# judging against data, seeding fits
from .fitting import (Comparison, RefineResult, StartingPoint, compare_alternatives, drop_one, export_start,
                      make_snippet, read_start, refine, scan_grid, solve_composition, write_start)
from .physics import gaps_of, sublimation_radius


# reports
from .report import EvaluationReport, evaluate


def explore(data=None, scene=None, **kwargs):
    """Open the explorer application (imports the widget layer on first use).

    See :func:`diskexplorer.app.explore`.
    """
    from .app import explore as _explore

    return _explore(data=data, scene=scene, **kwargs)

__all__ = [
    # errors
    "DiskExplorerError", "ParameterError", "DataError", "DustError", "SeedError",
    # model
    "Star", "Ring", "Scene", "DustMix", "compute_kappa", "compute_kappa_table", "PhotosphereTable",
    "KappaTable", "PowerLawOpacity", "planck_nu",
    # observables
    "Evaluator", "Observer", "model_image", "radial_profiles", "normalized_silicate_band",
    "model_silicate_band",
    # data
    "ObservationSet", "read_oifits", "write_oifits", "read_photometry", "read_spectrum",
    # judging, exploring
    "Comparison", "explore",
    # seeding fits
    "export_start", "write_start", "read_start", "StartingPoint", "make_snippet", "refine", "RefineResult",
    "scan_grid",
    # dust composition
    "solve_composition", "drop_one", "compare_alternatives",
    # derived quantities
    "sublimation_radius", "gaps_of",
    # reports
    "evaluate", "EvaluationReport",
]
