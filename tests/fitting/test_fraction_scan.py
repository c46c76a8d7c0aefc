"""A scan axis over a mass fraction: the others rescale proportionally, and the result says so.

Source: the rule is ours (diskexplorer/fitting/paths.py set_values Notes, scan.py
FRACTION_RULE); the data are a noise-free synthetic spectrum of our own forward model
(COMPUTED), so the true fraction is the grid's minimum.
"""
import numpy as np
import pytest
import xarray as xr

from diskexplorer import Ring, Scene, Star
from diskexplorer.data import photometry_dataset
from diskexplorer.dust import DustMix
from diskexplorer.errors import ParameterError
from diskexplorer.fitting import Comparison
from diskexplorer.fitting.paths import set_values
from diskexplorer.fitting.scan import FRACTION_RULE, best_point, scan_grid, write_scan


def _scene(fractions):
    return Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0), rings=[
        Ring(r_in=0.5, r_out=2.0, t_in=900.0, q=0.5, sigma_in=1e-5, dust=DustMix(fractions), name="inner")],
        inclination=30.0)


def test_a_fraction_axis_rescales_the_others_and_says_so(tmp_path):
    truth = _scene({"olivine_glass": 0.5, "forsterite": 0.3, "iron": 0.2})
    wl = np.linspace(7.5, 13.5, 25)   # µm
    flux = truth.sed(wl)
    comparison = Comparison(None, photometry_dataset(wl, flux, 0.01 * flux))
    start = set_values(truth, {"rings.0.dust.iron": 0.4})   # others 0.5:0.3 kept in ratio
    axes = {"rings.0.dust.iron": [0.1, 0.2, 0.3, 0.4], "rings.0.t_in": [800.0, 900.0]}
    ds = scan_grid(start, comparison, axes)
    # each grid point equals the χ² of set_values at that point (the proportional rule)
    for i, f in enumerate(axes["rings.0.dust.iron"]):
        expected = comparison.compare(set_values(start, {"rings.0.dust.iron": f, "rings.0.t_in": 900.0})).total
        assert ds["chi2"].values[i, 1] == pytest.approx(expected, rel=1e-12)
    best = best_point(ds)
    assert best["rings.0.dust.iron"] == 0.2 and best["rings.0.t_in"] == 900.0
    assert best["chi2"] < 1e-20            # the truth: olivine 0.5, forsterite 0.3 again
    assert ds.attrs["fraction_rule"] == FRACTION_RULE
    assert ds["rings_0_dust_iron"].attrs["comment"] == FRACTION_RULE
    assert "proportionally" in FRACTION_RULE
    path = write_scan(ds, tmp_path / "scan.nc")
    with xr.open_dataset(path) as back:
        assert back.attrs["fraction_rule"] == FRACTION_RULE
        assert back["rings_0_dust_iron"].attrs["comment"] == FRACTION_RULE


def test_other_scans_carry_no_fraction_rule():
    truth = _scene({"olivine_glass": 0.5, "forsterite": 0.5})
    wl = np.linspace(8.0, 12.0, 5)
    flux = truth.sed(wl)
    ds = scan_grid(truth, Comparison(None, photometry_dataset(wl, flux, 0.01 * flux)),
                   {"rings.0.t_in": [800.0, 900.0]})
    assert "fraction_rule" not in ds.attrs


def test_a_fraction_axis_needs_another_component():
    scene = _scene({"iron": 1.0})
    wl = np.linspace(8.0, 12.0, 5)
    flux = scene.sed(wl)
    with pytest.raises(ParameterError, match="no other component"):
        scan_grid(scene, Comparison(None, photometry_dataset(wl, flux, 0.01 * flux)),
                  {"rings.0.dust.iron": [0.2, 0.5]})
