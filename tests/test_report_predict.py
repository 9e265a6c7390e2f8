"""Unit tests of the output of `deflect predict`: terminal report, CSV files and figures.

No physics is checked here: a small Prediction is built by hand from the result dataclasses (a sleeve,
r 9..10 mm, z 0..10 mm, an OD pass of two cuts, a bore pass and a face pass), and the tests check that what
it holds reaches the reader: names, figures formatted as stated, the caution, one CSV row per record, and
three PNG files. The magnification rule of the section figure is checked against its definition
(1, 2 or 5 x 10^k, nearest on a log scale to the factor drawing the largest deviation as 5 % of the part).
"""

import csv
import math
import re
from dataclasses import replace

import numpy as np
import pytest

from deflect.errors import InputError
from deflect.machining.results import PassResult, Prediction, SpreadValue, StationTable, SurfaceCheck, SurfaceDeviation
from deflect.output.csv_files import DEVIATION_COLUMNS, PASS_COLUMNS, SECTION_COLUMNS, STATION_COLUMNS, write_csv
from deflect.output.figures import magnification, predict_plots
from deflect.output.predict_report import pass_row, predict_report

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
NICE_HALF_STEP = math.log10(math.sqrt(2.5))   # widest log gap between neighbours of 1, 2, 5, 10 is 2 -> 5


def stations(r, z, normal, deflection_mm, cut=0, rubbing_at=()):
    """A StationTable along straight positions; forces grow with the station number so maxima are known."""
    r, z = (a.copy() for a in np.broadcast_arrays(np.asarray(r, float), np.asarray(z, float)))
    count = len(r)
    ramp = np.arange(1, count + 1, dtype=float)
    rubbing = np.zeros(count, bool)
    rubbing[list(rubbing_at)] = True
    return StationTable(r_mm=r, z_mm=z, normal_rz=np.tile(normal, (count, 1)), met_depth_mm=np.full(count, 0.3),
                        depth_mm=np.full(count, 0.28), chip_thickness_mm=np.full(count, 0.05),
                        cutting_n=10.0 * ramp, feed_n=5.0 * ramp, passive_n=8.0 * ramp,
                        compliance_mm_per_n=np.full(count, 1e-3), tool_compliance_mm_per_n=2e-4,
                        deflection_mm=np.asarray(deflection_mm, float), power_kw=0.01 * ramp, rubbing=rubbing,
                        cut=cut)


def rectangle_boundary(step=1.0):
    """Points along the sleeve's boundary, counter-clockwise, with outward normals and the surface kinds."""
    points, normals, kinds = [], [], []
    for r in np.arange(9.0, 10.0, step / 4):              # chuck face z = 0, not machined
        points.append((r, 0.0)), normals.append((0.0, -1.0)), kinds.append("unmachined")
    for z in np.arange(0.0, 10.0, step):                  # OD
        points.append((10.0, z)), normals.append((1.0, 0.0)), kinds.append("od")
    for r in np.arange(10.0, 9.0, -step / 4):             # free face z = 10
        points.append((r, 10.0)), normals.append((0.0, 1.0)), kinds.append("face")
    for z in np.arange(10.0, 0.0, -step):                 # bore
        points.append((9.0, z)), normals.append((-1.0, 0.0)), kinds.append("id")
    points, normals = np.array(points), np.array(normals)
    deviation = np.where(np.array(kinds) == "unmachined", 0.0, 0.001 * points[:, 1])   # more left towards z = 10
    names = {"od": "rough OD", "id": "finish bore", "face": "face end", "unmachined": ""}
    return SurfaceDeviation(points_rz=points, normals=normals, deviation_mm=deviation, surface=kinds,
                            finished_by=[names[k] for k in kinds])


def check(surface, r, sign):
    where = {"held end": 1.0, "middle": 5.0, "free end": 9.0}
    left = {name: 0.001 * z for name, z in where.items()}
    return SurfaceCheck(surface=surface, positions={name: (r, z) for name, z in where.items()}, deviation_mm=left,
                        nominal_diameter_mm={name: 2.0 * r for name in where},
                        predicted_diameter_mm={name: 2.0 * (r + sign * left[name]) for name in where},
                        max_deviation_mm=0.010, mass_left_g=0.1)


def hand_made_prediction() -> Prediction:
    z_od = np.linspace(10.0, 2.0, 5)
    passes = [
        PassResult(name="rough OD", surface="od", tool="T1", feed_mm=0.2, speed_m_min=180.0,
                   cuts=[stations(10.5, z_od, (1.0, 0.0), np.linspace(0.03, 0.0, 5), cut=0),
                         stations(10.0, z_od, (1.0, 0.0), np.linspace(0.02, 0.0, 5), cut=1, rubbing_at=[0])],
                   cycle_time_s=4.0, max_deflection_mm=0.030, peak_power_kw=0.05, mass_left_g=0.12),
        PassResult(name="finish bore", surface="id", tool="B2", feed_mm=0.08, speed_m_min=150.0,
                   cuts=[stations(9.0, np.linspace(10.0, 1.0, 4), (-1.0, 0.0), np.full(4, 0.012))],
                   cycle_time_s=3.5, max_deflection_mm=0.012, peak_power_kw=0.04, mass_left_g=0.08),
        PassResult(name="face end", surface="face", tool="T1", feed_mm=0.1, speed_m_min=200.0,
                   cuts=[stations(np.linspace(10.5, 9.0, 3), 10.0, (0.0, 1.0), np.full(3, 0.005))],
                   cycle_time_s=1.0, max_deflection_mm=0.005, peak_power_kw=0.03, mass_left_g=0.05),
    ]
    nominal = np.array([[9.0, 0.0], [10.0, 0.0], [10.0, 10.0], [9.0, 10.0]])
    machined = np.array([[9.0, 0.0], [10.0, 0.0], [10.01, 10.0], [8.99, 10.0]])
    return Prediction(
        title="hand-made sleeve", material="test alloy", force_spread=0.15, nominal_mass_g=10.0,
        nominal_inertia_kg_mm2=0.9, predicted_mass_g=SpreadValue(10.25, 10.2, 10.3),
        predicted_inertia_kg_mm2=0.92, mass_gain_g=SpreadValue(0.25, 0.2, 0.3),
        max_deviation_mm=SpreadValue(0.010, 0.0085, 0.0115), cycle_time_s=8.5, machine_power_kw=7.5,
        peak_power_kw=0.05, passes=passes, deviation=rectangle_boundary(), surfaces=[check("od", 10.0, 1.0),
                                                                                      check("id", 9.0, -1.0)],
        wall=[{"where": "middle", "z_mm": 5.0, "nominal_mm": 1.0, "predicted_mm": 1.010}], machined_rz=machined,
        nominal_rz=nominal, stock_rz=np.array([[9.0, 0.0], [10.5, 0.0], [10.5, 10.5], [9.0, 10.5]]),
        mass_gain_by_surface_g={"od": 0.12, "id": 0.08, "face": 0.05, "unmachined": 0.0},
        warnings=["1 station(s) rub rather than cut"])


@pytest.fixture(scope="module")
def prediction():
    return hand_made_prediction()


def test_predict_report_names_passes_and_figures(prediction):
    text = predict_report(prediction)
    for name in ("rough OD", "finish bore", "face end"):
        assert name in text
    assert "+0.250 g, +2.50 %" in text                     # gain 0.25 g of a 10 g part
    assert "(+0.200 to +0.300 g)" in text
    assert "for force constants +/- 15 %" in text
    assert "0.010 mm a side" in text
    assert "0.05 kW of the machine's 7.5 kW" in text
    assert "leaves 9.0 um a side" in text                  # free end of the OD: 0.001 mm/mm * 9 mm
    assert "20.018" in text                                # its predicted diameter, 2 (10 + 0.009)
    wall = next(block for block in text.split("\n\n") if block.startswith("Wall thickness"))
    assert wall.splitlines()[-1].split() == ["middle", "5.00", "1.000", "1.010", "10.0"]


def test_gain_rounding_to_zero_prints_no_sign_and_no_share(prediction):
    """A gain of -0.0001 g prints as 0.000 g, with no '-0 %' share of the gain beside it."""
    from dataclasses import replace
    tiny = replace(prediction, mass_gain_by_surface_g={"od": 0.2501, "unmachined": -0.0001})
    block = next(b for b in predict_report(tiny).split("\n\n") if b.startswith("Mass gain by surface"))
    assert "-0.000" not in block and "-0 %" not in block
    assert re.search(r"^unmachined +0\.000 g$", block, flags=re.M), block
    assert "(100 % of the gain)" in block


def test_predict_report_pass_row(prediction):
    row = next(line for line in predict_report(prediction).splitlines() if line.strip().startswith("rough OD"))
    cells = row.split()
    # rough OD: 2 cuts, max push-off 30.0 um, peak passive 5 stations x 8 N = 40 N, 1 rubbing station
    assert cells[4] == "2" and cells[7] == "30.0" and cells[8] == "40.0" and cells[-1] == "1"


def test_predict_report_pass_row_shows_the_largest_push_off_with_its_sign(prediction):
    """A face pass that leaves its face 2.7 um below its target and 0.1 um above elsewhere: its row shows
    -2.7, the push-off of largest size with its sign, not the largest positive one (0.1)."""
    face = replace(prediction.passes[2], max_deflection_mm=0.0001,
                   cuts=[stations(np.linspace(10.5, 9.0, 3), 10.0, (0.0, 1.0), [0.0001, -0.0027, 0.00005])])
    assert pass_row(face)[6] == "-2.7"
    assert pass_row(prediction.passes[0])[6] == "30.0"


def test_predict_report_warnings_and_caution(prediction):
    text = predict_report(prediction)
    assert "warning: 1 station(s) rub rather than cut" in text.splitlines()
    assert "confirm them on a first article" in text
    assert "calibrated" in text
    assert "local safety rules come first" in text


def read_rows(path):
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.reader(handle))


def test_write_csv_files_headers_and_rows(prediction, tmp_path):
    folder = tmp_path / "out" / "csv"                       # nested and missing: created
    paths = write_csv(prediction, folder)
    assert [p.name for p in paths] == ["stations.csv", "deviation.csv", "passes.csv", "machined_section.csv"]
    expected = {"stations.csv": (STATION_COLUMNS, 5 + 5 + 4 + 3),
                "deviation.csv": (DEVIATION_COLUMNS, len(prediction.deviation.deviation_mm)),
                "passes.csv": (PASS_COLUMNS, 3),
                "machined_section.csv": (SECTION_COLUMNS, 4)}
    for path in paths:
        header, count = expected[path.name]
        rows = read_rows(path)
        assert rows[0] == header
        assert len(rows) - 1 == count


def test_write_csv_station_values(prediction, tmp_path):
    rows = read_rows(write_csv(prediction, tmp_path)[0])
    header = rows[0]
    # cuts are numbered from 1, as on the screen and in the figures: the second cut is "2"
    second_cut = [dict(zip(header, row)) for row in rows[1:] if row[0] == "rough OD" and row[1] == "2"]
    assert len(second_cut) == 5
    first = second_cut[0]
    assert float(first["push_off_mm"]) == pytest.approx(0.02, rel=1e-12)
    assert float(first["passive_force_N"]) == pytest.approx(8.0, rel=1e-12)
    assert float(first["tool_compliance_mm_per_N"]) == pytest.approx(2e-4, rel=1e-12)
    assert first["rubbing"] == "1" and second_cut[1]["rubbing"] == "0"


def test_write_csv_folder_that_is_a_file(prediction, tmp_path):
    blocker = tmp_path / "taken"
    blocker.write_text("not a folder")
    with pytest.raises(InputError, match="cannot use .* as an output folder"):
        write_csv(prediction, blocker)


def test_predict_plots_writes_three_pngs(prediction, tmp_path):
    paths = predict_plots(prediction, tmp_path / "figures")
    assert [p.name for p in paths] == ["section.png", "deviation.png", "passes.png"]
    for path in paths:
        data = path.read_bytes()
        assert data.startswith(PNG_SIGNATURE) and len(data) > 10_000


@pytest.mark.parametrize("max_deviation_mm, size_mm, factor", [
    (0.025, 40.0, 100.0),     # wanted 80: log-nearer to 100 than to 50
    (0.010, 40.0, 200.0),     # wanted 200 exactly
    (0.030, 40.0, 50.0),      # wanted 66.7: log-nearer to 50 than to 100
    (0.004, 1.0, 10.0),       # wanted 12.5
    (0.0, 40.0, 1.0),         # nothing left: true scale
    (5.0, 40.0, 1.0),         # already larger than 5 % of the part: true scale, never shrunk
])
def test_magnification_values(max_deviation_mm, size_mm, factor):
    assert magnification(max_deviation_mm, size_mm) == pytest.approx(factor, rel=1e-12)


@pytest.mark.parametrize("wanted", [1.3, 3.16, 7.0, 14.9, 31.7, 99.0, 450.0, 2.2e4])
def test_magnification_is_nearest_nice_number(wanted):
    factor = magnification(0.05 / wanted, 1.0)
    mantissa = factor / 10.0 ** math.floor(math.log10(factor) + 1e-12)
    assert min(abs(mantissa - step) for step in (1.0, 2.0, 5.0)) < 1e-9
    assert abs(math.log10(factor / wanted)) <= NICE_HALF_STEP + 1e-12
