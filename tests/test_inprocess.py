"""Unit tests of the in-process part: targets, cuts, material removal, deviation, mass properties.

Closed forms used as oracles:
* volume of a tube, V = pi (r_o^2 - r_i^2) L, and the material a uniform extra thickness delta leaves on
  its outside, pi ((r_o + delta)^2 - r_o^2) L (the annulus, exact);
* axial mass moment of inertia of a tube, I = m (r_o^2 + r_i^2) / 2, and of a solid cone,
  I = 3 m R^2 / 10 with V = pi R^2 H / 3 (textbook solids of revolution, derived by integration);
* equal-depth cuts: n = ceil(A / ap_max) cuts of A / n each (common practice).
"""

import math

import numpy as np
import pytest
from shapely.geometry import Point, Polygon

from deflect.errors import ModelError
from deflect.geometry.section import section_from_outline
from deflect.job.process import Pass
from deflect.machining.inprocess import (
    BUFFER_CHORD_MM,
    cuts_for_pass,
    depth_of_material,
    deviation_along,
    polygon_mass,
    remove,
    target_surface,
)

EXACT_MM3 = 1e-9          # a cut along straight lines: only float rounding separates it from the closed form
RING_MM3 = 1e-6           # tolerance on the left-over ring's volume, mm3
ROUNDING = 1e-12          # lengths that are sums of a few exact numbers
RELATIVE = 1e-12          # Green's-theorem integrals of straight edges against closed forms

R_ID, R_OD, LENGTH = 19.0, 20.0, 40.0
NOMINAL = np.array([[R_ID, 0.0], [R_OD, 0.0], [R_OD, LENGTH], [R_ID, LENGTH]])
SLEEVE_STOCK = np.array([[R_ID, 0.0], [20.5, 0.0], [20.5, LENGTH], [R_ID, LENGTH]])
SPACING = 0.5


def tube_volume(r_in, r_out, length):
    return math.pi * (r_out**2 - r_in**2) * length


def volume(rz):
    return polygon_mass(rz, 1.0)[2]


def same_polygon(a, b):
    return Polygon(a).symmetric_difference(Polygon(b)).area <= 1e-12


def a_pass(**changes):
    values = dict(name="finish OD", surface="od", tool="T1", allowance_mm=0.0, feed_mm=0.1, speed_m_min=200.0,
                  start_mm=LENGTH, end_mm=0.0, depth_mm=None, spring=0, offset_mm=0.0, key="pass[0]")
    values.update(changes)
    return Pass(**values)


def od_finish_path():
    return target_surface(NOMINAL, "od", 0.0, LENGTH, 0.0, SPACING)


# ---------------------------------------------------------------------------------------------------
# target_surface

def test_target_surface_od_runs_start_to_end_at_station_spacing():
    path = od_finish_path()
    assert path.points_rz[0] == pytest.approx([R_OD, LENGTH])
    assert path.points_rz[-1] == pytest.approx([R_OD, 0.0])
    assert np.all(np.diff(path.points_rz[:, 1]) < 0.0)
    assert np.linalg.norm(np.diff(path.points_rz, axis=0), axis=1).max() <= SPACING + ROUNDING
    assert np.allclose(path.normals, [1.0, 0.0]) and np.allclose(path.feed_dir, [0.0, -1.0])


def test_target_surface_id_and_face_sides():
    bore = target_surface(NOMINAL, "id", 0.2, 0.0, LENGTH, SPACING)
    assert np.allclose(bore.points_rz[:, 0], R_ID - 0.2)
    assert np.allclose(bore.normals, [-1.0, 0.0]) and np.allclose(bore.feed_dir, [0.0, 1.0])
    face = target_surface(NOMINAL, "face", 0.1, 25.0, 0.0, SPACING)
    assert np.allclose(face.points_rz[:, 1], LENGTH + 0.1)
    assert face.points_rz[0, 0] == pytest.approx(25.0) and face.points_rz[-1, 0] == pytest.approx(0.0)
    assert np.allclose(face.normals, [0.0, 1.0]) and np.allclose(face.feed_dir, [-1.0, 0.0])


# A stepped shaft seen from the od: r = 25 for z < 20, a shoulder facing +z at z = 20, r = 20 above.
STEPPED = np.array([[0.0, 0.0], [25.0, 0.0], [25.0, 20.0], [20.0, 20.0], [20.0, 40.0], [0.0, 40.0]])


@pytest.mark.parametrize("offset", [0.3, 1.0, -0.4])
def test_target_surface_keeps_the_offset_distance_round_the_shoulder(offset):
    path = target_surface(STEPPED, "od", offset, 38.0, 2.0, 0.1)
    boundary = Polygon(STEPPED).exterior
    distance = np.array([boundary.distance(Point(p)) for p in path.points_rz])
    assert np.abs(distance - abs(offset)).max() <= BUFFER_CHORD_MM
    assert np.allclose(np.linalg.norm(path.normals, axis=1), 1.0)
    inside = Polygon(STEPPED).contains
    assert all(inside(Point(p)) == (offset < 0) for p in path.points_rz)
    # the target passes along the shoulder's face
    on_face = np.abs(path.points_rz[:, 1] - (20.0 + offset)) < ROUNDING
    assert path.points_rz[on_face, 0].min() <= 20.0 + max(offset, 0.0) + ROUNDING


def test_target_surface_carries_on_beyond_the_part():
    path = target_surface(NOMINAL, "od", 0.3, 45.0, -5.0, SPACING)
    assert np.allclose(path.points_rz[:, 0], R_OD + 0.3)
    assert path.points_rz[0, 1] == pytest.approx(45.0) and path.points_rz[-1, 1] == pytest.approx(-5.0)


# ---------------------------------------------------------------------------------------------------
# remove

def test_remove_to_the_target_leaves_exactly_the_nominal_tube():
    path = od_finish_path()
    part = remove(SLEEVE_STOCK, path, np.zeros(len(path.points_rz)), "od")
    assert volume(part) == pytest.approx(tube_volume(R_ID, R_OD, LENGTH), abs=EXACT_MM3)
    assert same_polygon(part, NOMINAL)


@pytest.mark.parametrize("left", [0.01, 0.05])
def test_remove_with_push_off_leaves_the_ring_of_the_closed_form(left):
    path = od_finish_path()
    part = remove(SLEEVE_STOCK, path, np.full(len(path.points_rz), left), "od")
    ring = math.pi * ((R_OD + left) ** 2 - R_OD**2) * LENGTH     # the annulus, exact
    assert volume(part) - tube_volume(R_ID, R_OD, LENGTH) == pytest.approx(ring, abs=RING_MM3)


def test_remove_part_way_leaves_the_step_at_the_tool():
    path = od_finish_path()
    upto = len(path.points_rz) // 2
    z_tool = path.points_rz[upto, 1]
    part = remove(SLEEVE_STOCK, path, np.zeros(len(path.points_rz)), "od", upto=upto)
    expected = tube_volume(R_ID, R_OD, LENGTH - z_tool) + tube_volume(R_ID, 20.5, z_tool)
    assert volume(part) == pytest.approx(expected, abs=EXACT_MM3)
    assert Polygon(part).contains(Point(20.25, z_tool - 0.1))         # ahead of the tool: still there
    assert not Polygon(part).contains(Point(20.25, z_tool + 0.1))     # behind it: cut


def test_remove_returns_counter_clockwise_polygon():
    path = od_finish_path()
    part = remove(SLEEVE_STOCK[::-1], path, 0.0, "od")
    r, z = part[:, 0], part[:, 1]
    assert 0.5 * np.sum(r * np.roll(z, -1) - np.roll(r, -1) * z) > 0.0
    assert len(part) == 4    # the stations along the straight cut do not pile up as vertices


def test_remove_beyond_the_stock_ends():
    stock = np.array([[R_ID, -2.0], [20.5, -2.0], [20.5, 42.0], [R_ID, 42.0]])
    path = target_surface(NOMINAL, "od", 0.0, 42.0, -2.0, SPACING)
    part = remove(stock, path, 0.0, "od")
    assert same_polygon(part, [[R_ID, -2.0], [R_OD, -2.0], [R_OD, 42.0], [R_ID, 42.0]])


def test_id_pass_on_tube_stock():
    stock = np.array([[18.0, 0.0], [R_OD, 0.0], [R_OD, LENGTH], [18.0, LENGTH]])
    path = target_surface(NOMINAL, "id", 0.2, 0.0, LENGTH, SPACING)
    assert depth_of_material(stock, path) == pytest.approx(np.full(len(path.points_rz), 0.8), abs=ROUNDING)
    part = remove(stock, path, 0.0, "id")
    assert volume(part) == pytest.approx(tube_volume(R_ID - 0.2, R_OD, LENGTH), abs=EXACT_MM3)


def test_face_pass_on_long_stock():
    stock = np.array([[R_ID, 0.0], [R_OD, 0.0], [R_OD, 43.0], [R_ID, 43.0]])
    path = target_surface(NOMINAL, "face", 0.0, 21.0, 18.0, SPACING)
    assert depth_of_material(stock, path)[2] == pytest.approx(3.0, abs=ROUNDING)   # r = 20.0: on the stock
    assert same_polygon(remove(stock, path, 0.0, "face"), NOMINAL)


def test_negative_offset_cuts_only_the_pass_side():
    path = target_surface(NOMINAL, "od", -0.3, LENGTH, 0.0, SPACING)
    part = remove(NOMINAL, path, 0.0, "od")
    assert same_polygon(part, [[R_ID, 0.0], [R_OD - 0.3, 0.0], [R_OD - 0.3, LENGTH], [R_ID, LENGTH]])


def test_remove_through_the_wall_raises_model_error():
    path = target_surface(NOMINAL, "od", -1.0, LENGTH, 0.0, SPACING)
    with pytest.raises(ModelError, match="finish OD consumes the wall"):
        remove(NOMINAL, path, 0.0, "od", name="finish OD")
    necked = np.array([[R_ID, 0.0], [22.0, 0.0], [22.0, 10.0], [19.5, 10.0], [19.5, 30.0], [22.0, 30.0],
                       [22.0, LENGTH], [R_ID, LENGTH]])
    path = target_surface(necked, "od", -0.6, LENGTH, 0.0, SPACING)
    with pytest.raises(ModelError, match=r"cuts the part in two at r = 19"):
        remove(necked, path, 0.0, "od", name="finish OD")


# ---------------------------------------------------------------------------------------------------
# depth_of_material and cuts_for_pass

def test_depth_of_material_on_the_sleeve_and_in_air():
    path = od_finish_path()
    assert depth_of_material(SLEEVE_STOCK, path) == pytest.approx(np.full(len(path.points_rz), 0.5), abs=ROUNDING)
    in_air = target_surface(NOMINAL, "od", 1.0, LENGTH, 0.0, SPACING)
    assert np.all(depth_of_material(SLEEVE_STOCK, in_air) == 0.0)


def test_cuts_for_pass_takes_deep_stock_in_equal_cuts_then_spring_cuts():
    cuts = cuts_for_pass(SLEEVE_STOCK, NOMINAL, a_pass(depth_mm=0.2, spring=2), SPACING)
    n = math.ceil(0.5 / 0.2)                                  # common practice: 3 cuts of 0.5 / 3
    assert len(cuts) == n + 2
    expected_r = [R_OD + 0.5 * 2 / 3, R_OD + 0.5 / 3, R_OD, R_OD, R_OD]
    assert [c.points_rz[:, 0].mean() for c in cuts] == pytest.approx(expected_r, abs=ROUNDING)
    part = SLEEVE_STOCK
    for i, cut in enumerate(cuts):
        depth = depth_of_material(part, cut)
        assert depth == pytest.approx(np.full(len(depth), 0.5 / n if i < n else 0.0), abs=ROUNDING)
        part = remove(part, cut, 0.0, "od")
    assert same_polygon(part, NOMINAL)


@pytest.mark.parametrize("depth, n_cuts", [(None, 1), (0.5, 1), (0.25, 2), (0.24, 3)])
def test_cuts_for_pass_count(depth, n_cuts):
    assert len(cuts_for_pass(SLEEVE_STOCK, NOMINAL, a_pass(depth_mm=depth), SPACING)) == n_cuts


def test_cuts_for_pass_respects_allowance_and_offset():
    cuts = cuts_for_pass(SLEEVE_STOCK, NOMINAL, a_pass(allowance_mm=0.2, offset_mm=-0.05), SPACING)
    assert np.allclose(cuts[-1].points_rz[:, 0], R_OD + 0.15)


def test_cuts_for_pass_layers_a_shoulder_radially():
    stock = np.array([[0.0, 0.0], [26.0, 0.0], [26.0, 40.0], [0.0, 40.0]])
    cuts = cuts_for_pass(stock, STEPPED, a_pass(start_mm=40.0, end_mm=0.0, depth_mm=1.0), 0.5)
    assert len(cuts) == 6                                     # 6 mm of stock over the small diameter
    part = stock
    for cut in cuts:
        before = Polygon(part).area
        part = remove(part, cut, 0.0, "od")
        # 1 mm off the small diameter over z 20..40 each cut; the last also takes the 1 mm on the large one
        taken = 20.0 * 1.0 + (20.0 * 1.0 if cut is cuts[-1] else 0.0)
        assert before - Polygon(part).area == pytest.approx(taken, abs=1e-9)
    assert same_polygon(part, STEPPED)


# ---------------------------------------------------------------------------------------------------
# deviation_along

SECTION = section_from_outline(NOMINAL.tolist())


def test_deviation_reads_the_push_off_on_the_od_and_zero_elsewhere():
    path = od_finish_path()
    machined = remove(SLEEVE_STOCK, path, np.full(len(path.points_rz), 0.02), "od")
    dev = deviation_along(SECTION, machined, 1.0)
    on_od = np.isclose(dev.normals[:, 0], 1.0)
    assert on_od.sum() == 40 and (~on_od).sum() > 40
    assert dev.deviation_mm[on_od] == pytest.approx(np.full(on_od.sum(), 0.02), abs=ROUNDING)
    assert np.all(np.abs(dev.deviation_mm[~on_od]) <= ROUNDING)


def test_deviation_counts_stock_no_pass_removed_and_cuts_below_the_drawing():
    long_stock = np.array([[R_ID, 0.0], [20.5, 0.0], [20.5, 42.0], [R_ID, 42.0]])
    dev = deviation_along(SECTION, long_stock, 1.0)
    on_od, on_end = np.isclose(dev.normals[:, 0], 1.0), np.isclose(dev.normals[:, 1], 1.0)
    assert dev.deviation_mm[on_od] == pytest.approx(np.full(on_od.sum(), 0.5), abs=ROUNDING)
    assert dev.deviation_mm[on_end] == pytest.approx(np.full(on_end.sum(), 2.0), abs=ROUNDING)
    path = od_finish_path()
    overcut = remove(SLEEVE_STOCK, path, np.full(len(path.points_rz), -0.01), "od")
    dev = deviation_along(SECTION, overcut, 1.0)
    on_od = np.isclose(dev.normals[:, 0], 1.0)
    assert dev.deviation_mm[on_od] == pytest.approx(np.full(on_od.sum(), -0.01), abs=1e-9)


def test_deviation_leaves_out_points_on_the_axis():
    bar = section_from_outline([[0.0, 0.0], [10.0, 0.0], [10.0, 20.0], [0.0, 20.0]])
    dev = deviation_along(bar, np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 20.0], [0.0, 20.0]]), 1.0)
    assert np.all(dev.points_rz[:, 0] > 0.0) and np.all(dev.deviation_mm == 0.0)


# ---------------------------------------------------------------------------------------------------
# polygon_mass

@pytest.mark.parametrize("scale", [0.1, 1.0, 10.0])
def test_polygon_mass_of_a_tube(scale):
    r_in, r_out, length, density = R_ID * scale, R_OD * scale, LENGTH * scale, 2.70
    rz = NOMINAL * scale
    mass_g, inertia_kg_mm2, volume_mm3 = polygon_mass(rz, density)
    v = tube_volume(r_in, r_out, length)
    m = density * v * 1e-3                                   # g/cm3 * mm3 -> g
    assert volume_mm3 == pytest.approx(v, rel=RELATIVE)
    assert mass_g == pytest.approx(m, rel=RELATIVE)
    assert inertia_kg_mm2 == pytest.approx(1e-3 * m * (r_out**2 + r_in**2) / 2.0, rel=RELATIVE)
    assert polygon_mass(rz[::-1], density) == pytest.approx((mass_g, inertia_kg_mm2, volume_mm3), rel=RELATIVE)


def test_polygon_mass_of_a_cone():
    radius, height, density = 15.0, 30.0, 7.85
    mass_g, inertia_kg_mm2, volume_mm3 = polygon_mass(np.array([[0.0, 0.0], [radius, 0.0], [0.0, height]]), density)
    v = math.pi * radius**2 * height / 3.0
    assert volume_mm3 == pytest.approx(v, rel=RELATIVE)
    assert inertia_kg_mm2 == pytest.approx(0.3 * density * v * 1e-6 * radius**2, rel=RELATIVE)
