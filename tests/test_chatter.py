"""deflect chatter on the shipped examples: the trends a thin wall must show, a finishing pass on the thin sleeve
found unstable at some speeds and stable in its predicted windows (checked by an independent count of the
characteristic roots, `delay_equation.py`), the tap test, the JSON of the contract, and the checks that
`deflect predict` and `deflect tune` make.

Variants of data/examples/ti-sleeve.toml are written here: a thinner wall (1.2 mm instead of 1.5), a longer
free length (65 mm instead of 50) and, for the windows, the OD finished in two passes, the last a light cut of
a stated 0.3 mm on the finished wall (the shipped job finishes it in one 0.6 mm cut, stable at every speed).
"""

import dataclasses
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from delay_equation import roots_in_right_half_plane

from deflect.cli import main
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.dynamics import DEFAULT_DAMPING, dynamics_from_job
from deflect.job.reader import parse_job
from deflect.machining import chatter
from deflect.machining.targets import process_from_job
from deflect.mechanics.modes import bar_frf
from deflect.mechanics.stability import chip_modulation

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
SLEEVE = (EXAMPLES / "ti-sleeve.toml").read_text()
STATED_DEPTH_MM = 0.3

THINNER = (SLEEVE.replace("[18.5, 0.0], [21.0, 0.0]", "[18.8, 0.0], [21.0, 0.0]")
           .replace("[18.5, 60.0, 0.2]]", "[18.8, 60.0, 0.2]]").replace("r = [20.9, 18.2]", "r = [20.9, 18.5]"))
LONGER = (SLEEVE.replace("[20.0, 60.0, 0.2], [18.5, 60.0, 0.2]", "[20.0, 75.0, 0.2], [18.5, 75.0, 0.2]")
          .replace("[20.6, 61.0], [17.5, 61.0]", "[20.6, 76.0], [17.5, 76.0]")
          .replace("z = [61.0, 0.0]", "z = [76.0, 0.0]").replace("z = [60.5, 10.0]", "z = [75.5, 10.0]"))
LIGHT_FINISH = SLEEVE.replace('''allowance = 0.0
feed = 0.08
speed = 70.0
z = [60.5, 10.0]
spring = 1''', f'''allowance = {STATED_DEPTH_MM}
feed = 0.08
speed = 70.0
z = [60.5, 10.0]

[[pass]]
name = "light finish"
surface = "od"
tool = "T2 finish"
allowance = 0.0
feed = 0.08
speed = 70.0
z = [60.5, 10.0]''')


def job_of(text: str):
    job = parse_job(tomllib.loads(text), "variant.toml")
    return job, process_from_job(job)


def study_of(text: str, pass_name: str, key_stations: int = chatter.KEY_STATIONS):
    job, process = job_of(text)
    return chatter.chatter_study(job, process, dynamics_from_job(job.tables), pass_name=pass_name,
                                 key_stations=key_stations)


def test_variants_are_what_they_say():
    assert THINNER != SLEEVE and LONGER != SLEEVE and "light finish" in LIGHT_FINISH
    assert job_of(THINNER)[0].section.bounds()[0] == pytest.approx(18.8)
    assert job_of(LONGER)[0].section.bounds()[3] == pytest.approx(75.0)


@pytest.fixture(scope="module")
def finish_od():
    # two key stations and the deepest: the free end, where the wall gives most, is among them
    return {name: study_of(text, "finish OD", key_stations=2).passes[0] for name, text in
            (("as shipped", SLEEVE), ("thinner", THINNER), ("longer", LONGER))}


@pytest.mark.parametrize("variant", ["thinner", "longer"])
def test_a_thinner_or_longer_wall_lowers_the_limit(finish_od, variant):
    """The same cut (depth, feed, tool) on a more compliant wall: the floor of its lobes, the least limiting
    coefficient at any spindle speed, and the limit at the pass's own speed are lower."""
    shipped, changed = finish_od["as shipped"].worst, finish_od[variant].worst
    assert changed.coefficient_n_per_mm2 == pytest.approx(shipped.coefficient_n_per_mm2, rel=1e-9)
    assert changed.lowest_limit_n_per_mm2 < 0.85 * shipped.lowest_limit_n_per_mm2   # measured 0.76 and 0.73
    assert changed.limit_coefficient_n_per_mm2 < shipped.limit_coefficient_n_per_mm2


@pytest.fixture(scope="module")
def light_finish():
    job, process = job_of(LIGHT_FINISH)
    dynamics = dynamics_from_job(job.tables)
    study = chatter.chatter_study(job, process, dynamics, pass_name="light finish")
    return job, process, study


def receptance_of(response, tool):
    """The station's response at any frequencies: the model's modes, damping and residual, and the bar's mode."""
    def model(f):
        g = response.frf(f, np.full(len(response.n), DEFAULT_DAMPING))
        if tool.bar is not None:
            g[:, 0, 0] += bar_frf(tool.bar, f, DEFAULT_DAMPING)
        return g
    return model


def station_characteristics(job, process):
    """For every key station of the light finish: its response on a fine uniform grid (the model's modes,
    damping and residual) and its chip, rebuilt from the parts the study uses."""
    p = next(q for q in process.passes if q.name == "light finish")
    rows = []
    for _, _, path, part, met, keys in chatter.cut_stations(process, job.section.polygon(POLYGON_CHORD_MM), [p],
                                                            chatter.KEY_STATIONS):
        for k in keys:
            k = int(k)
            response = chatter.station_response(job, part, path, p, k)
            tool = process.tools[p.tool]
            m = chip_modulation(job.material, tool, float(met[k]), p.feed_mm, p.speed_m_min)
            to_boundary = np.array([1.0, chatter.feed_sign_at(path, k)])
            rows.append((receptance_of(response, tool), 2.0 * response.frequency_hz.max(), m.coefficient_n_per_mm2,
                         m.inner_mm * to_boundary, m.outer_mm * to_boundary, m.thrust_direction * to_boundary))
    return rows


def test_light_finish_on_the_thin_sleeve_chatters_at_its_speed(light_finish):
    _, _, study = light_finish
    p = study.passes[0]
    assert p.worst.depth_mm == pytest.approx(STATED_DEPTH_MM, rel=1e-6)
    assert not p.stable
    assert not p.worst.stable and p.worst.limit_depth_mm < STATED_DEPTH_MM
    low, high = study.speed_range_rpm
    assert p.stable_speeds_rpm and all(low <= lo < hi <= high for lo, hi in p.stable_speeds_rpm)


def test_light_finish_windows_checked_by_the_roots(light_finish):
    """At the middle of each of the three widest windows, no station's characteristic function has a root in the
    right half-plane; in the middle of the unstable stretches between them, the worst station's has."""
    job, process, study = light_finish
    p = study.passes[0]
    stations = station_characteristics(job, process)
    windows = sorted(p.stable_speeds_rpm, key=lambda w: w[1] - w[0])[-3:]
    for lo, hi in windows:
        speed = 0.5 * (lo + hi)
        assert all(roots_in_right_half_plane(*station, speed) == 0 for station in stations)
    worst = stations[[s is p.worst for s in p.stations].index(True)]
    gaps = [(a[1], b[0]) for a, b in zip(sorted(p.stable_speeds_rpm), sorted(p.stable_speeds_rpm)[1:])][-3:]
    for lo, hi in gaps + [(p.worst.speed_rpm, p.worst.speed_rpm)]:
        assert roots_in_right_half_plane(*worst, 0.5 * (lo + hi)) >= 2


def test_tap_test_replaces_the_nearest_mode(tmp_path):
    """A measured mode 5 % above the model's lowest: that (n, m) takes its frequency and damping, the other
    modes keep the job's damping, and a second entry on the same mode is refused."""
    job, process = job_of(SLEEVE)
    plain = chatter.chatter_study(job, process, dynamics_from_job({}), pass_name="finish OD")
    first = plain.modes[0]
    measured = f"\n[dynamics]\ndamping = 0.02\nmeasured = [{{ frequency_hz = {1.05 * first.frequency_hz:.3f}, " \
               "damping = 0.008 }]\n"
    job, process = job_of(SLEEVE + measured)
    tapped = chatter.chatter_study(job, process, dynamics_from_job(job.tables), pass_name="finish OD")
    row = next(r for r in tapped.modes if (r.n, r.m) == (first.n, first.m))
    assert row.measured and row.frequency_hz == pytest.approx(1.05 * first.frequency_hz, rel=1e-6)
    assert row.model_hz == pytest.approx(first.frequency_hz, rel=1e-9) and row.damping == 0.008
    assert all(r.damping == 0.02 for r in tapped.modes if r is not row)
    twice = f"\n[dynamics]\nmeasured = [{{ frequency_hz = {first.frequency_hz:.1f}, damping = 0.01 }}, " \
            f"{{ frequency_hz = {1.01 * first.frequency_hz:.1f}, damping = 0.01 }}]\n"
    path = tmp_path / "twice.toml"
    path.write_text(SLEEVE + twice)
    with pytest.raises(SystemExit) as stopped:
        main(["chatter", str(path), "--pass", "finish OD"])
    assert stopped.value.code == 2


def run_json(args, capsys):
    main(args)
    return json.loads(capsys.readouterr().out)


def test_json_keys_of_the_contract_on_the_demo(capsys):
    """`deflect chatter JOB --json` on the demo: every key of the contract with its meaning."""
    job_file = str(EXAMPLES / "housing.toml")
    payload = run_json(["chatter", job_file, "--json"], capsys)
    modes = payload["modes"]
    assert modes and all(set(m) >= {"n", "m", "frequency_hz"} for m in modes)
    frequencies = [m["frequency_hz"] for m in modes]
    assert frequencies == sorted(frequencies)                       # lowest first
    assert all(m["n"] >= 0 and m["m"] >= 1 for m in modes)
    job, process = job_of((EXAMPLES / "housing.toml").read_text())
    finishing = [p.name for p in process.passes if p.allowance_mm == 0.0]
    assert [p["name"] for p in payload["passes"]] == finishing      # each finishing pass
    by_name = {p.name: p for p in process.passes}
    for record in payload["passes"]:
        assert set(record) >= {"name", "stable", "depth_mm", "limit_depth_mm", "speed_rpm", "stable_speeds_rpm"}
        worst = record["worst_station"]
        p = by_name[record["name"]]
        # the spindle speed at the worst station's diameter for the pass's cutting speed, within the machine's
        expected = min(1000 * p.speed_m_min / (math.pi * 2 * worst["r_mm"]), process.machine.max_rpm)
        assert record["speed_rpm"] == pytest.approx(expected, rel=0.01)
        if record["stable"]:
            assert record["limit_depth_mm"] >= record["depth_mm"]
            # a stable pass is stable at its own speed: it lies in a window
            assert any(lo <= record["speed_rpm"] <= hi for lo, hi in record["stable_speeds_rpm"])
        else:
            assert record["limit_depth_mm"] < record["depth_mm"]
        low, high = payload["speed_range_rpm"]
        assert high == process.machine.max_rpm
        assert all(low <= lo < hi <= high for lo, hi in record["stable_speeds_rpm"])


def test_report_and_figures(tmp_path, capsys):
    main(["chatter", str(EXAMPLES / "ti-sleeve.toml"), "--pass", "finish OD", "--figures", str(tmp_path)])
    out = capsys.readouterr().out
    assert "Modes of the finished part as held" in out and "finish OD" in out
    assert "tap test" in out and "trial cut" in out and "limits" in out   # the cautions
    assert (tmp_path / "lobes-finish-OD.png").stat().st_size > 10000
    assert (tmp_path / "mode-shapes.png").stat().st_size > 10000


def test_unknown_pass_is_refused(capsys):
    with pytest.raises(SystemExit) as stopped:
        main(["chatter", str(EXAMPLES / "ti-sleeve.toml"), "--pass", "no such pass"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err.startswith("error: ")


def test_predict_warns_of_a_pass_that_chatters(tmp_path, capsys):
    path = tmp_path / "light.toml"
    path.write_text(LIGHT_FINISH)
    payload = run_json(["predict", str(path), "--json"], capsys)
    assert any("'light finish' is predicted to chatter" in w for w in payload["warnings"])
    assert not any("'finish OD' is predicted to chatter" in w for w in payload["warnings"])


def test_predict_warns_of_every_pass_the_chatter_check_finds_chattering(capsys):
    """`predict` checks each finishing cut where the wall gives most and where the chip is widest, and so agrees
    with `deflect chatter`, which checks key stations all along. On the demo housing the rim face chatters only
    at its outer corner, where it meets its full depth; `predict` once looked only where the wall gives most and
    said nothing of it."""
    example = "housing.toml"
    job_file = str(EXAMPLES / example)
    chattering = {record["name"] for record in run_json(["chatter", job_file, "--json"], capsys)["passes"]
                  if not record["stable"]}
    warnings = run_json(["predict", job_file, "--json"], capsys)["warnings"]
    warned = {p.name for p in job_of((EXAMPLES / example).read_text())[1].passes
              if any(f"'{p.name}' is predicted to chatter" in w for w in warnings)}
    assert chattering, "the example was chosen for a pass that chatters"
    assert warned == chattering


@pytest.fixture(scope="module")
def light_outcome():
    """The light-finish plan predicted and checked by the remedy search, against a loose drawing."""
    from deflect.decisions.tune import Search
    from deflect.job.fits import tolerance_from_table
    text = LIGHT_FINISH + '\n[tolerance]\nod = { plus = 0.5, minus = -0.5 }\nid = { plus = 0.5, minus = -0.5 }\n'
    job, _ = job_of(text)
    outcome = Search(job=job, tolerances=tolerance_from_table(job.tables["tolerance"])).evaluate(())
    assert not any("chatter" in b for b in outcome.broken)            # the static search does not see it
    return job, outcome


def test_tune_states_a_chatter_beside_the_option_with_the_recalled_damping(light_outcome):
    from deflect.decisions.chatter_free import marked_for_chatter
    from deflect.decisions.tune import TuneResult
    job, outcome = light_outcome
    marked = marked_for_chatter(job, TuneResult(current=outcome, options=[outcome], limiting="", offset_note="",
                                                evaluations=1))
    option = marked.options[0]
    assert option.broken == outcome.broken
    assert any("'light finish' is predicted to chatter" in note and "recalled damping" in note for note in option.notes)


def test_tune_does_not_count_an_option_that_chatters_as_holding_with_a_given_damping(light_outcome):
    """With the damping given in [dynamics] the chatter is a limit the plan breaks: it does not hold."""
    from deflect.decisions.chatter_free import marked_for_chatter
    from deflect.decisions.tune import TuneResult
    job, outcome = light_outcome
    job = dataclasses.replace(job, tables={**job.tables, "dynamics": {"damping": DEFAULT_DAMPING}})
    marked = marked_for_chatter(job, TuneResult(current=outcome, options=[outcome], limiting="", offset_note="",
                                                evaluations=1))
    assert not marked.options[0].meets and not marked.current.meets
    added = [b for b in marked.options[0].broken if b not in outcome.broken]
    assert any("'light finish' is predicted to chatter" in b for b in added)


# ---------------------------------------------------------------------------------------------------
# a first article's calibration scales the forces, and so the chatter limit

CALIBRATION = """
[calibration]
material = "ti-6al-4v"
fitted_per = "tool"

[[calibration.factor]]
applies_to = "T2 finish"
kind = "force"
value = 0.5
low = 0.4
high = 0.6
"""


def test_a_calibrated_force_factor_scales_the_cuts_coefficient_not_the_walls_limit(tmp_path):
    """Half the forces on the finishing tool: the thrust's dynamic coefficient of every key station halves,
    the wall's limit (its lobes) stays, and the depth the cut can take at its speed grows."""
    from deflect.job.calibration import read_calibration, with_calibration

    job, process = job_of(LIGHT_FINISH)
    assert job.material.name == "ti-6al-4v"
    (tmp_path / "cal.toml").write_text(CALIBRATION)
    calibrated = with_calibration(job, read_calibration(str(tmp_path / "cal.toml")))
    dynamics = dynamics_from_job(job.tables)
    plain, halved = (chatter.chatter_study(j, process_from_job(j), dynamics, pass_name="light finish",
                                           key_stations=2).passes[0] for j in (job, calibrated))
    assert len(plain.stations) == len(halved.stations)
    for a, b in zip(plain.stations, halved.stations):
        assert b.coefficient_n_per_mm2 == pytest.approx(0.5 * a.coefficient_n_per_mm2, rel=1e-12)
        assert b.limit_coefficient_n_per_mm2 == pytest.approx(a.limit_coefficient_n_per_mm2, rel=1e-9)
        assert b.limit_depth_mm >= a.limit_depth_mm
    assert halved.worst.limit_depth_mm > plain.worst.limit_depth_mm


def test_chatter_reads_a_calibration_and_says_so(tmp_path, capsys):
    job_file, calibration = tmp_path / "sleeve.toml", tmp_path / "cal.toml"
    job_file.write_text(LIGHT_FINISH)
    calibration.write_text(CALIBRATION)
    payload = run_json(["chatter", str(job_file), "--pass", "light finish", "--json", "--calibration",
                        str(calibration)], capsys)
    assert payload["calibration"]["factors"][0]["applies_to"] == "T2 finish"
