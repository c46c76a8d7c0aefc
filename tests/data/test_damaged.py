"""Truncated, damaged and gzip-compressed OIFITS files.

Files: the public OIFITS test suite (tests/reference/oifits via tests/_reference.py) and files
written with the project's writer for invented arrays and wavelengths. Every file is cut
at several points (inside the primary header, inside an extension header, in the middle
of the largest data table, at half its length, in the last block's padding) and read
through both decoders (the numpy one and astropy).
"""
import gzip
import shutil
import warnings

import numpy as np
import pytest
from astropy.io import fits

import diskexplorer.data.oifits as oifits
from diskexplorer.data import OifitsWarning, classify_data_file, read_oifits
from diskexplorer.data.fits_tables import BLOCK, fits_layout
from diskexplorer.errors import DataError
from diskexplorer.testing import assert_observations_equal, make_oifits

from _reference import oifits_dir

REFERENCE = sorted(oifits_dir().rglob("*.fits"))
_ids = lambda p: f"{p.parent.name}/{p.name}"  # noqa: E731


@pytest.fixture(params=[True, False], ids=["numpy", "astropy"])
def decoder(request):
    old = oifits._FAST
    oifits._FAST = request.param
    yield request.param
    oifits._FAST = old


def _cuts(data):
    """Cut points (name, bytes kept) that all fall inside a header or inside data."""
    hdus = fits_layout(data, "original")
    biggest = max(hdus[1:], key=lambda h: h.data_bytes)
    cuts = {"primary header": 1000,
            "extension header": hdus[2].data_start - BLOCK + 500,
            "mid-table": biggest.data_start + biggest.data_bytes // 2}
    half = len(data) // 2
    if half % BLOCK == 0:
        half += 77  # exactly between two HDUs a shorter file cannot be told from a cut one
    cuts["half"] = half
    return cuts


def _read_quietly(path, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OifitsWarning)
        return read_oifits(path, **kw)


@pytest.mark.parametrize("path", REFERENCE, ids=_ids)
def test_reference_files_cut_short_name_the_file_and_say_truncated(tmp_path, path, decoder):
    data = path.read_bytes()
    for where, n in _cuts(data).items():
        cut = tmp_path / f"cut_{n}.fits"
        cut.write_bytes(data[:n])
        with pytest.raises(DataError, match=rf"cut_{n}\.fits: truncated") as exc:
            _read_quietly(cut)
        assert "reshape" not in str(exc.value), where
        # Leniently, a cut in the padding after an HDU loads the HDUs before it, with a warning.
        with warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always", OifitsWarning)
            try:
                read_oifits(cut, strict=False)
            except DataError as e:
                assert f"cut_{n}.fits: truncated" in str(e), where
            else:
                assert any(f"cut_{n}.fits: truncated FITS file" in str(w.message) for w in seen), where
        with pytest.raises(DataError, match=rf"cut_{n}\.fits: truncated"):
            classify_data_file(cut)


def test_the_messages_say_where_the_file_ends(tmp_path):
    path = make_oifits(tmp_path, "k_hires.fits", wavelengths=np.linspace(2.35, 2.0, 8), n_telescopes=6,
                       insname="INV_K_HIRES", arrname="INV_ARRAY_C")
    data = path.read_bytes()
    hdus = fits_layout(data, path)
    vis2 = next(h for h in hdus if h.name == "OI_VIS2")
    (tmp_path / "a.fits").write_bytes(data[:vis2.data_start + 100])
    with pytest.raises(DataError, match=rf"a\.fits: truncated or damaged FITS file: HDU {vis2.index} \(OI_VIS2\) "
                                        rf"holds 100 of the {vis2.data_bytes} data bytes"):
        read_oifits(tmp_path / "a.fits")
    (tmp_path / "b.fits").write_bytes(data[:vis2.data_start - BLOCK + 10])
    with pytest.raises(DataError, match=rf"b\.fits: truncated or damaged FITS file: the header of HDU {vis2.index} "
                                        r"after .* has no END card"):
        read_oifits(tmp_path / "b.fits")


def test_only_the_last_padding_missing_is_refused_strictly_and_loaded_leniently(tmp_path, decoder):
    path = make_oifits(tmp_path, "n.fits", band="N", n_telescopes=3, insname="INV_N", arrname="INV_ARR")
    whole = read_oifits(path)
    data = path.read_bytes()
    last = fits_layout(data, path)[-1]
    end = last.data_start + last.data_bytes
    assert end < len(data)  # the writer pads the last HDU
    cut = tmp_path / "padding.fits"
    cut.write_bytes(data[:end])
    with pytest.raises(DataError, match=r"padding\.fits: truncated FITS file: it ends \d+ bytes before"):
        read_oifits(cut)
    with pytest.warns(OifitsWarning, match="truncated FITS file.*strict=False"):
        lenient = read_oifits(cut, strict=False, check_checksums=True)
    assert_observations_equal(lenient, whole)
    assert any("truncated" in n for n in lenient.notes)


def test_a_damaged_size_keyword_is_named(tmp_path, decoder):
    path = make_oifits(tmp_path, "l.fits", band="L", insname="INV_L")
    data = bytearray(path.read_bytes())
    hdus = fits_layout(bytes(data), path)
    vis2 = next(h for h in hdus if h.name == "OI_VIS2")
    start = data.rfind(b"NAXIS2  =", 0, vis2.data_start)
    data[start:start + 30] = b"NAXIS2  = 'twelve'".ljust(30)
    bad = tmp_path / "bad.fits"
    bad.write_bytes(bytes(data))
    with pytest.raises(DataError, match=r"bad\.fits: damaged FITS file: HDU \d+ \(OI_VIS2\): NAXIS2 = 'twelve' is not an integer"):
        read_oifits(bad)


def test_nextend_announcing_more_extensions_than_present(tmp_path, decoder):
    path = make_oifits(tmp_path, "h.fits", band="H", insname="INV_H")
    with fits.open(path) as hdul:
        hdul[0].header["NEXTEND"] = len(hdul) + 2
        hdul.writeto(tmp_path / "short.fits", checksum=True)
    with pytest.raises(DataError, match=r"short\.fits: truncated FITS file: the primary header announces \d+ "
                                        r"extensions \(NEXTEND\)"):
        read_oifits(tmp_path / "short.fits")


def _gzip(src, dst):
    with open(src, "rb") as fi, gzip.open(dst, "wb") as fo:
        shutil.copyfileobj(fi, fo)
    return dst


@pytest.mark.parametrize("path", [p for p in REFERENCE if not p.name.startswith("bad_")], ids=_ids)
def test_gzip_compressed_oifits_read_like_plain_ones(tmp_path, path, decoder):
    gz = _gzip(path, tmp_path / (path.stem + ".oifits.gz"))
    plain = _read_quietly(path)
    packed = _read_quietly(gz)
    assert list(packed.files) == [str(gz)]
    for kind in ("vis2", "vis", "t3", "flux"):
        a, b = getattr(plain, kind), getattr(packed, kind)
        assert (a is None) == (b is None), kind
        if a is not None:
            for name in a.data_vars:
                np.testing.assert_array_equal(b[name].values, a[name].values, err_msg=f"{kind}.{name}")


def test_gzip_files_in_a_folder_and_damaged_gzip(tmp_path):
    folder = tmp_path / "nights"
    folder.mkdir()
    a = make_oifits(tmp_path, "a.fits", band="K", n_telescopes=4, insname="INV_K", arrname="ARR_A")
    _gzip(a, folder / "a.fits.gz")
    obs = read_oifits(folder)
    assert obs.vis2.sizes["point"] == read_oifits(a).vis2.sizes["point"]
    packed = (folder / "a.fits.gz").read_bytes()
    (tmp_path / "cut.fits.gz").write_bytes(packed[: len(packed) // 2])
    with pytest.raises(DataError, match=r"cut\.fits\.gz: truncated gzip-compressed file"):
        read_oifits(tmp_path / "cut.fits.gz")
    with pytest.raises(DataError, match=r"cut\.fits\.gz: truncated gzip-compressed file"):
        classify_data_file(tmp_path / "cut.fits.gz")
    (tmp_path / "text.fits.gz").write_bytes(gzip.compress(b"not fits at all\n" * 10))
    with pytest.raises(DataError, match=r"text\.fits\.gz: a gzip-compressed file that does not hold FITS"):
        read_oifits(tmp_path / "text.fits.gz")
    # A gzip-compressed file cut inside its FITS content (compressed again after the cut).
    data = a.read_bytes()
    (tmp_path / "inner.fits.gz").write_bytes(gzip.compress(data[: len(data) // 2 + 99]))
    with pytest.raises(DataError, match=r"inner\.fits\.gz: truncated or damaged FITS file"):
        read_oifits(tmp_path / "inner.fits.gz")


def test_a_fits_spectrum_cut_short_names_the_file(tmp_path):
    from diskexplorer.data import read_spectrum

    lam = np.linspace(7.5, 13.5, 400)
    table = fits.BinTableHDU.from_columns([
        fits.Column("WAVELENGTH", "D", unit="um", array=lam), fits.Column("FLUX", "D", unit="Jy", array=lam * 0 + 2.0),
        fits.Column("ERROR", "D", unit="Jy", array=lam * 0 + 0.1)])
    whole = tmp_path / "nband.fits"
    fits.HDUList([fits.PrimaryHDU(), table]).writeto(whole)
    assert read_spectrum(whole)["flux"].size == 400
    cut = tmp_path / "nband_cut.fits"
    cut.write_bytes(whole.read_bytes()[:2 * BLOCK + 2980])
    with pytest.raises(DataError, match=r"nband_cut\.fits: truncated or damaged FITS file"):
        read_spectrum(cut)
    gz = tmp_path / "nband.fits.gz"
    gz.write_bytes(gzip.compress(whole.read_bytes()))
    assert read_spectrum(gz)["flux"].size == 400
