"""What the readers check at the door: damaged headers are named, poisoned values stopped.

Files: written with the project's writer (``diskexplorer.testing.make_oifits``) for an
invented array and then damaged, byte by byte or through astropy; text tables invented
here. The OIFITS rules (which columns exist, what FLAG means, that EFF_WAVE and EFF_BAND
are in metres) follow Pauls et al. 2005 (OIFITS v1) and Duvert, Young & Hummel 2017
(OIFITS v2); the FITS rules (80-character ASCII cards, TFORMn codes, GCOUNT = 1 in
tables, the heap) follow Pence et al. 2010, A&A 524, A42.
"""
import gzip
import time
import warnings

import numpy as np
import pytest
from astropy.io import fits

import diskexplorer.data.fits_tables as fits_tables
from diskexplorer.data import (OifitsWarning, classify_data_file, read_data_file, read_oifits, read_photometry,
                               read_spectrum)
from diskexplorer.data.fits_tables import BLOCK, CARD, fits_layout
from diskexplorer.errors import DataError
from diskexplorer.fitting import Comparison
from diskexplorer.testing import make_oifits, synthetic_scene


@pytest.fixture(scope="module")
def source(tmp_path_factory):
    folder = tmp_path_factory.mktemp("door")
    return make_oifits(folder, "src.fits", include_vis=True, include_flux=True, n_channels=6, n_exposures=2,
                       insname="INV_K", arrname="INV_ARRAY")


def _set_card(data, table, key, text):
    """``data`` with the card ``key`` of the HDU named ``table`` replaced by ``text`` (raw bytes)."""
    start = 0
    for h in fits_layout(data, "x"):
        if h.name == table:
            for off in range(start, h.data_start, CARD):
                if data[off:off + 8].rstrip() == key.encode():
                    return data[:off] + text.encode("latin-1").ljust(CARD)[:CARD] + data[off + CARD:]
            raise KeyError(key)
        start = h.data_start + -(-h.data_bytes // BLOCK) * BLOCK
    raise KeyError(table)


def _column_card(data, table, column):
    with fits.open(__import__("io").BytesIO(data)) as hdul:
        for k, v in hdul[table].header.items():
            if k.startswith("TTYPE") and v.strip() == column:
                return "TFORM" + k[5:]
    raise KeyError(column)


def _edited(source, tmp_path, name, edit, checksum=True):
    with fits.open(source) as hdul:
        edit(hdul)
        hdul.writeto(tmp_path / name, checksum=checksum)
    return tmp_path / name


def _quietly(call, *args, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OifitsWarning)
        return call(*args, **kw)


# --------------------------------------------------------------------------------------
# one door for files: damaged headers are named, never raw astropy or numpy errors
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("table, key, value, pattern", [
    # The raw escapes of issue 24, each now a DataError naming file, HDU and keyword.
    ("OI_VIS2", "tform:VIS2DATA", "'QQ'", r"HDU \d+ \(OI_VIS2\): TFORM\d+ = 'QQ' is not a binary-table column format"),
    ("OI_VIS2", "NAXIS1", "0", r"HDU \d+ \(OI_VIS2\): the columns' formats \(TFORMn\) add up to \d+ bytes per row, "
                               r"but NAXIS1 = 0"),
    ("OI_VIS2", "GCOUNT", "0", r"HDU \d+ \(OI_VIS2\): GCOUNT = 0"),
    ("OI_VIS2", "NAXIS2", "-5", r"HDU \d+ \(OI_VIS2\): NAXIS2 = -5 is negative"),
    ("OI_T3", "NAXIS2", "999999999999999", r"truncated or damaged FITS file: HDU \d+ \(OI_T3\) holds \d+ of the"),
    ("OI_T3", "PCOUNT", "-3", r"HDU \d+ \(OI_T3\): PCOUNT = -3 is negative"),
    ("OI_T3", "BITPIX", "12", r"HDU \d+ \(OI_T3\): BITPIX = 12 is not one of"),
    ("OI_T3", "TFIELDS", "inf", r"HDU \d+ \(OI_T3\): header card \d+ \(TFIELDS\) has a value that is not valid "
                                r"FITS.*the HDU's layout cannot be trusted"),
    ("OI_T3", "TFIELDS", "'seven'", r"HDU \d+ \(OI_T3\): TFIELDS = 'seven' is not an integer"),
    ("OI_ARRAY", "tform:STAXYZ", "'-1E'", r"HDU \d+ \(OI_ARRAY\): TFORM\d+ = '-1E' is not a binary-table column"),
])
def test_damaged_layout_is_refused_naming_file_hdu_and_keyword(source, tmp_path, table, key, value, pattern):
    data = source.read_bytes()
    if key.startswith("tform:"):
        key = _column_card(data, table, key[6:])
    bad = tmp_path / "damaged.fits"
    bad.write_bytes(_set_card(data, table, key, f"{key:<8}= {value}"))
    t0 = time.perf_counter()
    for call in (lambda: read_oifits(bad), lambda: read_oifits(bad, strict=False),
                 lambda: read_data_file(bad, "oifits"), lambda: classify_data_file(bad)):
        with pytest.raises(DataError, match=r"damaged\.fits: .*" + pattern):
            _quietly(call)
    assert time.perf_counter() - t0 < 5.0   # NAXIS2 = -5 used to hang `evaluate` for more than 20 s


def test_an_unreadable_card_is_refused_strictly_and_blanked_leniently(source, tmp_path):
    bad = tmp_path / "frame.fits"
    # An unquoted string: astropy's raw "VerifyError: Unparsable card (FRAME)" before.
    bad.write_bytes(_set_card(source.read_bytes(), "OI_ARRAY", "FRAME", "FRAME   = GEOCENTRIC"))
    with pytest.raises(DataError, match=r"frame\.fits: damaged FITS file: 1 header card\(s\) no FITS reader can "
                                        r"read: OI_ARRAY \(HDU \d+\): header card \d+ \(FRAME\) has a value that is "
                                        r"not valid FITS"):
        read_oifits(bad)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        obs = read_oifits(bad, strict=False)
    messages = [str(w.message) for w in seen]
    assert any("frame.fits: damaged FITS file" in m and "read without them because strict=False" in m
               for m in messages), messages
    # What follows from the blank card is reported too: FRAME missing, the checksum broken.
    assert any("FRAME is missing" in m for m in messages) and any("CHECKSUM" in m for m in messages)
    assert obs.n_points("vis2") == read_oifits(source).n_points("vis2")


def test_a_header_card_with_bytes_that_are_not_ascii(source, tmp_path):
    data = bytearray(source.read_bytes())
    k = data.index(b"DATE-OBS")
    data[k + 40] = 0xE9   # inside the value of a card that is not part of the layout
    bad = tmp_path / "latin.fits"
    bad.write_bytes(bytes(data))
    with pytest.raises(DataError, match=r"latin\.fits: damaged FITS file: .*\(DATE-OBS\) holds bytes that are not "
                                        r"printable ASCII text"):
        read_oifits(bad)
    assert _quietly(read_oifits, bad, strict=False).n_points("vis2") > 0


def test_an_oi_hdu_that_is_not_a_table(source, tmp_path):
    path = _edited(source, tmp_path, "image.fits",
                   lambda h: h.append(fits.ImageHDU(np.zeros((4, 4)), name="OI_VIS2")))
    with pytest.raises(DataError, match=r"(?s)image\.fits: not a valid OIFITS file.*OI_VIS2 \(HDU \d+\): an OI_\* HDU "
                                        r"that is not a binary table"):
        read_oifits(path)
    with pytest.warns(OifitsWarning, match="not a binary table"):
        assert read_oifits(path, strict=False).n_points("vis2") == read_oifits(source).n_points("vis2")


def test_a_heap_descriptor_pointing_outside_the_heap(tmp_path):
    col = fits.Column(name="X", format="PJ()", array=np.array([[1], [2, 3], [4, 5, 6]], dtype=object))
    path = tmp_path / "heap.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns([col])]).writeto(path)
    data = bytearray(path.read_bytes())
    table = fits_layout(bytes(data), path)[1]
    data[table.data_start + 8:table.data_start + 12] = (10 ** 6).to_bytes(4, "big")   # row 2's element count
    with pytest.raises(DataError, match=r"HDU 1: the variable-length array of column 1 \(TFORM1\) in row 2 lies "
                                        r"outside the heap"):
        fits_layout(bytes(data), path)


def test_a_gzip_stream_that_expands_too_far_is_refused(tmp_path, monkeypatch, source):
    packed = tmp_path / "big.fits.gz"
    packed.write_bytes(gzip.compress(source.read_bytes()))
    monkeypatch.setattr(fits_tables, "MAX_DECOMPRESSED_BYTES", 4 * BLOCK)
    with pytest.raises(DataError, match=r"big\.fits\.gz: a gzip-compressed file that expands to more than"):
        read_oifits(packed)


def test_anything_unforeseen_leaves_as_a_data_error_naming_the_file(source, monkeypatch):
    import diskexplorer.data.oifits as oifits

    def broken(*args, **kwargs):
        raise ZeroDivisionError("a secret line of the file")

    monkeypatch.setattr(oifits, "validate_oifits", broken)
    with pytest.raises(DataError, match=r"src\.fits: cannot be read as OIFITS: .*ZeroDivisionError") as info:
        read_data_file(source, "oifits")
    assert "secret" not in str(info.value)


# --------------------------------------------------------------------------------------
# values checked at the door
# --------------------------------------------------------------------------------------
def _wave_edit(index, value, column="EFF_WAVE"):
    def edit(h):
        h["OI_WAVELENGTH"].data[column][index] = value
    return edit


@pytest.mark.parametrize("value", [np.nan, np.inf, 0.0, -2.2e-6, 2.2, 1e-30])
def test_a_channel_without_a_wavelength_refuses_strictly_and_is_left_out_leniently(source, tmp_path, value):
    path = _edited(source, tmp_path, "wave.fits", _wave_edit(2, value))
    with pytest.raises(DataError, match=r"(?s)wave\.fits: not a valid OIFITS file.*OI_WAVELENGTH .*EFF_WAVE of 1 of 6 "
                                        r"channel\(s\) is not a wavelength in metres.*\[bad-wavelength\]"):
        read_oifits(path)
    whole = read_oifits(source)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        obs = read_oifits(path, strict=False)
    per_table = [str(w.message) for w in seen if "left out: no usable wavelength" in str(w.message)]
    # One warning per data table, counting the points of that channel.
    assert len(per_table) == 4 and all("wave.fits" in m for m in per_table)
    assert f"{whole.n_points('vis2') // 6} left out" in next(m for m in per_table if "OI_VIS2" in m)
    assert obs.n_points("vis2") == whole.n_points("vis2") * 5 // 6
    assert np.isfinite(obs.vis2["wavelength"].values).all()
    assert np.isfinite(Comparison(obs).compare(synthetic_scene()).total)


@pytest.mark.parametrize("value", [np.nan, np.inf, -1e-7, 1.0])
def test_a_channel_without_a_usable_width_is_read_monochromatic(source, tmp_path, value):
    path = _edited(source, tmp_path, "band.fits", _wave_edit(1, value, "EFF_BAND"))
    with pytest.warns(OifitsWarning, match=r"band\.fits: OI_WAVELENGTH .*EFF_BAND of 1 of 6 channel\(s\) is not a "
                                           r"width.*read without a width \(monochromatic\) \[bad-bandwidth\]"):
        obs = read_oifits(path)
    band = obs.vis2["bandwidth"].values
    with fits.open(source) as hdul:
        edited_um = float(hdul["OI_WAVELENGTH"].data["EFF_WAVE"][1]) * 1e6
    channel = np.isclose(obs.vis2["wavelength"].values, edited_um, rtol=1e-6)
    assert channel.any()
    assert np.isnan(band[channel]).all() and np.isfinite(band[~channel]).all()
    assert np.isfinite(Comparison(obs).compare(synthetic_scene()).total)
    with pytest.raises(DataError, match="bad-bandwidth"):
        read_oifits(path, pedantic=True)


def test_a_zero_width_means_monochromatic_silently(source, tmp_path):
    path = _edited(source, tmp_path, "zero.fits", _wave_edit(slice(None), 0.0, "EFF_BAND"))
    with warnings.catch_warnings():
        warnings.simplefilter("error", OifitsWarning)
        obs = read_oifits(path)
    assert (obs.vis2["bandwidth"].values == 0).all()


def test_unusable_values_are_flagged_with_one_warning_per_table(source, tmp_path):
    def edit(h):
        d = h["OI_VIS2"].data
        d["VIS2DATA"][0, :3] = np.nan      # three points without a value
        d["VIS2DATA"][1, 0] = 1e300        # χ² = inf before
        d["VIS2ERR"][2, 0] = 0.0           # a zero error: an infinite residual
        d["VIS2ERR"][3, 0] = np.inf
    path = _edited(source, tmp_path, "values.fits", edit)
    whole = read_oifits(source)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        obs = read_oifits(path)
    messages = [str(w.message) for w in seen]
    assert len(messages) == 1, messages
    assert "values.fits: OI_VIS2 (HDU" in messages[0] and "6 flagged: no usable value" in messages[0]
    assert obs.n_points("vis2") == whole.n_points("vis2") - 6
    result = Comparison(obs).compare(synthetic_scene())
    assert np.isfinite(result.total)
    kept = _quietly(read_oifits, path, keep_flagged=True)
    assert kept.n_points("vis2") == whole.n_points("vis2") and int(kept.vis2["flag"].sum()) == 6


def test_a_nan_amplitude_beside_a_closure_phase_is_not_measured_not_damage(source, tmp_path):
    def edit(h):
        h["OI_T3"].data["T3AMP"][:] = np.nan     # OIFITS v2: T3AMP NaN when only phases were measured
        h["OI_T3"].data["T3AMPERR"][:] = np.nan
    path = _edited(source, tmp_path, "t3nan.fits", edit)
    with warnings.catch_warnings():
        warnings.simplefilter("error", OifitsWarning)
        obs = read_oifits(path)
    assert obs.n_points("t3") == read_oifits(source).n_points("t3")


def test_an_unusable_phase_is_left_out_of_a_point_whose_amplitude_is_good(source, tmp_path):
    def edit(h):
        h["OI_T3"].data["T3PHIERR"][0, :2] = 0.0
    path = _edited(source, tmp_path, "t3phi.fits", edit)
    with pytest.warns(OifitsWarning, match=r"t3phi\.fits: OI_T3 .*unusable value\(s\) left out of otherwise good "
                                           r"points: T3PHI of 2 point\(s\) \(set to NaN\)"):
        obs = read_oifits(path)
    assert obs.n_points("t3") == read_oifits(source).n_points("t3")
    assert int(np.isnan(obs.t3["t3phi"].values).sum()) == 2


@pytest.mark.parametrize("value", [np.nan, np.inf, 1e300, 2e7])
def test_points_without_a_usable_baseline_are_left_out_even_when_flagged_are_kept(source, tmp_path, value):
    def edit(h):
        h["OI_VIS2"].data["UCOORD"][1] = value
    path = _edited(source, tmp_path, "uv.fits", edit)
    whole = read_oifits(source)
    with pytest.warns(OifitsWarning, match=r"uv\.fits: OI_VIS2 .*6 left out: no usable wavelength \(EFF_WAVE\) or "
                                           r"\(u, v\)"):
        obs = read_oifits(path)
    assert obs.n_points("vis2") == whole.n_points("vis2") - 6
    assert _quietly(read_oifits, path, keep_flagged=True).n_points("vis2") == whole.n_points("vis2") - 6
    assert np.isfinite(Comparison(obs).compare(synthetic_scene()).total)


# --------------------------------------------------------------------------------------
# text tables: checked at the door, never quoted
# --------------------------------------------------------------------------------------
def _write(tmp_path, text, name):
    path = tmp_path / name
    path.write_text(text)
    return path


@pytest.mark.parametrize("text, pattern", [
    ("wavelength [um], flux [Jy], error [furlong]\n8.0, 1, 0.1\n",
     r"spec\.csv: header: the units of the flux and error columns must be flux-density units"),
    ("wavelength [um], flux [Jy], error [Jy]\n8.0, inf, 0.1\n9.0, 1, 0.1\n", r"spec\.csv: text table: line 2: flux"),
    ("wavelength [um], flux [Jy], error [Jy]\n8.0, 1, 0\n", r"spec\.csv: line 2: field 'error': must be > 0"),
    ("wavelength [um], flux [Jy], error [Jy]\n8.0, 1, inf\n", r"spec\.csv: text table: line 2: flux and error"),
    ("wavelength [um], flux [Jy]\n1e-300, 1\n", r"spec\.csv: text table: line 2: wavelength must be finite"),
    ("wavelength [um], flux [Jy]\ninf, 1\n", r"spec\.csv: text table: line 2: wavelength must be finite"),
    ("wavelength [um], flux [Jy]\n8.0, \n9.0, 1\n", r"spec\.csv: line 2: field 'flux': empty"),
    ("wavelength [um], flux [Jy]\n8.0, 1e300\n", r"spec\.csv: text table: line 2: flux and error in Jy"),
])
def test_spectrum_values_checked_at_the_door(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern) as info:
        read_spectrum(_write(tmp_path, text, "spec.csv"))
    assert "furlong" not in str(info.value)


@pytest.mark.parametrize("text, pattern", [
    ("band,value,error,unit\nKs,-3000,0.1,mag\n", r"phot\.csv: line 2: field 'value': a magnitude must lie within"),
    ("band,value,error,unit\nKs,inf,0.1,mag\n", r"phot\.csv: line 2: field 'value': must be finite"),
    ("band,value,error,unit\nKs,5,0,mag\n", r"phot\.csv: line 2: field 'error': must be finite and > 0"),
    ("band,value,error,unit\nKs,5,inf,mag\n", r"phot\.csv: line 2: field 'error': must be finite and > 0"),
    ("wavelength,value,error,unit\ninf,5,0.1,Jy\n", r"phot\.csv: line 2: field 'wavelength': must be finite"),
    ("wavelength,value,error,unit\n2.2,1e45,1e44,W m-2 um-1\n", r"phot\.csv: line 2: the measurement in Jy is not "
                                                                r"usable"),
    ("band,value,error,unit\nKs,99,1e-15,mag\n", r"phot\.csv: line 2: the measurement in Jy is not usable"),
])
def test_photometry_values_checked_at_the_door(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern):
        read_photometry(_write(tmp_path, text, "phot.csv"))


def test_an_upper_limit_may_go_without_an_error(tmp_path):
    ds = read_photometry(_write(tmp_path, "band,value,error,unit,upper_limit\nW4,2.0,,Jy,1\n", "ul.csv"))
    assert bool(ds["upper_limit"].values[0]) and np.isnan(ds["flux_err"].values[0])


def test_a_text_file_that_is_not_data_is_described_not_quoted(tmp_path):
    path = _write(tmp_path, "operator:x:1000:1000:Night Operator:/home/operator:/bin/sh\n"
                            "observer:x:1001:1001:Observer:/home/observer:/bin/sh\n", "accounts")
    with pytest.raises(DataError, match=r"accounts: a text file that is not a data table") as info:
        classify_data_file(path)
    for kind in ("photometry", "spectrum"):
        with pytest.raises(DataError, match="accounts") as more:
            read_data_file(path, kind)
        assert "operator" not in str(more.value) and "/home" not in str(more.value)
    assert "operator" not in str(info.value) and "/home" not in str(info.value)
