"""Validation of the cutting-force model: Kienzle's law and Colwell's equivalent edge.

References
----------
[K] O. Kienzle, "Die Bestimmung von Kräften und Leistungen an spanenden Werkzeugen und
    Werkzeugmaschinen", VDI-Z 94 (1952) 299-305: Fc = kc1.1 b h^(1 - mc), with
    h = f sin kr and b = ap / sin kr for a straight edge.
[C] L. V. Colwell, "Predicting the angle of chip flow for single-point cutting tools",
    Trans. ASME 76 (1954) 199-204: the equivalent edge is the chord joining the ends of
    the engaged edge; the chip flows at right angles to it (seen restated in Childs,
    Maekawa, Obikawa, Yamane, *Metal Machining*, 2000, ch. 6).
[A] J. A. Arsecularatne, R. F. Fowle, P. Mathew, P. L. B. Oxley, "Prediction of chip flow
    direction, cutting forces and surface roughness in finish turning", J. Manuf. Sci.
    Eng. 120(1) (1998) 1-12: the thrust taken normal to the equivalent edge.

The numbers checked were worked out by hand from the formulas of [K] and [C] ([D]: derived),
not measured data. The Kienzle constants used as inputs are recalled values (from memory:
C45 2220 / 0.14 and 42CrMo4 2500 / 0.26 of the Kienzle-Victor tables, C45 1659 / 0.21 of
Koenig & Klocke), used here only as inputs to the arithmetic. No published worked example of the Kienzle law
with its printed answer was found (public pages searched for textbook and lecture-note
examples); so the Kienzle rows check our arithmetic, not a printed book answer.

Each check shows the hand-worked value, the formula re-evaluated here, and ours.
"""

import math

import numpy as np
import pytest

from deflect.job.materials import Material
from deflect.job.tooling import Tool
from deflect.mechanics.cutting import chip_geometry, cutting_forces, kienzle_force

ROUND_OFF = 1e-12  # same formula evaluated in another order
KC_PRINT_SLIP = 1.0  # N/mm2: one hand-worked kc value was rounded down, not to nearest


def printed(decimals: int) -> float:
    """Tolerance of a value printed to `decimals` places: half a unit of the last digit."""
    return 0.5 * 10.0**-decimals * (1.0 + 1e-9)


# ---------------------------------------------------------------------------------------
# [K], worked by hand: f = 0.2 mm, ap = 1 mm, kr = 95 deg, straight edge.
KIENZLE_ROWS = [
    # kc1.1 N/mm2, mc, Fc printed N, kc printed N/mm2
    (1659.0, 0.21, 465.6, 2328.0),
    (2220.0, 0.14, 556.5, 2782.0),
    (2500.0, 0.26, 760.6, 3803.0),
]


def test_straight_edge_chip_of_the_worked_example():
    kr = math.radians(95.0)
    assert 1.0 / math.sin(kr) == pytest.approx(1.00382, abs=printed(5))
    assert 0.2 * math.sin(kr) == pytest.approx(0.19924, abs=printed(5))


@pytest.mark.parametrize("kc11, mc, force_printed, kc_printed", KIENZLE_ROWS)
def test_kienzle_worked_example(kc11, mc, force_printed, kc_printed):
    kr = math.radians(95.0)
    b, h = 1.0 / math.sin(kr), 0.2 * math.sin(kr)
    closed_form = kc11 * b * h ** (1.0 - mc)
    ours = kienzle_force(kc11, mc, b, h)
    assert ours == pytest.approx(closed_form, rel=ROUND_OFF)
    assert ours == pytest.approx(force_printed, abs=printed(1))
    # kc = Fc / (ap f); the hand-worked value is 2782 for 2782.53 (rounded down), hence 1 N/mm2.
    assert ours / (b * h) == pytest.approx(kc_printed, abs=KC_PRINT_SLIP)


# ---------------------------------------------------------------------------------------
# [C], worked by hand: Colwell's chord for a tool with a nose radius.
COLWELL_ROWS = [
    # ap, f, r, kr, kr_eff deg, L_eq mm, cot kr_eff, h_eq mm (as printed)
    (0.2, 0.1, 0.8, 95.0, 18.91, 0.6122, 2.919, 0.0327),
    (0.5, 0.1, 0.8, 95.0, 32.20, 0.9355, 1.588, 0.0534),
    (1.0, 0.2, 0.8, 95.0, 48.29, 1.3311, 0.891, 0.1503),
    (2.0, 0.2, 0.8, 95.0, 68.18, 2.1475, 0.400, 0.1863),
    (1.0, 0.2, 0.8, 45.0, 34.77, 1.7425, 1.440, 0.1148),
    (3.0, 0.25, 0.8, 75.0, 62.71, 3.3647, 0.516, 0.2229),
]


def colwell_by_hand(ap, f, r, kr_deg):
    """Colwell's construction [C] written out for one scalar case."""
    kr = math.radians(kr_deg)
    x_b, y_b = -f / 2.0, r - math.sqrt(r * r - f * f / 4.0)
    if ap <= r * (1.0 - math.cos(kr)):
        x_a = math.sqrt(r * r - (r - ap) ** 2)
    else:
        x_a = r * math.sin(kr) + (ap - r * (1.0 - math.cos(kr))) / math.tan(kr)
    angle = math.atan2(ap - y_b, x_a - x_b)
    length = math.hypot(ap - y_b, x_a - x_b)
    return math.degrees(angle), length, 1.0 / math.tan(angle), ap * f / length


@pytest.mark.parametrize("ap, f, r, kr, angle_p, length_p, cot_p, h_p", COLWELL_ROWS)
def test_colwell_equivalent_edge(ap, f, r, kr, angle_p, length_p, cot_p, h_p):
    angle_c, length_c, cot_c, h_c = colwell_by_hand(ap, f, r, kr)
    chip = chip_geometry(ap, f, r, kr)
    ours_cot = 1.0 / math.tan(math.radians(chip.effective_approach_deg))

    assert chip.effective_approach_deg == pytest.approx(angle_c, rel=ROUND_OFF)
    assert chip.edge_length_mm == pytest.approx(length_c, rel=ROUND_OFF)
    assert chip.chip_thickness_mm == pytest.approx(h_c, rel=ROUND_OFF)
    assert ours_cot == pytest.approx(cot_c, rel=ROUND_OFF)

    assert chip.effective_approach_deg == pytest.approx(angle_p, abs=printed(2))
    assert chip.edge_length_mm == pytest.approx(length_p, abs=printed(4))
    assert ours_cot == pytest.approx(cot_p, abs=printed(3))
    assert chip.chip_thickness_mm == pytest.approx(h_p, abs=printed(4))


def test_colwell_scale_check():
    # all lengths halved and kr 95 -> 93 deg gives the first row's angle,
    # because A still lies on the nose arc, where the nominal kr does not enter.
    half = chip_geometry(0.1, 0.05, 0.4, 93.0)
    full = chip_geometry(0.2, 0.1, 0.8, 95.0)
    assert half.effective_approach_deg == pytest.approx(18.91, abs=printed(2))
    assert half.effective_approach_deg == pytest.approx(full.effective_approach_deg, rel=ROUND_OFF)
    assert half.edge_length_mm == pytest.approx(full.edge_length_mm / 2.0, rel=ROUND_OFF)


# ---------------------------------------------------------------------------------------
# Forces on the equivalent edge.
STEEL = Material(
    name="worked-example", E_mpa=210000.0, nu=0.3, density_g_cm3=7.85,
    kc11=2220.0, mc=0.14, kf11=435.0, mf=0.5, kp11=373.0, mp=0.5,
    ref_rake_deg=6.0, ref_approach_deg=70.0, ref_speed_m_min=100.0,
)


def straight_edge_forces(material, ap, f, kr_deg):
    """Kienzle [K] on a straight edge, thrust split at the nominal kr (the sharp-tool limit)."""
    kr = math.radians(kr_deg)
    b, h = ap / math.sin(kr), f * math.sin(kr)
    cutting = material.kc11 * b * h ** (1 - material.mc)
    feed = material.kf11 * b * h ** (1 - material.mf)
    passive = material.kp11 * b * h ** (1 - material.mp)
    thrust = math.hypot(feed, passive)
    return cutting, thrust * math.sin(kr), thrust * math.cos(kr)


@pytest.mark.parametrize("kr", [75.0, 95.0])
def test_large_depth_tends_to_the_straight_edge(kr):
    # Errors are measured against the resultant force: near kr = 90 deg the passive
    # component of the straight edge is nearly zero, so its own relative error says nothing.
    tool = Tool(name="T", nose_radius_mm=0.8, approach_deg=kr, rake_deg=STEEL.ref_rake_deg)
    errors, angles = [], []
    for ratio in (1.0, 10.0, 100.0, 1000.0):
        ap = ratio * tool.nose_radius_mm
        ours = cutting_forces(STEEL, tool, ap, 0.2, STEEL.ref_speed_m_min)
        expected = np.array(straight_edge_forces(STEEL, ap, 0.2, kr))
        difference = np.array([ours.cutting_n, ours.feed_n, ours.passive_n]) - expected
        errors.append(np.max(np.abs(difference)) / np.linalg.norm(expected))
        angles.append(abs(ours.chip.effective_approach_deg - kr))
    # The nose changes the chord by a length of order r, so the error falls like r / ap:
    # tenfold per decade of ap / r.
    for coarse, fine in zip(errors, errors[1:]):
        assert 8.0 < coarse / fine < 12.0
    assert errors[-1] < 1e-3
    assert angles == sorted(angles, reverse=True) and angles[-1] < 0.1


def test_small_depth_below_the_nose_radius_pushes_more_than_it_feeds():
    # hand-worked row 1 (ap 0.2 < r 0.8): Fp / Ff = cot kr_eff = 2.919; row 4 (ap 2.0): 0.400.
    tool = Tool(name="T", nose_radius_mm=0.8, approach_deg=95.0, rake_deg=6.0)
    shallow = cutting_forces(STEEL, tool, 0.2, 0.1, 100.0)
    deep = cutting_forces(STEEL, tool, 2.0, 0.2, 100.0)
    assert shallow.passive_n > shallow.feed_n
    assert shallow.passive_n / shallow.feed_n == pytest.approx(2.919, abs=printed(3))
    assert deep.passive_n / deep.feed_n == pytest.approx(0.400, abs=printed(3))
    assert deep.passive_n < deep.feed_n


def test_a_deeper_cut_turns_the_thrust_towards_the_feed():
    tool = Tool(name="T", nose_radius_mm=0.8, approach_deg=95.0, rake_deg=6.0)
    depths = np.linspace(0.05, 4.0, 80)
    forces = cutting_forces(STEEL, tool, depths, 0.1, 100.0)
    assert np.all(np.diff(forces.chip.effective_approach_deg) > 0.0)
    assert np.all(np.diff(forces.passive_n / forces.feed_n) < 0.0)
