"""One door from a file's kind to its reader."""
import pytest
import xarray as xr
from _reference import oifits_path

from diskexplorer.data import (FILE_KINDS, ObservationSet, OifitsWarning, read_data_file, read_oifits,
                               read_photometry, read_spectrum)
from diskexplorer.data.readers import FILE_KIND_NAMES, FILE_READERS
from diskexplorer.errors import DataError
from diskexplorer.sample import SAMPLE_FILES, sample_data_dir
from diskexplorer.testing import assert_observations_equal

SAMPLE = sample_data_dir()


@pytest.mark.parametrize("kind, name, expected", [
    ("oifits", SAMPLE_FILES["oifits"][0], ObservationSet),
    ("photometry", SAMPLE_FILES["photometry"], xr.Dataset),
    ("spectrum", SAMPLE_FILES["spectrum"], xr.Dataset),
])
def test_each_kind_reads_its_file(kind, name, expected):
    assert kind in FILE_KINDS
    assert isinstance(read_data_file(SAMPLE / name, kind), expected)


def test_one_table_holds_each_kind_its_name_and_its_reader():
    assert FILE_KINDS == tuple(FILE_READERS) == ("oifits", "photometry", "spectrum")
    assert [e.reader for e in FILE_READERS.values()] == [read_oifits, read_photometry, read_spectrum]
    assert FILE_KIND_NAMES == {"oifits": "OIFITS", "photometry": "photometry", "spectrum": "spectrum"}


@pytest.mark.parametrize("name", ["v2/Alp_Vic--MIRC_H.fits", "v1/testdata.fits"])
def test_a_published_oifits_file_reads_as_its_reader_reads_it(name):
    # Public OIFITS test files (tests/reference/oifits/README.md names their source).
    path = oifits_path(name)
    assert_observations_equal(read_data_file(path, "oifits"), read_oifits(path), ignore=())


def test_options_reach_the_reader():
    with pytest.warns(OifitsWarning, match="no data for target"), pytest.raises(DataError, match="not found"):
        read_data_file(SAMPLE / SAMPLE_FILES["oifits"][0], "oifits", target="NO-SUCH-STAR")
    # extinction options: dereddening by A_V = 1 mag raises every flux density
    path = SAMPLE / SAMPLE_FILES["spectrum"]
    plain, dereddened = read_data_file(path, "spectrum"), read_data_file(path, "spectrum", a_v=1.0, r_v=3.1)
    assert (dereddened["flux"].values > plain["flux"].values).all()


def test_an_unknown_kind_is_refused_naming_the_file():
    with pytest.raises(DataError, match=r"aurelis_photometry\.csv: unknown data kind 'image'; "
                                        r"expected one of oifits, photometry, spectrum"):
        read_data_file(SAMPLE / SAMPLE_FILES["photometry"], "image")
    # several OIFITS files at once: the message names each
    with pytest.raises(DataError, match=r"^a\.fits, b\.fits: unknown data kind 'OIFITS'"):
        read_data_file(["a.fits", "b.fits"], "OIFITS")
