"""deflect explain: a measured first article in, its causes out, the force constants calibrated (issue 12).

Synthetic first articles (`synthetic_parts`): the "measured" part is the prediction of a job whose Kienzle
constants are scaled inline in [material] (x 0.7, x 1.3), or of the job with a calibration attached (a pure size
error, a grip factor), read with shapely gauges of the tests' own and, where said, gauge noise of the stated
uncertainty. The constant the fit must find is the one the truth was made with. The test part is a 1 mm
aluminium sleeve bored with a boring bar and turned (two tools, two finished surfaces); the 50-trial coverage
study on the shipped housing is marked slow. Bad measurement files: one test per kind, and 300 generated ones.
"""

from __future__ import annotations

import json
import math
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).resolve().parent))
from synthetic_parts import crossings, material_block, measure, measured_toml, scaled_material, with_noise  # noqa: E402
from test_simulate import run_cli  # noqa: E402

from deflect.decisions.first_article import explain, next_part  # noqa: E402
from deflect.errors import InputError  # noqa: E402
from deflect.geometry.gauging import crossings_at_height, nearest_face, outer_wall, surface_radius  # noqa: E402
from deflect.job.calibration import calibration_from_data, read_calibration, with_calibration  # noqa: E402
from deflect.job.measured import measured_from_data, read_measured  # noqa: E402
from deflect.job.reader import read_job  # noqa: E402
from deflect.machining.simulate import kept_workers, simulate  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402
from deflect.output.explain_report import explain_payload, explain_report  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
HOUSING = EXAMPLES / "housing.toml"
HOUSING_MEASURED = EXAMPLES / "housing-first-article.toml"
RHO_AL = 2.70                         # g/cm3, the library's 6061-T6
HOUSING_JOB = read_job(HOUSING)

SLEEVE = """
[job]
title = "test sleeve, 1 mm wall, bored and turned"
[material]
name = "al-6061-t6"
[part]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
[stock]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 6.0], [20.3, 6.0], [20.3, 40.0], [18.7, 40.0], [18.7, 6.0], [19.0, 6.0]]
[[tool]]
name = "T1"
nose_radius = 0.4
approach = 93.0
rake = 7.0
[[tool]]
name = "B1"
nose_radius = 0.4
approach = 93.0
rake = 7.0
bar = { diameter = 16.0, overhang = 60.0, E = 210000.0 }
[[pass]]
name = "finish bore"
surface = "id"
tool = "B1"
allowance = 0.0
feed = 0.1
speed = 200.0
z = [40.0, 6.0]
[[pass]]
name = "finish OD"
surface = "od"
tool = "T1"
allowance = 0.0
feed = 0.1
speed = 200.0
z = [40.0, 6.0]
[machine]
max_rpm = 6000.0
power_kw = 7.5
[tolerance]
od = "h8"
id = "H8"
"""
LIBRARY_MATERIAL = '[material]\nname = "al-6061-t6"\n'
HEIGHTS = (8.0, 15.0, 22.0, 29.0, 36.0, 39.0)
U_OD, U_ID = 0.002, 0.003             # mm: an outside micrometer and a bore gauge (the readings' stated sigma)
READINGS = {"diameters": [("od", z, U_OD) for z in HEIGHTS] + [("id", z, U_ID) for z in HEIGHTS]}

EXACT_SHARE = 0.01                    # issue: with no noise the factor comes back within 1 %
EXACT_SIZE_MM = 1e-4                  # ... and a size error within 0.1 um (the section is kept to 1 nm)
COVERAGE_SHARE = 0.9                  # issue: the 95 % interval holds the truth in at least 90 % of trials


# ---------------------------------------------------------------------------------------------------
# fixtures

@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("first_article")


@pytest.fixture(scope="module")
def memo() -> dict:
    """Key-station compliances shared by every sleeve of this module (same drawn part, E, nu and holding)."""
    return {}


@pytest.fixture(scope="module")
def sleeve(folder):
    path = folder / "sleeve.toml"
    path.write_text(SLEEVE)
    job = read_job(path)
    return path, job, process_from_job(job)


def truth_of(folder: Path, name: str, text: str, memo: dict):
    """The prediction of a job text (the part the shop 'measured')."""
    path = folder / f"{name}.toml"
    path.write_text(text)
    job = read_job(path)
    with kept_workers():
        return simulate(job, process_from_job(job), memo=memo, with_ranges=False)


def scaled_sleeve(folder: Path, scale: float, memo: dict):
    text = SLEEVE.replace(LIBRARY_MATERIAL, material_block(scaled_material("al-6061-t6", scale)))
    assert text != SLEEVE
    return truth_of(folder, f"truth-{scale}", text, memo)


def calibrated_truth(job, calibration_table: dict, memo: dict):
    calibration = calibration_from_data({"calibration": {"material": "al-6061-t6", **calibration_table}})
    truth = with_calibration(job, calibration)
    with kept_workers():
        return simulate(truth, process_from_job(truth), memo=memo, with_ranges=False)


def fitted(sleeve, data: dict, memo: dict, fitted_per: str = "tool"):
    _, job, process = sleeve
    with kept_workers():
        return explain(job, process, measured_from_data(data, "synthetic", job), fitted_per, memo)


def estimate(result, label: str):
    return next(e for e in result.estimates if e.unknown.label == label)


@pytest.fixture(scope="module")
def truths(folder, memo):
    return {scale: scaled_sleeve(folder, scale, memo) for scale in (0.7, 1.3)}


# ---------------------------------------------------------------------------------------------------
# gauges on a section (closed forms: straight edges)

TRAPEZOID = np.array([[10.0, 0.0], [20.0, 0.0], [22.0, 10.0], [12.0, 10.0]])   # counter-clockwise


def test_gauge_reads_a_slanted_od_and_bore_exactly():
    # at height z the outer edge runs from (20, 0) to (22, 10): r = 20 + 0.2 z; the inner from (10, 0) to (12, 10)
    for z in (0.5, 3.3, 9.9):
        r, n_r = crossings_at_height(TRAPEZOID, z)
        assert r == pytest.approx([10.0 + 0.2 * z, 20.0 + 0.2 * z], abs=1e-12)
        slope_normal = 1.0 / math.hypot(1.0, 0.2)          # outward normal of the outer edge: (10, -2) / |.|
        assert n_r == pytest.approx([-slope_normal, slope_normal], abs=1e-12)
        (r_in, _), (r_out, _) = outer_wall(TRAPEZOID, z)
        assert r_out - r_in == pytest.approx(10.0, abs=1e-12)
    assert outer_wall(TRAPEZOID, 10.5) is None
    clockwise = TRAPEZOID[::-1]
    assert crossings_at_height(clockwise, 4.0)[0] == pytest.approx(crossings_at_height(TRAPEZOID, 4.0)[0])


def test_gauge_sees_no_bore_in_a_solid_part_and_reads_faces():
    solid = np.array([[0.0, 0.0], [20.0, 0.0], [20.0, 10.0], [0.0, 10.0]])
    assert surface_radius(solid, "id", 5.0) is None
    assert surface_radius(solid, "od", 5.0) == pytest.approx((20.0, 1.0))
    assert nearest_face(solid, 7.0, 9.0) == pytest.approx((10.0, 1.0))
    assert nearest_face(solid, 7.0, 0.4) == pytest.approx((0.0, -1.0))


# ---------------------------------------------------------------------------------------------------
# the measurement file

GOOD_MEASURED = """
[measured]
mass = 59.8
[[measured.diameter]]
surface = "od"
z = 20.0
value = 50.008
[[measured.diameter]]
surface = "id"
z = 20.0
value = 47.594
uncertainty = 0.0015
how = "circle"
[[measured.wall]]
z = 30.0
value = 1.207
how = "ultrasonic"
[[measured.face]]
r = 24.4
value = 45.002
[[measured.roundness]]
surface = "id"
z = 30.0
value_um = 4.0
lobes = 3
"""


def test_good_file_reads_with_the_instruments_usual_uncertainties(folder):
    path = folder / "good.toml"
    path.write_text(GOOD_MEASURED)
    measured = read_measured(path, read_job(HOUSING))
    kinds = [(r.kind, r.surface) for r in measured.readings]
    assert kinds == [("diameter", "od"), ("diameter", "id"), ("wall", "wall"), ("face", "face"), ("roundness", "id")]
    od, bore, wall, face, roundness = measured.readings
    assert (od.uncertainty_mm, od.uncertainty_from, od.how) == (0.002, "outside micrometer", "two-point")
    assert (bore.uncertainty_mm, bore.uncertainty_from) == (0.0015, "given")
    assert wall.uncertainty_mm == 0.010 and wall.nominal_mm == pytest.approx(1.2)
    assert face.nominal_mm == pytest.approx(45.0) and face.at_mm == 24.4
    assert roundness.value_mm == pytest.approx(0.004) and roundness.lobes == 3
    assert od.nominal_mm == pytest.approx(50.0) and bore.nominal_mm == pytest.approx(47.6)
    assert measured.mass_uncertainty_g == 0.01
    assert any("outside micrometer" in n and "diameter[0]" in n and "common practice" in n for n in measured.notes)


def test_inch_file_is_converted(folder):
    path = folder / "inch.toml"
    path.write_text(GOOD_MEASURED.replace("[measured]", '[measured]\nunits = "inch"')
                    .replace("50.008", str(50.008 / 25.4)).replace("z = 20.0", f"z = {20.0 / 25.4}")
                    .replace("47.594", str(47.594 / 25.4)).replace("0.0015", str(0.0015 / 25.4))
                    .replace("z = 30.0", f"z = {30.0 / 25.4}").replace("1.207", str(1.207 / 25.4))
                    .replace("r = 24.4", f"r = {24.4 / 25.4}").replace("45.002", str(45.002 / 25.4)))
    inch = read_measured(path, read_job(HOUSING))
    path.write_text(GOOD_MEASURED)
    mm = read_measured(path, read_job(HOUSING))
    for a, b in zip(inch.readings, mm.readings):
        assert (a.at_mm, a.value_mm, a.uncertainty_mm) == pytest.approx((b.at_mm, b.value_mm, b.uncertainty_mm),
                                                                           rel=1e-12)


SOLID_JOB = """
[job]
title = "solid bar end"
[material]
name = "al-6061-t6"
[part]
outline = [[0.0, 0.0], [20.0, 0.0], [20.0, 30.0], [0.0, 30.0]]
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
"""

ONE_OD = '[measured]\n[[measured.diameter]]\nsurface = "od"\nz = 20.0\nvalue = 50.008\n'
BAD_FILES = {   # kind: (file text, job, key in the error line, words in it)
    "not TOML": ("[measured\nmass = 1", HOUSING, "file", "not valid TOML"),
    "unknown table": (ONE_OD + "[part]\nx = 1\n", HOUSING, "part", "unknown table"),
    "misspelt key": (ONE_OD.replace("value =", "vale ="), HOUSING, "measured.diameter[0].vale", "unknown key"),
    "no [measured]": ("", HOUSING, "measured", "missing"),
    "nothing measured": ("[measured]\n", HOUSING, "measured", "nothing measured"),
    "height outside the part": (ONE_OD.replace("z = 20.0", "z = 60.0"), HOUSING, "measured.diameter[0].z",
                                "outside the part"),
    "a surface the part lacks": (ONE_OD.replace('"od"', '"id"').replace("50.008", "10.0"), "solid",
                                 "measured.diameter[0].surface", "no ID"),
    "a diameter on a face's fillet": (ONE_OD.replace("z = 20.0", "z = 5.05"), HOUSING, "measured.diameter[0].z",
                                      "fillet"),
    "mass in kilograms": ("[measured]\nmass = 0.0598\n", HOUSING, "measured.mass", "kilograms"),
    "mass in milligrams": ("[measured]\nmass = 59800.0\n", HOUSING, "measured.mass", "milligrams"),
    "inches in an mm file": (ONE_OD.replace("50.008", "1.9688"), HOUSING, "measured.diameter[0].value",
                             "inches in a millimetre file"),
    "a radius for a diameter": (ONE_OD.replace("50.008", "25.004"), HOUSING, "measured.diameter[0].value",
                                "radius"),
    "wrong type": (ONE_OD.replace("50.008", '"50.008"'), HOUSING, "measured.diameter[0].value", "must be a number"),
    "unknown surface": (ONE_OD.replace('"od"', '"bore"'), HOUSING, "measured.diameter[0].surface", "must be one of"),
    "unknown instrument": (ONE_OD + 'how = "caliper"\n', HOUSING, "measured.diameter[0].how", "must be one of"),
    "uncertainty not positive": (ONE_OD + "uncertainty = -0.002\n", HOUSING, "measured.diameter[0].uncertainty",
                                 "more than 0"),
    "no wall at that height": ("[measured]\n[[measured.wall]]\nz = 10.0\nvalue = 1.0\n", "solid",
                               "measured.wall[0].z", "no wall"),
    "no face there": ("[measured]\n[[measured.face]]\nr = 24.4\nvalue = 30.0\n", HOUSING, "measured.face[0].value",
                      "no face"),
    "roundness not in um": ('[measured]\n[[measured.roundness]]\nsurface = "od"\nz = 20.0\nvalue_um = 5000.0\n',
                            HOUSING, "measured.roundness[0].value_um", "micrometres"),
    "batch density of another material": ("[measured]\nmass = 59.8\ndensity = 7.85\ndensity_uncertainty = 0.01\n",
                                          HOUSING, "measured.density", "another material"),
}


@pytest.mark.parametrize("kind", BAD_FILES)
def test_bad_measurement_file_is_one_error_line_with_exit_2(kind, folder):
    text, job, key, words = BAD_FILES[kind]
    if job == "solid":
        job = folder / "solid.toml"
        job.write_text(SOLID_JOB)
    path = folder / f"bad-{kind.replace(' ', '-')}.toml"
    path.write_text(text)
    code, out, err = run_cli(["explain", str(job), str(path)])
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
    assert lines[0].startswith(f"error: {path}: {key}: "), lines[0]
    assert words in lines[0]


def toml_inline(value) -> str:
    """A Python value as TOML (inline tables and arrays), for generated files."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, float):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf") if math.isinf(value) else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_inline(v)}" for k, v in value.items()) + "}"
    return "[" + ", ".join(toml_inline(v) for v in value) + "]"


scalars = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**6, 10**6), st.booleans(),
                    st.sampled_from(["od", "id", "face", "two-point", "circle", "inch", "mm", "", "x"]))
near_values = st.one_of(st.floats(-5.0, 120.0), st.sampled_from([0.0, 1.2, 25.0, 45.0, 47.6, 50.0, 59.7]))
entry = st.dictionaries(st.sampled_from(["surface", "z", "r", "value", "value_um", "uncertainty", "how", "lobes",
                                         "extra"]),
                        st.one_of(scalars, near_values, st.lists(near_values, max_size=2)), max_size=6)
measured_tables = st.dictionaries(
    st.sampled_from(["units", "mass", "mass_uncertainty", "density", "density_uncertainty", "diameter", "wall",
                     "face", "roundness", "note"]),
    st.one_of(scalars, near_values, st.lists(entry, max_size=3), entry), max_size=7)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                   HealthCheck.function_scoped_fixture])
@given(table=measured_tables, top=st.sampled_from(["measured", "measured", "measured", "measure", "part"]))
def test_300_malformed_measurement_files_give_input_errors_only(table, top, tmp_path):
    # every generated file either reads or is refused with an InputError naming an entry: never anything else
    path = tmp_path / "generated.toml"
    path.write_text(f"[{top}]\n" + "".join(f"{json.dumps(k)} = {toml_inline(v)}\n" for k, v in table.items()))
    try:
        read_measured(path, HOUSING_JOB)
    except InputError as exc:
        assert exc.file == str(path) and exc.key and exc.message


# ---------------------------------------------------------------------------------------------------
# the fit on synthetic first articles

@pytest.mark.parametrize("scale", [0.7, 1.3])
def test_scaled_constants_come_back_within_1_percent_without_noise(scale, sleeve, truths, memo):
    result = fitted(sleeve, measure(truths[scale], **READINGS), memo)
    for tool in ("T1", "B1"):
        e = estimate(result, f"force factor {tool}")
        assert e.identified
        assert e.value == pytest.approx(scale, rel=EXACT_SHARE)
        assert e.low < scale < e.high
    for surface, name in (("OD", "finish OD"), ("ID", "finish bore")):
        e = estimate(result, f"size error {surface} ({name})")
        assert abs(e.value) < EXACT_SIZE_MM
    assert result.residual_rms_um < 0.1
    # the calibrated prediction is the truth: its mass too
    assert result.calibrated.predicted_mass_g.value == pytest.approx(truths[scale].predicted_mass_g.value, abs=1e-4)


def test_coverage_of_the_intervals_small(sleeve, truths, memo):
    # a small version of the coverage study (the 50-trial one on the housing is marked slow): 6 seeded trials
    # with gauge noise of the stated uncertainty; at 95 % each factor's interval misses in 5 % of trials, so
    # 5 of 6 or better (a chance of 0.97 each for a true 95 % interval)
    data = measure(truths[0.7], **READINGS)
    rng = np.random.default_rng(2024)
    covered = {"T1": 0, "B1": 0}
    for _ in range(6):
        result = fitted(sleeve, with_noise(data, rng), memo)
        for tool in covered:
            e = estimate(result, f"force factor {tool}")
            covered[tool] += e.identified and e.low <= 0.7 <= e.high
    assert all(count >= 5 for count in covered.values()), covered


def ring_mass_g(r_mm: float, length_mm: float, thickness_mm: float) -> float:
    """A uniform layer of thickness t over a cylinder of radius r and length L: rho 2 pi (r + t/2) t L."""
    return RHO_AL * 1e-3 * 2.0 * math.pi * (r_mm + 0.5 * thickness_mm) * thickness_mm * length_mm


def test_a_pure_size_error_comes_back_as_size_error_not_push_off(sleeve, memo):
    _, job, _ = sleeve
    sizes = {"finish OD": 0.008, "finish bore": -0.005}
    truth = calibrated_truth(job, {"size_error": [
        {"pass": p, "surface": "od" if "OD" in p else "id", "value_mm": v, "low_mm": v, "high_mm": v}
        for p, v in sizes.items()]}, memo)
    result = fitted(sleeve, measure(truth, **READINGS), memo)
    for tool in ("T1", "B1"):
        e = estimate(result, f"force factor {tool}")
        assert e.value == pytest.approx(1.0, rel=EXACT_SHARE)
    assert estimate(result, "size error OD (finish OD)").value == pytest.approx(0.008, abs=EXACT_SIZE_MM)
    assert estimate(result, "size error ID (finish bore)").value == pytest.approx(-0.005, abs=EXACT_SIZE_MM)
    # the mass the size errors add is the layer they leave: 8 um over the OD, -5 um in the bore, 34 mm long
    # (z = 6 to 40); the layer's closed form within 3 % (the deeper or shallower cut pushes off a little
    # differently, and the finished length ends in the corner at z = 6)
    shares = {s.where.split(" (")[0]: s.mass_g for s in result.mass.shares if s.cause == "size error"}
    assert shares["finish OD"] == pytest.approx(ring_mass_g(20.0, 34.0, 0.008), rel=0.03)
    assert shares["finish bore"] == pytest.approx(-ring_mass_g(19.0 - 0.005, 34.0, 0.005), rel=0.03)


def test_mass_alone_says_what_it_cannot_separate(sleeve, truths, memo):
    data = {"measured": {"mass": truths[0.7].predicted_mass_g.value}}
    result = fitted(sleeve, data, memo)
    assert not any(e.identified for e in result.estimates)
    assert all(e.value == e.unknown.start for e in result.estimates)
    said = " ".join(result.unseparated)
    assert "mass alone" in said
    for e in result.estimates:
        assert e.unknown.label in said


def test_one_reading_cannot_tell_the_push_off_from_the_size_error(sleeve, truths, memo):
    data = measure(truths[0.7], diameters=[("od", 36.0, U_OD)])
    result = fitted(sleeve, data, memo)
    t1, od = estimate(result, "force factor T1"), estimate(result, "size error OD (finish OD)")
    assert not t1.identified and not od.identified
    assert "cannot be separated" in t1.reason and od.unknown.label in t1.reason
    assert any("cannot tell" in line for line in result.unseparated)
    # nothing reads the bore: its tool and size error are not seen at all
    b1, bore = estimate(result, "force factor B1"), estimate(result, "size error ID (finish bore)")
    assert not b1.identified and "nothing measured sees it" in b1.reason
    assert not bore.identified and "no reading of the ID" in bore.reason
    assert (b1.value, bore.value) == (1.0, 0.0)


def test_per_pass_factors_name_the_passes(sleeve, truths, memo):
    result = fitted(sleeve, measure(truths[1.3], **READINGS), memo, fitted_per="pass")
    names = {e.unknown.name for e in result.estimates if e.unknown.kind == "force"}
    assert names == {"finish OD", "finish bore"}
    for e in result.estimates:
        if e.unknown.kind == "force":
            assert e.value == pytest.approx(1.3, rel=EXACT_SHARE)
    assert result.calibration.fitted_per == "pass"


# ---------------------------------------------------------------------------------------------------
# the command: JSON, the mass's rest, the calibration saved and used

def write_measured(folder: Path, name: str, data: dict) -> Path:
    path = folder / f"{name}.toml"
    path.write_text(measured_toml(data))
    return path


@pytest.fixture(scope="module")
def noisy_run(folder, sleeve, truths):
    """explain --json --save on a noisy measurement of the x 0.7 sleeve, through the command line."""
    job_path, _, _ = sleeve
    data = with_noise(measure(truths[0.7], **READINGS), np.random.default_rng(7))
    measured = write_measured(folder, "noisy", data)
    saved = folder / "calibration.toml"
    code, out, err = run_cli(["explain", str(job_path), str(measured), "--json", "--save", str(saved)])
    assert code == 0, err
    return json.loads(out), data, saved


def test_json_has_the_contract_keys(noisy_run):
    payload, data, _ = noisy_run
    assert {"factors", "size_errors", "mass", "residual_rms_um"} <= set(payload)
    for f in payload["factors"]:
        assert {"applies_to", "kind", "value", "low", "high", "identified"} <= set(f)
        assert f["kind"] == "force" and f["low"] <= f["value"] <= f["high"]
    for s in payload["size_errors"]:
        assert {"surface", "value_mm", "low", "high", "identified"} <= set(s)
        assert (s["low_mm"], s["high_mm"]) == (s["low"], s["high"])
    assert {"measured_g", "nominal_g", "uncalibrated_g", "calibrated_g"} <= set(payload["mass"])
    assert payload["mass"]["measured_g"] == pytest.approx(data["measured"]["mass"])
    residuals = [r["measured_mm"] - r["calibrated_mm"] for r in payload["readings"] if r["used"]]
    assert payload["residual_rms_um"] == pytest.approx(1000 * math.sqrt(np.mean(np.square(residuals))))


def test_saved_calibration_fed_back_into_predict_reproduces_the_measured_diameters(noisy_run, sleeve):
    # the calibrated prediction's diameters, read from `deflect predict --json` (its deviation points), against
    # the noisy readings: every one within 3 sigma, and their scatter that of the noise (chi-square per degree
    # of freedom below its 99th percentile for 12 - 4 degrees of freedom, 2.51)
    payload, data, saved = noisy_run
    job_path, _, _ = sleeve
    code, out, err = run_cli(["predict", str(job_path), "--calibration", str(saved), "--json", "--quiet"])
    assert code == 0, err
    pred = json.loads(out)
    assert pred["calibration"]["file"] == str(saved)
    points = pred["deviation"]
    normalised = []
    for e in data["measured"]["diameter"]:
        mine = [p for p in points if p["surface"] == e["surface"] and abs(p["nr"]) > 0.999]
        z = np.array([p["z"] for p in mine])
        order = np.argsort(z)
        left = np.interp(e["z"], z[order], np.array([p["deviation_mm"] for p in mine])[order])
        drawn = 40.0 if e["surface"] == "od" else 38.0
        predicted = drawn + (2.0 * left if e["surface"] == "od" else -2.0 * left)
        normalised.append((e["value"] - predicted) / e["uncertainty"])
    assert np.max(np.abs(normalised)) < 3.0
    assert np.mean(np.square(normalised)) * len(normalised) / (len(normalised) - 4) < 2.51


def test_calibrated_predict_report_states_itself(noisy_run, sleeve, folder):
    _, _, saved = noisy_run
    job_path, _, _ = sleeve
    code, out, _ = run_cli(["predict", str(job_path), "--calibration", str(saved), "--quiet"])
    assert code == 0
    assert out.splitlines()[0].startswith(f"calibrated ({saved}: first article ")
    # the same through the job key, with a path relative to the job
    keyed = folder / "keyed.toml"
    keyed.write_text(SLEEVE.replace('title = "test sleeve, 1 mm wall, bored and turned"',
                                    'title = "keyed"\ncalibration = "calibration.toml"'))
    code, out, _ = run_cli(["predict", str(keyed), "--quiet"])
    assert code == 0 and out.splitlines()[0].startswith("calibrated (")
    code, plain, _ = run_cli(["predict", str(job_path), "--quiet"])
    assert not plain.startswith("calibrated")


def test_the_rest_beyond_the_measurement_is_said_with_the_usual_suspects(sleeve, truths, memo):
    data = measure(truths[0.7], **READINGS)
    data["measured"]["mass"] += 0.5                    # half a gram of something the dimensions do not see
    result = fitted(sleeve, data, memo)
    text = " ".join(explain_report(result).split())          # the prose is wrapped
    assert "MORE than the measurement allows" in text and "stock a pass did not clean up" in text
    mass = explain_payload(result)["mass"]
    assert not mass["rest_explained"] and mass["rest_g"] == pytest.approx(0.5, abs=0.01)
    assert mass["suspects"]
    # the rest's allowance: the scale, the density (half a unit of 2.70's last figure, rectangular: 0.005 /
    # sqrt 3) over the part's volume, and the calibration's own, in quadrature; at least the first two
    density_part = truths[0.7].predicted_mass_g.value / RHO_AL * 0.005 / math.sqrt(3.0)
    assert mass["rest_uncertainty_g"] >= math.hypot(0.01, density_part) * (1 - 1e-9)
    assert mass["rest_allowed_g"] == pytest.approx(2.0 * mass["rest_uncertainty_g"])


def test_calibration_file_round_trip_and_refusals(noisy_run, folder, sleeve):
    payload, _, saved = noisy_run
    calibration = read_calibration(saved)
    fitted_factors = {f["applies_to"]: f["value"] for f in payload["factors"]}
    assert {f.applies_to: f.value for f in calibration.factors} == fitted_factors
    job_path, job, _ = sleeve
    # another material is refused, naming the option
    steel = folder / "steel.toml"
    steel.write_text(SLEEVE.replace('name = "al-6061-t6"', 'name = "steel-c45"'))
    code, _, err = run_cli(["predict", str(steel), "--calibration", str(saved), "--quiet"])
    assert code == 2 and "--calibration" in err and "al-6061-t6" in err
    # a broken calibration file names itself and the key
    broken = folder / "broken-calibration.toml"
    broken.write_text(saved.read_text().replace("identified = true", "identified = 3", 1))
    code, _, err = run_cli(["predict", str(job_path), "--calibration", str(broken), "--quiet"])
    assert code == 2 and err.startswith(f"error: {broken}: calibration.factor[0].identified: ")
    # --save never overwrites a file that is not a calibration
    other = folder / "notes.toml"
    other.write_text("my notes\n")
    measured = write_measured(folder, "for-save", {"measured": {"mass": 13.3}})
    code, _, err = run_cli(["explain", str(job_path), str(measured), "--save", str(other)])
    assert code == 2 and "not a deflect calibration" in err and other.read_text() == "my notes\n"


def test_calibrated_size_error_is_not_in_the_program_a_tune_option_writes(sleeve, memo):
    # the wear offsets of the next part are programmed offsets: written into the job, with the calibration,
    # `predict` reproduces the option's figures
    _, job, _ = sleeve
    table = {"factor": [{"applies_to": "T1", "kind": "force", "value": 0.8, "low": 0.7, "high": 0.9}],
             "size_error": [{"pass": "finish OD", "surface": "od", "value_mm": 0.006, "low_mm": 0.004,
                             "high_mm": 0.008}]}
    calibration = calibration_from_data({"calibration": {"material": "al-6061-t6", **table}})
    result = next_part(job, calibration, memo)
    option = result.options[0]
    offsets = {c.pass_name: c.after for c in option.changes if c.key == "offset"}
    from deflect.decisions.tune import job_with

    again = with_calibration(job_with(job, option.changes), calibration)
    with kept_workers():
        pred = simulate(again, process_from_job(again), memo=memo)
    assert pred.predicted_mass_g.value == pytest.approx(option.mass_g, abs=1e-9)
    # the OD's programmed offset takes out the size error too: more than 6 um deeper than without it
    plain = next_part(job, replace(calibration, size_errors=()), memo).options[0]
    plain_offsets = {c.pass_name: c.after for c in plain.changes if c.key == "offset"}
    assert offsets["finish OD"] < plain_offsets["finish OD"] - 0.005


def test_the_readme_example_reads_and_its_causes_come_back():
    # the shipped invented first article was made with T2 x 0.85, T3 x 1.25, OD +4 um, bore -2 um, rim +3 um
    # (its header): each within its stated 95 % interval
    with kept_workers():
        result = explain(HOUSING_JOB, process_from_job(HOUSING_JOB), read_measured(HOUSING_MEASURED, HOUSING_JOB))
    payload = explain_payload(result)
    truth = {"T2 finish": 0.85, "T3 boring": 1.25}
    factors = {f["applies_to"]: f for f in payload["factors"]}
    for tool, value in truth.items():
        assert factors[tool]["identified"] and factors[tool]["low"] <= value <= factors[tool]["high"]
    # any other tool that finishes a point (the roughing tool at a corner the finishing pass leaves) is not seen
    assert all(not f["identified"] and f["value"] == 1.0 for tool, f in factors.items() if tool not in truth)
    sizes = {"finish OD": 0.004, "finish bore": -0.002, "face rim": 0.003}
    errors = {s["pass"]: s for s in payload["size_errors"]}
    for name, value in sizes.items():
        assert errors[name]["identified"] and errors[name]["low_mm"] <= value <= errors[name]["high_mm"]
    assert all(not s["identified"] for name, s in errors.items() if name not in sizes)
    assert payload["mass"]["rest_explained"]


def test_crossings_helper_agrees_with_the_gauge():
    # the tests' shapely gauge and the package's straight-edge gauge read the same section alike
    for z in (0.5, 5.0, 9.5):
        assert crossings(TRAPEZOID, z) == pytest.approx(crossings_at_height(TRAPEZOID, z)[0], abs=1e-12)


def test_grip_factor_from_roundness_on_the_ring():
    # the shipped ring (bored in 3 jaws): the truth's jaws squeeze 1.3 times what the model says; the bore's
    # roundness and diameters give the grip factor back. The 5 mm wall barely pushes off, so the boring tool's
    # factor is not seen (and stays at 1, whatever the truth's 0.8)
    job = read_job(EXAMPLES / "ring.toml")
    memo: dict = {}
    truth = calibrated_truth(job, {"factor": [
        {"applies_to": "jaws", "kind": "grip", "value": 1.3, "low": 1.3, "high": 1.3},
        {"applies_to": "T1 boring", "kind": "force", "value": 0.8, "low": 0.8, "high": 0.8}]}, memo)
    data = measure(truth, diameters=[("id", z, U_ID) for z in (2.0, 6.0, 10.0, 14.0)],
                   roundness=[("id", 4.0), ("id", 12.0)])
    with kept_workers():
        result = explain(job, process_from_job(job), measured_from_data(data, "synthetic", job), memo=memo)
    grip = estimate(result, "grip factor (jaws' squeeze)")
    assert grip.identified and grip.value == pytest.approx(1.3, rel=EXACT_SHARE)
    force = estimate(result, "force factor T1 boring")
    assert not force.identified and force.value == 1.0
    assert result.calibration.grip_factor == pytest.approx(1.3, rel=EXACT_SHARE)
    # and a roundness with other lobes than the jaws' is not the grip's: it is left out of the fit
    data["measured"]["roundness"][0]["lobes"] = 5
    with kept_workers():
        other = explain(job, process_from_job(job), measured_from_data(data, "synthetic", job), memo=memo)
    assert not other.readings[4].used
    assert any("5 lobes" in n for n in other.notes)


def test_jobs_with_other_constants_share_compliance_but_not_cut_results(truths, sleeve, memo):
    # both truths were predicted with one memo (the key stations depend on the wall, not on the constants):
    # their push-off must still be their own, about in proportion to the constants
    _, job, process = sleeve
    nominal = truths[0.7].nominal_mass_g
    gains = {scale: truths[scale].predicted_mass_g.value - nominal for scale in truths}
    assert gains[1.3] / gains[0.7] == pytest.approx(1.3 / 0.7, rel=0.15)


def test_the_figure_draws_the_readings_and_the_mass_split_it_is_given(sleeve, truths, memo, monkeypatch, tmp_path):
    from deflect.output import figures

    drawn = []
    save = figures._save
    monkeypatch.setattr(figures, "_save", lambda plt, fig, path: (save(plt, fig, path), drawn.append(fig)))
    result = fitted(sleeve, measure(truths[1.3], **READINGS), memo)
    figures.first_article_plot(result, tmp_path / "first-article.png")
    assert (tmp_path / "first-article.png").stat().st_size > 0
    axes = drawn[0].axes
    titles = [ax.get_title() for ax in axes]
    assert titles[:3] == ["OD diameter", "ID diameter", "wall thickness"]
    # the OD panel's measured points: each reading's diameter less the drawn 40 mm, in um, at its height
    od = [r.reading for r in result.readings if r.reading.surface == "od"]
    points = next(line for line in axes[0].get_lines() if line.get_marker() == "o")
    assert points.get_xdata() == pytest.approx([1000 * (r.value_mm - 40.0) for r in od], abs=1e-9)
    assert points.get_ydata() == pytest.approx([r.at_mm for r in od])
    # the mass panel's bars: the shares, then the rest
    widths = [patch.get_width() for patch in axes[3].patches]
    assert widths == pytest.approx([s.mass_g for s in result.mass.shares] + [result.mass.rest_g])
