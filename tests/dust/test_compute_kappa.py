"""κ of any grain size or shape from the shipped optical constants (dust.compute_kappa).

References: the committed library (at tabulated sizes the call must reproduce its rows) and,
at a size the library lacks, a direct Mie calculation with miepython (Prahl,
``miepython.efficiencies_mx``; m = n − ik in its convention, CHECK_VALUES §1.1) from n and k read
here with numpy from the same packaged files (sources: diskexplorer/dust/lab_constants/README.md).
"""
import numpy as np
import pytest

import diskexplorer
import diskexplorer.dust as dust
from _reference import lab_constants_dir
from diskexplorer.dust import (DustMix, PowerLawSizes, compute_kappa, compute_kappa_table,
                               get_library, register_species, unregister_species)
from diskexplorer.dust.catalogue import CATALOGUE, K_FLOOR
from diskexplorer.errors import DustError
from diskexplorer.physics import KappaTable, Ring
from diskexplorer.physics.opacity import as_opacity

# One float32 step (2**-23): Mie and CDE rows of the committed table are the float64 values
# rounded to float32 (measured: a rebuild here reproduced every Mie and CDE row bit for bit).
F32 = 2.0 ** -23
# DHS rows of nearly transparent silicates (k at the floor, 0.3–4 µm) differ by up to 8.7e-6
# between machines (measured: rebuild here against the committed table; Gauss–Legendre nodes and
# cancellation in the coated sphere), so DHS is compared at 1e-5, as in tests/dust/test_library.py.
DHS_RTOL = 1e-5


@pytest.mark.parametrize("name, shape, size, rtol", [
    ("forsterite", "mie", 1.5, F32),
    ("astronomical_silicate", "mie", 5.0, F32),
    ("amorphous_carbon", "mie", 0.1, F32),
    ("olivine_glass", "cde", None, F32),
    ("forsterite", "cde", None, F32),
    ("pyroxene_glass", "dhs", 0.3, DHS_RTOL),
    ("forsterite", "dhs", 3.0, DHS_RTOL),
    ("iron", "dhs", 1.0, DHS_RTOL),
])
def test_tabulated_size_reproduces_the_library_row(name, shape, size, rtol):
    lib = get_library()
    k = compute_kappa(name, grain_size=size if size is not None else 0.1, shape=shape,
                      wavelength=lib.wavelength)
    np.testing.assert_allclose(k, lib.row(name, shape, size), rtol=rtol, atol=0)
    # Default wavelengths: the library grid.
    if shape == "cde":
        np.testing.assert_array_equal(compute_kappa(name, shape="cde"), k)


def test_cde_ignores_the_grain_size():
    lam = np.array([9.0, 11.3, 20.0])
    np.testing.assert_array_equal(compute_kappa("forsterite", 3.7, "cde", lam),
                                  compute_kappa("forsterite", 0.1, "cde", lam))


def _nk_at_nodes(filename):
    """(λ, n, k) rows of a packaged three-column file, read with numpy alone."""
    data = np.loadtxt(lab_constants_dir() / filename, comments="#")
    return data[:, 0], data[:, 1], data[:, 2]


def _direct_mie_kappa(files, density, radius_um, lam):
    """κ_abs (cm² g⁻¹) of spheres, axes averaged 1/3 each, straight from miepython."""
    import miepython
    total = np.zeros(lam.size)
    for name in files:
        wl, n, k = _nk_at_nodes(name)
        idx = np.searchsorted(wl, lam)
        assert np.allclose(wl[idx], lam, rtol=0, atol=1e-12)  # file nodes: no interpolation
        m = n[idx] - 1j * np.maximum(k[idx], K_FLOOR)         # miepython wants n − ik
        x = 2 * np.pi * radius_um / lam
        qext, qsca, _qback, _g = miepython.efficiencies_mx(m, x)
        q_abs = np.asarray(qext) - np.asarray(qsca)
        total += 3 * q_abs / (4 * radius_um * 1e-4)          # C_abs/V = 3 Q_abs / (4a), cm⁻¹
    return total / len(files) / density


def test_untabulated_size_matches_direct_miepython_single_material():
    recipe = CATALOGUE["astronomical_silicate"]
    assert 3.7 not in get_library().sizes("astronomical_silicate", "mie")
    wl, _, _ = _nk_at_nodes("astrosilicate_draine2003.txt")
    lam = wl[(wl >= 1.0) & (wl <= 60.0)][::25]
    expect = _direct_mie_kappa(["astrosilicate_draine2003.txt"], recipe.density, 3.7, lam)
    got = compute_kappa("astronomical_silicate", grain_size=3.7, shape="mie", wavelength=lam)
    np.testing.assert_allclose(got, expect, rtol=1e-12)


def test_untabulated_size_matches_direct_miepython_three_crystal_axes():
    recipe = CATALOGUE["forsterite"]
    files = [spec[1] for spec in recipe.inputs]
    wl, _, _ = _nk_at_nodes(files[0])
    lam = wl[(wl >= 8.0) & (wl <= 40.0)][::17]
    expect = _direct_mie_kappa(files, recipe.density, 3.7, lam)
    got = compute_kappa("forsterite", grain_size=3.7, shape="mie", wavelength=lam)
    np.testing.assert_allclose(got, expect, rtol=1e-12)
    # A real change of size: 3.7 µm spheres differ from the tabulated 3 and 5 µm ones.
    for size in (3.0, 5.0):
        assert np.max(np.abs(compute_kappa("forsterite", size, "mie", lam) / got - 1)) > 0.02


def test_size_distribution_is_the_mass_weighted_mean():
    sizes = PowerLawSizes(0.2, 2.0, p=3.5, n_sizes=4)
    lam = np.array([2.2, 9.8, 11.3, 25.0])
    radii, weights = sizes.radii_and_mass_weights()
    expect = sum(w * compute_kappa("olivine_glass", a, "mie", lam) for a, w in zip(radii, weights))
    np.testing.assert_allclose(compute_kappa("olivine_glass", sizes, "mie", lam), expect, rtol=1e-12)


def test_wavelength_shape_is_kept():
    lam = np.array([[9.0, 10.0], [11.0, 12.0]])
    k = compute_kappa("forsterite", 0.1, "cde", lam)
    assert k.shape == (2, 2)
    np.testing.assert_array_equal(k.ravel(), compute_kappa("forsterite", 0.1, "cde", lam.ravel()))
    assert np.ndim(compute_kappa("forsterite", 0.1, "cde", 10.0)) == 0


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(species="forstrite"), r"species 'forstrite' is not a built-in species; known: .*forsterite"),
    (dict(species=None), r"species None is not a built-in"),
    (dict(species="forsterite", shape="sphere"), r"shape 'sphere' is not one of cde, mie, dhs"),
    (dict(species="forsterite", grain_size=-1.0, shape="mie"), r"grain_size -1.0 µm"),
    (dict(species="forsterite", grain_size=0, shape="dhs"), r"grain_size 0 µm"),
    (dict(species="forsterite", grain_size=float("nan"), shape="mie"), r"grain_size nan µm"),
    (dict(species="forsterite", grain_size="big", shape="mie"), r"grain_size 'big' is not a radius"),
    (dict(species="forsterite", wavelength=[10.0, -1.0]), r"wavelengths must be finite and > 0 µm \(got -1.0\)"),
    (dict(species="forsterite", wavelength=[]), r"none given"),
    # Outside the data: the metallic-iron constants start at 0.188 µm (Johnson & Christy splice).
    (dict(species="iron", wavelength=[0.1, 1.0]), r"iron.*0.1 µm"),
])
def test_bad_input_is_a_dust_error_naming_the_value(kwargs, pattern):
    with pytest.raises(DustError, match=pattern):
        compute_kappa(**kwargs)


def test_user_species_name_points_to_species_kappa(tmp_path):
    nk = tmp_path / "grey.nk"
    nk.write_text("".join(f"{l:.6g} 1.5 0.1\n" for l in np.geomspace(0.2, 200.0, 50)))
    try:
        register_species("test_ck_grey", nk=nk, density=3.0)
        with pytest.raises(DustError, match="'test_ck_grey' is not a built-in.*user species.*species_kappa"):
            compute_kappa("test_ck_grey")
    finally:
        unregister_species("test_ck_grey")


def test_table_feeds_a_ring_and_a_mixture():
    tab = compute_kappa_table("forsterite", grain_size=3.7, shape="mie")
    assert isinstance(tab, KappaTable)
    assert tab.label == "forsterite (MIE 3.7 µm)" and "FOR2285" in tab.source
    lam = get_library().wavelength
    np.testing.assert_allclose(tab.kappa(lam[::50]), compute_kappa("forsterite", 3.7, "mie", lam[::50]),
                               rtol=1e-12)
    # A ring takes the table as its dust.
    assert as_opacity(tab) is tab
    ring = Ring(dust=tab)
    assert ring.dust is tab
    # Registered as a species, it mixes with library species of another size and shape.
    try:
        register_species("test_ck_forsterite_3p7", kappa=tab, source=tab.source)
        mix = DustMix({"test_ck_forsterite_3p7": 0.3, "olivine_glass": 0.7}, grain_size=1.5, shape="dhs")
        expect = 0.3 * tab.kappa(lam) + 0.7 * get_library().row("olivine_glass", "dhs", 1.5)
        np.testing.assert_allclose(mix.kappa_on_grid(), expect, rtol=1e-12)
    finally:
        unregister_species("test_ck_forsterite_3p7")


def test_table_labels_for_cde_and_distributions():
    assert compute_kappa_table("olivine_glass", shape="cde", wavelength=[5.0, 10.0]).label == "olivine_glass (CDE)"
    tab = compute_kappa_table("olivine_glass", PowerLawSizes(0.1, 1.0, n_sizes=2), "mie", [5.0, 10.0])
    assert tab.label == "olivine_glass (MIE a^-3.5 on 0.1–1 µm)"
    assert compute_kappa_table("iron", 0.5, "dhs", [5.0, 10.0], label="mine").label == "mine"


def test_public_api():
    for name in ("compute_kappa", "compute_kappa_table"):
        assert name in diskexplorer.__all__ and name in dust.__all__
        assert getattr(diskexplorer, name) is getattr(dust, name)
    assert "species_constants" in dust.__all__
    # The constants are loaded once and are those of the build (k floored).
    axes = dust.species_constants("forsterite")
    assert len(axes) == 3 and axes is dust.species_constants("forsterite")
    assert all(np.all(oc.k >= K_FLOOR) for oc in axes)
