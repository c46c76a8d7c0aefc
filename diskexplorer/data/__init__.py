"""Readers and writers of observational data: OIFITS, photometry and spectra.

Every reader checks a file's content before trusting its name and returns xarray
Datasets; :func:`collect_data_files` sorts files and folders into these kinds by content (wavelength in µm, flux density in Jy, (u, v) in m, phases in degrees).
"""

# OIFITS
from .observations import ObservationSet, baseline_lengths, make_array_table
from .oifits import read_oifits
from .oifits_validate import Defect, OifitsWarning, validate_oifits
from .oifits_write import write_oifits

# Bands and zero points
from .bands import (AB_ZERO_POINT_JY, INTERFEROMETRIC_BANDS, PHOTOMETRIC_BANDS, PhotometricBand,
                    band_range, magnitude_to_jy, photometric_band)

# Recognising files by content
from .classify import DataFiles, NotADataFile, SkippedFile, classify_data_file, collect_data_files

# One reader per kind of file
from .readers import FILE_KINDS, read_data_file

# Photometry, spectra, extinction
from .photometry import photometry_dataset, read_photometry
from .spectrum import read_spectrum, spectrum_dataset
from .extinction import deredden

__all__ = [
    # OIFITS
    "ObservationSet", "read_oifits", "write_oifits", "validate_oifits", "Defect", "OifitsWarning",
    "baseline_lengths", "make_array_table",
    # bands
    "INTERFEROMETRIC_BANDS", "PHOTOMETRIC_BANDS", "AB_ZERO_POINT_JY", "PhotometricBand",
    "band_range", "photometric_band", "magnitude_to_jy",
    # recognising files
    "classify_data_file", "collect_data_files", "DataFiles", "SkippedFile", "NotADataFile",
    # one reader per kind of file
    "read_data_file", "FILE_KINDS",
    # photometry, spectra
    "read_photometry", "photometry_dataset", "read_spectrum", "spectrum_dataset", "deredden",
]
