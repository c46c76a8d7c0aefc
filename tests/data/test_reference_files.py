"""The third-party files kept in the repository: unchanged, documented, shipped where they belong.

The SHA-256 sums are those of the published copies the files were taken from (recorded in the
READMEs when they were copied); the LGPL notice is the one the OIFITS test suite is
distributed under (tests/reference/oifits/README.md).
"""
import hashlib
import re
import tomllib
from pathlib import Path

import pytest

from _reference import REFERENCE_DIR, lab_constants_dir, oifits_dir

ROOT = Path(__file__).resolve().parents[2]
_ROW = re.compile(r"^\|\s*`([^`]+)`\s*\|.*\|\s*`([0-9a-f]{64})`\s*\|\s*$")


def _listed(readme):
    """{file: sha256} from the table rows of a README."""
    return {m.group(1): m.group(2) for m in map(_ROW.match, readme.read_text().splitlines()) if m}


def _sha256(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("folder, pattern", [
    (oifits_dir(), "*/*.fits"),
    (lab_constants_dir(), "*.txt"),
])
def test_every_file_is_listed_with_its_source_and_unchanged(folder, pattern):
    listed = _listed(folder / "README.md")
    present = {str(p.relative_to(folder)) for p in folder.glob(pattern)}
    assert present and set(listed) == present
    changed = [name for name, digest in listed.items() if _sha256(folder / name) != digest]
    assert not changed, f"{changed} differ from the published copies named in {folder / 'README.md'}"


def test_oifits_readme_carries_the_sources_and_the_lgpl_notice():
    text = (oifits_dir() / "README.md").read_text()
    for needed in ("reference C library for the OIFITS standard", "Pauls et al. 2005", "PASP 117, 1255",
                   "Duvert, Young & Hummel 2017", "A&A 597, A8",
                   "GNU Lesser General Public\nLicense, version 3 or (at your option) any later version"):
        assert needed in text, needed


def test_lab_constants_readme_cites_every_source():
    text = (lab_constants_dir() / "README.md").read_text()
    for needed in ("Dorschner J., Begemann B., Henning Th., Jäger C., Mutschke H. 1995, A&A 300, 503",
                   "FOR2285", "University of Jena", "Draine B. T. 2003, ApJ 598, 1017",
                   "Rouleau F., Martin P. G. 1991, ApJ 377, 526",
                   "published measurements, free to use with a citation"):
        assert needed in text, needed


def test_check_values_copy_is_unchanged():
    listed = re.search(r"SHA-256 `([0-9a-f]{64})`", (REFERENCE_DIR / "README.md").read_text()).group(1)
    assert _sha256(REFERENCE_DIR / "CHECK_VALUES.md") == listed


def test_package_data_ships_the_constants_and_not_the_test_files():
    # What a wheel contains: [tool.setuptools.package-data] patterns, relative to diskexplorer/.
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    pkg = ROOT / "diskexplorer"
    shipped = {q for p in conf["package-data"]["diskexplorer"] for q in pkg.glob(p)}
    folder = lab_constants_dir()
    missing = [p.name for p in [*folder.glob("*.txt"), folder / "README.md"] if p not in shipped]
    assert not missing, f"not in [tool.setuptools.package-data]: {missing}"
    assert all(inc.startswith("diskexplorer") for inc in conf["packages"]["find"]["include"])
