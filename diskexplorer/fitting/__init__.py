"""Judging and seeding: χ² against data, starting points for formal fits, refinement, scans."""
from .comparison import DATA_KINDS, Comparison, ComparisonResult

# starting points
from .data_description import DataDescription
from .paths import canonical_path, parameter_paths
from .priors import Prior
from .probability import make_log_probability
from .snippet import make_snippet
from .start_document import export_start, write_start
from .start_import import StartingPoint, read_start
from .start_schema import SCHEMA_ID, load_schema
from .vector import (FreeParameter, free_parameters, initial_walkers, log_prior, scene_from_vector,
                     vector_from_scene)

# refinement
from .refine import RefineResult, refine

# composition
from .composition import (AlternativesResult, CompositionResult, DropOneResult, compare_alternatives, drop_one,
                          solve_composition, swap_alternatives)

# grid scans
from .scan import axis_values, best_point, confidence_levels, scan_grid, write_scan

__all__ = [
    "Comparison", "ComparisonResult", "DATA_KINDS",
    # starting points
    "export_start", "write_start", "read_start", "StartingPoint", "FreeParameter", "Prior",
    "DataDescription", "SCHEMA_ID", "load_schema", "parameter_paths", "canonical_path",
    "free_parameters", "vector_from_scene", "scene_from_vector", "log_prior", "initial_walkers",
    "make_log_probability", "make_snippet",
    # refinement
    "refine", "RefineResult",
    # composition
    "solve_composition", "CompositionResult", "drop_one", "DropOneResult", "compare_alternatives",
    "AlternativesResult", "swap_alternatives",
    # grid scans
    "scan_grid", "best_point", "confidence_levels", "write_scan", "axis_values",
]
