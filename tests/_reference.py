"""Where the third-party reference files of the tests live: all inside the repository.

* ``tests/reference/oifits/`` — the OIFITS test files (sources and LGPL notice in the
  README there), for the tests only;
* the laboratory optical constants ship in the package
  (``diskexplorer/dust/lab_constants/``, found with importlib.resources), because users
  compute κ from them too.

Nothing here reads outside the repository; a missing file fails the test (never skips).
"""

from pathlib import Path

from diskexplorer.dust.catalogue import constants_directory

__all__ = ["REFERENCE_DIR", "oifits_dir", "oifits_path", "lab_constants_dir"]

#: ``tests/reference/``: the files the tests check against (README there).
REFERENCE_DIR = Path(__file__).resolve().parent / "reference"


def oifits_dir() -> Path:
    """``tests/reference/oifits`` (holds ``v1/`` and ``v2/``); FileNotFoundError if absent."""
    path = REFERENCE_DIR / "oifits"
    if not path.is_dir():
        raise FileNotFoundError(f"OIFITS reference files not found at {path} (they are part of "
                                "the repository: is the checkout complete?)")
    return path


def oifits_path(rel) -> Path:
    """Path of one OIFITS reference file, e.g. ``"v2/bigtest2.fits"``; FileNotFoundError if missing."""
    path = oifits_dir() / rel
    if not path.is_file():
        raise FileNotFoundError(f"OIFITS reference file {path} is missing")
    return path


def lab_constants_dir() -> Path:
    """The optical-constants files shipped in the package, as a filesystem path."""
    return Path(str(constants_directory()))
