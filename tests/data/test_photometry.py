"""Photometry and spectrum readers, zero points and extinction correction.

Zero points: CHECK_VALUES §7 — 2MASS (Cohen, Wheaton & Megeath 2003, AJ 126, 1090; 2MASS
Explanatory Supplement §VI.4a; CONFIRMED, secondary), WISE (Wright et al. 2010; Jarrett et
al. 2011; WISE Explanatory Supplement §IV.4.h; F0 CONFIRMED, secondary; magnitude → Jy
values COMPUTED), Bessell (1979) V as on Huchra's table (CONFIRMED), AB (Oke & Gunn 1983
form on the same page: formula CONFIRMED, 3630.78 Jy COMPUTED).
"""

import numpy as np
import pytest
from astropy import constants as const
from astropy.io import fits

from diskexplorer.data import (AB_ZERO_POINT_JY, deredden, magnitude_to_jy, photometric_band,
                               read_photometry, read_spectrum)
from diskexplorer.errors import DataError


@pytest.mark.parametrize("band, mag, jy, rel, source", [
    ("2MASS.Ks", 5.0, 6.667, 1e-12, "Cohen et al. 2003 / 2MASS ES VI.4a, F0 = 666.7 Jy (CONFIRMED, secondary)"),
    ("Ks", 5.0, 6.667, 1e-12, "as above, short name"),
    ("J", 0.0, 1594.0, 0.0, "2MASS J F0 = 1594 Jy (CONFIRMED, secondary)"),
    ("H", 0.0, 1024.0, 0.0, "2MASS H F0 = 1024 Jy (CONFIRMED, secondary)"),
    ("WISE.W1", 5.0, 3.0954, 1e-12, "Wright 2010 / Jarrett 2011, F0 = 309.540 Jy; value COMPUTED"),
    ("W3", 3.0, 1.998494, 1e-6, "WISE W3 F0 = 31.674 Jy; value COMPUTED (CHECK_VALUES §7.2)"),
    ("W4", 2.0, 1.325446, 1e-6, "WISE W4 F0 = 8.363 Jy; value COMPUTED (CHECK_VALUES §7.2)"),
    ("V", 0.0, 3640.0, 0.0, "Bessell 1979 on Huchra's table (CONFIRMED)"),
    ("Bessell.B", 0.0, 4260.0, 0.0, "Bessell 1979 on Huchra's table (CONFIRMED)"),
    ("AB", 0.0, 3630.78, 2e-6, "AB: -2.5 log f_nu - 48.60 (CONFIRMED formula, COMPUTED value)"),
])
def test_zero_points(band, mag, jy, rel, source):
    flux, _ = magnitude_to_jy(mag, band)
    assert float(flux) == pytest.approx(jy, rel=rel, abs=0 if rel else 1e-9), source


def test_band_lookup_and_refusals():
    assert photometric_band("wise w2").wavelength == pytest.approx(4.6028)
    assert photometric_band("2MASS_Ks").zero_point == 666.7
    assert "Cohen" in photometric_band("Ks").source
    with pytest.raises(DataError, match="ambiguous"):
        photometric_band("K")
    with pytest.raises(DataError, match="unknown photometric band"):
        photometric_band("IRAC1")
    assert AB_ZERO_POINT_JY == pytest.approx(3630.7805, rel=1e-7)


def write(tmp_path, text, name="phot.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_read_photometry_units_and_limits(tmp_path):
    lam = 10.0
    flam = 1e-13  # W m-2 um-1
    fnu_expected = flam * 1e6 * (lam * 1e-6) ** 2 / const.c.value / 1e-26  # F_nu = F_lambda λ²/c, Jy
    p = write(tmp_path, "# invented photometry of a synthetic source\n"
                        "band,wavelength,value,error,unit,upper_limit\n"
                        "Ks,,5.0,0.1,mag,0\n"
                        "W1,,5.0,0.05,mag,no\n"
                        ",1.25,1200,12,mJy,\n"
                        f",{lam},{flam},1e-15,W m-2 um-1,false\n"
                        ",0.5,15.0,,ABmag,yes\n"
                        "V,,0.35,0.01,Jy,0\n")
    ds = read_photometry(p)
    assert ds.sizes["point"] == 6
    np.testing.assert_allclose(ds["flux"].values[:2], [6.667, 3.0954], rtol=1e-12)
    assert ds["flux_err"].values[0] == pytest.approx(0.4 * np.log(10) * 6.667 * 0.1, rel=1e-12)
    assert ds["flux"].values[2] == pytest.approx(1.2)
    assert ds["flux"].values[3] == pytest.approx(fnu_expected, rel=1e-10)
    assert ds["flux"].values[4] == pytest.approx(3630.78 * 10 ** (-6), rel=1e-5)
    assert ds["upper_limit"].values.tolist() == [False, False, False, False, True, False]
    np.testing.assert_allclose(ds["wavelength"].values, [2.159, 3.3526, 1.25, 10.0, 0.5, 0.55])
    assert ds["band"].values.tolist()[:2] == ["2MASS.Ks", "WISE.W1"]
    assert ds["flux"].attrs["units"] == "Jy" and ds["wavelength"].attrs["units"] == "um"


@pytest.mark.parametrize("text, pattern", [
    ("band,value,unit\nKs,5,mag\n", r"phot\.csv: line 1: header lacks column\(s\) error"),
    ("value,error,unit\n5,0.1,mag\n", r"header lacks column\(s\) band or wavelength"),
    ("band,value,error,unit\nKs,5,0.1,furlong\n", r"phot\.csv: line 2: field 'unit': not a unit"),
    ("band,value,error,unit\nKs,5,0.1,m\n", r"line 2: field 'unit': not a flux-density unit"),
    ("band,value,error,unit\nKs,5,0.1,mag\nJ,bright,0.1,mag\n", r"line 3: field 'value': not a number"),
    ("band,value,error,unit\n# c\nKs,5,x,mag\n", r"line 3: field 'error': not a number"),
    ("wavelength,value,error,unit\nabc,5,0.1,Jy\n", r"line 2: field 'wavelength': not a number"),
    ("band,value,error,unit\nQQ,5,0.1,mag\n", r"line 2: field 'band': not a known photometric band"),
    ("band,value,error,unit\nK,5,0.1,mag\n", r"line 2: field 'band': .*ambiguous"),
    ("wavelength,value,error,unit\n2.2,5,0.1,mag\n", r"line 2: field 'unit': magnitudes need a known band"),
    ("band,value,error,unit,upper_limit\nKs,5,0.1,mag,maybe\n", r"line 2: field 'upper_limit'"),
    ("band,value,error,unit\nKs,5,-0.1,mag\n", r"line 2: field 'error': is negative"),
    ("band,value,error,unit\nKs,5,0.1\n", r"line 2: 3 field\(s\), expected 4"),
    ("band,value,error,unit\nKs,5,,mag\n", r"line 2: field 'error': empty"),
])
def test_bad_photometry_refused_with_file_line_field(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern) as info:
        read_photometry(write(tmp_path, text))
    # A message never quotes the file's content (a typed path may name any readable file).
    for word in ("furlong", "bright", "'x'", "abc", "QQ", "-0.1"):
        assert word not in str(info.value)


def test_spectrum_csv_with_header_units(tmp_path):
    p = write(tmp_path, "# synthetic N-band spectrum\nwavelength [um], flux [mJy], error [mJy]\n"
                        "12.0, 1500, 20\n8.0, 1000, 10\n10.0, 2000, 15\n", "spec.csv")
    ds = read_spectrum(p)
    np.testing.assert_array_equal(ds["wavelength"].values, [8.0, 10.0, 12.0])  # sorted
    np.testing.assert_allclose(ds["flux"].values, [1.0, 2.0, 1.5])
    np.testing.assert_allclose(ds["flux_err"].values, [0.01, 0.015, 0.02])


def test_spectrum_ascii_without_header_needs_units(tmp_path):
    p = write(tmp_path, "80000 1e-14\n100000 2e-14\n", "spec.txt")
    with pytest.raises(DataError, match="no wavelength unit"):
        read_spectrum(p)
    ds = read_spectrum(p, wavelength_unit="AA", flux_unit="erg s-1 cm-2 AA-1")
    lam_cm = 8e-4
    expected = 1e-14 * 1e8 * lam_cm ** 2 / const.c.cgs.value / 1e-23  # F_nu = F_lambda λ²/c, Jy
    assert ds["flux"].values[0] == pytest.approx(expected, rel=1e-10)
    np.testing.assert_allclose(ds["wavelength"].values, [8.0, 10.0], rtol=1e-14)


def test_spectrum_fits_tables(tmp_path):
    w = np.linspace(8, 13, 6)
    cols = [fits.Column(name="WAVELENGTH", format="D", unit="um", array=w),
            fits.Column(name="FLUX", format="D", unit="mJy", array=np.arange(6.0) + 1),
            fits.Column(name="ERROR", format="D", unit="mJy", array=np.full(6, 0.1))]
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(tmp_path / "s.dat")
    ds = read_spectrum(tmp_path / "s.dat")  # recognised from content, not suffix
    np.testing.assert_allclose(ds["flux"].values, (np.arange(6.0) + 1) / 1000)
    # one row with array columns
    cols = [fits.Column(name="WAVE", format="6D", unit="micron", array=w[None, :]),
            fits.Column(name="FLUX", format="6D", unit="Jy", array=np.ones((1, 6)))]
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(tmp_path / "r.fits")
    assert read_spectrum(tmp_path / "r.fits").sizes["wavelength"] == 6
    cols = [fits.Column(name="X", format="D", array=w)]
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(tmp_path / "bad.fits")
    with pytest.raises(DataError, match="no FITS table with a wavelength column"):
        read_spectrum(tmp_path / "bad.fits")


@pytest.mark.parametrize("text, pattern", [
    ("wavelength [um], flux [Jy]\n8.0, 1\n9.0, one\n", r"spec\.csv: line 3: field 'flux': not a number"),
    ("wavelength [um], flux [Jy]\n8.0, 1\n8.0, 2\n", r"duplicate wavelength"),
    ("wavelength [um], flux [parsec]\n8.0, 1\n", r"flux unit \(from the file\) is not a flux density"),
    ("lam [um], flux [Jy]\n8.0, 1\n", r"missing column\(s\) wavelength"),
])
def test_bad_spectrum_refused(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern) as info:
        read_spectrum(write(tmp_path, text, "spec.csv"))
    assert "one" not in str(info.value) and "parsec" not in str(info.value)


def test_extinction_correction_matches_dust_extinction(tmp_path):
    pytest.importorskip("dust_extinction")
    import astropy.units as u
    from dust_extinction.parameter_averages import G23

    p = write(tmp_path, "wavelength [um], flux [Jy]\n0.55, 1.0\n2.2, 1.0\n10.0, 1.0\n", "spec.csv")
    ds = read_spectrum(p, a_v=2.0)
    # independent call of the same maintained curve (Gordon et al. 2023)
    trans = G23(Rv=3.1).extinguish(np.array([0.55, 2.2, 10.0]) * u.um, Av=2.0)
    np.testing.assert_allclose(ds["flux"].values, 1.0 / trans, rtol=1e-12)
    # at V the curve's A_λ/A_V is ~1, so the correction is ~10**(0.4 A_V)
    assert ds["flux"].values[0] == pytest.approx(10 ** (0.4 * 2.0), rel=0.05)
    assert ds.attrs["a_v"] == 2.0
    assert deredden(ds, 0.0)["flux"].equals(ds["flux"])
    far = write(tmp_path, "wavelength [um], flux [Jy]\n50.0, 1.0\n", "far.csv")
    with pytest.raises(DataError, match="outside"):
        read_spectrum(far, a_v=1.0)
    phot = read_photometry(write(tmp_path, "band,value,error,unit\nV,1.0,0.1,Jy\n"), a_v=1.0)
    assert phot["flux"].values[0] > 2.0
