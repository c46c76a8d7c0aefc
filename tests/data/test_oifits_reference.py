"""OIFITS reader against the public OIFITS test files (tests/reference/oifits).

Source of the files: the public test suite of the OIFITS reference C library (see
tests/reference/oifits/README.md). Validation levels: CHECK_VALUES §8.4 (CONFIRMED from the
standard's co-author's conformity checker). Counts are checked against an independent,
direct astropy read of FLAG (CHECK_VALUES §8.3: T = flagged; behaviour CONFIRMED).
"""

import warnings

import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.data import OifitsWarning, read_oifits
from diskexplorer.errors import DataError

from _reference import oifits_dir, oifits_path

GOOD = ["v1/Bin_Ary--MIRC_H.fits", "v1/testdata.fits", "v1/testdata2.fits",
        "v2/Alp_Vic--MIRC_H.fits", "v2/Bin_Ary--MIRC_H.fits", "v2/Mystery--AMBER--LowH.fits",
        "v2/bigtest2.fits"]
BAD = ["v1/bad_neg_error.fits", "v2/bad_big_t3amp.fits", "v2/bad_checksum.fits",
       "v2/bad_dup_target.fits", "v2/bad_missing_array.fits", "v2/bad_missing_element.fits",
       "v2/bad_missing_target.fits", "v2/bad_neg_error.fits", "v2/bad_wave_reversed.fits"]
REFUSED = [b for b in BAD if b not in ("v2/bad_dup_target.fits", "v2/bad_wave_reversed.fits")]


def ref(rel):
    return oifits_path(rel)


def direct_unflagged(path, extname):
    """Unflagged channels of every table named extname, read with astropy alone."""
    total = 0
    with fits.open(path) as hdul:
        for hdu in hdul[1:]:
            if hdu.name == extname:
                total += int((~np.asarray(hdu.data["FLAG"], dtype=bool)).sum())
    return total


def test_every_reference_file_is_covered():
    found = {str(p.relative_to(oifits_dir())) for p in oifits_dir().rglob("*.fits")}
    assert found == set(GOOD) | set(BAD)


@pytest.mark.parametrize("rel", GOOD)
def test_reference_file_loads_completely(rel):
    path = ref(rel)
    with warnings.catch_warnings():
        warnings.simplefilter("error", OifitsWarning)  # a clean file must load without warnings
        obs = read_oifits(path)
    for kind, ext in (("vis2", "OI_VIS2"), ("t3", "OI_T3"), ("vis", "OI_VIS"), ("flux", "OI_FLUX")):
        assert obs.n_points(kind) == direct_unflagged(path, ext), kind
    assert obs.n_points("vis2") > 0


@pytest.mark.parametrize("rel", GOOD)
def test_reference_file_keep_flagged_counts_every_channel(rel):
    path = ref(rel)
    obs = read_oifits(path, keep_flagged=True)
    with fits.open(path) as hdul:
        for kind, ext in (("vis2", "OI_VIS2"), ("t3", "OI_T3")):
            total = sum(np.asarray(h.data["FLAG"]).size for h in hdul[1:] if h.name == ext)
            flagged = sum(int(np.asarray(h.data["FLAG"], bool).sum()) for h in hdul[1:] if h.name == ext)
            assert obs.n_points(kind) == total
            assert int(getattr(obs, kind)["flag"].sum()) == flagged


def test_values_units_and_links_match_direct_read():
    # Mystery--AMBER--LowH: one OI_VIS2 of 183 rows × 20 channels, 34 flagged.
    path = ref("v2/Mystery--AMBER--LowH.fits")
    obs = read_oifits(path)
    with fits.open(path) as hdul:
        v2 = hdul["OI_VIS2"].data
        wave = np.asarray(hdul["OI_WAVELENGTH"].data["EFF_WAVE"], float)
        keep = ~np.asarray(v2["FLAG"], bool)
        r, c = np.nonzero(keep)
        np.testing.assert_array_equal(obs.vis2["vis2"].values, v2["VIS2DATA"][r, c])
        np.testing.assert_array_equal(obs.vis2["vis2_err"].values, v2["VIS2ERR"][r, c])
        np.testing.assert_array_equal(obs.vis2["u"].values, v2["UCOORD"][r])
        np.testing.assert_array_equal(obs.vis2["v"].values, v2["VCOORD"][r])
        np.testing.assert_allclose(obs.vis2["wavelength"].values, wave[c] * 1e6, rtol=1e-12)  # m → µm
        np.testing.assert_array_equal(obs.vis2["mjd"].values, v2["MJD"][r])
        t3 = hdul["OI_T3"].data
        np.testing.assert_array_equal(obs.t3["t3phi"].values, t3["T3PHI"].ravel())
        np.testing.assert_array_equal(obs.t3["u2"].values, np.repeat(t3["U2COORD"], 20))
    assert set(obs.vis2["insname"].values) == {"AMBER"}
    assert set(obs.vis2["arrname"].values) == {"VLTI"}
    assert set(obs.vis2["target"].values) == {"Mystery"}
    # This file's T3AMP is NaN throughout (phase-only); the points are kept, values NaN.
    assert np.isnan(obs.t3["t3amp"].values).all()
    assert obs.vis2["wavelength"].attrs["units"] == "um"
    assert obs.t3["t3phi"].attrs["units"] == "deg"


def test_several_tables_arrays_and_targets_in_one_file():
    # bigtest2: two OI_ARRAY, two OI_WAVELENGTH, three targets, two OI_FLUX (CALSTAT U and C).
    obs = read_oifits(ref("v2/bigtest2.fits"))
    assert obs.instruments == ("CHARA_MIRC", "IOTA_IONIC_PICNIC")
    assert set(obs.arrays) == {"CHARA_2004Jan", "IOTA_2002Dec17"}
    assert obs.target_names == ("alp_ori", "alp_tau", "irc_+10216")
    assert set(obs.flux["calstat"].values) == {"U", "C"}
    assert set(obs.flux["flux_unit"].values) == {"Jy"}
    sel = read_oifits(ref("v2/bigtest2.fits"), target="ALP_TAU")  # case-insensitive
    assert sel.target_names == ("alp_tau",)
    for kind in ("vis2", "t3"):
        with fits.open(ref("v2/bigtest2.fits")) as hdul:
            tid = [int(r["TARGET_ID"]) for r in hdul["OI_TARGET"].data if r["TARGET"].strip() == "alp_tau"][0]
            ext = {"vis2": "OI_VIS2", "t3": "OI_T3"}[kind]
            expected = sum(int((~np.asarray(h.data["FLAG"], bool))[np.asarray(h.data["TARGET_ID"]) == tid].sum())
                           for h in hdul[1:] if h.name == ext)
        assert sel.n_points(kind) == expected


def test_many_files_at_once():
    paths = [ref(g) for g in GOOD]
    obs = read_oifits(paths)
    assert obs.n_points("vis2") == sum(direct_unflagged(p, "OI_VIS2") for p in paths)
    assert obs.n_points("t3") == sum(direct_unflagged(p, "OI_T3") for p in paths)
    assert len(obs.files) == len(paths)
    assert set(obs.vis2["file"].values) == {str(p) for p in paths}


@pytest.mark.filterwarnings("ignore::diskexplorer.data.OifitsWarning")
def test_unknown_target_refused():
    with pytest.raises(DataError, match="not found"):
        read_oifits(ref("v2/bigtest2.fits"), target="no_such_star")


# --- one test per bad file; each names the defect the file carries ---------------------

def refused_message(rel):
    with pytest.raises(DataError) as info:
        read_oifits(ref(rel))
    msg = str(info.value)
    assert rel.split("/")[-1] in msg  # names the file
    return msg


def test_bad_neg_error_v1_refused():
    msg = refused_message("v1/bad_neg_error.fits")
    assert "OI_T3" in msg and "negative error bar T3PHIERR" in msg and "unflagged" in msg


def test_bad_neg_error_v2_refused():
    msg = refused_message("v2/bad_neg_error.fits")
    assert "OI_T3" in msg and "negative error bar T3PHIERR" in msg
    # this file was also edited after its checksum was written; both defects are listed
    assert "CHECKSUM" in msg


def test_bad_big_t3amp_v2_refused():
    msg = refused_message("v2/bad_big_t3amp.fits")
    assert "OI_T3" in msg and "T3AMP - 1 > T3AMPERR" in msg and "T3AMP = 1000" in msg


def test_bad_checksum_v2_refused():
    msg = refused_message("v2/bad_checksum.fits")
    assert "CHECKSUM does not match" in msg
    assert "OI_TARGET" in msg and "OI_VIS2" in msg


def test_bad_missing_array_v2_refused():
    msg = refused_message("v2/bad_missing_array.fits")
    assert "no OI_ARRAY table" in msg
    assert "OI_VIS2" in msg and "ARRNAME 'VLTI' refers to no OI_ARRAY table" in msg


def test_bad_missing_element_v2_refused():
    # OI_ARRAY lacks stations 1, 5 and 9; station 5 is used by the data.
    msg = refused_message("v2/bad_missing_element.fits")
    assert "OI_VIS2" in msg and "STA_INDEX value(s) [5] not found in OI_ARRAY 'VLTI'" in msg


def test_bad_missing_target_v2_refused():
    msg = refused_message("v2/bad_missing_target.fits")
    assert "OI_VIS2" in msg and "TARGET_ID value(s) [1] have no OI_TARGET row" in msg


def test_bad_dup_target_v2_loads_with_warning():
    # A duplicated target name is a warning, not a defect (CHECK_VALUES §8.4).
    path = ref("v2/bad_dup_target.fits")
    with pytest.warns(OifitsWarning, match=r"bad_dup_target\.fits: OI_TARGET.*duplicated target name"):
        obs = read_oifits(path)
    assert obs.n_points("vis2") == direct_unflagged(path, "OI_VIS2")
    assert obs.n_points("t3") == direct_unflagged(path, "OI_T3")
    with pytest.raises(DataError, match="duplicated target name"):
        read_oifits(path, pedantic=True)


def test_bad_wave_reversed_v2_loads_with_warning():
    # Non-ascending EFF_WAVE is a warning, not a defect (CHECK_VALUES §8.4 and §11.3).
    path = ref("v2/bad_wave_reversed.fits")
    with pytest.warns(OifitsWarning, match=r"bad_wave_reversed\.fits: OI_WAVELENGTH.*reversed"):
        obs = read_oifits(path)
    assert obs.n_points("vis2") == direct_unflagged(path, "OI_VIS2")
    with fits.open(path) as hdul:
        wave = np.asarray(hdul["OI_WAVELENGTH"].data["EFF_WAVE"], float) * 1e6
        flag = np.asarray(hdul["OI_VIS2"].data["FLAG"], bool)
    np.testing.assert_allclose(obs.vis2["wavelength"].values, np.broadcast_to(wave, flag.shape)[~flag])
    with pytest.raises(DataError, match="reversed"):
        read_oifits(path, pedantic=True)


@pytest.mark.parametrize("rel, phrase", [
    ("v1/bad_neg_error.fits", "negative error bar"),
    ("v2/bad_neg_error.fits", "negative error bar"),
    ("v2/bad_big_t3amp.fits", "T3AMP - 1 > T3AMPERR"),
    ("v2/bad_checksum.fits", "CHECKSUM does not match"),
    ("v2/bad_missing_array.fits", "no OI_ARRAY table"),
    ("v2/bad_missing_element.fits", "not found in OI_ARRAY"),
    ("v2/bad_missing_target.fits", "have no OI_TARGET row"),
])
def test_refused_file_loads_with_warning_when_lenient(rel, phrase):
    name = rel.split("/")[-1]
    with pytest.warns(OifitsWarning) as record:
        obs = read_oifits(ref(rel), strict=False)
    messages = [str(w.message) for w in record]
    assert any(name in m and phrase in m and "strict=False" in m for m in messages), messages
    assert obs.n_points("vis2") > 0
    assert obs.notes


def test_lenient_negative_errors_are_dropped_as_flagged():
    path = ref("v2/bad_neg_error.fits")
    with pytest.warns(OifitsWarning):
        obs = read_oifits(path, strict=False)
    assert obs.n_points("t3") == direct_unflagged(path, "OI_T3") - 1
    assert (obs.t3["t3phi_err"].values >= 0).all()


def test_lenient_missing_target_keeps_points_under_a_placeholder_name():
    with pytest.warns(OifitsWarning):
        obs = read_oifits(ref("v2/bad_missing_target.fits"), strict=False)
    assert obs.target_names == ("TARGET_ID=1",)
