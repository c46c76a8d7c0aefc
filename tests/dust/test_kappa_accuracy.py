"""κ read from the committed library against a direct calculation at the laboratory wavelengths.

The direct calculations use the same optical constants (the shipped files, through
``species_constants``) at each tabulated wavelength in 2–40 µm, where narrow bands of
crystalline forsterite and kinks of the glass data sit:

* Mie: miepython's ``efficiencies_mx`` called here directly (S. Prahl, miepython,
  https://github.com/scottprahl/miepython; its convention m = n − ik), with
  κ = 3 Q_abs / (4 ρ a): the efficiency is Q = C / (π a²) (Bohren & Huffman 1983,
  ch. 4 — FROM MEMORY for the chapter) per grain of mass ρ 4πa³/3;
* CDE and DHS: :func:`diskexplorer.dust.compute_kappa` at those wavelengths, which calls
  the project's ``cde.py`` and ``coated.py`` (checked against published formulas in
  tests/dust/test_cde.py and tests/dust/test_mie.py) and never reads the table.

Crystal axes are averaged 1/3 each, as the library does. Required: max relative error
≤ 2 % (issue 14), peaks included.
"""
import numpy as np
import pytest

from diskexplorer.dust import DustMix, compute_kappa, get_library, species_constants
from diskexplorer.dust.catalogue import CATALOGUE
from diskexplorer.dust.grid import LAB_NODE_RANGE, regular_wavelength_grid

TOLERANCE = 0.02
_UM_TO_CM = 1e-4


def _lab_wavelengths(species):
    lam = np.unique(np.concatenate([np.asarray(oc.wavelength, float) for oc in species_constants(species)]))
    return lam[(lam >= 2.0) & (lam <= 40.0)]


def _library_kappa(species, shape, size, wavelength):
    return DustMix({species: 1.0}, grain_size=size if size is not None else 0.1, shape=shape).kappa(wavelength)


def _miepython_kappa(species, radius):
    """κ_abs (cm² g⁻¹) at the laboratory wavelengths from miepython directly, axes 1/3 each."""
    import miepython
    lam = _lab_wavelengths(species)
    kappa = np.zeros_like(lam)
    axes = species_constants(species)
    for oc in axes:
        w = np.asarray(oc.wavelength, float)
        inside = np.isin(w, lam)
        assert np.array_equal(w[inside], lam), "axes tabulated on different wavelengths"
        m = np.asarray(oc.n, float)[inside] - 1j * np.asarray(oc.k, float)[inside]  # Prahl: n − ik
        x = 2.0 * np.pi * radius / lam
        qext, qsca, _qback, _g = miepython.efficiencies_mx(m, x)
        q_abs = np.asarray(qext, float) - np.asarray(qsca, float)
        kappa += 3.0 * q_abs / (4.0 * CATALOGUE[species].density * radius * _UM_TO_CM) / len(axes)
    return lam, kappa


def _max_relative_error(got, expect):
    rel = np.abs(got / expect - 1.0)
    i = int(np.argmax(rel))
    return rel[i], i


def test_laboratory_wavelengths_are_library_nodes():
    lib = get_library()
    assert LAB_NODE_RANGE == (2.0, 40.0)
    for species in CATALOGUE:
        lam = _lab_wavelengths(species)
        assert lam.size > 20, species
        missing = lam[~np.isin(lam, lib.wavelength)]
        assert missing.size == 0, f"{species}: {missing.size} laboratory wavelengths not in the grid"


@pytest.mark.parametrize("radius", [0.1, 1.5])
def test_forsterite_mie_against_miepython_directly(radius):
    lam, expect = _miepython_kappa("forsterite", radius)
    assert lam.size > 1000
    got = _library_kappa("forsterite", "mie", radius, lam)
    err, i = _max_relative_error(got, expect)
    assert err <= TOLERANCE, f"max |Δκ/κ| = {err:.3%} at {lam[i]} µm"
    # The band peaks themselves, where interpolation between coarse nodes lost up to 19%.
    for peak in (9.73, 10.87, 10.89, 33.56):
        j = int(np.argmin(np.abs(lam - peak)))
        assert abs(got[j] / expect[j] - 1.0) <= TOLERANCE, (peak, lam[j])


@pytest.mark.parametrize("species, shape, size", [
    ("forsterite", "cde", None),
    ("pyroxene_glass", "cde", None),
    ("forsterite", "dhs", 1.0),
])
def test_library_against_direct_cde_and_dhs(species, shape, size):
    lam = _lab_wavelengths(species)
    expect = compute_kappa(species, grain_size=size if size is not None else 0.1, shape=shape, wavelength=lam)
    got = _library_kappa(species, shape, size, lam)
    err, i = _max_relative_error(got, expect)
    assert err <= TOLERANCE, f"{species} {shape}: max |Δκ/κ| = {err:.3%} at {lam[i]} µm"


@pytest.mark.parametrize("species", sorted(CATALOGUE))
def test_every_species_cde_at_its_laboratory_wavelengths(species):
    lam = _lab_wavelengths(species)
    expect = compute_kappa(species, shape="cde", wavelength=lam)
    err, i = _max_relative_error(_library_kappa(species, "cde", None, lam), expect)
    assert err <= TOLERANCE, f"{species} CDE: max |Δκ/κ| = {err:.3%} at {lam[i]} µm"


@pytest.mark.parametrize("species, worst", [("forsterite", 0.10), ("pyroxene_glass", 0.10)])
def test_the_check_sees_a_regular_grid_flatten_bands(species, worst):
    # The comparison above can fail: κ tabulated on the regular grid alone and
    # interpolated linearly in log λ misses the laboratory bands by ~11% (issue 14).
    grid = regular_wavelength_grid()
    lam = _lab_wavelengths(species)
    coarse = compute_kappa(species, shape="cde", wavelength=grid)
    interp = np.interp(np.log(lam), np.log(grid), coarse)
    err, _ = _max_relative_error(interp, compute_kappa(species, shape="cde", wavelength=lam))
    assert err > worst


def test_grid_keeps_laboratory_nodes_exact_and_distinct_at_seven_digits():
    lam = get_library().wavelength
    assert lam[0] == 0.3 and lam[-1] == 100.0
    # Written with 7 significant digits (a κ table of `diskexplorer species --add`), the
    # grid must still increase strictly: regular nodes a hair from laboratory ones give way.
    written = np.array([float(f"{x:.6e}") for x in lam])
    assert np.all(np.diff(written) > 0)
    regular = regular_wavelength_grid()
    inside = (regular >= 2.0) & (regular <= 40.0)
    kept = np.isin(regular[inside], lam)
    assert 0.7 < kept.mean() < 1.0  # most regular nodes stay; those next to a laboratory node go
