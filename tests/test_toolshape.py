"""The tool's shape in the material removal: the nose's radius stays in internal corners, the insert's edges
cannot follow a wall steeper than they clear, and both show in the rules and in the predicted mass.

Closed forms: the material a nose of radius r leaves in a corner whose empty side opens at alpha,
A = r^2 [cot(alpha / 2) - (pi - alpha) / 2] (kite less sector; Euclid, Elements III.18), 90 deg:
(1 - pi / 4) r^2 with its centroid (10 - 3 pi) / (12 - 3 pi) r from each wall; triangles for what the edges
leave; volumes by Pappus-Guldinus. The trailing edge's angle kappa_r' = 180 - kappa_r - epsilon with the
included angle epsilon of the ISO 1832 shape letter (D: 55 deg, C: 80 deg).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from shapely.geometry import Polygon

from deflect.decisions.rules import check_rules
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.reader import read_job
from deflect.job.tooling import tool_from_job
from deflect.machining.inprocess import BUFFER_CHORD_MM, polygon_mass
from deflect.machining.simulate import SimulationSettings, cut_to_targets, simulate
from deflect.machining.targets import process_from_job
from deflect.machining.toolshape import REACH_CLEARANCE_DEG, tool_shape

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
DENSITY = 2.70          # al-6061-t6, g/cm3
EXACT = 1e-9

JOB = """
[job]
title = "tool shape"
[material]
name = "al-6061-t6"
[part]
outline = {outline}
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
[stock]
outline = {stock}
[[tool]]
name = "T1"
insert = "{insert}"
approach = 93.0
[[pass]]
name = "finish OD"
surface = "od"
tool = "T1"
allowance = 0.0
feed = 0.1
speed = 200.0
z = [41.0, 0.0]
"""

SHOULDER = [[10.0, 0.0], [30.0, 0.0], [30.0, 5.0], [20.0, 5.0], [20.0, 40.0], [10.0, 40.0]]
# the shoulder's blank: 1 mm on the OD above the flange, the flange finished
SHOULDER_STOCK = [[10.0, 0.0], [30.0, 0.0], [30.0, 5.0], [21.0, 5.0], [21.0, 40.0], [10.0, 40.0]]


def write_job(tmp_path, outline, insert="DCMT11T304", stock=None):
    stock = stock or [[10.0, 0.0], [31.0, 0.0], [31.0, 41.0], [10.0, 41.0]]
    path = tmp_path / "job.toml"
    path.write_text(JOB.format(outline=json.dumps(outline), insert=insert, stock=json.dumps(stock)))
    return path


def spandrel(r: float) -> tuple[float, float]:
    return (1.0 - math.pi / 4.0) * r * r, (10.0 - 3.0 * math.pi) / (12.0 - 3.0 * math.pi) * r


def corner_area(r: float, alpha_deg: float) -> float:
    alpha = math.radians(alpha_deg)
    return r * r * (1.0 / math.tan(alpha / 2.0) - (math.pi - alpha) / 2.0)


# ---------------------------------------------------------------------------------------------------
# the shape read from the tool

@pytest.mark.parametrize("insert, approach, rise, descent", [
    ("DCMT11T304", 93.0, 90.0, 180.0 - 93.0 - 55.0 - REACH_CLEARANCE_DEG),
    ("CNMG120408", 95.0, 90.0, 180.0 - 95.0 - 80.0 - REACH_CLEARANCE_DEG),
    ("VCMT160404", 93.0, 90.0, 180.0 - 93.0 - 35.0 - REACH_CLEARANCE_DEG),
    ("DCMT11T304", 90.0, 90.0 - REACH_CLEARANCE_DEG, 180.0 - 90.0 - 55.0 - REACH_CLEARANCE_DEG),
])
def test_shape_from_the_insert(insert, approach, rise, descent):
    shape = tool_shape(tool_from_job({"name": "T", "insert": insert, "approach": approach}))
    assert shape.steepest_rise_deg == pytest.approx(rise)
    assert shape.steepest_descent_deg == pytest.approx(descent)


def test_nose_only_without_an_insert_shape_and_in_face_passes():
    bare = tool_shape(tool_from_job({"name": "T", "nose_radius": 0.4, "approach": 93.0}))
    coded = tool_shape(tool_from_job({"name": "T", "insert": "DCMT11T304", "approach": 93.0}), "face")
    for shape in (bare, coded):
        assert not shape.has_edges and shape.nose_radius_mm == 0.4


# ---------------------------------------------------------------------------------------------------
# the nose in a sharp internal corner

@pytest.mark.parametrize("insert, nose", [("DCMT11T302", 0.2), ("DCMT11T304", 0.4), ("DCMT11T308", 0.8)])
def test_swept_part_keeps_the_nose_radius_to_its_chord_tolerance(tmp_path, insert, nose):
    """The part cut exactly to the targets keeps the nose's spandrel at the shoulder: its mass over the drawn
    part against the closed form, within what the arcs' chords allow (BUFFER_CHORD_MM along the arc, on
    both the nose arc and the polygon it is cut from)."""
    job = read_job(write_job(tmp_path, SHOULDER, insert, SHOULDER_STOCK))
    process = process_from_job(job)
    nominal = job.section.polygon(POLYGON_CHORD_MM)
    shaped = cut_to_targets(process, nominal, SimulationSettings().station_spacing_mm, {})
    area, centroid = spandrel(nose)
    exact = DENSITY * 1e-3 * 2.0 * math.pi * (20.0 + centroid) * area
    swept = polygon_mass(shaped, DENSITY)[0] - polygon_mass(nominal, DENSITY)[0]
    chords = DENSITY * 1e-3 * 2.0 * math.pi * 20.0 * (0.5 * math.pi * nose) * BUFFER_CHORD_MM
    assert abs(swept - exact) <= chords
    # the point tool (no shape) cuts the corner sharp
    ideal = cut_to_targets(process, nominal, SimulationSettings().station_spacing_mm, {}, tool_shapes=False)
    assert abs(polygon_mass(ideal, DENSITY)[0] - polygon_mass(nominal, DENSITY)[0]) <= 1e-3 * exact


def test_prediction_counts_the_corner_as_its_own_cause(tmp_path):
    job = read_job(write_job(tmp_path, SHOULDER, "DCMT11T304", SHOULDER_STOCK))
    pred = simulate(job, process_from_job(job))
    area, centroid = spandrel(0.4)
    exact = DENSITY * 1e-3 * 2.0 * math.pi * (20.0 + centroid) * area
    # the line holds the nose material the part keeps, cut from the machined section with the corner's polygon:
    # the closed form within that polygon's chords (POLYGON_CHORD_MM along the nose's quarter arc)
    chords = DENSITY * 1e-3 * 2.0 * math.pi * 20.0 * (0.5 * math.pi * 0.4) * POLYGON_CHORD_MM
    assert abs(pred.mass_gain_by_surface_g["corners"] - exact) <= chords
    rules = check_rules(job, process_from_job(job))
    assert [f.mass_left_g for f in rules.findings if f.rule == "corner"] == [pytest.approx(exact, rel=1e-6)]
    # the layer the push-off leaves is counted apart from the corner: the causes add up to the gain
    assert sum(pred.mass_gain_by_surface_g.values()) == pytest.approx(pred.mass_gain_g.value, rel=1e-4)


# ---------------------------------------------------------------------------------------------------
# reach

def grooved(ramp_deg: float) -> list:
    """A sleeve r 10..20 whose OD has a 2 mm deep groove from z = 20 up to a ramp that falls from r = 20 at
    z = 30 towards the chuck at ramp_deg from the feed (-z)."""
    foot = 30.0 - 2.0 / math.tan(math.radians(ramp_deg))
    return [[10.0, 0.0], [20.0, 0.0], [20.0, 20.0], [18.0, 20.0], [18.0, foot], [20.0, 30.0], [20.0, 40.0],
            [10.0, 40.0]]


def test_ramp_steeper_than_the_trailing_edge_is_flagged_with_its_material(tmp_path):
    job = read_job(write_job(tmp_path, grooved(45.0), "DCMT11T302"))
    rules = check_rules(job, process_from_job(job))
    reach = [f for f in rules.findings if f.rule == "reach"]
    assert len(reach) == 1
    f = reach[0]
    limit = 180.0 - 93.0 - 55.0 - REACH_CLEARANCE_DEG
    assert f.value == pytest.approx(45.0) and f.limit == pytest.approx(limit)
    # the trailing edge leaves the triangle between the ramp and its own line from the ramp's top at the
    # limit angle down to the groove's floor; the nose rounds the foot of that line (opening 180 - limit)
    # and the drawn corner at the ramp's foot (opening 135) lies inside, counted as a corner of its own
    edge_foot = 30.0 - 2.0 / math.tan(math.radians(limit))
    triangle = Polygon([(20.0, 30.0), (18.0, 28.0), (18.0, edge_foot)])
    area = triangle.area + corner_area(0.2, 180.0 - limit) - corner_area(0.2, 135.0)
    perimeter = triangle.length
    assert f.area_mm2 == pytest.approx(area, abs=4.0 * BUFFER_CHORD_MM * perimeter)
    volume = 2.0 * math.pi * triangle.centroid.x * triangle.area
    assert f.volume_mm3 == pytest.approx(volume, rel=2e-3)
    assert f.mass_left_g == pytest.approx(DENSITY * 1e-3 * f.volume_mm3, rel=EXACT)


def test_ramp_the_trailing_edge_clears_is_not_flagged(tmp_path):
    job = read_job(write_job(tmp_path, grooved(20.0), "DCMT11T302"))
    rules = check_rules(job, process_from_job(job))
    assert not [f for f in rules.findings if f.rule == "reach"]
    # the groove's sharp corners are the nose's, and they are found
    assert len([f for f in rules.findings if f.rule == "corner"]) == 2


def test_a_square_groove_wall_is_flagged_at_90_degrees_against_the_trailing_edge(tmp_path):
    """The groove's wall falling square into it (z = 30, the feed running -z): the trailing edge follows at most
    180 - 93 - 55 - clearance degrees; the finding gives the wall's 90 degrees and that limit."""
    outline = [[10.0, 0.0], [20.0, 0.0], [20.0, 20.0], [18.0, 20.0], [18.0, 30.0], [20.0, 30.0], [20.0, 40.0],
               [10.0, 40.0]]
    job = read_job(write_job(tmp_path, outline, "DCMT11T302"))
    reach = [f for f in check_rules(job, process_from_job(job)).findings if f.rule == "reach"]
    assert len(reach) == 1
    assert reach[0].value == pytest.approx(90.0, abs=0.5)
    assert reach[0].limit == pytest.approx(180.0 - 93.0 - 55.0 - REACH_CLEARANCE_DEG)
    assert reach[0].value > reach[0].limit


def test_stock_a_pass_stops_short_of_is_no_reach_finding(tmp_path):
    """A bore finished from above the part down to z = 10 only, its stock running on below: that stock is
    left because the pass stops, not because of the tool's shape (it shows as the layer on the bore)."""
    text = (JOB.format(outline=json.dumps([[19.0, 0.0], [22.0, 0.0], [22.0, 50.0], [19.0, 50.0]]),
                       insert="CCMT060204", stock=json.dumps([[18.6, 0.0], [22.0, 0.0], [22.0, 50.0],
                                                              [18.6, 50.0]]))
            .replace('surface = "od"', 'surface = "id"').replace("z = [41.0, 0.0]", "z = [51.0, 10.0]"))
    path = tmp_path / "bore.toml"
    path.write_text(text)
    job = read_job(path)
    assert not [f for f in check_rules(job, process_from_job(job)).findings if f.rule == "reach"]


@pytest.mark.parametrize("surface, offset", [("od", 0.005), ("id", 0.005)])
def test_a_wear_offset_is_no_reach_finding(surface, offset, tmp_path):
    """A positive wear offset leaves a layer on the whole surface: the layer, not a piece the edges cannot reach
    (the demo housing, whose drawing has no such piece)."""
    text = (EXAMPLES / "housing.toml").read_text()
    name = "finish OD" if surface == "od" else "finish bore"
    marker = f'name = "{name}"'
    assert marker in text
    text = text.replace(marker, f"{marker}\noffset = {offset}", 1)
    path = tmp_path / "housing.toml"
    path.write_text(text)
    job = read_job(path)
    process = process_from_job(job)
    assert not [f for f in check_rules(job, process).findings if f.rule == "reach"]
    pred = simulate(job, process)
    assert "reach" not in pred.mass_gain_by_surface_g and surface in pred.mass_gain_by_surface_g


def test_a_sharp_corners_nose_material_is_no_reading_of_the_surface(tmp_path):
    """The OD r 20 rises from a shoulder at z 5 in a corner drawn sharp; the 0.4 mm nose leaves its own radius
    there (a cause of its own). The OD's held-end reading and its most material left lie beyond that radius, and
    read the push-off only: a few micrometres, not the nose's 54 um at 0.2 mm from the shoulder."""
    nose = 0.4
    path = write_job(tmp_path, SHOULDER, "DCMT11T304", SHOULDER_STOCK)
    path.write_text(path.read_text().replace("z = [41.0, 0.0]", "z = [41.0, 5.0]"))   # the flange left as it is
    job = read_job(path)
    pred = simulate(job, process_from_job(job))
    od = next(c for c in pred.surfaces if c.surface == "od")
    assert od.positions["held end"][1] >= 5.0 + nose - 0.05
    in_corner = nose - math.sqrt(nose ** 2 - (nose - 0.2) ** 2)        # the nose's arc 0.2 mm from the shoulder
    assert max(od.deviation_mm.values()) < 0.25 * in_corner
    assert od.max_deviation_mm < 0.25 * in_corner
    assert "corners" in pred.mass_gain_by_surface_g
