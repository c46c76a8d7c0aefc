"""ObservationSet selections, error floors, concatenation, content checks, and one
synthetic file per validation rule of CHECK_VALUES §8.4 (levels CONFIRMED from the
standard's conformity checker)."""

import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.data import (INTERFEROMETRIC_BANDS, OifitsWarning, ObservationSet, baseline_lengths,
                               read_oifits)
from diskexplorer.errors import DataError
from diskexplorer.testing import make_observations, make_oifits


@pytest.fixture
def two_band_set():
    return make_observations(band="K", insname="INS_K", seed=1) + make_observations(
        band="N", insname="INS_N", seed=2, include_vis=True)


def test_select_band_uses_stated_ranges(two_band_set):
    assert INTERFEROMETRIC_BANDS["K"] == (1.95, 2.55) and INTERFEROMETRIC_BANDS["N"] == (7.5, 13.5)
    k = two_band_set.select_band("K")
    assert k.instruments == ("INS_K",)
    w = k.vis2["wavelength"].values
    assert w.min() >= 1.95 and w.max() <= 2.55
    assert k.n_points("vis") == 0
    both = two_band_set.select_band("K", "N")
    assert both.n_points() == two_band_set.n_points()
    with pytest.raises(DataError, match="unknown interferometric band"):
        two_band_set.select_band("Q")


def test_select_wavelength_instrument_target(two_band_set):
    sel = two_band_set.select_wavelength(8.0, 10.0)
    w = sel.vis2["wavelength"].values
    assert w.size and w.min() >= 8.0 and w.max() <= 10.0
    assert two_band_set.select_instrument("INS_N").n_points() == \
        two_band_set.select_band("N").n_points()
    assert two_band_set.select_target("sim-disk-1").n_points() == two_band_set.n_points()
    assert two_band_set.select_target("other").n_points("vis2") == 0


def test_select_baseline(two_band_set):
    sel = two_band_set.select_baseline(40.0, 100.0)
    b2 = baseline_lengths(sel.vis2)
    assert b2.min() >= 40 and b2.max() <= 100
    b3 = baseline_lengths(sel.t3)
    assert b3.shape[1] == 3 and (b3 >= 40).all() and (b3 <= 100).all()
    full = baseline_lengths(two_band_set.vis2)
    assert sel.n_points("vis2") == int(((full >= 40) & (full <= 100)).sum())


def test_error_floors():
    obs = make_observations(noise=0.001, seed=4)
    out = obs.with_error_floor(vis2_relative=0.1, phase=2.0)
    np.testing.assert_allclose(out.vis2["vis2_err"], np.maximum(0.001, 0.1 * np.abs(obs.vis2["vis2"])))
    np.testing.assert_allclose(out.t3["t3phi_err"], np.maximum(obs.t3["t3phi_err"], 2.0))
    q = obs.with_error_floor(phase=2.0, combine="quadrature")
    np.testing.assert_allclose(q.t3["t3phi_err"], np.hypot(obs.t3["t3phi_err"], 2.0))
    ab = obs.with_error_floor(vis2_absolute=0.05)
    assert (ab.vis2["vis2_err"] >= 0.05).all()
    # the original is untouched
    assert float(obs.vis2["vis2_err"].max()) == pytest.approx(0.001)
    with pytest.raises(DataError, match=">= 0"):
        obs.with_error_floor(phase=-1)


def test_concat_and_summary(two_band_set):
    a = make_observations(seed=1)
    assert (a + a).n_points("vis2") == 2 * a.n_points("vis2")
    assert ObservationSet.concat([]).kinds == ()
    text = two_band_set.summary()
    assert "INS_K" in text and "INS_N" in text and f"{two_band_set.n_points('vis2')} points" in text
    assert "SIM-DISK-1" in repr(two_band_set)


def test_read_directory_and_suffix_independent_content_check(tmp_path):
    make_oifits(tmp_path, "a.fits", seed=1)
    make_oifits(tmp_path, "b.oifits", seed=2)
    obs = read_oifits(tmp_path)
    assert len(obs.files) == 2
    fake = tmp_path / "fake.fits"
    fake.write_text("wavelength,flux\n1,2\n")
    with pytest.raises(DataError, match=r"fake\.fits: not a FITS file"):
        read_oifits(fake)
    image = tmp_path / "image.fits"
    fits.PrimaryHDU(np.zeros((4, 4))).writeto(image)
    with pytest.raises(DataError, match=r"image\.fits: not an OIFITS file"):
        read_oifits(image)
    with pytest.raises(DataError, match="file not found"):
        read_oifits(tmp_path / "missing.fits")
    # a real OIFITS file under an odd name is still read
    odd = tmp_path / "data.bin"
    odd.write_bytes((tmp_path / "a.fits").read_bytes())
    assert read_oifits(odd).n_points("vis2") == read_oifits(tmp_path / "a.fits").n_points("vis2")


# --- synthetic files, one per rule -------------------------------------------------------

def edited(tmp_path, edit, name="edited.fits", **kw):
    """Write a synthetic file, apply edit(hdul) and save with fresh checksums."""
    src = make_oifits(tmp_path, "src_" + name, include_vis=True, **kw)
    with fits.open(src) as hdul:
        edit(hdul)
        hdul.writeto(tmp_path / name, checksum=True)
    return tmp_path / name


@pytest.mark.parametrize("rule, edit, phrase", [
    ("illegal FRAME", lambda h: h["OI_ARRAY"].header.__setitem__("FRAME", "LOCAL"), "illegal FRAME"),
    ("illegal AMPTYP", lambda h: h["OI_VIS"].header.__setitem__("AMPTYP", "relative"), "illegal AMPTYP"),
    ("differential without VISREFMAP", lambda h: h["OI_VIS"].header.__setitem__("PHITYP", "differential"),
     "VISREFMAP is missing"),
    ("CONTENT not OIFITS2", lambda h: h[0].header.__setitem__("CONTENT", "OIFITS"), "expected 'OIFITS2'"),
    ("missing primary keyword", lambda h: h[0].header.remove("INSMODE"), "keyword(s) missing: INSMODE"),
    ("missing ARRNAME in v2 data table", lambda h: h["OI_VIS2"].header.remove("ARRNAME"),
     "keyword ARRNAME is missing"),
    ("INSNAME without OI_WAVELENGTH", lambda h: h["OI_T3"].header.__setitem__("INSNAME", "NOPE"),
     "refers to no OI_WAVELENGTH"),
    ("CORRNAME without OI_CORR", lambda h: h["OI_VIS2"].header.__setitem__("CORRNAME", "C1"),
     "refers to no OI_CORR"),
    ("mixed revisions", lambda h: h["OI_VIS2"].header.__setitem__("OI_REVN", 1), "mixed table revisions"),
    ("negative VIS2ERR", lambda h: h["OI_VIS2"].data["VIS2ERR"].__setitem__((0, 0), -0.1),
     "negative error bar VIS2ERR"),
    ("no OI_TARGET", lambda h: h.__delitem__("OI_TARGET"), "exactly one OI_TARGET"),
])
def test_synthetic_defect_refused(tmp_path, rule, edit, phrase):
    path = edited(tmp_path, edit)
    with pytest.raises(DataError) as info:
        read_oifits(path)
    assert phrase in str(info.value) and "edited.fits" in str(info.value), rule


def test_negative_error_in_flagged_channel_is_allowed(tmp_path):
    def edit(h):
        h["OI_VIS2"].data["VIS2ERR"][0, 0] = -0.1
        h["OI_VIS2"].data["FLAG"][0, 0] = True
    path = edited(tmp_path, edit)
    obs = read_oifits(path)
    assert (obs.vis2["vis2_err"] >= 0).all()


@pytest.mark.parametrize("edit, phrase", [
    (lambda h: h["OI_VIS2"].data["TIME"].__setitem__(0, 5.0), "TIME is not zero"),
    (lambda h: h["OI_WAVELENGTH"].data["EFF_WAVE"].__setitem__(slice(None), h["OI_WAVELENGTH"].data["EFF_WAVE"][::-1].copy()),
     "reversed"),
])
def test_synthetic_warning_only(tmp_path, edit, phrase):
    path = edited(tmp_path, edit)
    with pytest.warns(OifitsWarning, match=phrase):
        obs = read_oifits(path)
    assert obs.n_points("vis2") > 0


def test_altered_file_fails_checksum(tmp_path):
    path = make_oifits(tmp_path)
    with fits.open(path) as hdul:
        hdul["OI_VIS2"].data["VIS2DATA"][0, 0] += 0.5
        hdul.writeto(tmp_path / "altered.fits", checksum=False)  # keeps the stale CHECKSUM cards
    with pytest.raises(DataError, match=r"OI_VIS2.*(CHECKSUM|DATASUM)"):
        read_oifits(tmp_path / "altered.fits")
    assert read_oifits(tmp_path / "altered.fits", check_checksums=False).n_points("vis2") > 0
