"""Equilibrium rings through the tool: parameter paths, starting points, refinement, sessions."""
import json
from dataclasses import replace

import numpy as np
import pytest

import diskexplorer.dust  # noqa: F401
from diskexplorer import Ring, Scene, Star, export_start, read_start, refine
from diskexplorer.fitting.scene_codec import scene_entries, scene_from_entries
from diskexplorer.errors import SeedError
from diskexplorer.fitting.paths import canonical_path, get_value, parameter_paths, set_values
from diskexplorer.fitting.vector import free_parameters


def _scene(inner_edge="sublimation"):
    rim = Ring(r_in=0.2, r_out=3.0, sigma_in=1e-3, dust={"olivine_glass": 0.7, "iron": 0.3},
               temperature_mode="equilibrium", inner_edge=inner_edge, sublimation={"iron": 1850.0}, name="rim")
    outer = Ring(r_in=4.0, r_out=8.0, t_in=300.0, dust="olivine_glass", name="outer")
    return Scene(distance=140.0, star=Star(t_eff=7500.0, luminosity=20.0), rings=[rim, outer],
                 inclination=30.0, position_angle=40.0)


def test_sublimation_temperatures_have_paths_in_equilibrium_rings_only():
    scene = _scene()
    paths = parameter_paths(scene)
    assert "rings.0.sublimation.iron" in paths and "rings.0.sublimation.olivine_glass" in paths
    assert not any(p.startswith("rings.1.sublimation") for p in paths)
    assert canonical_path(scene, "rings[rim].sublimation.iron") == "rings.0.sublimation.iron"
    assert get_value(scene, "rings.0.sublimation.iron") == 1850.0
    assert get_value(scene, "rings.0.sublimation.olivine_glass") == 1500.0
    moved = set_values(scene, {"rings.0.sublimation.olivine_glass": 1400.0})
    assert dict(moved.rings[0].sublimation) == {"iron": 1850.0, "olivine_glass": 1400.0}
    with pytest.raises(SeedError, match="rings.1.sublimation.iron: ring 1 has no sublimation temperature"):
        canonical_path(scene, "rings.1.sublimation.iron")
    with pytest.raises(SeedError, match="forsterite"):
        canonical_path(scene, "rings.0.sublimation.forsterite")


def test_unused_parameters_of_equilibrium_rings_cannot_be_free():
    scene = _scene()
    with pytest.raises(SeedError, match="rings.0.t_in: ring 'rim' takes its temperatures"):
        free_parameters(scene, ["rings.0.t_in"])
    with pytest.raises(SeedError, match="rings.0.r_in: ring 'rim' has its inner edge at the sublimation front"):
        free_parameters(scene, ["rings.0.r_in"])
    fp = free_parameters(scene, ["rings.0.sublimation.iron", "rings.1.t_in"])
    assert [f.unit for f in fp] == ["K", "K"]


def test_starting_point_round_trip_keeps_temperature_settings(tmp_path):
    scene = _scene()
    doc = export_start(scene, free=["rings.0.sublimation.iron", "rings.0.sigma_in"])
    ring = doc["scene"]["rings"][0]
    assert ring["temperature_mode"] == "equilibrium" and ring["inner_edge"] == "sublimation"
    assert ring["sublimation"]["iron"]["value"] == 1850.0 and ring["sublimation"]["iron"]["free"]
    assert ring["sublimation_front"]["unit"] == "au"
    assert ring["sublimation_front"]["value"] == pytest.approx(scene.rings[0].sublimation_front(scene.star))
    # a power-law ring's entry is as before: no temperature keys
    assert not {"temperature_mode", "inner_edge", "sublimation"} & set(doc["scene"]["rings"][1])
    path = tmp_path / "start.json"
    path.write_text(json.dumps(doc))
    start = read_start(path)
    # the document records every species' temperature, defaults included, so they come back explicit
    got = start.scene.rings[0]
    assert got.sublimation_temperatures() == {"iron": 1850.0, "olivine_glass": 1500.0}
    assert replace(got, sublimation=()) == replace(scene.rings[0], sublimation=())
    assert start.scene.rings[1] == scene.rings[1]
    assert sorted(f.path for f in start.free) == ["rings.0.sigma_in", "rings.0.sublimation.iron"]
    lam = np.geomspace(1.5, 13.0, 20)
    np.testing.assert_array_equal(start.scene.sed(lam), scene.sed(lam))


def test_starting_point_refuses_sublimation_of_unknown_species():
    doc = export_start(_scene())
    doc["scene"]["rings"][0]["sublimation"]["carbon"] = dict(doc["scene"]["rings"][0]["sublimation"]["iron"])
    with pytest.raises(SeedError, match="rings.0.sublimation.carbon: the ring's dust has no such species"):
        read_start(doc)
    doc = export_start(_scene())
    doc["scene"]["rings"][0]["temperature_mode"] = "radiative"
    with pytest.raises(SeedError, match="temperature_mode"):
        read_start(doc)


def test_refine_moves_a_sublimation_temperature():
    # Truth: olivine glass sublimates at 1300 K in a ring with a fixed inner radius; start at 1500 K.
    truth = _scene(inner_edge="fixed").with_ring(0, sublimation={"iron": 1850.0, "olivine_glass": 1300.0})
    start = truth.with_ring(0, sublimation={"iron": 1850.0, "olivine_glass": 1500.0})
    lam = np.geomspace(1.5, 13.0, 40)
    import xarray as xr
    flux = truth.sed(lam)
    phot = xr.Dataset({"flux": ("point", flux), "flux_err": ("point", 0.01 * flux),
                       "upper_limit": ("point", np.zeros(lam.size, bool))},
                      coords={"wavelength": ("point", lam), "band": ("point", [f"b{k}" for k in range(lam.size)])})
    try:
        result = refine(start, {"photometry": phot}, free=["rings.0.sublimation.olivine_glass"])
    except Exception as exc:  # the photometry layout is the lead's; say what went wrong
        pytest.fail(f"refine on synthetic photometry failed: {exc}")
    assert get_value(result.scene, "rings.0.sublimation.olivine_glass") == pytest.approx(1300.0, rel=2e-3)


def _photometry_of(scene, lam):
    import xarray as xr

    flux = scene.sed(lam)
    return xr.Dataset({"flux": ("point", flux), "flux_err": ("point", 0.01 * flux),
                       "upper_limit": ("point", np.zeros(lam.size, bool))},
                      coords={"wavelength": ("point", lam), "band": ("point", [f"b{k}" for k in range(lam.size)])})


def test_scan_over_a_sublimation_temperature_finds_the_truth():
    from diskexplorer.fitting.scan import scan_grid

    truth = _scene(inner_edge="fixed").with_ring(0, sublimation={"iron": 1850.0, "olivine_glass": 1300.0})
    phot = _photometry_of(truth, np.geomspace(1.5, 13.0, 30))
    grid = scan_grid(truth.with_ring(0, sublimation={"iron": 1850.0}), {"photometry": phot},
                     [("rings.0.sublimation.olivine_glass", [1200.0, 1300.0, 1400.0, 1500.0]),
                      ("rings.0.sigma_in", [5e-4, 1e-3, 2e-3])], scheduler="serial")
    chi2 = np.asarray(grid["chi2"].values)
    best = np.unravel_index(np.nanargmin(chi2), chi2.shape)
    assert best == (1, 1)
    assert np.nanmin(chi2) < 1e-6


def test_session_round_trip_keeps_temperature_settings():
    scene = _scene()
    restored = scene_from_entries(json.loads(json.dumps(scene_entries(scene))))[0]
    assert restored.rings == scene.rings
    assert "temperature_mode" not in scene_entries(scene)["rings"][1]
