"""The command line: every command on the demo data, its outputs, its errors and its help.

Slow steps (reading the sample data, the model cube) are shared through module-scoped
fixtures; commands run in-process through ``main([...])`` except one subprocess check
that ``python -m diskexplorer.cli`` works as a program.
"""
from __future__ import annotations

import csv
import subprocess
import sys

import numpy as np
import pytest

from diskexplorer.cli import main
from diskexplorer.report import DEFAULT_DPI, FIGURE_SIZES_IN, FIGURES, classify_data_file
from diskexplorer.report.outputs import DATA_FIGURES

# The sample has correlated fluxes and differential phases but no normalised |V|.
SAMPLE_FIGURES = [f for f in FIGURES if f != "visibility_amplitude"]
from diskexplorer.sample import SAMPLE_FILES, demo_scene, sample_data_dir

SAMPLE = sample_data_dir()
COMMANDS = ("demo", "sample-data", "species", "evaluate", "scan")


def _stderr_line(capsys):
    err = capsys.readouterr().err.strip()
    assert err, "expected a message on stderr"
    assert len(err.splitlines()) == 1, err
    return err


@pytest.fixture(scope="module")
def start_file(tmp_path_factory):
    """A starting-point document of the demo scene naming the sample data (absolute paths)."""
    from diskexplorer.fitting import export_start, write_start
    from diskexplorer.sample import load_sample_data

    folder = tmp_path_factory.mktemp("start")
    paths = load_sample_data()["paths"]
    # Only the K/H and N instruments: enough for every figure, quicker to evaluate.
    paths = dict(paths, oifits=[p for p in paths["oifits"] if "LM" not in p])
    doc = export_start(demo_scene(), free=["rings.0.r_in", "geometry.inclination"], data=paths)
    return write_start(folder / "start.json", doc)


@pytest.fixture(scope="module")
def evaluated(start_file, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "out"
    code = main(["evaluate", str(start_file), "--out", str(out), "--formats", "png,pdf",
                 "--image-wavelengths", "2.2,10", "--npix", "96"])
    return code, out


# --------------------------------------------------------------------------- help
@pytest.mark.parametrize("command", COMMANDS)
def test_help_of_every_command(command, capsys):
    with pytest.raises(SystemExit) as exc:
        main([command, "--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert out.startswith("usage: diskexplorer " + command)


def test_top_level_help_lists_commands(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    for command in COMMANDS:
        assert command in out


def test_runs_as_a_program():
    proc = subprocess.run([sys.executable, "-m", "diskexplorer.cli", "evaluate", "--help"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0
    assert "--formats" in proc.stdout


# --------------------------------------------------------------------------- evaluate
def test_evaluate_writes_everything_it_promises(evaluated, capsys):
    code, out = evaluated
    assert code == 0
    names = {p.name for p in out.iterdir()}
    expected = {"chi2.csv", "model.nc", "residuals_vis2.csv", "residuals_t3phi.csv", "residuals_t3amp.csv",
                "residuals_corrflux.csv", "residuals_diffphi.csv", "residuals_photometry.csv",
                "residuals_spectrum.csv"}
    expected |= {f"{f}.{fmt}" for f in SAMPLE_FIGURES for fmt in ("png", "pdf")}
    assert DATA_FIGURES["visibility_amplitude"] == "visamp"
    assert names == expected
    for p in out.iterdir():
        assert p.stat().st_size > 0, p


def test_evaluate_prints_chi2_table_and_progress(start_file, tmp_path, capsys):
    code = main(["evaluate", str(start_file), "--out", str(tmp_path / "r"), "--formats", "png",
                 "--image-wavelengths", "10", "--npix", "32",
                 "--data", str(SAMPLE / SAMPLE_FILES["oifits"][0]), str(SAMPLE / SAMPLE_FILES["photometry"])])
    assert code == 0
    out = capsys.readouterr().out
    assert "reading the data" in out and "figure sed" in out
    assert "chi2/N" in out and "total" in out
    # --data replaced the OIFITS (H/K only) and photometry; the document's spectrum is kept,
    # and the output says so (the explorer would have replaced all its data).
    assert "QT-N" not in out and "spectrum" in out
    assert "note: keeping the document's spectrum data (" in out and SAMPLE_FILES["spectrum"] in out
    assert "keeping the document's photometry" not in out and "keeping the document's oifits" not in out


@pytest.mark.parametrize("name", SAMPLE_FIGURES)
def test_pngs_have_the_expected_pixel_size(evaluated, name):
    import matplotlib.image as mpimg

    _, out = evaluated
    img = mpimg.imread(out / f"{name}.png")
    w, h = FIGURE_SIZES_IN[name]
    assert img.shape[:2] == (round(h * DEFAULT_DPI), round(w * DEFAULT_DPI))
    assert np.ptp(img[..., :3]) > 0.1  # not a blank page
    assert (out / f"{name}.pdf").read_bytes().startswith(b"%PDF")


def test_residual_csv_columns(evaluated):
    _, out = evaluated
    with open(out / "residuals_vis2.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    for col in ("wavelength_um", "spatial_frequency_Mlambda", "data", "error", "model", "residual"):
        assert col in rows[0]
    r = rows[0]
    expected = (float(r["data"]) - float(r["model"])) / float(r["error"])
    assert float(r["residual"]) == pytest.approx(expected, rel=1e-5, abs=1e-6)
    freq = np.hypot(float(r["u_m"]), float(r["v_m"])) / float(r["wavelength_um"])
    assert float(r["spatial_frequency_Mlambda"]) == pytest.approx(freq, rel=1e-6)
    with open(out / "chi2.csv", newline="") as fh:
        chi2 = list(csv.DictReader(fh))
    assert chi2[-1]["kind"] == "total"
    # The true scene against its own simulated data: χ²/N near 1.
    assert 0.8 < float(chi2[-1]["reduced"]) < 1.2


def test_model_cube_contents(evaluated):
    import xarray as xr

    _, out = evaluated
    with xr.open_dataset(out / "model.nc") as ds:
        assert ds["image"].dims == ("image_wavelength", "y", "x")
        assert ds["image"].shape == (2, 96, 96)
        assert list(ds["image_wavelength"].values) == [2.2, 10.0]
        assert ds["x"].attrs["units"] == "mas"
        assert "total" in ds["component"].values
        assert ds["vis2_model"].sizes["vis2_point"] == ds["vis2_data"].sizes["vis2_point"] > 0
        assert np.all(ds["sed"].sel(component="total").values > 0)
        assert "chi2_vis2" in ds.attrs


def test_evaluate_refuses_to_overwrite(evaluated, start_file, capsys):
    _, out = evaluated
    before = (out / "chi2.csv").stat().st_mtime_ns
    code = main(["evaluate", str(start_file), "--out", str(out)])
    assert code == 2
    err = _stderr_line(capsys)
    assert "exists" in err and "--force" in err
    assert (out / "chi2.csv").stat().st_mtime_ns == before


def test_evaluate_force_overwrites(start_file, tmp_path):
    out = tmp_path / "r"
    args = ["evaluate", str(start_file), "--out", str(out), "--formats", "pdf", "--image-wavelengths", "10",
            "--npix", "32", "--data", str(SAMPLE / SAMPLE_FILES["oifits"][0])]
    assert main(args) == 0
    assert main(args) == 2
    assert main(args + ["--force"]) == 0
    assert not list(out.glob("*.png"))


@pytest.mark.parametrize("args, fragment", [
    (["evaluate", "missing.json"], "no such"),
    (["evaluate", "{bad}", "--formats", "gif"], "--formats"),
    (["evaluate", "{bad}"], "line 1"),
    (["evaluate", "{start}", "--data", "{bad}"], "bad.json"),
    (["evaluate", "{start}", "--data", "missing.fits"], "no such"),
    (["species", "--add", "x"], "--nk"),
    (["species", "--add", "x", "--nk", "missing.nk", "--density", "3"], "no such"),
])
def test_bad_input_gives_one_line_and_nonzero_exit(args, fragment, start_file, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    args = [a.format(bad=bad, start=start_file) for a in args]
    code = main(args)
    assert code != 0
    assert fragment in _stderr_line(capsys)


@pytest.mark.parametrize("args", [["evaluate"], ["frobnicate"], ["evaluate", "x.json", "--npix", "many"]])
def test_bad_arguments_exit_nonzero(args, capsys):
    with pytest.raises(SystemExit) as exc:
        main(args)
    assert exc.value.code == 2
    assert "usage:" in capsys.readouterr().err


def test_classify_data_files(tmp_path):
    assert classify_data_file(SAMPLE / SAMPLE_FILES["oifits"][0]) == "oifits"
    assert classify_data_file(SAMPLE / SAMPLE_FILES["photometry"]) == "photometry"
    assert classify_data_file(SAMPLE / SAMPLE_FILES["spectrum"]) == "spectrum"
    # Content decides, not the name: a CSV named .fits is a spectrum table.
    fake = tmp_path / "fake.fits"
    fake.write_text("wavelength,flux\n1,2\n")
    assert classify_data_file(fake) == "spectrum"


# --------------------------------------------------------------------------- species
def test_species_lists_library(capsys):
    assert main(["species"]) == 0
    out = capsys.readouterr().out
    assert "forsterite" in out and "g/cm3" in out


@pytest.fixture
def nk_file(tmp_path):
    """An invented material: one Lorentz oscillator at 10 µm on a constant background."""
    lam = np.geomspace(0.2, 200.0, 300)
    w, w0 = 1.0 / lam, 0.1
    eps = 2.5 + 0.3 * w0**2 / (w0**2 - w**2 - 1j * 0.1 * w0 * w)
    m = np.sqrt(eps)
    path = tmp_path / "test_material.nk"
    np.savetxt(path, np.column_stack([lam, m.real, np.abs(m.imag)]), header="wavelength um, n, k")
    return path


def test_species_add_writes_a_usable_kappa_table(nk_file, tmp_path, capsys):
    from diskexplorer.physics.opacity import KappaTable

    out = tmp_path / "k.txt"
    code = main(["species", "--add", "test_material", "--nk", str(nk_file), "--density", "3.0",
                 "--method", "cde", "--out", str(out)])
    assert code == 0
    text = capsys.readouterr().out
    assert "no species registry between runs" in text and str(out) in text
    table = KappaTable.from_file(out)
    k = table.kappa([5.0, 10.0])
    assert np.all(k > 0) and k[1] > k[0]  # the invented band at 10 µm
    # Refuses to overwrite without --force.
    assert main(["species", "--add", "test_material2", "--nk", str(nk_file), "--density", "3.0",
                 "--method", "cde", "--out", str(out)]) == 2
    assert "exists" in _stderr_line(capsys)


def test_species_add_rejects_bad_density(nk_file, tmp_path, capsys):
    code = main(["species", "--add", "t2", "--nk", str(nk_file), "--density", "-1", "--method", "cde",
                 "--out", str(tmp_path / "k.txt")])
    assert code == 1
    assert "density" in _stderr_line(capsys)


# --------------------------------------------------------------------------- sample-data
def test_sample_data_writes_and_refuses_overwrite(tmp_path, capsys):
    out = tmp_path / "sd"
    assert main(["sample-data", "--out", str(out)]) == 0
    for name in (*SAMPLE_FILES["oifits"], SAMPLE_FILES["photometry"], SAMPLE_FILES["spectrum"]):
        assert (out / name).stat().st_size > 0
    capsys.readouterr()
    assert main(["sample-data", "--out", str(out)]) == 2
    assert "exists" in _stderr_line(capsys)


# --------------------------------------------------------------------------- sessions
def _session_file(tmp_path, baseline_range=(0.0, float("inf")), bandpass_off=()):
    from diskexplorer.fitting.session_document import session_document, write_session

    doc = session_document(demo_scene(), data={"oifits": [str(SAMPLE / SAMPLE_FILES["oifits"][0])],
                                               "photometry": str(SAMPLE / SAMPLE_FILES["photometry"])},
                           baseline_range=baseline_range, bandpass_off=bandpass_off)
    return write_session(tmp_path / "session.json", doc)


def test_evaluate_reads_an_explorer_session(tmp_path, capsys):
    path = _session_file(tmp_path)
    out = tmp_path / "r"
    code = main(["evaluate", str(path), "--out", str(out), "--image-wavelengths", "10", "--npix", "32"])
    assert code == 0
    text = capsys.readouterr().out
    assert "reading the session" in text and "photometry" in text
    assert (out / "residuals_vis2.csv").exists() and not (out / "residuals_spectrum.csv").exists()


def test_evaluate_applies_a_sessions_baseline_filter_and_bandpass_switch(tmp_path):
    # The session is judged as the explorer judged it: its baseline filter and its
    # channel-bandpass switches reach the data description (no second, partial copy).
    import pandas as pd

    rows = {}
    for name, kw in (("all", {}), ("short", {"baseline_range": (0.0, 40.0)})):
        folder = tmp_path / name
        folder.mkdir()
        path = _session_file(folder, **kw)
        assert main(["evaluate", str(path), "--out", str(folder / "r"), "--image-wavelengths", "10",
                     "--npix", "32"]) == 0
        rows[name] = len(pd.read_csv(folder / "r" / "residuals_vis2.csv", comment="#"))
    assert 0 < rows["short"] < rows["all"]
    from diskexplorer.cli import _read_session_inputs

    oifits = str(SAMPLE / SAMPLE_FILES["oifits"][0])
    scene, desc = _read_session_inputs(_session_file(tmp_path, bandpass_off=[oifits]))
    assert scene == demo_scene() and desc.oifits[0]["bandpass"] is False


# --------------------------------------------------------------------------- evaluate: your own data
# Files written here with the project's writer for an invented array, instrument and
# wavelengths (not the sample's), next to the kind of clutter a real data folder holds.
@pytest.fixture(scope="module")
def own_data(tmp_path_factory):
    from diskexplorer.data import write_oifits
    from diskexplorer.testing import make_observations

    folder = tmp_path_factory.mktemp("own") / "my_night"
    folder.mkdir()
    # Tiny error bars: the demo model is far from a uniform disk, so χ² is huge.
    obs = make_observations(band="L", n_telescopes=5, n_channels=6, noise=0.001, insname="INV_LM",
                            arrname="INV_ARRAY", target="INVENTED-1")
    obs.t3["t3amp"].values[:] = np.nan   # closure phases only: no usable T3AMP (N = 0)
    write_oifits(folder / "night_LM.fits", obs)
    (folder / "sed.csv").write_text("band,value,error,unit\nJ,8.10,0.03,mag\nKs,6.90,0.02,mag\nW3,1.20,0.06,Jy\n")
    (folder / "README.md").write_text("# My night\n\nObserved with an invented instrument.\n")
    (folder / "notes.json").write_text('{"observer": "nobody"}\n')
    return folder


def _table_lines(text):
    lines = text.splitlines()
    start = next(i for i, ln in enumerate(lines) if ln.startswith("data") and "chi2/N" in ln)
    end = next(i for i, ln in enumerate(lines[start:], start) if ln.startswith("total"))
    return lines[start:end + 1]


def test_evaluate_own_folder_skips_non_data_and_formats_large_chi2(start_file, own_data, tmp_path, capsys):
    out = tmp_path / "r"
    code = main(["evaluate", str(start_file), "--out", str(out), "--data", str(own_data),
                 "--image-wavelengths", "3.5", "--npix", "32"])
    assert code == 0, capsys.readouterr().err
    text = capsys.readouterr().out
    assert f"note: {own_data / 'README.md'}: skipped: a text file that is not a data table" in text
    assert f"note: {own_data / 'notes.json'}: skipped: a JSON document" in text
    table = _table_lines(text)
    assert "nan" not in "\n".join(table).lower()
    widths = {len(ln) for ln in table if not ln.startswith(("-", "total"))}
    assert len(widths) == 1, table   # one width for every row: columns line up
    for ln in table[1:]:
        if ln.startswith("-"):
            continue
        cells = ln.split()
        numbers = [c for c in cells if c[0].isdigit() or c == "—"]
        for c in numbers:   # each number stands alone: no two run together
            assert c == "—" or float(c) >= 0, ln
        if cells[0] == "vis2":
            assert float(cells[2]) > 1e7 and "e+" in cells[2], ln   # large χ² in scientific notation
        if cells[0] == "t3amp":
            assert cells[1:] == ["0", "—", "—", "0"], ln
    assert "note: t3amp: no usable data point (N = 0)" in text
    # The document's spectrum is kept; the folder replaced OIFITS and photometry.
    assert "spectrum" in "\n".join(table) and "INV_LM" not in "\n".join(table)


def test_weight_zero_kinds_are_listed_and_said_to_be_out_of_the_total():
    from diskexplorer.report import format_chi2_table

    rows = [dict(kind="vis2", subset="all", n=10, chi2=12.0, reduced=1.2, weight=1.0),
            dict(kind="t3amp", subset="all", n=8, chi2=80.0, reduced=10.0, weight=0.0),
            dict(kind="total", subset="", n=10, chi2=12.0, reduced=1.2, weight=float("nan"))]
    text = format_chi2_table(rows)
    assert "note: t3amp has weight 0: listed, but not in the total" in text
    assert text.splitlines()[2].split() == ["t3amp", "8", "80.00", "10.000", "0"]


def test_evaluate_data_that_is_no_kind_says_what_it_is(start_file, tmp_path, capsys):
    from astropy.io import fits

    image = tmp_path / "frame.fits"
    fits.PrimaryHDU(np.zeros((20, 30), np.float32)).writeto(image)
    code = main(["evaluate", str(start_file), "--out", str(tmp_path / "r"), "--data", str(image)])
    assert code == 1
    err = _stderr_line(capsys)
    assert f"{image}: a FITS image: not OIFITS" in err and "PRIMARY (image 30 × 20)" in err
    assert not (tmp_path / "r").exists()


def test_evaluate_truncated_oifits_names_the_file(start_file, own_data, tmp_path, capsys):
    data = (own_data / "night_LM.fits").read_bytes()
    cut = tmp_path / "cut.fits"
    cut.write_bytes(data[: len(data) // 2 + 11])
    assert main(["evaluate", str(start_file), "--out", str(tmp_path / "r"), "--data", str(cut)]) == 1
    assert f"{cut}: truncated or damaged FITS file" in _stderr_line(capsys)


@pytest.mark.parametrize("value, fragment", [("-2,0", "-2, 0"), ("2.2,abc", "'abc'"), ("10,10", "given twice"),
                                             (",", "no image wavelength")])
def test_bad_image_wavelengths_are_refused_before_anything_is_written(start_file, tmp_path, capsys, value,
                                                                     fragment):
    out = tmp_path / "r"
    code = main(["evaluate", str(start_file), "--out", str(out), f"--image-wavelengths={value}"])
    assert code == 2
    err = _stderr_line(capsys)
    assert err.startswith("diskexplorer evaluate: --image-wavelengths") and fragment in err
    assert "dust" not in err
    assert list(tmp_path.iterdir()) == []


def test_out_naming_a_file_is_one_line_saying_so(start_file, tmp_path, capsys):
    target = tmp_path / "taken.txt"
    target.write_text("mine\n")
    assert main(["evaluate", str(start_file), "--out", str(target)]) == 2
    err = _stderr_line(capsys)
    assert "is a file, not a folder" in err and "Errno" not in err
    assert target.read_text() == "mine\n"


def test_a_failed_evaluation_leaves_nothing_and_a_rerun_is_not_refused(start_file, own_data, tmp_path, capsys,
                                                                       monkeypatch):
    import diskexplorer.report.evaluation as evaluation
    from diskexplorer.errors import DiskExplorerError

    out = tmp_path / "r"
    args = ["evaluate", str(start_file), "--out", str(out), "--data", str(own_data / "night_LM.fits"),
            "--image-wavelengths", "3.5", "--npix", "32"]

    def broken(*a, **k):
        raise DiskExplorerError("figure drawing failed on purpose")

    monkeypatch.setattr(evaluation, "write_figures", broken)
    assert main(args) == 1
    assert "failed on purpose" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []   # no output folder, no leftover temporary folder
    monkeypatch.undo()
    assert main(args) == 0                  # not refused: nothing was left behind
    assert (out / "chi2.csv").exists() and (out / "vis2.png").exists()
    assert [p.name for p in tmp_path.iterdir()] == ["r"]


def test_a_failure_into_an_existing_folder_keeps_what_was_there(start_file, own_data, tmp_path, monkeypatch):
    import diskexplorer.report.evaluation as evaluation

    out = tmp_path / "r"
    out.mkdir()
    (out / "my_notes.txt").write_text("keep me\n")
    args = ["evaluate", str(start_file), "--out", str(out), "--data", str(own_data / "night_LM.fits"),
            "--image-wavelengths", "3.5", "--npix", "32", "--formats", "pdf"]

    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr(evaluation, "write_figures", interrupted)
    with pytest.raises(KeyboardInterrupt):
        main(args)
    assert [p.name for p in out.iterdir()] == ["my_notes.txt"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r"]
    monkeypatch.undo()
    assert main(args) == 0
    assert (out / "my_notes.txt").read_text() == "keep me\n" and (out / "sed.pdf").exists()


def test_version(capsys):
    from importlib import metadata

    with pytest.raises(SystemExit) as exc:
        main(["--version"])
    assert exc.value.code == 0
    assert capsys.readouterr().out.strip() == f"diskexplorer {metadata.version('diskexplorer')}"


def test_evaluate_from_python_checks_arguments_before_reading_anything(tmp_path):
    from diskexplorer.errors import DiskExplorerError
    from diskexplorer.report import evaluate

    missing = tmp_path / "not_read.fits"   # never opened: the arguments are refused first
    with pytest.raises(DiskExplorerError, match=r"image wavelength\(s\) -2, 0: expected positive numbers in µm"):
        evaluate(demo_scene(), out=tmp_path / "r", data=[missing], image_wavelengths=(-2, 0))
    with pytest.raises(DiskExplorerError, match="npix 8"):
        evaluate(demo_scene(), out=tmp_path / "r", data=[missing], npix=8)
    (tmp_path / "f").write_text("")
    with pytest.raises(NotADirectoryError, match="is a file, not a folder"):
        evaluate(demo_scene(), out=tmp_path / "f", data=[missing])
    with pytest.raises(NotADirectoryError, match="is a file, so"):
        evaluate(demo_scene(), out=tmp_path / "f" / "sub", data=[missing])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["f"]


def test_report_silicate_figure_of_a_dust_free_model_draws_no_band():
    from diskexplorer.report.figures import _figure_silicate, _pyplot
    from diskexplorer.observables.spectrum import NO_DUST_BAND

    plt = _pyplot()
    bare = demo_scene().replace(rings=())
    fig = _figure_silicate(plt, bare, None)
    try:
        ax = fig.axes[0]
        assert NO_DUST_BAND in ax.get_title()
        assert [ln.get_label() for ln in ax.get_lines() if ln.get_label() == "model"] == []
    finally:
        plt.close(fig)
    fig = _figure_silicate(plt, demo_scene(), None)
    try:
        assert "model" in [ln.get_label() for ln in fig.axes[0].get_lines()]
        assert NO_DUST_BAND not in fig.axes[0].get_title()
    finally:
        plt.close(fig)
