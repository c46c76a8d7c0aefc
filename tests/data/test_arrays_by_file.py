"""Two station tables under one ARRNAME (two configurations, two nights) stay apart.

Files written with the project's writer for the invented sample array: one night in the
sample's configuration, another with the pads of station Q02 and Q03 moved (a new
configuration of the same array name).
"""
import numpy as np
import pytest

from diskexplorer.data import ObservationSet, read_oifits, write_oifits
from diskexplorer.data.observations import baseline_lengths
from diskexplorer.fitting import Comparison
from diskexplorer.sample import STATIONS, demo_scene, simulate_observations


@pytest.fixture(scope="module")
def nights(tmp_path_factory):
    folder = tmp_path_factory.mktemp("two_configurations")
    first = simulate_observations(demo_scene())["QT-HK"]
    moved = {name: (e + 40.0, n - 25.0, u) if name in ("Q02", "Q03") else (e, n, u)
             for name, (e, n, u) in STATIONS.items()}
    # Same array name, other stations: re-simulated from the same scene with moved pads.
    second = ObservationSet.from_arrays(
        vis2=dict(u=first.vis2["u"].values * 1.3, v=first.vis2["v"].values * 0.8,
                  wavelength=first.vis2["wavelength"].values, bandwidth=first.vis2["bandwidth"].values,
                  vis2=first.vis2["vis2"].values, vis2_err=first.vis2["vis2_err"].values,
                  mjd=first.vis2["mjd"].values + 1.0, sta_index1=first.vis2["sta_index1"].values,
                  sta_index2=first.vis2["sta_index2"].values),
        insname="QT-HK", arrname="QUARTET", target="Aurelis", stations=moved, diameter=1.8)
    a, b = folder / "night_1.fits", folder / "night_2.fits"
    write_oifits(a, first)
    write_oifits(b, second)
    return a, b


def test_reading_both_keeps_both_station_tables(nights):
    obs = read_oifits(list(nights))
    assert set(obs.arrays) == {"QUARTET", "QUARTET~2"}
    names = set(np.asarray(obs.vis2["arrname"].values).astype(str))
    assert names == {"QUARTET", "QUARTET~2"}
    assert not obs.arrays["QUARTET"].equals(obs.arrays["QUARTET~2"])
    # the same file twice shares one table
    twice = read_oifits([nights[0], nights[0]])
    assert set(twice.arrays) == {"QUARTET"}


def test_a_combined_set_is_judged_filtered_and_written(nights, tmp_path):
    with pytest.warns(UserWarning, match="kept apart as 'QUARTET~2'"):
        combined = ObservationSet.concat([read_oifits(nights[0]), read_oifits(nights[1])])
    result = Comparison(combined).compare(demo_scene())
    assert result.npoints["vis2"] == combined.n_points("vis2")
    short = combined.select_baseline(0.0, 60.0)
    assert 0 < short.n_points("vis2") < combined.n_points("vis2")
    path = tmp_path / "both_nights.fits"
    write_oifits(path, combined)
    back = read_oifits(path)
    assert set(back.arrays) == {"QUARTET", "QUARTET~2"}
    assert back.n_points("vis2") == combined.n_points("vis2")
    np.testing.assert_allclose(np.sort(baseline_lengths(back.vis2)), np.sort(baseline_lengths(combined.vis2)))
