"""``diskexplorer composition``: the solve, the drop-one table and named alternatives on the sample."""
from __future__ import annotations

import pytest

from diskexplorer.cli import main


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


def test_solve_drop_one_and_iron_against_carbon(start, capsys):
    code = main(["composition", str(start), "--ring", "inner", "--components",
                 "olivine_glass,pyroxene_glass,forsterite,iron", "--kinds", "spectrum,corrflux,photometry",
                 "--drop-one", "--compare", "iron:amorphous_carbon"])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "judged: spectrum (weight 1), corrflux (weight 1), photometry (weight 1)" in out
    assert "ring inner: component" in out and "± 1σ" in out
    # the sample's truth (sample.demo_scene): 0.55, 0.2, 0.15, 0.1
    fractions = {}
    for line in out.splitlines():
        parts = line.split()   # component, before, after, σ
        if len(parts) == 4 and parts[0] in ("olivine_glass", "iron"):
            fractions[parts[0]] = float(parts[2])
    assert fractions["olivine_glass"] == pytest.approx(0.55, abs=0.02)
    assert fractions["iron"] == pytest.approx(0.10, abs=0.02)
    assert "drop-one test, ring inner" in out and "ΔBIC" in out
    table = out[out.index("alternative"):]
    rows = {line.split()[1]: line.split() for line in table.splitlines() if line.startswith("with ")}
    assert float(rows["iron"][-1]) == 0.0 and float(rows["amorphous_carbon"][-1]) > 10
    assert "Akaike 1974" in out and "Schwarz 1978" in out


@pytest.mark.parametrize("argv, message", [
    (["--compare", "iron"], "--compare 'iron': expected SPECIES:SPECIES"),
    (["--compare", "iron:iron"], "expected SPECIES:SPECIES"),
    (["--components", "iron,,forsterite"], "--components 'iron,,forsterite'"),
])
def test_bad_options_are_usage_errors_in_one_line(start, capsys, argv, message):
    code = main(["composition", str(start), "--ring", "inner", *argv])
    assert code == 2
    err = _one_line(capsys)
    assert err.startswith("diskexplorer composition: ") and message in err


@pytest.mark.parametrize("argv, message", [
    (["--ring", "middle"], "no ring named 'middle'; rings: inner, outer"),
    (["--ring", "inner", "--components", "iron,unobtainium"], "unobtainium"),
    (["--ring", "inner", "--kinds", "visamp"], "visamp not in the data"),
])
def test_bad_inputs_exit_1_in_one_line(start, capsys, argv, message):
    code = main(["composition", str(start), *argv])
    assert code == 1
    err = _one_line(capsys)
    assert err.startswith("diskexplorer composition: ") and message in err


def test_missing_start(tmp_path, capsys):
    assert main(["composition", str(tmp_path / "none.json"), "--ring", "inner"]) == 1
    assert "no such starting-point or session file" in _one_line(capsys)
