"""Unit tests of deflect.geometry.section: reading outlines, arcs and fillets, boundary queries, min_wall, errors."""

import math

import numpy as np
import pytest

from deflect.errors import InputError
from deflect.geometry.section import (
    Arc,
    Line,
    Section,
    mass_properties,
    min_wall,
    section_from_outline,
    unit_size_warning,
)

TUBE = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]
TORUS = [[55.0, 3.0], {"to": [50.0, 8.0], "radius": 5.0}, {"to": [45.0, 3.0], "radius": 5.0},
         {"to": [50.0, -2.0], "radius": 5.0}, {"to": [55.0, 3.0], "radius": 5.0}]
# a cup touching the axis with a rounded outer bottom corner and a bore with a concave arc
CUP = [[0.0, 0.0], [20.0, 0.0, 2.0], [20.0, 30.0], [18.0, 30.0], {"to": [16.0, 5.0], "radius": 60.0}, [0.0, 5.0]]

EXACT = 1e-12          # plain arithmetic on lines: rounding only
ROUNDING_REL = 1e-12   # exact formulas evaluated in floating point
WALL_TOL = 1e-9        # min_wall: rays start 1e-12 of a segment from its ends, refined to 1e-11 in parameter


def signed_area(points: np.ndarray) -> float:
    r, z = points[:, 0], points[:, 1]
    return 0.5 * float(np.sum(r * np.roll(z, -1) - np.roll(r, -1) * z))


def tangent_turn(a, b) -> float:
    """Angle [rad] between the end tangent of a and the start tangent of b."""
    (ar, az), (br, bz) = a.tangent_at(1.0), b.tangent_at(0.0)
    return math.atan2(ar * bz - az * br, ar * br + az * bz)


# --- reading the three item forms -----------------------------------------------------------------

def test_section_from_outline_corners_give_lines_counter_clockwise():
    section = section_from_outline(TUBE)
    assert section.segments == (Line((19.0, 0.0), (20.0, 0.0)), Line((20.0, 0.0), (20.0, 40.0)),
                                Line((20.0, 40.0), (19.0, 40.0)), Line((19.0, 40.0), (19.0, 0.0)))
    assert section.perimeter() == pytest.approx(82.0, abs=EXACT)


def test_section_from_outline_clockwise_is_stored_counter_clockwise():
    section = section_from_outline(TUBE[::-1])
    assert signed_area(section.polygon()) == pytest.approx(40.0, rel=ROUNDING_REL)
    assert set(section.segments) == set(section_from_outline(TUBE).segments)


def test_section_from_outline_fillet_is_tangent_arc_at_corner():
    section = section_from_outline([[10.0, 0.0], [20.0, 0.0, 2.0], [20.0, 10.0], [10.0, 10.0]])
    fillet = section.segments[1]
    assert isinstance(fillet, Arc) and fillet.ccw
    assert fillet.radius == 2.0
    assert fillet.center == pytest.approx((18.0, 2.0), abs=EXACT)
    assert fillet.start == pytest.approx((18.0, 0.0), abs=EXACT)   # tangent points f from the corner
    assert fillet.end == pytest.approx((20.0, 2.0), abs=EXACT)
    assert fillet.sweep == pytest.approx(math.pi / 2, abs=EXACT)
    assert section.segments[0].end == fillet.start and section.segments[2].start == fillet.end


@pytest.mark.parametrize("outline", [
    [[10.0, 0.0], [20.0, 0.0], [20.0, 10.0, 1.0], {"to": [10.0, 10.0], "radius": 7.5}],   # line -> arc
    [[10.0, 0.0], [20.0, 0.0], [20.0, 10.0, 1.0], {"to": [10.0, 10.0], "radius": -7.5}],  # line -> hollow arc
    [[10.0, 0.0, 2.0], [20.0, 0.0], [20.0, 10.0], {"to": [10.0, 0.0], "radius": -20.0}],  # arc -> line
    [[10.0, 0.0, 1.5], {"to": [20.0, 0.0], "radius": -30.0}, [20.0, 10.0], [10.0, 10.0],
     {"to": [10.0, 0.0], "radius": 20.0}],                                                 # arc -> arc
], ids=["line-arc", "line-hollow-arc", "arc-line", "arc-arc"])
def test_section_from_outline_fillet_next_to_arc_is_tangent(outline):
    section = section_from_outline(outline)
    fillets = [s for s in section.segments if isinstance(s, Arc) and s.radius in (1.0, 1.5, 2.0)]
    assert len(fillets) == 1
    segments = section.segments
    for a, b in zip(segments, segments[1:] + segments[:1]):
        assert a.end == b.start
    k = segments.index(fillets[0])
    assert abs(tangent_turn(segments[k - 1], segments[k])) < 1e-9
    assert abs(tangent_turn(segments[k], segments[(k + 1) % len(segments)])) < 1e-9


def test_section_from_outline_arc_item_centre_and_direction():
    # from (10, 0) up to (10, 10) with R = +10: turns left, so the centre lies to the left (-r) and it bulges to +r
    section = section_from_outline([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": 10.0}, [0.0, 10.0]])
    arc = section.segments[1]
    h = math.sqrt(10.0 ** 2 - 5.0 ** 2)
    assert arc.ccw and arc.radius == 10.0
    assert arc.center == pytest.approx((10.0 - h, 5.0), abs=EXACT)
    assert arc.point_at(0.5) == pytest.approx((10.0 - h + 10.0, 5.0), abs=EXACT)
    assert section.bounds() == pytest.approx((0.0, 20.0 - h, 0.0, 10.0), abs=EXACT)


def test_section_from_outline_closes_on_repeated_first_node():
    assert section_from_outline(TUBE + [TUBE[0]]).segments == section_from_outline(TUBE).segments
    torus = section_from_outline(TORUS)
    assert len(torus.segments) == 4 and all(isinstance(s, Arc) and s.ccw for s in torus.segments)


def test_section_from_outline_ignores_fillet_on_straight_corner():
    plain = section_from_outline([[0.0, 0.0], [5.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]])
    rounded = section_from_outline([[0.0, 0.0], [5.0, 0.0, 1.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]])
    assert rounded.segments == plain.segments


def test_section_from_outline_accepts_half_circle():
    section = section_from_outline([[0.0, -3.0], {"to": [0.0, 3.0], "radius": 3.0}, [0.0, 0.0]])
    arc = section.segments[0]
    assert arc.center == pytest.approx((0.0, 0.0), abs=EXACT)
    assert arc.sweep == pytest.approx(math.pi, abs=1e-12)


# --- sign convention of arcs ------------------------------------------------------------------------

@pytest.mark.parametrize("size", [1.0, 70.0])
def test_arc_sign_bulges_to_opposite_sides(size):
    """A square whose top is a quarter arc: +R (left turn on this CCW outline) adds the circular segment,
    -R takes it away. Circular segment of angle theta: R^2 (theta - sin theta) / 2 (plane geometry)."""
    radius = size / math.sqrt(2.0)  # chord `size` under a quarter circle
    segment_area = 0.5 * radius ** 2 * (math.pi / 2.0 - 1.0)
    sagitta = radius * (1.0 - math.cos(math.pi / 4.0))
    areas, tops = {}, {}
    for sign in (1.0, -1.0):
        outline = [[0.0, 0.0], [size, 0.0], [size, size], {"to": [0.0, size], "radius": sign * radius}]
        section = section_from_outline(outline)
        areas[sign] = mass_properties(section, 1.0).area_mm2
        tops[sign] = section.segments[2].point_at(0.5)[1]
    assert areas[1.0] == pytest.approx(size ** 2 + segment_area, rel=ROUNDING_REL)
    assert areas[-1.0] == pytest.approx(size ** 2 - segment_area, rel=ROUNDING_REL)
    assert areas[1.0] - areas[-1.0] == pytest.approx(2.0 * segment_area, rel=1e-10)
    assert tops[1.0] == pytest.approx(size + sagitta, rel=ROUNDING_REL)
    assert tops[-1.0] == pytest.approx(size - sagitta, rel=ROUNDING_REL)


# --- min_wall -----------------------------------------------------------------------------------------

def test_min_wall_tube_is_radial_wall():
    assert min_wall(section_from_outline(TUBE)) == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("outline", [[[19.0, 0.0], [20.0, 0.0], [22.0, 40.0], [19.0, 40.0]],
                                     [[19.0, 0.0], [22.0, 0.0], [20.0, 40.0], [19.0, 40.0]]],
                         ids=["thin at the bottom", "thin at the top"])
def test_min_wall_tapered_wall_is_thin_end(outline):
    # OD tapers 1 -> 3 mm of wall; the square end at the thick end meets the OD at 87 degrees (a corner)
    assert min_wall(section_from_outline(outline)) == pytest.approx(1.0, abs=WALL_TOL)


def test_min_wall_waisted_wall_finds_interior_minimum():
    # OD waisted by an arc of radius 200 over 40 mm: the wall at mid-height is 2 - sagitta
    sagitta = 200.0 - math.sqrt(200.0 ** 2 - 20.0 ** 2)
    section = section_from_outline([[10.0, 0.0], [12.0, 0.0], {"to": [12.0, 40.0], "radius": -200.0}, [10.0, 40.0]])
    assert min_wall(section) == pytest.approx(2.0 - sagitta, abs=WALL_TOL)


@pytest.mark.parametrize("wall, bottom, expected", [(1.0, 3.0, 1.0), (4.0, 2.0, 2.0)],
                         ids=["side wall thinner", "bottom thinner"])
def test_min_wall_cup_is_thinner_of_side_and_bottom(wall, bottom, expected):
    cup = [[0.0, 0.0], [20.0, 0.0], [20.0, 30.0], [20.0 - wall, 30.0], [20.0 - wall, bottom], [0.0, bottom]]
    assert min_wall(section_from_outline(cup)) == pytest.approx(expected, abs=WALL_TOL)


def test_min_wall_solid_disc_on_axis_is_thickness():
    assert min_wall(section_from_outline([[0.0, 0.0], [50.0, 0.0], [50.0, 10.0], [0.0, 10.0]])) == \
        pytest.approx(10.0, abs=WALL_TOL)


def test_min_wall_solid_bar_is_diameter_through_axis():
    # rays from the OD cross the axis into the mirrored half: the wall of a bar is its diameter
    assert min_wall(section_from_outline([[0.0, 0.0], [5.0, 0.0], [5.0, 100.0], [0.0, 100.0]])) == \
        pytest.approx(10.0, abs=WALL_TOL)


def test_min_wall_leaves_out_45_degree_chamfer():
    chamfered = [[19.0, 0.0], [20.0, 0.0], [20.0, 39.5], [19.5, 40.0], [19.0, 40.0]]
    assert min_wall(section_from_outline(chamfered)) == pytest.approx(1.0, abs=WALL_TOL)


def test_min_wall_torus_is_tube_diameter():
    assert min_wall(section_from_outline(TORUS)) == pytest.approx(10.0, abs=WALL_TOL)


# --- validation errors ----------------------------------------------------------------------------------

BAD = [  # (outline, key, words of the message)
    ("[[0, 0], [1, 0], [1, 1]]", "part.outline", "must be a list"),
    ([[19.0, 0.0], [20.0, 0.0]], "part.outline", "2 distinct node"),
    ([[0.0, 0.0], [10.0, 0.0], [0.0, 0.0]], "part.outline", "2 distinct node"),
    ([[0.0, 0.0], "x", [10.0, 10.0]], "part.outline[1]", "expected a node"),
    ([[0.0, 0.0], [10.0, 0.0, 1.0, 2.0], [10.0, 10.0]], "part.outline[1]", "got 4 values"),
    ([[0.0, 0.0], [10.0], [10.0, 10.0]], "part.outline[1]", "got 1 values"),
    ([[0.0, 0.0], [True, 0.0], [10.0, 10.0]], "part.outline[1]", "must be a number, got True"),
    ([[0.0, 0.0], [10.0, "5"], [10.0, 10.0]], "part.outline[1]", "must be a number"),
    ([[0.0, 0.0], [10.0, float("inf")], [10.0, 10.0]], "part.outline[1]", "finite"),
    ([[0.0, 0.0], [10.0, 0.0, float("nan")], [10.0, 10.0]], "part.outline[1]", "finite"),
    ([[0.0, 0.0], [-1.0, 0.0], [10.0, 10.0]], "part.outline[1]", "below the spin axis"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [-1.0, 5.0], "radius": 9.0}], "part.outline[2]", "below the spin axis"),
    ([[0.0, 0.0], [10.0, 0.0, -1.0], [10.0, 10.0]], "part.outline[1]", "fillet radius f = -1 is negative"),
    ([{"to": [10.0, 0.0], "radius": 5.0}, [10.0, 10.0], [0.0, 10.0]], "part.outline[0]", "must start with a node"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0]}], "part.outline[2]", "needs 'radius'"),
    ([[0.0, 0.0], [10.0, 0.0], {"radius": 6.0}], "part.outline[2]", "needs 'to'"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": 6.0, "r": 1}], "part.outline[2]", "unknown key"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": False}], "part.outline[2]", "must be a number"),
    ([[0.0, 0.0], [10.0, 0.0], [10.0, 0.0], [10.0, 10.0]], "part.outline[2]", "same point"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 0.0], "radius": 3.0}, [10.0, 10.0]], "part.outline[2]", "same point"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": 0.0}], "part.outline[2]", "radius is 0"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": -4.9}], "part.outline[2]",
     "too small for the 10 mm .* at least 5"),
    ([[0.0, 0.0], [10.0, 0.0, 11.0], [10.0, 10.0], [0.0, 10.0]], "part.outline[1]", r"too large.*at most 10 here"),
    ([[0.0, 0.0], [10.0, 0.0, 6.0], [10.0, 10.0, 6.0], [0.0, 10.0]], "part.outline[2]",
     "fillets at items 1 and 2 overlap"),
    ([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0, 6.0], {"to": [0.0, 10.0], "radius": 5.01}], "part.outline[2]",
     "not smaller than the radius of the arc"),
    ([[19.0, 0.0], [20.0, 40.0], [20.0, 0.0], [19.0, 40.0]], "part.outline[2]",
     r"crosses.*the line from item 0 and the line from item 2 meet at \(r = 19.5, z = 20\)"),
    ([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [10.0, 5.0]], "part.outline[2]", "runs back over itself"),
    ([[0.0, 0.0], [10.0, 0.0], [5.0, 5.0], [10.0, 10.0], [0.0, 10.0], [5.0, 5.0]], "part.outline[4]",
     r"touches.*meet at \(r = 5, z = 5\)"),
    ([[0.0, 0.0], [10.0, 0.0], [10.0, 4.0], {"to": [0.0, 4.0], "radius": -5.01}], "part.outline[3]",
     "crosses.*the line from item 0 and the arc of item 3"),
    ([[0.0, 0.0], [10.0, 0.0], {"to": [10.0, 10.0], "radius": 5.0}, {"to": [10.0, 0.0], "radius": 5.0},
      [0.0, 10.0]], "part.outline[3]", "runs back over itself"),
    ([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0, 2.0], [20.0, 10.0], [0.0, 10.0]], "part.outline[",
     "runs back|crosses"),
    # zero area: a simple closed curve always encloses area, so a flat outline is caught as running back
    ([[0.0, 0.0], [1.0, 0.0], [2.0, 0.0]], "part.outline[2]", "runs back over itself"),
]


@pytest.mark.parametrize("outline, key, words", BAD, ids=[f"{i}:{b[2][:24]}" for i, b in enumerate(BAD)])
def test_section_from_outline_rejects_bad_input(outline, key, words):
    with pytest.raises(InputError, match=words) as caught:
        section_from_outline(outline)
    if key.endswith("["):
        assert caught.value.key.startswith(key)
    else:
        assert caught.value.key == key


def test_section_from_outline_key_prefix_is_passed_on():
    with pytest.raises(InputError) as caught:
        section_from_outline([[0.0, 0.0], [-2.0, 0.0], [1.0, 1.0]], key="stock.outline")
    assert caught.value.key == "stock.outline[1]"


def test_section_from_outline_accepts_segments_on_axis():
    section = section_from_outline([[0.0, 0.0], [30.0, 0.0], [30.0, 5.0], [0.0, 5.0]])
    assert mass_properties(section, 1.0).area_mm2 == pytest.approx(150.0, rel=ROUNDING_REL)


def test_mass_properties_rejects_bad_density():
    with pytest.raises(InputError, match="positive") as caught:
        mass_properties(section_from_outline(TUBE), 0.0)
    assert caught.value.key == "material.density"


def test_mass_properties_units_of_tube():
    # 40 mm long tube 38/40 mm: V = pi (20^2 - 19^2) 40 = 4900.88 mm3; aluminium 2.70 g/cm3 -> 13.23 g;
    # I = m (Ro^2 + Ri^2) / 2 = 13.23 g * 380.5 mm2 = 5035 g mm2 = 5.035 kg mm2
    props = mass_properties(section_from_outline(TUBE), 2.70)
    volume = math.pi * (20.0 ** 2 - 19.0 ** 2) * 40.0
    assert props.volume_mm3 == pytest.approx(volume, rel=1e-13)
    assert props.mass_g == pytest.approx(2.70e-3 * volume, rel=1e-13)
    assert props.inertia_axial_kg_mm2 == pytest.approx(2.70e-3 * volume * 0.5 * (400.0 + 361.0) * 1e-3, rel=1e-13)


# --- unit_size_warning ----------------------------------------------------------------------------------

def test_unit_size_warning_small_part_in_mm():
    tiny = section_from_outline([[0.3, 0.0], [0.4, 0.0], [0.4, 1.5], [0.3, 1.5]])  # 0.8 dia x 1.5 long
    assert "inch" in unit_size_warning(tiny, "mm")
    assert unit_size_warning(tiny, "inch") is None


def test_unit_size_warning_large_part_in_inch():
    huge = section_from_outline([[482.6, 0.0], [508.0, 0.0], [508.0, 3048.0], [482.6, 3048.0]])  # 120 in long
    assert "mm" in unit_size_warning(huge, "inch")
    assert unit_size_warning(huge, "mm") is None


def test_unit_size_warning_counts_diameter():
    ring = section_from_outline([[19.0, 0.0], [20.0, 0.0], [20.0, 1.0], [19.0, 1.0]])  # 1 x 1 section, 40 mm dia
    assert unit_size_warning(ring, "mm") is None


def test_unit_size_warning_rejects_unknown_unit():
    with pytest.raises(InputError, match="mm.*inch") as caught:
        unit_size_warning(section_from_outline(TUBE), "cm")
    assert caught.value.key == "job.units"


# --- boundary queries -----------------------------------------------------------------------------------

@pytest.mark.parametrize("outline", [TUBE, TORUS, CUP], ids=["tube", "torus", "cup"])
def test_sample_spacing_and_outward_normals(outline):
    section = section_from_outline(outline)
    spacing = 0.7
    samples = section.sample(spacing)
    gaps = np.diff(np.append(samples.arclength, section.perimeter()))
    assert gaps.max() <= spacing + 1e-12
    assert gaps.min() > 0.0                       # no point twice
    assert np.all(np.diff(samples.segment) >= 0)
    starts = [int(np.argmax(samples.segment == i)) for i in range(len(section.segments))]
    for i, k in enumerate(starts):                # every segment's start is a sample, with its own normal
        assert samples.points[k] == pytest.approx(section.segments[i].start, abs=1e-12)
        assert samples.normals[k] == pytest.approx(section.segments[i].normal_at(0.0), abs=1e-12)
    assert np.linalg.norm(samples.normals, axis=1) == pytest.approx(1.0, abs=1e-12)
    step = 1e-4
    # away from corners (a point just off a corner may fall in the neighbour's shadow)
    inner = np.ones(len(samples.points), bool)
    inner[starts] = False
    assert not section.contains(samples.points[inner] + step * samples.normals[inner]).any()
    assert section.contains(samples.points[inner] - step * samples.normals[inner]).all()


def test_sample_arclength_matches_points():
    section = section_from_outline(CUP)
    samples = section.sample(1.3)
    for s, p, n in list(zip(samples.arclength, samples.points, samples.normals))[::7]:
        point, normal = section.point_at(s)
        assert point == pytest.approx(tuple(p), abs=1e-9)
        assert normal == pytest.approx(tuple(n), abs=1e-9)


def test_closest_point_on_line_and_at_corner():
    section = section_from_outline(TUBE)
    point, normal, arclength, distance = section.closest_point(25.0, 20.0)
    assert point == pytest.approx((20.0, 20.0), abs=EXACT)
    assert normal == pytest.approx((1.0, 0.0), abs=EXACT)
    assert arclength == pytest.approx(1.0 + 20.0, abs=EXACT)
    assert distance == pytest.approx(5.0, abs=EXACT)
    # beyond the corner (20, 0): the corner belongs to the segment that starts there (the OD)
    point, normal, arclength, distance = section.closest_point(23.0, -4.0)
    assert point == pytest.approx((20.0, 0.0), abs=EXACT)
    assert normal == pytest.approx((1.0, 0.0), abs=EXACT)
    assert arclength == pytest.approx(1.0, abs=EXACT)
    assert distance == pytest.approx(5.0, abs=EXACT)


def test_closest_point_on_arc():
    section = section_from_outline(TORUS)
    angle = math.radians(30.0)
    point, normal, arclength, distance = section.closest_point(50.0 + 8.0 * math.cos(angle), 3.0 + 8.0 * math.sin(angle))
    assert point == pytest.approx((50.0 + 5.0 * math.cos(angle), 3.0 + 5.0 * math.sin(angle)), abs=1e-12)
    assert normal == pytest.approx((math.cos(angle), math.sin(angle)), abs=1e-12)
    assert arclength == pytest.approx(5.0 * angle, abs=1e-12)
    assert distance == pytest.approx(3.0, abs=1e-12)
    point, normal, _, distance = section.closest_point(50.0, 4.0)  # inside the torus' tube, above its centre
    assert point == pytest.approx((50.0, 8.0), abs=1e-12)
    assert normal == pytest.approx((0.0, 1.0), abs=1e-12)
    assert distance == pytest.approx(4.0, abs=1e-12)


def test_point_at_wraps_round():
    section = section_from_outline(TUBE)
    point, normal = section.point_at(21.0)
    assert point == pytest.approx((20.0, 20.0), abs=EXACT) and normal == pytest.approx((1.0, 0.0), abs=EXACT)
    assert section.point_at(21.0 + 3 * section.perimeter())[0] == pytest.approx((20.0, 20.0), abs=1e-9)
    assert section.point_at(-61.0)[0] == pytest.approx((20.0, 20.0), abs=1e-9)
    point, normal = section.point_at(1.0)  # the corner (20, 0) belongs to the OD, which starts there
    assert point == pytest.approx((20.0, 0.0), abs=EXACT) and normal == pytest.approx((1.0, 0.0), abs=EXACT)


def test_contains_torus():
    section = section_from_outline(TORUS)
    points = np.array([[50.0, 3.0], [54.9, 3.0], [45.1, 3.0], [50.0, 7.9], [53.5, 6.5],
                       [55.1, 3.0], [50.0, 8.1], [53.6, 6.6], [0.0, 0.0], [44.0, 3.0]])
    assert section.contains(points).tolist() == [True] * 5 + [False] * 5


def test_contains_hollow_arc_side():
    # square with its top pushed in by a quarter arc (centre (5, 15)): the circular segment below the chord
    # is not material; the arc runs at z = 15 - sqrt(50 - (r - 5)^2): 7.93 at r = 5, 9.81 at r = 0.2
    section = section_from_outline([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0],
                                    {"to": [0.0, 10.0], "radius": -10.0 / math.sqrt(2.0)}])
    points = np.array([[5.0, 8.5], [5.0, 7.5], [0.2, 9.7], [0.2, 9.9], [5.0, 10.5]])
    assert section.contains(points).tolist() == [False, True, True, False, False]


def test_bounds_include_arc_extremes():
    assert section_from_outline(TORUS).bounds() == pytest.approx((45.0, 55.0, -2.0, 8.0), abs=EXACT)


@pytest.mark.parametrize("error_mm", [1e-1, 1e-3])
def test_polygon_chord_error_and_orientation(error_mm):
    section = section_from_outline(TORUS)
    polygon = section.polygon(error_mm)
    closed = np.vstack([polygon, polygon[:1]])
    midpoints = 0.5 * (closed[1:] + closed[:-1])
    gap = 5.0 - np.hypot(midpoints[:, 0] - 50.0, midpoints[:, 1] - 3.0)
    assert gap.max() <= error_mm and gap.min() >= 0.0
    assert signed_area(polygon) > 0.0
    assert signed_area(polygon) == pytest.approx(math.pi * 25.0, rel=2.0 * error_mm / 5.0)


def test_segments_reverse_and_measure():
    arc = Arc((1.0, 0.0), (0.0, 1.0), (0.0, 0.0), 1.0, True)
    assert arc.length() == pytest.approx(math.pi / 2, abs=EXACT)
    assert arc.tangent_at(0.0) == pytest.approx((0.0, 1.0), abs=EXACT)
    assert arc.normal_at(0.0) == pytest.approx((1.0, 0.0), abs=EXACT)
    back = arc.reversed()
    assert back.point_at(0.25) == pytest.approx(arc.point_at(0.75), abs=EXACT)
    assert back.tangent_at(0.25) == pytest.approx(tuple(-v for v in arc.tangent_at(0.75)), abs=EXACT)
    line = Line((0.0, 0.0), (3.0, 4.0))
    assert line.length() == 5.0 and line.point_at(0.5) == (1.5, 2.0)
    assert line.normal_at(0.3) == pytest.approx((0.8, -0.6), abs=EXACT)


def test_section_is_plain_frozen_data():
    section = section_from_outline(TUBE)
    assert isinstance(section, Section)
    with pytest.raises(AttributeError):
        section.segments = ()


def test_points_at_is_point_at_for_many_arclengths():
    """The vectorised lookup gives each arclength's point and outward normal as point_at does, on lines and
    arcs, across corners (a corner belongs to the segment starting there) and past the perimeter (wraps)."""
    section = section_from_outline([[19.0, 0.0], [20.0, 0.0, 0.3], [20.0, 40.0], {"to": [19.0, 40.0], "radius": 0.5}])
    starts = np.cumsum([0.0] + [seg.length() for seg in section.segments])
    arclengths = np.r_[np.linspace(-3.0, 1.3 * section.perimeter(), 997), starts]
    points, normals = section.points_at(arclengths)
    for s, point, normal in zip(arclengths, points, normals):
        expected_point, expected_normal = section.point_at(float(s))
        assert point == pytest.approx(expected_point, abs=1e-12)
        assert normal == pytest.approx(expected_normal, abs=1e-12)
