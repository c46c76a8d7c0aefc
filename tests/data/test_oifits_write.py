"""OIFITS v2 writer: round trips, mandatory content, refusal to overwrite.

Mandatory keywords, columns and revisions: CHECK_VALUES §8.1–8.2 (CONFIRMED from Duvert,
Young & Hummel 2017, A&A 597, A8, Tables 2–8, and the co-author's library).
"""

import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.data import ObservationSet, read_oifits, validate_oifits, write_oifits
from diskexplorer.errors import DataError
from diskexplorer.testing import assert_observations_equal, make_observations, make_oifits

from _reference import oifits_path

GOOD = ["v1/Bin_Ary--MIRC_H.fits", "v1/testdata.fits", "v1/testdata2.fits",
        "v2/Alp_Vic--MIRC_H.fits", "v2/Bin_Ary--MIRC_H.fits", "v2/Mystery--AMBER--LowH.fits",
        "v2/bigtest2.fits"]


@pytest.mark.parametrize("keep_flagged", [False, True])
@pytest.mark.parametrize("rel", GOOD)
def test_reference_round_trip_is_lossless(tmp_path, rel, keep_flagged):
    original = read_oifits(oifits_path(rel), keep_flagged=keep_flagged)
    out = write_oifits(tmp_path / "copy.fits", original)
    again = read_oifits(out, keep_flagged=keep_flagged)
    assert_observations_equal(again, original)
    for name, tab in original.arrays.items():
        if name in again.arrays:
            assert again.arrays[name].equals(tab), name
    assert set(again.target_names) == set(original.target_names)
    for name in again.target_names:
        for key in ("raep0", "decep0"):
            assert again.targets[name][key] == original.targets[name][key]


def test_synthetic_round_trip_is_lossless(tmp_path):
    obs = make_observations(n_exposures=4, n_channels=12, include_vis=True, include_flux=True,
                            flag_fraction=0.2, seed=3)
    write_oifits(tmp_path / "s.fits", obs)
    back = read_oifits(tmp_path / "s.fits", keep_flagged=True)
    assert_observations_equal(back, obs)
    assert back.arrays["SIM_ARRAY"]["sta_name"].values.tolist() == ["ST1", "ST2", "ST3", "ST4"]
    assert back.targets["SIM-DISK-1"]["raep0"] == 83.0


def test_written_file_is_clean_v2(tmp_path):
    path = make_oifits(tmp_path, include_vis=True, include_flux=True)
    with fits.open(path) as hdul:
        assert validate_oifits(hdul, path) == []
        ph = hdul[0].header
        for key in ("ORIGIN", "DATE", "DATE-OBS", "CONTENT", "TELESCOP", "INSTRUME", "OBSERVER",
                    "OBJECT", "INSMODE"):
            assert key in ph
        assert ph["CONTENT"] == "OIFITS2"
        revn = {h.name: h.header["OI_REVN"] for h in hdul[1:]}
        assert revn == {"OI_TARGET": 2, "OI_ARRAY": 2, "OI_WAVELENGTH": 2, "OI_VIS2": 2, "OI_VIS": 2,
                        "OI_T3": 2, "OI_FLUX": 1}
        assert hdul["OI_T3"].columns["T3PHI"].unit == "deg"
        assert hdul["OI_WAVELENGTH"].columns["EFF_WAVE"].format == "E"
        assert hdul["OI_VIS2"].header["ARRNAME"] == "SIM_ARRAY"
        assert hdul["OI_FLUX"].header["CALSTAT"] == "C"
        assert all(h.verify_checksum() == 1 for h in hdul)


def test_refuses_to_overwrite(tmp_path):
    path = make_oifits(tmp_path)
    before = path.read_bytes()
    with pytest.raises(FileExistsError, match="overwrite=True"):
        write_oifits(path, make_observations(seed=1))
    assert path.read_bytes() == before
    write_oifits(path, make_observations(seed=1), overwrite=True)
    assert path.read_bytes() != before


def test_writes_datasets_and_mappings(tmp_path):
    obs = make_observations()
    write_oifits(tmp_path / "a.fits", {"vis2": obs.vis2, "t3": obs.t3})
    write_oifits(tmp_path / "b.fits", obs.vis2)
    assert read_oifits(tmp_path / "b.fits").n_points("t3") == 0
    assert read_oifits(tmp_path / "a.fits").n_points("t3") == obs.n_points("t3")
    with pytest.raises(DataError, match="nothing to write"):
        write_oifits(tmp_path / "c.fits", {})


def test_from_arrays_row_channel_and_flat_forms_agree():
    wave = np.array([2.0, 2.1, 2.2])
    v2 = np.array([[0.9, 0.8, 0.7], [0.5, 0.4, 0.3]])
    a = ObservationSet.from_arrays(vis2=dict(u=[10.0, 30.0], v=[5.0, -5.0], wavelength=wave,
                                             vis2=v2, vis2_err=np.full_like(v2, 0.01)))
    b = ObservationSet.from_arrays(vis2=dict(u=np.repeat([10.0, 30.0], 3), v=np.repeat([5.0, -5.0], 3),
                                             wavelength=np.tile(wave, 2), bandwidth=np.full(6, 0.1),
                                             vis2=v2.ravel(), vis2_err=np.full(6, 0.01)))
    assert_observations_equal(a, b, atol=1e-12)
    with pytest.raises(DataError, match="shape"):
        ObservationSet.from_arrays(vis2=dict(u=[1.0, 2.0, 3.0], v=[0.0, 0.0], wavelength=wave,
                                             vis2=v2, vis2_err=v2))
    with pytest.raises(DataError, match="lacks"):
        ObservationSet.from_arrays(vis2=dict(u=[1.0], wavelength=wave, vis2=v2[:1], vis2_err=v2[:1]))


def test_concatenated_sets_write_and_read_back(tmp_path):
    a = make_observations(seed=1, insname="INS_A")
    b = make_observations(seed=2, band="N", insname="INS_B")
    both = a + b
    write_oifits(tmp_path / "ab.fits", both)
    back = read_oifits(tmp_path / "ab.fits")
    assert_observations_equal(back, both)
    with fits.open(tmp_path / "ab.fits") as hdul:
        assert [h.header["INSNAME"] for h in hdul if h.name == "OI_WAVELENGTH"] == ["INS_A", "INS_B"]


def test_station_missing_from_array_refused(tmp_path):
    obs = ObservationSet.from_arrays(
        vis2=dict(u=[10.0], v=[0.0], wavelength=np.array([2.0]), vis2=[[0.5]], vis2_err=[[0.1]],
                  sta_index1=[1], sta_index2=[7]),
        stations={"A": (0, 0, 0), "B": (10, 0, 0)})
    with pytest.raises(DataError, match=r"station index\(es\) \[7\]"):
        write_oifits(tmp_path / "x.fits", obs)
