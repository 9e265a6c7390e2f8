"""Outputs are written whole or not at all, and never over a file deflect did not write (issue 17, item 8).

Every command that writes files (predict --csv / --figures, demo --out, compliance --plot, clamp --plot, tune
--contour) goes through `deflect.output.files.Outputs`: files are written to a hidden staging folder beside
their place and moved there only when all of them are written; each folder keeps the list of the files deflect
wrote in it (`files.MANIFEST`), and a file it does not list is never replaced. Before the fix `predict --csv D`
overwrote the user's D/stations.csv, `demo --out D` the user's report and figure, and a run whose
deviation.csv could not be written had already written stations.csv.
"""

import copy
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import OD_SLEEVE, run_cli, write_job  # noqa: E402

from deflect.errors import InputError  # noqa: E402
from deflect.output import figures  # noqa: E402
from deflect.output.csv_files import FILES as CSV_FILES  # noqa: E402
from deflect.output.figures import PREDICT_FIGURES  # noqa: E402
from deflect.output.files import MANIFEST, Outputs, written_here  # noqa: E402

RING = Path(__file__).resolve().parents[1] / "data" / "examples" / "ring.toml"
USERS = "the user's own numbers\n"


@pytest.fixture()
def sleeve(tmp_path) -> str:
    return str(write_job(tmp_path, "sleeve", copy.deepcopy(OD_SLEEVE)))


def staging_left(folder: Path) -> list[Path]:
    return list(folder.rglob(".deflect-staging-*"))


def test_predict_writes_its_files_and_lists_them(tmp_path, sleeve):
    out = tmp_path / "out"
    code, stdout, err = run_cli(["predict", sleeve, "--csv", str(out / "csv"), "--figures", str(out / "fig"), "--quiet"])
    assert code == 0, err
    assert sorted(p.name for p in (out / "csv").iterdir()) == sorted([*CSV_FILES, MANIFEST])
    assert sorted(p.name for p in (out / "fig").iterdir()) == sorted([*PREDICT_FIGURES, MANIFEST])
    assert written_here(out / "csv") == set(CSV_FILES)
    assert not staging_left(tmp_path)
    for name in CSV_FILES:
        assert f"wrote {out / 'csv' / name}" in stdout
    # deflect's own files are overwritten on the next run
    code, _, err = run_cli(["predict", sleeve, "--csv", str(out / "csv"), "--quiet"])
    assert code == 0, err


def test_predict_never_overwrites_a_file_it_did_not_write(tmp_path, sleeve):
    folder = tmp_path / "D"
    folder.mkdir()
    (folder / "stations.csv").write_text(USERS)
    (folder / "notes.txt").write_text(USERS)
    code, out, err = run_cli(["predict", sleeve, "--csv", str(folder), "--quiet"])
    assert code == 2 and out == ""
    assert ": --csv: " in err and "stations.csv' is there already and deflect did not write it" in err
    assert (folder / "stations.csv").read_text() == USERS
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt", "stations.csv"]
    assert not staging_left(tmp_path)


def test_a_foreign_file_is_refused_before_the_prediction(tmp_path):
    """The folder is checked before the job is read: a job that does not exist is not even looked at."""
    folder = tmp_path / "D"
    folder.mkdir()
    (folder / "passes.csv").write_text(USERS)
    code, _, err = run_cli(["predict", str(tmp_path / "absent.toml"), "--csv", str(folder)])
    assert code == 2 and "--csv: " in err and "passes.csv" in err


def test_an_output_that_fails_part_way_leaves_nothing(tmp_path, sleeve):
    folder = tmp_path / "D"
    (folder / "deviation.csv").mkdir(parents=True)           # a folder where a file is due
    code, _, err = run_cli(["predict", sleeve, "--csv", str(folder), "--quiet"])
    assert code == 2 and ": --csv: " in err and "is a folder" in err
    assert sorted(p.name for p in folder.iterdir()) == ["deviation.csv"]


def test_a_figure_that_cannot_be_drawn_leaves_no_csv_either(tmp_path, sleeve, monkeypatch):
    def broken(pred, folder, key="--figures"):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(figures, "predict_plots", broken)
    code, _, err = run_cli(["predict", sleeve, "--csv", str(tmp_path / "csv"), "--figures", str(tmp_path / "fig"),
                            "--quiet"])
    assert code == 2 and "--figures: cannot write the figures (No space left on device)" in err
    assert not (tmp_path / "csv").exists() and not (tmp_path / "fig").exists()
    assert not staging_left(tmp_path)


@pytest.mark.parametrize("foreign", ["report.txt", "figures/section.png", "csv/stations.csv"])
def test_demo_never_overwrites_a_file_it_did_not_write(tmp_path, foreign):
    folder = tmp_path / "demo"
    (folder / foreign).parent.mkdir(parents=True, exist_ok=True)
    (folder / foreign).write_text(USERS)
    code, _, err = run_cli(["demo", "--out", str(folder)])
    assert code == 2 and "--out: " in err and "deflect did not write it" in err
    assert (folder / foreign).read_text() == USERS
    assert not staging_left(tmp_path)


def test_compliance_and_clamp_figures_over_files_of_the_user(tmp_path):
    mine = tmp_path / "ring.png"
    mine.write_bytes(b"not deflect's")
    code, _, err = run_cli(["clamp", str(RING), "--plot", str(mine)])
    assert code == 2 and "--plot: " in err and mine.read_bytes() == b"not deflect's"
    drawn = tmp_path / "released.pdf"
    for _ in range(2):                      # written, then overwritten: deflect's own
        code, out, err = run_cli(["clamp", str(RING), "--plot", str(drawn)])
        assert code == 0, err
    assert drawn.read_bytes().startswith(b"%PDF") and written_here(tmp_path) == {"released.pdf"}


def test_outputs_moves_all_or_nothing(tmp_path):
    with Outputs() as outputs:
        folder = outputs.folder(tmp_path / "a", "--x")
        (folder / "one.txt").write_text("1")
        single = outputs.file(tmp_path / "two.txt", "--y")
        single.write_text("2")
        assert not (tmp_path / "a").exists() and not (tmp_path / "two.txt").exists()
        written = outputs.commit()
    assert [p.name for p in written] == ["one.txt", "two.txt"]
    assert (tmp_path / "a" / "one.txt").read_text() == "1" and (tmp_path / "two.txt").read_text() == "2"
    with pytest.raises(RuntimeError):
        with Outputs() as outputs:
            outputs.file(tmp_path / "three.txt", "--z").write_text("3")
            raise RuntimeError("the command failed")
    assert not (tmp_path / "three.txt").exists() and not staging_left(tmp_path)


def test_a_file_where_a_folder_is_due(tmp_path):
    (tmp_path / "taken").write_text(USERS)
    with pytest.raises(InputError, match="is a file") as error:
        Outputs().folder(tmp_path / "taken" / "csv", "--csv")
    assert error.value.key == "--csv"
