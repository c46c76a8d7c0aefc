"""``diskexplorer scan``: argument checks before anything runs, a small serial scan, atomic writes.

The distributed run against separately started ``dask scheduler``/``dask worker`` programs is in
``tests/fitting/test_scan_cluster.py`` (slow).
"""
from __future__ import annotations

import io

import numpy as np
import pytest
import xarray as xr

from diskexplorer.cli import main
from diskexplorer.scan_command import ProgressBar, ScanUsageError, check_scheduler, parse_axis, write_atomically

AXES = ["--axis", "rings.0.r_in=0.30:0.40:2", "--axis", "rings.0.t_in=1300:1700:2"]


@pytest.fixture(scope="module")
def start(tmp_path_factory):
    from diskexplorer.sample import copy_sample_data

    folder = tmp_path_factory.mktemp("sample")
    copy_sample_data(folder)
    return folder / "aurelis_start.json"


def _one_line(capsys):
    err = capsys.readouterr().err.strip()
    assert err and len(err.splitlines()) == 1, err
    return err


@pytest.mark.parametrize("axis, message", [
    ("rings.0.r_in=0.3:0.4", "expected PATH=LO:HI:N"),
    ("rings.0.r_in", "expected PATH=LO:HI:N"),
    ("=0.3:0.4:3", "expected PATH=LO:HI:N"),
    ("rings.0.r_in=a:0.4:3", "LO and HI must be numbers"),
    ("rings.0.r_in=0.3:0.4:2.5", "whole number"),
    ("rings.0.r_in=0.3:0.4:1", "at least 2 points"),
    ("rings.0.r_in=0.4:0.3:5", "not below HI"),
    ("rings.0.r_in=0.3:nan:5", "finite"),
    ("rings.0.r_in=0:0.4:5:log", "log axis needs LO > 0"),
    ("rings.0.r_in=0.3:0.4:5:cubic", "expected log or linear"),
    ("nonsense=1:2:3", "not a parameter path"),
    ("rings.7.r_in=0.3:0.4:3", "rings.7"),
    ("geometry.inclination=10:95:3", "outside the allowed range"),
])
def test_bad_axes_are_refused_in_one_line_naming_the_option(start, tmp_path, capsys, axis, message):
    # An unreachable scheduler too: the axis is refused before any connection is tried.
    code = main(["scan", str(start), "--axis", axis, "--scheduler", "tcp://127.0.0.1:1",
                 "--out", str(tmp_path / "scan.nc")])
    assert code == 2
    err = _one_line(capsys)
    assert err.startswith("diskexplorer scan: --axis") and message in err
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("extra, message", [
    (["--scheduler", "localhost"], "--scheduler 'localhost'"),
    (["--scheduler", "tcp://host:99999"], "--scheduler"),
    (["--scheduler", "tcp://127.0.0.1:8786", "--workers", "2"], "--workers"),
    (["--workers", "0"], "--workers 0"),
])
def test_bad_scheduler_and_workers_are_refused(start, tmp_path, capsys, extra, message):
    code = main(["scan", str(start), *AXES, *extra, "--out", str(tmp_path / "scan.nc")])
    assert code == 2
    assert message in _one_line(capsys)
    assert list(tmp_path.iterdir()) == []


def test_bad_outputs_and_inputs_are_refused(start, tmp_path, capsys):
    assert main(["scan", str(start), *AXES, "--out", str(tmp_path / "scan.zarr")]) == 2
    assert "ending in .nc" in _one_line(capsys)
    assert main(["scan", str(start), *AXES, "--out", str(tmp_path / "missing" / "scan.nc")]) == 2
    assert "does not exist" in _one_line(capsys)
    (tmp_path / "folder.nc").mkdir()
    assert main(["scan", str(start), *AXES, "--out", str(tmp_path / "folder.nc")]) == 2
    assert "is a folder" in _one_line(capsys)
    assert main(["scan", str(tmp_path / "nope.json"), *AXES, "--out", str(tmp_path / "scan.nc")]) == 1
    assert "nope.json: no such starting-point file" in _one_line(capsys)
    with pytest.raises(SystemExit) as exc:  # argparse: --axis and --out are required
        main(["scan", str(start), "--out", str(tmp_path / "scan.nc")])
    assert exc.value.code == 2


def test_serial_scan_writes_the_grid_and_never_overwrites(start, tmp_path, capsys):
    from diskexplorer.fitting.scan import scan_grid
    from diskexplorer.fitting.start_import import read_start

    out = tmp_path / "scan.nc"
    assert main(["scan", str(start), *AXES, "--scheduler", "serial", "--out", str(out)]) == 0
    captured = capsys.readouterr()
    assert "\r[" in captured.err and "4/4 points 100 %" in captured.err  # the bar, redrawn in place
    assert "best grid point" in captured.out and "rings.0.t_in = " in captured.out
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scan.nc"]  # no temporary file left
    sp = read_start(start)
    ref = scan_grid(sp.scene, sp.comparison(), {"rings.0.r_in": (0.30, 0.40, 2), "rings.0.t_in": (1300, 1700, 2)},
                    scheduler=None)
    with xr.open_dataset(out) as ds:
        np.testing.assert_allclose(ds["chi2"].values, ref["chi2"].values, rtol=1e-12)
        assert ds.attrs["status"] == "complete"
    before = out.read_bytes()
    assert main(["scan", str(start), *AXES, "--scheduler", "serial", "--out", str(out)]) == 2
    assert "--force" in _one_line(capsys) and out.read_bytes() == before
    assert main(["scan", str(start), *AXES[:2], "--scheduler", "serial", "--out", str(out), "--force"]) == 0
    with xr.open_dataset(out) as ds:
        assert ds["chi2"].dims == ("rings_0_r_in",)


def test_a_failed_write_leaves_no_partial_file(tmp_path, monkeypatch):
    import diskexplorer.fitting.scan as scan

    ds = xr.Dataset({"chi2": ("x", np.arange(3.0))})
    out = tmp_path / "scan.nc"
    out.write_text("the user's file")

    def broken(ds, path, overwrite=False):
        open(path, "w").write("half")
        raise OSError("disk full")

    monkeypatch.setattr(scan, "write_scan", broken)
    with pytest.raises(OSError, match="disk full"):
        write_atomically(ds, out, force=True)
    assert out.read_text() == "the user's file"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scan.nc"]


def test_a_file_that_appeared_meanwhile_is_kept(tmp_path):
    ds = xr.Dataset({"chi2": ("x", np.arange(3.0))})
    out = tmp_path / "scan.nc"
    out.write_text("made during the scan")
    kept = write_atomically(ds, out, force=False)
    assert kept != out and kept.exists() and out.read_text() == "made during the scan"


def test_parse_axis_and_scheduler():
    assert parse_axis("rings.0.r_in=0.30:0.40:40") == ("rings.0.r_in", (0.30, 0.40, 40, "linear"))
    assert parse_axis("rings[inner].sigma_in=1e-4:1e-2:9:log") == ("rings[inner].sigma_in", (1e-4, 1e-2, 9, "log"))
    assert check_scheduler("tcp://10.0.0.5:8786") == "tcp://10.0.0.5:8786"
    assert check_scheduler("serial") == "serial"
    with pytest.raises(ScanUsageError, match="--scheduler"):
        check_scheduler("tcp://10.0.0.5")


def test_progress_bar_redraws_in_place():
    now = [0.0]
    stream = io.StringIO()
    bar = ProgressBar(200, stream=stream, interval=0.2, width=10, clock=lambda: now[0])
    now[0] = 5.0
    bar.update(50, 200)
    bar.update(60, 200)  # within the interval: not drawn
    now[0] = 10.0
    bar.update(200, 200)
    bar.close()
    text = stream.getvalue()
    assert text.count("\r") == 2 and text.endswith("\n")
    assert "[##........] 50/200 points  25 %  5 s, 15 s left" in text
    assert "[##########] 200/200 points 100 %  10 s" in text


def test_help(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["scan", "--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert out.startswith("usage: diskexplorer scan") and "--scheduler" in out and "PATH=LO:HI:N" in out
