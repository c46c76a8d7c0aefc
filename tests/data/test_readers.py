"""One door from a file's kind to its reader."""
import pytest
import xarray as xr

from diskexplorer.data import FILE_KINDS, ObservationSet, read_data_file
from diskexplorer.errors import DataError
from diskexplorer.sample import SAMPLE_FILES, sample_data_dir

SAMPLE = sample_data_dir()


@pytest.mark.parametrize("kind, name, expected", [
    ("oifits", SAMPLE_FILES["oifits"][0], ObservationSet),
    ("photometry", SAMPLE_FILES["photometry"], xr.Dataset),
    ("spectrum", SAMPLE_FILES["spectrum"], xr.Dataset),
])
def test_each_kind_reads_its_file(kind, name, expected):
    assert kind in FILE_KINDS
    assert isinstance(read_data_file(SAMPLE / name, kind), expected)


def test_options_reach_the_reader():
    with pytest.raises(DataError, match="not found"):
        read_data_file(SAMPLE / SAMPLE_FILES["oifits"][0], "oifits", target="NO-SUCH-STAR")


def test_an_unknown_kind_is_refused_naming_the_file():
    with pytest.raises(DataError, match=r"aurelis_photometry\.csv: unknown data kind 'image'"):
        read_data_file(SAMPLE / SAMPLE_FILES["photometry"], "image")
