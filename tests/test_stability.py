"""Regenerative stability: Tlusty's limit and lobes on one mode, and the lobes of two modes against the delay
equation integrated in time and against the argument principle (`delay_equation.py`, written for the tests).

Sources: J. Tlusty, M. Polacek, "The stability of machine tools against self-excited vibrations in machining",
Int. Research in Production Engineering, ASME 1963; Y. Altintas, Manufacturing Automation, 2nd ed., Cambridge
University Press 2012, ch. 3: one mode of stiffness k and damping ratio z has min Re G = -1 / (4 k z (1 + z)) at
w_c = w_n sqrt(1 + 2 z), so b K_f = 2 k z (1 + z) at the bottom of every lobe, and lobe j has its bottom at the
spindle speed 60 f_c / (j + eps / (2 pi)), eps = 3 pi + 2 atan2(Im G, Re G) at w_c.
"""

import math

import numpy as np
import pytest
from delay_equation import grows, receptance, roots_in_right_half_plane
from scipy.optimize import brentq

from deflect.job.materials import material_from_job
from deflect.job.tooling import tool_from_job
from deflect.mechanics.cutting import chip_geometry, cutting_forces, kienzle_force
from deflect.mechanics.stability import (
    chip_modulation,
    complement,
    frequency_grid,
    limit_at_speeds,
    lobe_branches,
    lobe_speed_rpm,
    tlusty_limit,
    unstable_speeds,
)

STIFFNESS, NATURAL_HZ, ZETA = 2.0e4, 1000.0, 0.02   # N/mm, Hz, one mode
STABLE, UNSTABLE = 0.8, 1.25                        # the cut's coefficient as a share of the predicted limit


def one_mode(frequency_hz):
    r = np.asarray(frequency_hz) / NATURAL_HZ
    return 1.0 / (STIFFNESS * (1 - r * r + 2j * ZETA * r))


def one_mode_grid():
    """A fine grid that holds the chatter frequency of the lobes' bottoms exactly."""
    f_c = NATURAL_HZ * math.sqrt(1 + 2 * ZETA)
    return np.sort(np.r_[np.geomspace(0.5 * NATURAL_HZ, 2 * NATURAL_HZ, 20001), f_c]), f_c


def test_tlusty_limit_of_one_mode():
    f, f_c = one_mode_grid()
    g = one_mode(f)
    closed = 2 * STIFFNESS * ZETA * (1 + ZETA)
    assert tlusty_limit(g.real).min() == pytest.approx(closed, rel=1e-12)
    branches = lobe_branches(f, g, g)          # a_in = a_out = d: Tlusty's case
    assert len(branches) == 1
    assert np.nanmin(branches[0].coefficient) == pytest.approx(closed, rel=1e-12)


@pytest.mark.parametrize("lobe", [0, 1, 2, 5, 20])
def test_tlusty_lobe_speeds_of_one_mode(lobe):
    """The bottom of lobe j lies at 60 f_c / (j + eps / 2 pi), and the limit there is the absolute one."""
    f, f_c = one_mode_grid()
    g = one_mode(f)
    g_c = one_mode(f_c)
    eps = 3 * math.pi + 2 * math.atan2(g_c.imag, g_c.real)
    closed_speed = 60 * f_c / (lobe + eps / (2 * math.pi))
    branch = lobe_branches(f, g, g)[0]
    at = int(np.flatnonzero(f == f_c)[0])
    assert lobe_speed_rpm(f_c, branch.phase_turns[at] % 1.0, lobe) == pytest.approx(closed_speed, rel=1e-12)
    limit, chatter_hz = limit_at_speeds([branch], [closed_speed])
    assert limit[0] == pytest.approx(2 * STIFFNESS * ZETA * (1 + ZETA), rel=1e-9)
    assert chatter_hz[0] == pytest.approx(f_c, rel=1e-9)


@pytest.mark.parametrize("lobe", [0, 1, 2])
def test_unstable_speeds_of_one_mode_against_the_lobe_curves(lobe):
    """A cut at 1.5 times the absolute limit: lobe j covers the speeds between the two chatter frequencies where
    -1 / (2 Re G) equals its coefficient (found here by root finding on the closed form)."""
    f, f_c = one_mode_grid()
    g = one_mode(f)
    coefficient = 1.5 * 2 * STIFFNESS * ZETA * (1 + ZETA)

    def excess(freq):
        return -0.5 / one_mode(freq).real - coefficient

    edges = [brentq(excess, NATURAL_HZ * 1.0000001, f_c), brentq(excess, f_c, 2 * NATURAL_HZ)]

    def speed(freq):
        value = one_mode(freq)
        return 60 * freq / (lobe + (3 * math.pi + 2 * math.atan2(value.imag, value.real)) / (2 * math.pi))

    low, high = sorted(speed(e) for e in edges)
    found = unstable_speeds(lobe_branches(f, g, g), coefficient, 0.8 * low, 1.2 * high)   # (its neighbours too)
    mine = [span for span in found if span[0] < 0.5 * (low + high) < span[1]]
    assert len(mine) == 1
    assert mine[0] == pytest.approx((low, high), rel=2e-5)   # the edges are interpolated on the grid: 3e-6


def two_modes():
    """Two modes along one direction: 500 Hz with 50 g of modal mass, 800 Hz with 80 g (p = 1 / sqrt(m))."""
    natural, damping = [500.0, 800.0], [0.02, 0.03]
    participation = np.array([[1 / math.sqrt(5e-5), 0.0], [1 / math.sqrt(8e-5), 0.0]])
    return natural, damping, participation


def skewed_modes():
    """Two modes in the plane (normal, along), one along the normal and one skewed, and a chip whose inner and
    outer modulation differ by the feed along the normal (the nose-radius chip)."""
    natural, damping = [500.0, 700.0], [0.02, 0.02]
    participation = np.array([[1 / math.sqrt(5e-5), 0.0],
                              [0.6 / math.sqrt(6e-5), 0.8 / math.sqrt(6e-5)]])
    inner = np.array([0.6, 0.3])
    outer = inner - np.array([0.1, 0.0])
    return natural, damping, participation, inner, outer, inner / np.linalg.norm(inner)


@pytest.mark.parametrize("speed_rpm", [5000.0, 14000.0, 22000.0])
def test_two_mode_lobes_against_time_domain(speed_rpm):
    """Below the predicted limit a kick dies away, above it it grows: 0.8 and 1.25 times the limit, integrated
    in time (fixed-step Runge-Kutta, 40 revolutions)."""
    natural, damping, p = two_modes()
    d = np.array([1.0, 0.0])
    f = frequency_grid(natural, damping)
    phi = receptance(f, natural, damping, p) @ d @ d
    limit = limit_at_speeds(lobe_branches(f, phi, phi), [speed_rpm])[0][0]
    assert grows(natural, damping, p, STABLE * limit, d, d, d, speed_rpm) < 0.5
    assert grows(natural, damping, p, UNSTABLE * limit, d, d, d, speed_rpm) > 2.0


@pytest.mark.parametrize("speed_rpm", [4000.0, 9000.0, 15000.0])
def test_skewed_modes_with_the_nose_overlap_against_time_domain(speed_rpm):
    natural, damping, p, inner, outer, d = skewed_modes()
    f = frequency_grid(natural, damping)
    response = receptance(f, natural, damping, p)
    limit = limit_at_speeds(lobe_branches(f, response @ d @ inner, response @ d @ outer), [speed_rpm])[0][0]
    assert grows(natural, damping, p, STABLE * limit, inner, outer, d, speed_rpm) < 0.5
    assert grows(natural, damping, p, UNSTABLE * limit, inner, outer, d, speed_rpm) > 2.0


@pytest.mark.parametrize("speed_rpm", np.geomspace(1500.0, 30000.0, 9))
def test_lobes_against_the_argument_principle(speed_rpm):
    """No root in the right half-plane just below the predicted limit, some just above (0.97 and 1.03)."""
    natural, damping, p, inner, outer, d = skewed_modes()
    f = frequency_grid(natural, damping)
    response = receptance(f, natural, damping, p)
    limit = limit_at_speeds(lobe_branches(f, response @ d @ inner, response @ d @ outer), [speed_rpm])[0][0]
    model = lambda f: receptance(f, natural, damping, p)   # noqa: E731
    assert roots_in_right_half_plane(model, 20000.0, 0.97 * limit, inner, outer, d, speed_rpm) == 0
    assert roots_in_right_half_plane(model, 20000.0, 1.03 * limit, inner, outer, d, speed_rpm) >= 2


def test_unstable_intervals_agree_with_the_limit_at_each_speed():
    """The two routes to stability (runs of the lobe branches mapped to speed intervals; the least limit of the
    lobes crossing a speed) give the same verdict at every speed away from an interval's edge."""
    natural, damping, p, inner, outer, d = skewed_modes()
    f = frequency_grid(natural, damping)
    response = receptance(f, natural, damping, p)
    branches = lobe_branches(f, response @ d @ inner, response @ d @ outer)
    coefficient = 1.2 * min(np.nanmin(b.coefficient) for b in branches)
    intervals = unstable_speeds(branches, coefficient, 2000.0, 40000.0)
    windows = complement(intervals, 2000.0, 40000.0)
    assert intervals and windows
    speeds = np.linspace(2000.0, 40000.0, 3001)
    limits = limit_at_speeds(branches, speeds)[0]
    inside = np.array([any(lo <= s <= hi for lo, hi in intervals) for s in speeds])
    near_edge = np.array([min(abs(s - e) for span in intervals for e in span) < 1e-3 * s for s in speeds])
    assert np.array_equal(inside[~near_edge], (limits < coefficient)[~near_edge])


# ---------------------------------------------------------------------------------------------------
# the chip

MATERIAL = material_from_job({"name": "ti-6al-4v"}, "material")
TOOL = tool_from_job({"name": "T", "insert": "VCMT160404", "approach": 93.0, "rake": 10.0}, "tool[0]")


@pytest.mark.parametrize("depth", [0.05, 0.2, 0.6, 2.0])
def test_chip_modulation_vectors(depth):
    """a_in is Colwell's chord turned a quarter turn (length L, normal component its extent along the feed),
    and a_out differs from it by the feed along the normal."""
    feed = 0.08
    chip = chip_geometry(depth, feed, TOOL.nose_radius_mm, TOOL.approach_deg)
    m = chip_modulation(MATERIAL, TOOL, depth, feed, 70.0)
    kappa = math.radians(chip.effective_approach_deg)
    assert np.linalg.norm(m.inner_mm) == pytest.approx(chip.edge_length_mm, rel=1e-12)
    assert m.inner_mm == pytest.approx(chip.edge_length_mm * np.array([math.cos(kappa), math.sin(kappa)]), rel=1e-12)
    assert m.inner_mm - m.outer_mm == pytest.approx([feed, 0.0], abs=1e-15)
    # the thrust of the force model lies along the same normal: passive / feed = cot(kr_eff)
    forces = cutting_forces(MATERIAL, TOOL, depth, feed, 70.0)
    assert m.thrust_direction[0] / m.thrust_direction[1] == pytest.approx(forces.passive_n / forces.feed_n, rel=1e-9)


@pytest.mark.parametrize("depth", [0.05, 0.3, 1.5])
def test_dynamic_coefficient_is_the_slope_of_kienzle_thrust(depth):
    """k = dT/dA at the fixed chord: central difference of Kienzle's thrust in the chip thickness (independent)."""
    feed, speed = 0.08, 70.0
    chip = chip_geometry(depth, feed, TOOL.nose_radius_mm, TOOL.approach_deg)
    length, h = chip.edge_length_mm, chip.chip_thickness_mm
    scale = cutting_forces(MATERIAL, TOOL, depth, feed, speed).cutting_n / kienzle_force(
        MATERIAL.kc11, MATERIAL.mc, length, h)   # the rake and speed factors of the force model

    def thrust(thickness):
        return scale * math.hypot(kienzle_force(MATERIAL.kf11, MATERIAL.mf, length, thickness),
                                  kienzle_force(MATERIAL.kp11, MATERIAL.mp, length, thickness))

    step = 1e-6 * h
    slope = (thrust(h + step) - thrust(h - step)) / (2 * step) / length
    assert chip_modulation(MATERIAL, TOOL, depth, feed, speed).coefficient_n_per_mm2 == pytest.approx(slope, rel=1e-6)


def test_frequency_grid_resolves_the_damping():
    f = frequency_grid([1000.0, 3000.0], [0.01, 0.02])
    assert f[0] == pytest.approx(500.0) and f[-1] == pytest.approx(4500.0)
    assert np.max(f[1:] / f[:-1]) - 1 <= 0.01 / 10 * (1 + 1e-9)
