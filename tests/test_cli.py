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
from diskexplorer.sample import SAMPLE_FILES, demo_scene, sample_data_dir

SAMPLE = sample_data_dir()
COMMANDS = ("demo", "sample-data", "species", "evaluate")


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
                "residuals_photometry.csv", "residuals_spectrum.csv"}
    expected |= {f"{f}.{fmt}" for f in FIGURES for fmt in ("png", "pdf")}
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
    # --data replaced the OIFITS (H/K only) and photometry; the document's spectrum is kept.
    assert "QT-N" not in out and "spectrum" in out


@pytest.mark.parametrize("name", FIGURES)
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
def test_evaluate_reads_an_explorer_session(tmp_path, capsys):
    import json

    session = pytest.importorskip("diskexplorer.app.session")
    doc = {"schema": session.SESSION_SCHEMA, "scene": session.scene_to_dict(demo_scene()),
           "data": {"oifits": [str(SAMPLE / SAMPLE_FILES["oifits"][0])],
                    "photometry": str(SAMPLE / SAMPLE_FILES["photometry"])},
           "filters": {"bands": [], "instruments": [], "baseline_range_m": [0.0, None]}, "view": {}, "pins": []}
    path = tmp_path / "session.json"
    path.write_text(json.dumps(doc))
    out = tmp_path / "r"
    code = main(["evaluate", str(path), "--out", str(out), "--image-wavelengths", "10", "--npix", "32"])
    assert code == 0
    text = capsys.readouterr().out
    assert "reading the session" in text and "photometry" in text
    assert (out / "residuals_vis2.csv").exists() and not (out / "residuals_spectrum.csv").exists()
