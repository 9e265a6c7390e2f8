"""deflect explain: the defects an audit of the first-article fit found, each pinned by a test that failed before
its fix.

1. A size error read only inside a fillet (where the reading moves with the surface's size by a small share of
   it) was printed "identified" with an interval of hundreds of micrometres, or unbounded; the wear offsets for
   the next part then read as if the surface's size were known.
2. A reading at the part's very end (z = 40 on a sleeve that runs to 40) was refused as "outside the part".
3. A face height read on a face no pass finishes lacked the note that it checks the blank.
4. `explain` of an inch job did not open with the line every report of an inch job opens with.

Bands are ISO 286-1:2010, Table 1 (standard tolerance grades) and Table 2 (shaft h: es = 0): IT8 is 39 um over 30
up to 50 mm. The measured parts are the simulation's own prediction read with the tests' shapely gauges
(`synthetic_parts`), or a reading written out by hand where only its place matters.
"""

from __future__ import annotations

import copy
import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from synthetic_parts import measure, measured_toml  # noqa: E402
from test_first_article import HOUSING, HOUSING_JOB, SLEEVE  # noqa: E402
from test_simulate import OD_SLEEVE, run_cli, write_job  # noqa: E402
from test_tune import in_inches  # noqa: E402

from deflect.decisions import first_article  # noqa: E402
from deflect.decisions.first_article import explain  # noqa: E402
from deflect.errors import InputError  # noqa: E402
from deflect.job.fits import tolerance_from_table  # noqa: E402
from deflect.job.measured import measured_from_data  # noqa: E402
from deflect.job.reader import read_job  # noqa: E402
from deflect.machining.simulate import kept_workers, simulate  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402

IT8_30_TO_50_UM = 39.0          # ISO 286-1:2010 Table 1, IT8, nominal sizes over 30 up to 50 mm
IT8_18_TO_30_UM = 33.0          # ... over 18 up to 30 mm
RIM_FILLET_R = 24.9             # inside the 0.2 mm fillet where the housing's rim meets its OD (r 24.8 to 25)
FLANGE_TOP = (28.0, 5.0)        # (r, z) on the flange's top face: op 1 finished it, no pass of op 2 cuts it


@pytest.fixture(scope="module")
def housing_truth():
    """The housing as the model predicts it (the part the shop 'measured', without noise)."""
    process = process_from_job(HOUSING_JOB)
    with kept_workers():
        return process, simulate(HOUSING_JOB, process, with_ranges=False)


@pytest.fixture(scope="module")
def fillet_run(housing_truth):
    """The OD and the bore read on their straight stretch, the rim's height read only inside its fillet with
    the OD, and a face height on the flange's top face."""
    process, truth = housing_truth
    data = measure(truth, diameters=[("od", 24.0, 0.002), ("id", 24.0, 0.003)],
                   faces=[(RIM_FILLET_R, 45.0, 0.003), (FLANGE_TOP[0], FLANGE_TOP[1], 0.003)])
    data["measured"].pop("mass")
    with kept_workers():
        return explain(HOUSING_JOB, process, measured_from_data(data, "fillet", HOUSING_JOB))


def estimate(result, label: str):
    return next(e for e in result.estimates if e.unknown.label == label)


# ---------------------------------------------------------------------------------------------------
# 1. a size error too wide to act on is not identified

def test_the_band_a_size_error_is_judged_against_comes_from_iso_286():
    band_at = first_article.band_at
    tolerances = tolerance_from_table({"od": "h8", "id": "H8"})
    # 50 h8: es = 0, ei = -IT8 = -39 um on the diameter: 19.5 um a side
    assert band_at(tolerances, "od", 50.0).width_mm == pytest.approx(IT8_30_TO_50_UM / 2000.0, abs=1e-12)
    assert band_at(tolerances, "id", 47.6).width_mm == pytest.approx(IT8_30_TO_50_UM / 2000.0, abs=1e-12)
    # no band in [tolerance]: IT8 at the diameter, a side; a face: IT8 at its height, one for one
    assert band_at(None, "od", 25.0).width_mm == pytest.approx(IT8_18_TO_30_UM / 2000.0, abs=1e-12)
    assert band_at(tolerances, "face", 45.0).width_mm == pytest.approx(IT8_30_TO_50_UM / 1000.0, abs=1e-12)
    # beyond ISO 286-1's sizes there is nothing to judge against
    assert band_at(None, "od", 5000.0) == first_article.NO_BAND


def test_a_size_error_read_only_inside_a_fillet_is_not_identified(fillet_run):
    rim = estimate(fillet_run, "size error face (face rim)")
    assert not rim.identified and rim.value == 0.0
    # the reason says the readings do not pin it down, against which band, and what reading would
    assert "do not pin its size down" in rim.reason and f"{IT8_30_TO_50_UM:.0f} um" in rim.reason
    assert "flat of the face" in rim.reason
    # every size error still called identified has an interval no wider than its band, and a finite one
    for e in fillet_run.estimates:
        if e.unknown.kind == "size" and e.identified:
            assert math.isfinite(e.low) and math.isfinite(e.high)
            assert e.high - e.low <= IT8_30_TO_50_UM / 2000.0


def test_a_rim_height_written_against_a_fillet_reading_prints_no_unbounded_size_error(tmp_path):
    """The audit's case through the command: the rim's height (45.001) written for a reading taken at r = 24.9,
    inside the fillet, where the drawn boundary lies 27 um lower. Before the fix the rim's size error was
    printed "identified" with an interval of -inf to +inf um (or hundreds of um), and the wear offsets read as
    if every surface's size were known."""
    measured = tmp_path / "fillet.toml"
    measured.write_text(measured_toml({"measured": {
        "diameter": [{"surface": "od", "z": 24.0, "value": 50.014}, {"surface": "od", "z": 40.0, "value": 50.020},
                     {"surface": "id", "z": 24.0, "value": 47.595}, {"surface": "id", "z": 40.0, "value": 47.587}],
        "face": [{"r": RIM_FILLET_R, "value": 45.001}]}}))
    code, out, err = run_cli(["explain", str(HOUSING), str(measured), "--json"])
    assert code == 0, err
    assert "Warning" not in err
    payload = json.loads(out)
    errors = {s["pass"]: s for s in payload["size_errors"]}
    assert not errors["face rim"]["identified"] and "What would" in errors["face rim"]["reason"]
    for s in errors.values():
        if s["identified"]:
            assert s["high_mm"] - s["low_mm"] <= IT8_30_TO_50_UM / 2000.0
    unsized = {name for name, s in errors.items() if not s["identified"]}
    (option,) = payload["next_part"]["options"]
    offsets = {c["pass"] for c in option["changes"] if c["key"] == "offset"}
    assert set(option["aimed_without_size"]) == offsets & unsized
    for name in offsets:
        said = next(part for part in option["in_words"].split("; ") if part.startswith(f"{name}:"))
        assert ("NOT from a measured size" in said) == (name in unsized)
    code, text, _ = run_cli(["explain", str(HOUSING), str(measured)])
    assert code == 0 and "inf" not in text and "nan" not in text


# ---------------------------------------------------------------------------------------------------
# 2. a reading at the part's end

def test_a_reading_at_the_part_s_end_is_on_the_part(tmp_path):
    path = tmp_path / "sleeve.toml"
    path.write_text(SLEEVE)
    job = read_job(path)
    ends = {"measured": {"diameter": [{"surface": "od", "z": 40.0, "value": 40.010},
                                      {"surface": "od", "z": 0.0, "value": 40.001},
                                      {"surface": "od", "z": 20.0, "value": 40.008}],
                         "wall": [{"z": 40.0, "value": 1.010}]}}
    readings = measured_from_data(ends, "ends", job).readings
    assert [r.nominal_mm for r in readings] == pytest.approx([40.0, 40.0, 40.0, 1.0], abs=1e-9)
    assert [r.at_mm for r in readings] == pytest.approx([40.0, 0.0, 20.0, 40.0], abs=1e-4)
    # the model reads the predicted part there too: the fit runs and every reading has a prediction
    with kept_workers():
        result = explain(job, process_from_job(job), measured_from_data(ends, "ends", job))
    assert all(np.isfinite([r.uncalibrated_mm, r.calibrated_mm]).all() for r in result.readings)
    # truly outside is still refused, on either side
    for z in (40.01, -0.01):
        beyond = {"measured": {"diameter": [{"surface": "od", "z": z, "value": 40.0}]}}
        with pytest.raises(InputError, match="outside the part"):
            measured_from_data(beyond, "beyond", job)


def test_a_wall_read_at_the_housing_s_rim_is_refused_for_its_fillet_not_as_off_the_part():
    rim = {"measured": {"wall": [{"z": 45.0, "value": 1.2}]}}
    with pytest.raises(InputError) as caught:
        measured_from_data(rim, "rim", HOUSING_JOB)
    assert "outside the part" not in str(caught.value) and "no wall" in str(caught.value)


# ---------------------------------------------------------------------------------------------------
# 3. a face height on a face no pass finishes

def test_a_face_height_on_a_face_no_pass_finishes_says_it_checks_the_blank(fillet_run):
    notes = {r.reading.key: r.note for r in fillet_run.readings}
    assert notes["measured.face[1]"] == "on a face no pass of this job finishes (it checks the blank)"
    assert notes["measured.face[0]"] == ""          # the rim's fillet: finish OD cuts it
    assert notes["measured.diameter[0]"] == "" and notes["measured.diameter[1]"] == ""


# ---------------------------------------------------------------------------------------------------
# 4. an inch job's explain says in which unit it prints what

def inch_sleeve(tmp_path) -> tuple[Path, Path]:
    """The OD sleeve of the simulation tests with a tolerance, written in inches, and its first article in mm
    and in inches."""
    mm = {**copy.deepcopy(OD_SLEEVE), "tolerance": {"od": "h8"}}
    jobs = {units: write_job(tmp_path, units, tables) for units, tables in (("inch", in_inches(mm)), ("mm", mm))}
    measured = tmp_path / "first-article.toml"
    measured.write_text(measured_toml({"measured": {"units": "mm", "diameter": [
        {"surface": "od", "z": 20.0, "value": 40.012}, {"surface": "od", "z": 35.0, "value": 40.016}]}}))
    return jobs, measured


def test_an_inch_job_s_explain_opens_with_the_unit_of_each_line(tmp_path):
    jobs, measured = inch_sleeve(tmp_path)
    code, out, err = run_cli(["explain", str(jobs["inch"]), str(measured)])
    assert code == 0, err
    first = out.splitlines()[0]
    assert first.startswith("(an inch job: its readings and profiles are printed in mm below, 1 in = 25.4 mm")
    assert "the next part's changes are in inches" in first
    # what it says is what it prints: the drawn 40 mm diameter in mm, the next part's wear offset in inches
    assert " 40.0000 " in out
    assert "in on the diameter" in out and "mm on the diameter" not in out
    code, out, err = run_cli(["explain", str(jobs["mm"]), str(measured)])
    assert code == 0, err
    assert not out.startswith("(an inch job") and "mm on the diameter" in out
