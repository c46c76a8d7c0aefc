"""Where the shared third-party reference data live (outside the repository).

Set ``DISKEXPLORER_REFERENCE`` to override the default ``<project>/../shared/reference``.
Tests that need the data fail (they do not skip) when it is missing.
"""

import os
from pathlib import Path

__all__ = ["reference_dir"]


def reference_dir() -> Path:
    """Return the reference directory, or raise FileNotFoundError saying how to set it."""
    default = Path(__file__).resolve().parents[1].parent / "shared" / "reference"
    path = Path(os.environ.get("DISKEXPLORER_REFERENCE", default))
    if not path.is_dir():
        raise FileNotFoundError(
            f"reference data not found at {path}; set DISKEXPLORER_REFERENCE to the shared "
            "reference directory (it holds oifits/ and optical_constants/)")
    return path


def reference_path(*parts) -> Path:
    """Path of a file under the reference directory; FileNotFoundError if it is missing."""
    path = reference_dir().joinpath(*parts)
    if not path.exists():
        raise FileNotFoundError(f"reference file {path} is missing")
    return path


__all__.append("reference_path")
