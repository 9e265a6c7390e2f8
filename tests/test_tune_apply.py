"""Tests of `deflect tune JOB --apply N --out NEW.toml`: a ranked remedy written into a new job.

The round trip (issue 14): the job with option N written in, run through `deflect predict`, gives option N's
cycle time, mass and most material left as the tune reported them. Both sides are the same computation read
back, so they must agree to 1e-9 relative (and so to every printed digit). The demo's tune
(data/examples/housing.toml, run once per session by `deflect report`, tests/conftest.py) has options that
change feeds, tools, the finishing allowance, wear offsets on the OD and in the bore, the compensated contour
and the order of the finishing passes; the default run writes and predicts option 1 (the comparison uses it
too), every option is checked under the slow marker. The small sleeve of tests/test_tune.py goes through the
command itself (`--apply` with `--out`), and its bad input.

The written file is read independently with `tomllib`: the changed values are there in the job's own units,
every line that is not a changed value is kept byte for byte (comments and layout), each changed value is
commented with what it was, a wear offset is written per side along the outward normal (the job's key) with
the machinist's X on the diameter beside it (a bore's X has the opposite sign: its outward normal points at
the axis).
"""

from __future__ import annotations

import difflib
import json
import re
import sys
import tomllib
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from conftest import DEMO_JOB, run_deflect, write_option  # noqa: E402
from test_simulate import write_job  # noqa: E402
from test_tune import in_inches, sleeve  # noqa: E402

from deflect.job.reader import read_job  # noqa: E402
from deflect.output.remedy_job import job_text_with  # noqa: E402

SAME_FLOAT = 1e-9              # one computation read back
MM_PER_INCH = 25.4             # by definition (1959 international inch)
HEADER_LINES = 2               # the comment lines the written job opens with


def printed(value: float, digits: int, scale: float = 1.0) -> str:
    return f"{scale * value:.{digits}f}"


def assert_round_trip(option: dict, predicted: dict) -> None:
    """The written job's prediction gives the option's figures: cycle time, mass, most material left."""
    assert predicted["cycle_time_s"] == pytest.approx(option["cycle_time_s"], rel=SAME_FLOAT)
    assert predicted["predicted"]["mass_g"] == pytest.approx(option["mass_g"], rel=SAME_FLOAT)
    assert predicted["predicted"]["most_material_left_mm"] == pytest.approx(option["predicted"]["most_material_left_mm"],
                                                                       rel=SAME_FLOAT, abs=1e-15)
    # to the printed digits of the tune's table and the predict report
    assert printed(predicted["cycle_time_s"], 1) == printed(option["cycle_time_s"], 1)
    assert printed(predicted["predicted"]["mass_g"], 3) == printed(option["mass_g"], 3)
    assert (printed(predicted["predicted"]["most_material_left_mm"], 1, 1000.0)
            == printed(option["predicted"]["most_material_left_mm"], 1, 1000.0))


# ---------------------------------------------------------------------------------------------------
# the demo: every option written and predicted

def check_option_written(demo_report, demo_option, number: int) -> None:
    path, predicted = demo_option(number)
    option = demo_report[1]["tune"]["options"][number - 1]
    assert_round_trip(option, predicted)
    written = tomllib.loads(path.read_text())
    for change in option["changes"]:
        if change["key"] == "order":
            assert [p["name"] for p in written["pass"]] == change["to"]
        else:
            table = next(p for p in written["pass"] if p["name"] == change["pass"])
            assert table[change["key"]] == change["to"]


def test_the_demo_options_cover_every_kind_of_change(demo_report):
    keys = {c["key"] for o in demo_report[1]["tune"]["options"] for c in o["changes"]}
    assert {"feed", "allowance", "tool", "offset", "compensate", "order"} <= keys


def test_demo_option_1_written_in_predicts_its_figures(demo_report, demo_option):
    check_option_written(demo_report, demo_option, 1)


@pytest.mark.slow
def test_every_demo_option_written_in_predicts_its_figures(demo_report, demo_option):
    for number in range(1, 1 + len(demo_report[1]["tune"]["options"])):
        check_option_written(demo_report, demo_option, number)


def test_demo_option_keeps_every_other_line(demo_report, demo_option):
    """Option 1 (no reordering, no contour): the written job is the job line for line, but for the two header
    lines, one line per changed value, commented with what it was, and the [job] calibration line naming the
    first article's calibration the option was found with (the report's); a replaced line was that key's."""
    path, _ = demo_option(1)
    option = demo_report[1]["tune"]["options"][0]
    assert not {"order", "compensate"} & {c["key"] for c in option["changes"]}
    original = DEMO_JOB.read_text().splitlines()
    written = path.read_text().splitlines()
    assert written[0].startswith("# housing.toml with deflect tune option 1 written in by deflect")
    body = written[HEADER_LINES:]
    marker = "(deflect tune option 1"
    assert sum(marker in line for line in body) == len(option["changes"]) + 1
    assert sum(line.startswith("calibration = ") and marker in line for line in body) == 1
    keys = {c["key"] for c in option["changes"]}
    for tag, i1, i2, j1, j2 in difflib.SequenceMatcher(None, original, body, autojunk=False).get_opcodes():
        if tag == "equal":
            continue
        assert tag in ("replace", "insert"), (tag, original[i1:i2])
        assert all(marker in line for line in body[j1:j2]), body[j1:j2]
        assert all(line.split("=")[0].strip() in keys for line in original[i1:i2]), original[i1:i2]


def test_demo_offsets_say_both_conventions(demo_report, demo_option):
    """Wear offsets: the job key is per side along the outward normal; the comment gives the machinist's X on
    the diameter, 2 x offset on an OD and -2 x offset in a bore."""
    path, _ = demo_option(1)
    option = demo_report[1]["tune"]["options"][0]
    offsets = [c for c in option["changes"] if c["key"] == "offset"]
    assert {c["pass"] for c in offsets} == {"finish OD", "finish bore"}
    text = path.read_text()
    surface = {p["name"]: p["surface"] for p in tomllib.loads(text)["pass"]}
    for change in offsets:
        x = (2.0 if surface[change["pass"]] == "od" else -2.0) * change["to"]
        line = next(line for line in text.splitlines()
                    if line.startswith(f"offset = {change['to']!r}") and f"X {x:+.3f} mm on the diameter" in line)
        assert f"job key offset = {change['to']:.3f}" in line


def test_order_and_compensation_are_written(demo_report, tmp_path):
    """The option that reorders the finishing passes, and the one that programs the compensated contour."""
    payload = demo_report[1]["tune"]
    numbers = {key: next(n for n, o in enumerate(payload["options"], 1) if any(c["key"] == key for c in o["changes"]))
               for key in ("order", "compensate")}
    reordered = tomllib.loads(write_option(tmp_path, DEMO_JOB, payload, numbers["order"]).read_text())
    order = next(c for c in payload["options"][numbers["order"] - 1]["changes"] if c["key"] == "order")
    assert [p["name"] for p in reordered["pass"]] == order["to"] != order["from"]
    original = tomllib.loads(DEMO_JOB.read_text())["pass"]
    for table in reordered["pass"]:              # each table moved whole, with every key it had
        before = next(p for p in original if p["name"] == table["name"])
        assert set(before) <= set(table)
    text = write_option(tmp_path, DEMO_JOB, payload, numbers["compensate"]).read_text()
    compensated = [c for c in payload["options"][numbers["compensate"] - 1]["changes"] if c["key"] == "compensate"]
    tables = {p["name"]: p for p in tomllib.loads(text)["pass"]}
    for change in compensated:
        assert tables[change["pass"]]["compensate"] == change["to"]
    assert re.search(r"compensate = \[\n\s+\[", text), "pairs written one a line"


# ---------------------------------------------------------------------------------------------------
# the writer on its own: inch jobs, comments beside a changed value

def test_inch_job_gets_inches_written():
    tables = in_inches(sleeve())
    text = "\n".join(["[job]", 'title = "inch sleeve"', 'units = "inch"', "", "[[pass]]", 'name = "finish OD"',
                      "feed = 0.004   # in/rev, slow", "allowance = 0.0"])
    changes = [{"pass": "finish OD", "key": "feed", "from": 0.004, "to": 0.16 / MM_PER_INCH},
               {"pass": "finish OD", "key": "offset", "from": 0.0, "to": -0.015 / MM_PER_INCH}]
    written = job_text_with(text, changes, "deflect tune option 1", "inch")
    table = tomllib.loads(written)["pass"][0]
    assert table["feed"] == 0.16 / MM_PER_INCH and table["offset"] == -0.015 / MM_PER_INCH
    assert "# in/rev, slow; was 0.004 (deflect tune option 1)" in written
    assert "in on the diameter" in written
    assert tables["job"]["units"] == "inch"


def test_written_inch_job_reads_back_in_mm(tmp_path):
    tables = in_inches(sleeve())
    path = write_job(tmp_path, "inch", tables)
    changes = [{"pass": "finish OD", "key": "feed", "from": None, "to": 0.16 / MM_PER_INCH}]
    out = tmp_path / "inch-1.toml"
    out.write_text(job_text_with(path.read_text(), changes, "deflect tune option 1", "inch"))
    job = read_job(out)
    finish = next(p for p in job.tables["pass"] if p["name"] == "finish OD")
    assert finish["feed"] == pytest.approx(0.16, rel=1e-15)


# ---------------------------------------------------------------------------------------------------
# the command: the small sleeve, and its bad input

@pytest.fixture(scope="module")
def sleeve_job(tmp_path_factory) -> Path:
    return write_job(tmp_path_factory.mktemp("apply"), "sleeve", sleeve())


@pytest.fixture(scope="module")
def sleeve_applied(sleeve_job):
    """`deflect tune SLEEVE --apply 2 --out ... --json`: the JSON and the written job."""
    out = sleeve_job.parent / "sleeve-option-2.toml"
    code, text, err = run_deflect(["tune", sleeve_job, "--json", "--apply", "2", "--out", out])
    assert code == 0, err
    return json.loads(text), out


def test_apply_writes_the_option_through_the_command(sleeve_job, sleeve_applied):
    payload, out = sleeve_applied
    assert payload["applied"] == {"rank": 2, "file": str(out)}
    code, text, err = run_deflect(["predict", out, "--json", "--quiet"])
    assert code == 0, err
    assert_round_trip(payload["options"][1], json.loads(text))
    # and the other option, written by the same writer from the same JSON
    other = write_option(out.parent, sleeve_job, payload, 1)
    code, text, err = run_deflect(["predict", other, "--json", "--quiet"])
    assert code == 0, err
    assert_round_trip(payload["options"][0], json.loads(text))


def files_in(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def assert_refused(args: list, key: str, words: str, folder: Path, before: list[str]) -> None:
    code, out, err = run_deflect(args)
    assert code == 2, err
    assert err.startswith("error:") and f"{key}: " in err and words in err, err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert files_in(folder) == before, "nothing written"


@pytest.mark.parametrize("extra, key, words", [
    (["--apply", "0", "--out", "NEW"], "--apply", "numbered from 1"),
    (["--apply", "1"], "--apply", "--out NEW.toml"),
    (["--out", "NEW"], "--out", "--apply N"),
    (["--apply", "1", "--out", "JOB"], "--out", "the job file itself"),
    (["--apply", "1", "--out", "UNDER_A_FILE/new.toml"], "--out", "is a file, not a folder"),
    (["--apply", "1", "--out", "FOLDER"], "--out", "is a folder"),
    (["--apply", "1", "--out", "USERS"], "--out", "deflect did not write it"),
])
def test_bad_apply_is_refused_before_the_search(sleeve_job, tmp_path, extra, key, words):
    folder = tmp_path
    (folder / "a-folder").mkdir()
    (folder / "users.toml").write_text("# my own notes\n")
    names = {"NEW": folder / "new.toml", "JOB": sleeve_job, "UNDER_A_FILE/new.toml": folder / "users.toml" / "new.toml",
             "FOLDER": folder / "a-folder", "USERS": folder / "users.toml"}
    args = ["tune", sleeve_job, "--quiet"] + [names.get(a, a) for a in extra]
    assert_refused(args, key, words, folder, files_in(folder))
    assert (folder / "users.toml").read_text() == "# my own notes\n"


def test_an_option_that_does_not_exist_is_refused(sleeve_job, sleeve_applied, tmp_path):
    payload, _ = sleeve_applied
    count = len(payload["options"])
    assert_refused(["tune", sleeve_job, "--quiet", "--apply", count + 1, "--out", tmp_path / "new.toml"],
                   "--apply", f"there is no option {count + 1}: the search found options 1 to {count}",
                   tmp_path, [])


def test_a_drawing_named_by_the_job_is_found_from_the_new_folder(tmp_path):
    """[part] drawing is read relative to the job file: written into another folder, the job names the same
    file from there (and the part read back is the same)."""
    import shutil

    import tomlkit

    source, target = tmp_path / "jobs", tmp_path / "elsewhere" / "deeper"
    source.mkdir()
    target.mkdir(parents=True)
    shutil.copy(DEMO_JOB.parent / "housing.dxf", source / "housing.dxf")
    tables = tomllib.loads(DEMO_JOB.read_text())
    tables["part"] = {"drawing": "housing.dxf"}
    job = source / "housing.toml"
    job.write_text(tomlkit.dumps(tables))
    changes = [{"pass": "finish OD", "key": "feed", "from": 0.1, "to": 0.08}]
    written = target / "housing-1.toml"
    written.write_text(job_text_with(job.read_text(), changes, "deflect tune option 1", "mm", source, target))
    assert tomllib.loads(written.read_text())["part"]["drawing"] == "../../jobs/housing.dxf"
    before, after = read_job(job), read_job(written)
    assert after.section.polygon().tolist() == before.section.polygon().tolist()


def test_a_job_written_twice_stays_valid():
    """An option written into a job that has a compensated contour already (written across lines): the comment
    that says what it was stays on one line."""
    text = "\n".join(["[[pass]]", 'name = "finish OD"', "feed = 0.1", "compensate = [", "  [40.0, -0.01],",
                      "  [6.0, 0.0],", "]   # from the first article", ""])
    changes = [{"pass": "finish OD", "key": "compensate", "from": None, "to": [[40.0, -0.012], [6.0, -0.001]]}]
    written = job_text_with(text, changes, "deflect tune option 2", "mm")
    assert tomllib.loads(written)["pass"][0]["compensate"] == [[40.0, -0.012], [6.0, -0.001]]
    assert "# from the first article; was 2 pairs (deflect tune option 2)" in written


def test_a_calibration_given_on_the_command_line_is_named_in_the_new_job(tmp_path):
    """An option found with --calibration FILE: the written job names that file (from its own folder), so that
    `deflect predict` on it uses the same constants."""
    source, target = tmp_path / "jobs", tmp_path / "out"
    source.mkdir()
    target.mkdir()
    job = write_job(source, "sleeve", sleeve())
    calibration = source / "calibration.toml"
    calibration.write_text('[calibration]\nfitted_per = "tool"\n\n[[calibration.factor]]\napplies_to = "T1"\n'
                           'kind = "force"\nvalue = 0.5\nlow = 0.4\nhigh = 0.6\nidentified = true\n')
    changes = [{"pass": "finish OD", "key": "feed", "from": 0.1, "to": 0.08}]
    written = target / "sleeve-1.toml"
    written.write_text(job_text_with(job.read_text(), changes, "deflect tune option 1", "mm", source, target,
                                     calibration))
    assert tomllib.loads(written.read_text())["job"]["calibration"] == "../jobs/calibration.toml"
    read = read_job(written)
    assert read.calibration is not None and read.calibration.factors[0].value == 0.5


def test_a_pass_named_with_spaces_around_it_is_found():
    """The reader drops the spaces around a pass's name; the writer finds the pass the same way."""
    text = '[[pass]]\nname = "  finish OD "\nfeed = 0.1\n'
    written = job_text_with(text, [{"pass": "finish OD", "key": "feed", "from": 0.1, "to": 0.08}],
                            "deflect tune option 1", "mm")
    assert tomllib.loads(written)["pass"][0] == {"name": "  finish OD ", "feed": 0.08}
