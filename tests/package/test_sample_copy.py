"""The shipped sample files: found as package data, copied into a folder of the user's."""
import filecmp

from diskexplorer.cli import main
from diskexplorer.sample import SAMPLE_FILES, copy_sample_data, load_sample_data, sample_data_dir


def _names():
    return [*SAMPLE_FILES["oifits"], SAMPLE_FILES["photometry"], SAMPLE_FILES["spectrum"],
            SAMPLE_FILES["start"], "README.md"]


def test_sample_data_dir_is_inside_the_package():
    import diskexplorer

    folder = sample_data_dir()
    assert folder.is_dir()
    assert folder.resolve().parent == __import__("pathlib").Path(diskexplorer.__file__).resolve().parent
    for name in _names():
        assert (folder / name).is_file(), name


def test_copy_sample_data_copies_byte_for_byte_and_reads_back(tmp_path):
    written = copy_sample_data(tmp_path / "mine")
    assert sorted(p.name for p in written) == sorted(_names())
    for name in _names():
        assert filecmp.cmp(sample_data_dir() / name, tmp_path / "mine" / name, shallow=False)
    loaded = load_sample_data(tmp_path / "mine")
    assert loaded["observations"].n_points("vis2") > 0


def test_cli_sample_data_refuses_to_overwrite_without_force(tmp_path, capsys):
    out = tmp_path / "sd"
    assert main(["sample-data", "--out", str(out)]) == 0
    (out / SAMPLE_FILES["photometry"]).write_text("# my own edits\n")
    capsys.readouterr()
    assert main(["sample-data", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "--force" in err and "overwrite=True" not in err
    assert (out / SAMPLE_FILES["photometry"]).read_text() == "# my own edits\n"  # nothing lost
    assert main(["sample-data", "--out", str(out), "--force"]) == 0
    assert filecmp.cmp(sample_data_dir() / SAMPLE_FILES["photometry"], out / SAMPLE_FILES["photometry"],
                       shallow=False)


def test_cli_sample_data_out_naming_a_file(tmp_path, capsys):
    target = tmp_path / "afile"
    target.write_text("x")
    assert main(["sample-data", "--out", str(target)]) == 1
    assert "not a folder" in capsys.readouterr().err
    assert target.read_text() == "x"
