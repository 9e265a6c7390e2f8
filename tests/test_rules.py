"""Design rules (`deflect rules`): the material a nose leaves in an internal corner against its closed form,
the thinnest wall against the material's least, the drawing's own faults, and the JSON keys.

Closed form of the corner (elementary geometry: the radius to a tangent point is perpendicular to the
tangent, Euclid, Elements III.18; the sector's area r^2 theta / 2): two straight walls whose empty side opens
at alpha leave A(r) = r^2 [cot(alpha / 2) - (pi - alpha) / 2] to a nose of radius r; for alpha = 90 deg
(1 - pi / 4) r^2, its centroid (10 - 3 pi) / (12 - 3 pi) r from each wall. Volume by Pappus-Guldinus.
The centroid for another angle is worked out here from the kite and the sector it is made of.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from deflect.cli import main
from deflect.decisions.rules import ANY_SHOP_FILLET_MM, check_rules, suggested_fillet_mm
from deflect.job.reader import read_job
from deflect.machining.targets import process_from_job

EXACT = 1e-9            # the corner's region is integrated exactly on its lines and arcs
DENSITY = 2.70          # al-6061-t6 in the shipped library, g/cm3

SHOULDER = [[10.0, 0.0], [30.0, 0.0], [30.0, 5.0], [20.0, 5.0], [20.0, 40.0], [10.0, 40.0]]

JOB = """
[job]
title = "shouldered sleeve"
[material]
name = "{material}"
[part]
outline = {outline}
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
[stock]
outline = [[10.0, 0.0], [31.0, 0.0], [31.0, 41.0], [10.0, 41.0]]
[[tool]]
name = "T1"
nose_radius = {nose}
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


def write_job(tmp_path, outline=SHOULDER, nose=0.4, material="al-6061-t6", passes=True):
    text = JOB.format(outline=json.dumps(outline), nose=nose, material=material)
    if not passes:
        text = text[:text.index("[stock]")]
    path = tmp_path / "job.toml"
    path.write_text(text)
    return path


def rules_of(path):
    job = read_job(path)
    return check_rules(job, process_from_job(job) if "pass" in job.tables else None)


def spandrel(r: float) -> tuple[float, float]:
    """Area and centroid distance from each wall of the region a nose of radius r leaves in a 90 deg corner."""
    return (1.0 - math.pi / 4.0) * r * r, (10.0 - 3.0 * math.pi) / (12.0 - 3.0 * math.pi) * r


@pytest.mark.parametrize("nose", [0.2, 0.4, 0.8])
def test_sharp_shoulder_leaves_the_nose_radius(tmp_path, nose):
    rules = rules_of(write_job(tmp_path, nose=nose))
    corners = [f for f in rules.findings if f.rule == "corner"]
    assert len(corners) == 1
    f = corners[0]
    area, centroid = spandrel(nose)
    volume = 2.0 * math.pi * (20.0 + centroid) * area
    assert (f.r_mm, f.z_mm, f.value, f.limit) == (20.0, 5.0, 0.0, nose)
    assert f.area_mm2 == pytest.approx(area, rel=EXACT)
    assert f.volume_mm3 == pytest.approx(volume, rel=EXACT)
    assert f.mass_left_g == pytest.approx(DENSITY * 1e-3 * volume, rel=EXACT)
    assert f.pass_name == "finish OD" and f.tool == "T1"


def test_fillet_smaller_than_the_nose_leaves_the_difference(tmp_path):
    fillet, nose = 0.2, 0.8
    outline = [node if node != [20.0, 5.0] else [20.0, 5.0, fillet] for node in SHOULDER]
    f = next(f for f in rules_of(write_job(tmp_path, outline, nose)).findings if f.rule == "corner")
    (a_nose, c_nose), (a_fillet, c_fillet) = spandrel(nose), spandrel(fillet)
    moment = a_nose * (20.0 + c_nose) - a_fillet * (20.0 + c_fillet)
    assert f.value == fillet and f.limit == nose
    assert f.area_mm2 == pytest.approx(a_nose - a_fillet, rel=EXACT)
    assert f.volume_mm3 == pytest.approx(2.0 * math.pi * moment, rel=EXACT)


def test_fillet_the_nose_can_follow_is_no_finding(tmp_path):
    outline = [node if node != [20.0, 5.0] else [20.0, 5.0, 0.4] for node in SHOULDER]
    assert not [f for f in rules_of(write_job(tmp_path, outline, 0.4)).findings if f.rule == "corner"]


def corner_region(r: float, alpha: float, corner, wall_in, wall_out):
    """Area and centroid of what a nose of radius r leaves between two walls (unit directions from the corner
    along each wall) opening at alpha: the kite (corner, tangent points, centre) less the circular sector."""
    corner, wall_in, wall_out = (np.asarray(v, float) for v in (corner, wall_in, wall_out))
    tangent = r / math.tan(alpha / 2.0)
    t_in, t_out = corner + tangent * wall_in, corner + tangent * wall_out
    bisector = (wall_in + wall_out) / np.linalg.norm(wall_in + wall_out)
    centre = corner + r / math.sin(alpha / 2.0) * bisector
    triangles = [(corner, t_in, centre), (corner, centre, t_out)]
    areas = [0.5 * r * tangent] * 2
    kite_area = sum(areas)
    kite_centroid = sum(a * sum(t) / 3.0 for a, t in zip(areas, triangles)) / kite_area
    theta = math.pi - alpha
    sector_area = 0.5 * r * r * theta
    sector_centroid = centre - 4.0 * r * math.sin(theta / 2.0) / (3.0 * theta) * bisector
    area = kite_area - sector_area
    return area, (kite_area * kite_centroid - sector_area * sector_centroid) / area


def test_corners_of_135_degrees(tmp_path):
    """A 45 deg cone between the flange and the OD: two internal corners whose empty side opens at 135 deg."""
    outline = [[10.0, 0.0], [30.0, 0.0], [30.0, 5.0], [25.0, 5.0], [20.0, 10.0], [20.0, 40.0], [10.0, 40.0]]
    found = sorted((f for f in rules_of(write_job(tmp_path, outline, 0.8)).findings if f.rule == "corner"),
                   key=lambda f: f.z_mm)
    diagonal = np.array([-1.0, 1.0]) / math.sqrt(2.0)
    expected = [corner_region(0.8, 0.75 * math.pi, (25.0, 5.0), (1.0, 0.0), diagonal),
                corner_region(0.8, 0.75 * math.pi, (20.0, 10.0), -diagonal, (0.0, 1.0))]
    assert len(found) == 2
    for f, (area, centroid) in zip(found, expected):
        assert area == pytest.approx(0.8 ** 2 * (1.0 / math.tan(0.375 * math.pi) - 0.125 * math.pi), rel=EXACT)
        assert f.area_mm2 == pytest.approx(area, rel=EXACT)
        assert f.volume_mm3 == pytest.approx(2.0 * math.pi * centroid[0] * area, rel=EXACT)


def test_job_without_passes_checks_corners_against_any_shop(tmp_path):
    f = next(f for f in rules_of(write_job(tmp_path, passes=False)).findings if f.rule == "corner")
    assert f.limit == ANY_SHOP_FILLET_MM and f.mass_left_g == 0.0


@pytest.mark.parametrize("nose, fillet", [(0.2, 0.21), (0.4, 0.41), (0.8, 1.1), (1.2, 1.2)])
def test_suggested_fillet(nose, fillet):
    assert suggested_fillet_mm(nose) == fillet


def test_wall_thinner_than_the_material_allows(tmp_path):
    thin = [[19.3, 0.0], [20.0, 0.0], [20.0, 30.0], [19.3, 30.0]]
    rules = rules_of(write_job(tmp_path, thin, material="ti-6al-4v", passes=False))
    wall = [f for f in rules.findings if f.rule == "wall"]
    assert len(wall) == 1 and wall[0].value == pytest.approx(0.7, abs=1e-9) and wall[0].limit == 0.8
    thick = [[19.0, 0.0], [20.0, 0.0], [20.0, 30.0], [19.0, 30.0]]
    assert not [f for f in rules_of(write_job(tmp_path, thick, material="ti-6al-4v", passes=False)).findings
                if f.rule == "wall"]


def test_drawing_faults_in_a_typed_outline(tmp_path):
    """A line 5 um long, a corner turning 0.2 deg, and a part 1.6 mm across in a mm job."""
    kink = 10.0 * math.tan(math.radians(0.2))
    outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 20.0], [20.0 + kink, 30.0], [20.0 + kink, 30.005], [19.0, 30.005]]
    rules = rules_of(write_job(tmp_path, outline, passes=False))
    drawing = [f for f in rules.findings if f.rule == "drawing"]
    assert any(f.unit == "mm" and f.value == pytest.approx(0.005) for f in drawing)
    assert any(f.unit == "deg" and f.value == pytest.approx(0.2) for f in drawing)
    small = [[0.7, 0.0], [0.8, 0.0], [0.8, 1.5], [0.7, 1.5]]
    assert any("inches" in f.message for f in rules_of(write_job(tmp_path, small, passes=False)).findings)


def test_rules_json_keys(tmp_path, capsys):
    main(["rules", str(write_job(tmp_path)), "--json"])
    payload = json.loads(capsys.readouterr().out)
    f = payload["findings"][0]
    for key in ("rule", "r", "z", "value", "limit", "mass_left_g", "message", "r_mm", "z_mm", "value_mm",
                "limit_mm"):
        assert key in f
    assert payload["mass_left_g"] == pytest.approx(f["mass_left_g"])
