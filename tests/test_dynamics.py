"""The [dynamics] table: defaults, checks, and bad input as one `error:` line with exit code 2."""

import pytest

from deflect.cli import main
from deflect.errors import InputError
from deflect.job.dynamics import DEFAULT_DAMPING, dynamics_from_job

SLEEVE_JOB = """
[job]
title = "sleeve"
[material]
name = "al-6061-t6"
[part]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
[stock]
outline = [[19.0, 0.0], [20.4, 0.0], [20.4, 40.0], [19.0, 40.0]]
[[tool]]
name = "T1"
insert = "DCMT11T304"
approach = 93.0
[[pass]]
name = "finish OD"
surface = "od"
tool = "T1"
allowance = 0.0
feed = 0.1
speed = 200.0
z = [40.0, 5.0]
[machine]
max_rpm = 5000.0
power_kw = 7.5
"""


def test_defaults_without_a_table():
    d = dynamics_from_job({})
    assert d.damping == DEFAULT_DAMPING and d.damping_from_memory and d.measured == ()


def test_a_table_read():
    d = dynamics_from_job({"dynamics": {"damping": 0.015, "measured": [{"frequency_hz": 1850.0, "damping": 0.012}]}})
    assert d.damping == 0.015 and not d.damping_from_memory
    assert d.measured[0].frequency_hz == 1850.0 and d.measured[0].damping == 0.012
    assert d.measured[0].key == "dynamics.measured[0]"


def test_a_percentage_is_warned_about():
    d = dynamics_from_job({"dynamics": {"damping": 0.3}})
    assert any("unusual" in w and "percentage" in w for w in d.warnings)


@pytest.mark.parametrize("table, key, words", [
    ({"damping": 2.0}, "dynamics.damping", "between 0 and"),
    ({"damping": 0.0}, "dynamics.damping", "between 0 and"),
    ({"damping": "2 %"}, "dynamics.damping", "must be a number"),
    ({"damping": True}, "dynamics.damping", "must be a number"),
    ({"dampning": 0.02}, "dynamics.dampning", "unknown key"),
    ({"measured": {"frequency_hz": 1.0, "damping": 0.01}}, "dynamics.measured", "list of tables"),
    ({"measured": [{"frequency_hz": 1850.0}]}, "dynamics.measured[0].damping", "missing"),
    ({"measured": [{"frequency_hz": -5.0, "damping": 0.01}]}, "dynamics.measured[0].frequency_hz", "> 0"),
    ({"measured": [{"frequency_hz": 1850.0, "damping": 0.01, "mode": 2}]}, "dynamics.measured[0].mode",
     "unknown key"),
    ({"measured": [{"frequency_hz": 1850.0, "damping": 0.01}, 3]}, "dynamics.measured[1]", "must be a table"),
])
def test_bad_input_names_the_key(table, key, words):
    with pytest.raises(InputError, match=words) as caught:
        dynamics_from_job({"dynamics": table})
    assert caught.value.key == key


@pytest.mark.parametrize("command", ["chatter", "predict"])
@pytest.mark.parametrize("table, key", [
    ("[dynamics]\ndamping = 5.0\n", "dynamics.damping"),
    ("[dynamics]\nmeasured = [{ frequency_hz = 0.0, damping = 0.01 }]\n", "dynamics.measured[0].frequency_hz"),
    ("[dynamics]\nmeasured = 12\n", "dynamics.measured"),
])
def test_bad_dynamics_on_the_command_line(tmp_path, capsys, command, table, key):
    job = tmp_path / "job.toml"
    job.write_text(SLEEVE_JOB + table)
    with pytest.raises(SystemExit) as stopped:
        main([command, str(job), "--json"])
    assert stopped.value.code == 2
    out, err = capsys.readouterr()
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {job}: {key}: ")
    assert "Traceback" not in err
