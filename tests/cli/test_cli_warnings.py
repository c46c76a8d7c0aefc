"""The command line shows each warning of a reader as one line naming file and table."""
import subprocess
import sys

from _reference import oifits_path

from diskexplorer.fitting import export_start, write_start
from diskexplorer.sample import demo_scene


def test_reader_warnings_are_one_line_each_without_python_source(tmp_path):
    # A public OIFITS test file whose wavelengths are stored in decreasing order: valid,
    # read with a warning (OIFITS v2, Duvert et al. 2017, recommends ascending order).
    reversed_file = oifits_path("v2/bad_wave_reversed.fits")
    start = write_start(tmp_path / "start.json", export_start(demo_scene(), data={"oifits": [str(reversed_file)]}))
    proc = subprocess.run([sys.executable, "-m", "diskexplorer.cli", "evaluate", str(start),
                           "--out", str(tmp_path / "out"), "--formats", "png", "--image-wavelengths", "2.2",
                           "--npix", "64"],
                          capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    warned = [line for line in proc.stderr.splitlines() if ": warning" in line]
    assert warned, proc.stderr
    for line in warned:
        assert line.startswith("diskexplorer evaluate: warning: ")
        assert "bad_wave_reversed.fits" in line and "OI_WAVELENGTH" in line, line
    # no Python source location and no echoed source line anywhere
    assert ".py:" not in proc.stderr and "read_oifits(" not in proc.stderr, proc.stderr
