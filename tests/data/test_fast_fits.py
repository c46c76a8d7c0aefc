"""The fast simple-FITS decoder gives exactly what astropy gives, file by file.

Reference files: the OIFITS test suite in tests/reference/oifits (Pauls et al. 2005;
Duvert, Young & Hummel 2017), good and bad ones, plus the sample data; reference library:
astropy.io.fits. Each file is read both ways and the datasets, the defects found and the
warnings must be identical.
"""
import warnings

import numpy as np
import pytest
from astropy.io import fits

import diskexplorer.data.oifits as oifits
from diskexplorer.data.fits_tables import open_simple_fits
from diskexplorer.data.oifits_validate import validate_oifits
from diskexplorer.errors import DataError
from diskexplorer.sample import SAMPLE_FILES, sample_data_dir
from diskexplorer.testing import assert_observations_equal

from _reference import oifits_dir

FILES = sorted(str(p) for p in oifits_dir().rglob("*.fits")) + \
    [str(sample_data_dir() / n) for n in SAMPLE_FILES["oifits"]]


def _read(path, fast, **kw):
    old = oifits._FAST
    oifits._FAST = fast
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                result = oifits.read_oifits(path, **kw)
            except DataError as exc:
                result = exc
        return result, sorted(str(w.message) for w in caught)
    finally:
        oifits._FAST = old


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.split("reference/")[-1].split("/")[-1])
def test_fast_and_astropy_paths_agree(path):
    for kw in (dict(strict=True), dict(strict=False), dict(strict=False, keep_flagged=True)):
        fast, fast_warn = _read(path, True, **kw)
        slow, slow_warn = _read(path, False, **kw)
        assert fast_warn == slow_warn
        if isinstance(slow, DataError):
            assert isinstance(fast, DataError) and str(fast) == str(slow)
        else:
            assert not isinstance(fast, DataError), fast
            assert_observations_equal(fast, slow)


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.split("/")[-1])
def test_checksums_and_defects_agree(path):
    simple = open_simple_fits(path)
    if simple is None:
        pytest.skip("outside the simple subset: astropy reads it (covered by the test above)")
    with fits.open(path, memmap=False) as hdul:
        for a, b in zip(simple, hdul):
            assert a.name == b.name
            assert a.verify_checksum() == b.verify_checksum()
            assert a.verify_datasum() == b.verify_datasum()
            if a.columns is not None:
                assert a.columns.names == b.columns.names
                for name in a.columns.names:
                    x, y = np.asarray(a.data[name]), np.asarray(b.data[name])
                    if x.dtype.kind in "US":
                        assert [s.strip() for s in x.ravel().tolist()] == \
                               [str(s).strip() for s in y.ravel().tolist()]
                    else:
                        np.testing.assert_array_equal(x, y)
        assert [d.message for d in validate_oifits(simple, path)] == \
               [d.message for d in validate_oifits(hdul, path)]


def test_unsupported_features_fall_back_to_astropy(tmp_path):
    # A variable-length (heap) column is outside the simple subset: None, so astropy reads it.
    col = fits.Column(name="X", format="PJ()", array=np.array([[1], [2, 3], [4, 5, 6]], dtype=object))
    path = tmp_path / "scaled.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns([col])]).writeto(path)
    assert open_simple_fits(path) is None
    # and so is an unsigned column stored with TZERO
    col = fits.Column(name="Y", format="I", bzero=32768, array=np.arange(3, dtype=np.uint16))
    path = tmp_path / "unsigned.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns([col])]).writeto(path)
    assert open_simple_fits(path) is None
