"""Recognising data files by content (diskexplorer.data.classify).

Files: the public OIFITS test suite (tests/reference/oifits, found by tests/_reference.py;
Pauls et al. 2005 v1 files and the OIFITS v2 examples), and files written here with the
project's writer for invented arrays, wavelengths and instruments (not the sample).
"""
import gzip
import json
import shutil

import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.data import (DataFiles, NotADataFile, SkippedFile, classify_data_file, collect_data_files,
                               read_photometry, read_spectrum)
from diskexplorer.errors import DataError
from diskexplorer.testing import make_oifits

from _reference import oifits_dir

REFERENCE = sorted(oifits_dir().rglob("*.fits"))


def _photometry(path):
    path.write_text("# invented photometry of an invented star\n"
                    "band,value,error,unit\nJ,7.91,0.03,mag\nKs,6.20,0.02,mag\nW3,1.85,0.08,Jy\n")
    return path


def _spectrum_csv(path):
    lam = np.linspace(7.8, 13.2, 40)
    rows = "\n".join(f"{w:.4f},{2.0 + 0.3 * np.exp(-((w - 9.8) / 1.1) ** 2):.5f},0.05" for w in lam)
    path.write_text("wavelength [um],flux [Jy],error [Jy]\n" + rows + "\n")
    return path


def _spectrum_fits(path, compress=False):
    lam = np.linspace(3.0, 4.1, 25)
    hdu = fits.BinTableHDU.from_columns([fits.Column(name="WAVE", format="D", unit="um", array=lam),
                                         fits.Column(name="FLUX", format="D", unit="Jy", array=1 + 0 * lam)],
                                        name="SPECTRUM")
    hdul = fits.HDUList([fits.PrimaryHDU(), hdu])
    if compress:
        with gzip.open(path, "wb") as fh:
            hdul.writeto(fh)
    else:
        hdul.writeto(path)
    return path


def _gzip_copy(src, dst):
    with open(src, "rb") as fi, gzip.open(dst, "wb") as fo:
        shutil.copyfileobj(fi, fo)
    return dst


@pytest.mark.parametrize("path", REFERENCE, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_reference_oifits_are_oifits_plain_and_gzipped(path, tmp_path):
    assert classify_data_file(path) == "oifits"
    assert classify_data_file(_gzip_copy(path, tmp_path / (path.name + ".gz"))) == "oifits"


@pytest.mark.parametrize("kw", [dict(band="L", n_telescopes=4, insname="INV_LM", arrname="INV_ARRAY_A"),
                                dict(band="N", n_telescopes=2, insname="INV_N", arrname="INV_ARRAY_B"),
                                dict(wavelengths=np.linspace(2.35, 2.0, 8), n_telescopes=6,
                                     insname="INV_K_HIRES", arrname="INV_ARRAY_C")])
def test_written_oifits_for_other_arrays_is_oifits_whatever_its_name(tmp_path, kw):
    path = make_oifits(tmp_path, "night.dat", **kw)   # a name that says nothing
    assert classify_data_file(path) == "oifits"


def test_text_tables_by_content(tmp_path):
    assert classify_data_file(_photometry(tmp_path / "sed.txt")) == "photometry"
    assert classify_data_file(_spectrum_csv(tmp_path / "spec.dat")) == "spectrum"
    (tmp_path / "bare.txt").write_text("8.0 1.2\n9.0 1.5\n10.0 1.9\n")
    assert classify_data_file(tmp_path / "bare.txt") == "spectrum"
    (tmp_path / "tabs.tsv").write_text("lambda (um)\tfnu (mJy)\n8.5\t120\n9.5\t150\n")
    assert classify_data_file(tmp_path / "tabs.tsv") == "spectrum"
    # A photometry table named like FITS is still photometry: content decides.
    assert classify_data_file(_photometry(tmp_path / "sed.fits")) == "photometry"
    # And each is read by the reader it was assigned to.
    assert read_photometry(tmp_path / "sed.txt").sizes["point"] == 3
    assert read_spectrum(tmp_path / "spec.dat").sizes["wavelength"] == 40


def test_fits_spectrum_tables_plain_and_gzipped(tmp_path):
    assert classify_data_file(_spectrum_fits(tmp_path / "s.fits")) == "spectrum"
    gz = _spectrum_fits(tmp_path / "s.fits.gz", compress=True)
    assert classify_data_file(gz) == "spectrum"
    assert read_spectrum(gz).sizes["wavelength"] == 25


def test_fits_image_is_named_as_such(tmp_path):
    path = tmp_path / "cube.fits"
    fits.PrimaryHDU(np.zeros((16, 32), np.float32)).writeto(path)
    with pytest.raises(NotADataFile, match=r"cube\.fits: a FITS image: not OIFITS .*not a spectrum table"
                                           r".*it holds HDUs PRIMARY \(image 32 × 16\)"):
        classify_data_file(path)


def test_fits_table_of_other_columns_lists_its_columns(tmp_path):
    path = tmp_path / "events.fits"
    t = fits.BinTableHDU.from_columns([fits.Column(name="TIME", format="D", array=np.arange(5.0)),
                                       fits.Column(name="PHA", format="J", array=np.arange(5))], name="EVENTS")
    fits.HDUList([fits.PrimaryHDU(), t]).writeto(path)
    with pytest.raises(NotADataFile, match=r"a FITS table with columns TIME, PHA: not OIFITS \(no OI_\* table\)"
                                           r".*HDUs PRIMARY \(no data\); EVENTS \(binary table, 5 rows"):
        classify_data_file(path)


@pytest.mark.parametrize("content, what", [
    (b"", "an empty file"),
    (b"\x89PNG\r\n\x1a\n" + bytes(64), "a PNG image"),
    (bytes(range(256)) * 4, "a binary file"),
    (b'{"scene": {}}\n', "a JSON document"),
    (b"# Notes\n\nThese are the notes of a night at the telescope.\nNothing else.\n", "not a data table"),
    (b"name,age\nx,3\n", "a text table of 2 columns: not photometry"),
    (b"1 2 3 4 5\n6 7 8 9 10\n", "5 numeric columns without a header"),
    (gzip.compress(b"wavelength,flux\n1,2\n"), "a gzip-compressed file that does not hold FITS"),
])
def test_files_of_no_kind_say_what_they_are(tmp_path, content, what):
    path = tmp_path / "thing.fits"
    path.write_bytes(content)
    with pytest.raises(NotADataFile, match="thing.fits: " + ".*" + what.replace("(", r"\(").replace(")", r"\)")) as info:
        classify_data_file(path)
    # What the file is, never what it says: a typed path may name any readable file.
    for quoted in ("name, age", "Notes", "telescope", "scene"):
        assert quoted not in str(info.value).split("thing.fits: ", 1)[1]


def test_missing_file_and_folder_are_data_errors(tmp_path):
    with pytest.raises(DataError, match=r"nope\.fits: no such data file"):
        classify_data_file(tmp_path / "nope.fits")
    with pytest.raises(DataError, match="is a folder"):
        classify_data_file(tmp_path)
    with pytest.raises(DataError, match=r"nope: no such data file or folder"):
        collect_data_files(tmp_path / "nope")


def test_folder_sorted_by_kind_non_data_skipped_with_a_note(tmp_path):
    folder = tmp_path / "my_night"
    folder.mkdir()
    a = make_oifits(folder, "b_night.fits", band="H", n_telescopes=3, insname="INV_H", arrname="INV_ARR")
    b = _gzip_copy(make_oifits(tmp_path, "n.fits", band="N", n_telescopes=2, insname="INV_N"),
                   folder / "a_mid.oifits.gz")
    p1 = _photometry(folder / "sed_optical.csv")
    p2 = _photometry(folder / "sed_infrared.csv")
    s = _spectrum_csv(folder / "nband.txt")
    (folder / "README.md").write_text("# What is here\n\nOne night of invented data.\n")
    (folder / "start.json").write_text(json.dumps({"scene": {}}))
    (folder / ".hidden").write_text("x")
    (folder / "plots").mkdir()
    files = collect_data_files(folder)
    assert isinstance(files, DataFiles)
    assert files.oifits == [str(b), str(a)]          # name order within a folder
    assert files.photometry == [str(p2), str(p1)]    # several photometry files are allowed
    assert files.spectrum == [str(s)]
    assert dict(files) == {"oifits": files.oifits, "photometry": files.photometry, "spectrum": files.spectrum}
    skipped = {SkippedFile(*x).path.split("/")[-1]: x.reason for x in files.skipped}
    assert set(skipped) == {"README.md", "start.json", "plots"}
    assert "JSON" in skipped["start.json"] and "folder" in skipped["plots"]
    assert any(n.startswith(str(folder / "README.md") + ": skipped: ") for n in files.notes)


def test_paths_lists_and_duplicates(tmp_path):
    a = make_oifits(tmp_path, "a.fits", band="K", insname="INV_K")
    p = _photometry(tmp_path / "p.csv")
    assert collect_data_files(a).oifits == [str(a)]
    files = collect_data_files([a, p, tmp_path / "a.fits"])
    assert files.oifits == [str(a)] and files.photometry == [str(p)] and files.skipped == []
    assert files.files == [str(a), str(p)]


def test_a_named_non_data_file_is_refused_not_skipped(tmp_path):
    a = make_oifits(tmp_path, "a.fits")
    (tmp_path / "README.md").write_text("# Read me\n\nprose here\n")
    with pytest.raises(NotADataFile, match=r"README\.md: a text file that is not a data table"):
        collect_data_files([a, tmp_path / "README.md"])


def test_a_folder_without_data_is_refused_listing_what_it_skipped(tmp_path):
    (tmp_path / "README.md").write_text("# Read me\n\nprose here\n")
    with pytest.raises(DataError, match=r"folder holds no data file .*skipped: README\.md"):
        collect_data_files(tmp_path)


def test_a_truncated_fits_file_in_a_folder_is_refused_not_skipped(tmp_path):
    src = make_oifits(tmp_path, "whole.fits", band="L", insname="INV_L")
    folder = tmp_path / "d"
    folder.mkdir()
    data = src.read_bytes()
    (folder / "cut.fits").write_bytes(data[: len(data) // 2 + 100])
    with pytest.raises(DataError, match=r"cut\.fits: truncated or damaged FITS file") as exc:
        collect_data_files(folder)
    assert not isinstance(exc.value, NotADataFile)


def test_report_uses_the_data_layer_classifier():
    import diskexplorer.report as report

    assert report.classify_data_file is classify_data_file
