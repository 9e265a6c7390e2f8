"""Inch jobs (issue 10, item 7): defaults that are lengths stay lengths, what the user types in inches comes back
in inches, inch insert codes are read, and every report of an inch job says its lengths are printed in mm.

Before the fix `compliance --patch` kept its 2,2 default in the job's units (a 50.8 mm patch in an inch job, a
compliance far off with no warning), `--at` was read in inches and printed in mm, `tune` printed
0.00314961 -> 0.00492126 in/rev, and an inch code such as CNMG 432 was refused. 1 in = 25.4 mm exactly (1959).
"""

import copy
import json
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import OD_SLEEVE, run_cli, write_job  # noqa: E402
from test_tune import in_inches  # noqa: E402

from deflect.output.tune_report import number_text  # noqa: E402

MM_PER_INCH = 25.4
SAME_FLOAT = 1e-9
SLEEVE = """
[job]
title = "sleeve"
units = "UNITS"
[material]
name = "al-6061-t6"
[part]
outline = [[R19, 0.0], [R20, 0.0], [R20, Z40], [R19, Z40]]
[[held]]
r = [0.0, R100]
z = [0.0, Z5]
"""


def sleeve(units: str) -> str:
    factor = MM_PER_INCH if units == "inch" else 1.0
    text = SLEEVE.replace("UNITS", units)
    for name, mm in (("R100", 100.0), ("R19", 19.0), ("R20", 20.0), ("Z40", 40.0), ("Z5", 5.0)):
        text = text.replace(name, repr(mm / factor))
    return text


def compliance(tmp_path, units: str, *options: str) -> tuple[dict, str]:
    path = tmp_path / f"{units}.toml"
    path.write_text(sleeve(units))
    at = f"{20.0 / (MM_PER_INCH if units == 'inch' else 1.0)!r},{30.0 / (MM_PER_INCH if units == 'inch' else 1.0)!r}"
    code, out, err = run_cli(["compliance", str(path), "--at", at, "--json", *options])
    assert code == 0, err
    _, text, _ = run_cli(["compliance", str(path), "--at", at, *options])
    return json.loads(out), text


def test_the_default_patch_is_2_mm_in_an_inch_job_too(tmp_path):
    inch, _ = compliance(tmp_path, "inch")
    mm, _ = compliance(tmp_path, "mm")
    assert inch["patch_mm"] == {"length": 2.0, "width": 2.0}
    assert inch["points"][0]["compliance_mm_per_N"] == pytest.approx(mm["points"][0]["compliance_mm_per_N"],
                                                                     rel=SAME_FLOAT)


def test_a_patch_given_in_an_inch_job_is_in_inches(tmp_path):
    inch, _ = compliance(tmp_path, "inch", "--patch", f"{4.0 / MM_PER_INCH!r},{3.0 / MM_PER_INCH!r}")
    assert inch["patch_mm"]["length"] == pytest.approx(4.0, rel=SAME_FLOAT)
    assert inch["patch_mm"]["width"] == pytest.approx(3.0, rel=SAME_FLOAT)


def test_at_points_are_printed_in_the_job_s_units(tmp_path):
    _, text = compliance(tmp_path, "inch")
    header, _, row = text.strip().splitlines()[-3:]
    assert header.split()[:4] == ["r", "in", "z", "in"]
    assert row.split()[:2] == [f"{20.0 / MM_PER_INCH:.4f}", f"{30.0 / MM_PER_INCH:.4f}"]
    _, text = compliance(tmp_path, "mm")
    assert text.strip().splitlines()[-1].split()[:2] == ["20.000", "30.000"]


def test_an_inch_report_says_its_lengths_are_in_mm(tmp_path):
    path = tmp_path / "inch.toml"
    path.write_text(sleeve("inch"))
    code, out, _ = run_cli(["section", str(path)])
    assert code == 0 and out.startswith("(an inch job: its lengths are printed in mm below, 1 in = 25.4 mm")
    path.write_text(sleeve("mm"))
    assert not run_cli(["section", str(path)])[1].startswith("(an inch job")


@pytest.mark.parametrize("command", ["rules", "chatter", "compare"])
def test_every_report_of_an_inch_job_says_its_lengths_are_in_mm(tmp_path, command):
    """rules, chatter and compare print lengths in mm as the other reports do, and say so first."""
    paths = {units: write_job(tmp_path, units, tables)
             for units, tables in (("inch", in_inches(OD_SLEEVE)), ("mm", OD_SLEEVE))}
    for units, path in paths.items():
        args = [command, str(path)] + ([str(paths["mm"])] if command == "compare" else []) + ["--quiet"] * (
            command == "compare")
        code, out, err = run_cli(args)
        assert code == 0, err
        assert out.startswith("(an inch job: its lengths are printed in mm below") == (units == "inch"), out[:200]


def test_an_inch_insert_code_is_the_same_tool_as_its_radius(tmp_path):
    tables = copy.deepcopy(OD_SLEEVE)
    tables["tool"][0] = {"name": "T1", "insert": "CNMG 432", "approach": 93.0, "rake": 7.0}
    with_code = run_cli(["predict", str(write_job(tmp_path, "code", tables)), "--json"])
    tables["tool"][0] = {"name": "T1", "nose_radius": 2 / 64 * MM_PER_INCH, "approach": 93.0, "rake": 7.0}
    with_radius = run_cli(["predict", str(write_job(tmp_path, "radius", tables)), "--json"])
    assert with_code[0] == 0 and with_radius[0] == 0, with_code[2]
    assert json.loads(with_code[1])["predicted"] == json.loads(with_radius[1])["predicted"]


@pytest.mark.parametrize("value_in, written", [(0.00314961, "0.0031"), (0.00492126, "0.0049"), (0.005, "0.005"),
                                               (0.0118110, "0.0118"), (1.25, "1.25")])
def test_inches_are_written_as_a_machinist_writes_them(value_in, written):
    assert number_text(value_in, "inch") == written
    assert number_text(-value_in, "inch", sign=True) == f"-{written}"
