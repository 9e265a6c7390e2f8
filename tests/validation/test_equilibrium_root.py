"""Validation of the force-deflection equilibrium at one station (`deflect.machining.simulate.equilibrium`).

The relation (deflect/machining/simulate.py, after the static-deflection loop of flexible-part machining, e.g.
Y. Altintas, *Manufacturing Automation*, Cambridge University Press 2000, chapter on static deflections in
milling; from memory): the tool meets a_met of stock beyond its target; the wall and the tool give way by

    delta(a) = (C_nn + c_tool) F_p(a) + C_na s F_f(a),

so the depth actually cut is the root of g(a) = a + delta(a) - a_met on [0, a_met]. The forces are those of
the chip actually taken: Kienzle's law (O. Kienzle, "Die Bestimmung von Kraeften und Leistungen an
spanenden Werkzeugen und Werkzeugmaschinen", VDI-Z 94 (1952) 299-305) on Colwell's equivalent edge
(L. V. Colwell, "Predicting the angle of chip flow for single-point cutting tools", Trans. ASME 76 (1954)
199-204), both as `deflect.mechanics.cutting.cutting_forces` computes them.

Oracle: the same equation solved independently, station by station, with Brent's method (R. P. Brent,
*Algorithms for Minimization without Derivatives*, Prentice-Hall 1973, ch. 4; scipy.optimize.brentq) on
the bracket [0, a_met], where g(0) = -a_met < 0 and g(a_met) = delta(a_met) > 0 for a push-off that moves
the surface away from the tool. No published table of such roots exists; the check is that the product's
root search finds the root of the stated equation. A second check re-evaluates a closed form: with the
push-off linear in a small compliance, one Newton step from a_met, a_1 = a_met - delta / (1 + delta'),
agrees with the root up to a remainder of third order in delta.

Compliances span the thin walls the simulation meets: from a stiff ring (1e-5 mm/N) to a wall that gives
about half the stock back (1e-2 mm/N), with the feed coupling C_na of either sign up to 30 % of C_nn, with and
without a boring bar, and with the force constants' spread (force_scale 0.85 and 1.15).
"""

import math
from types import SimpleNamespace

import numpy as np
import pytest
from scipy.optimize import brentq

from deflect.job.materials import load_library
from deflect.job.process import Pass
from deflect.job.tooling import BoringBar, Tool
from deflect.machining.simulate import equilibrium
from deflect.mechanics.cutting import chip_geometry, cutting_forces

ROOT_REL_TOL = 1e-3          # issue: match the independent root to 0.1 %
BRENT_XTOL_MM = 1e-15        # Brent's bracket, far below the tolerance
# One Newton step's remainder is about c delta^3 / a_met^2: a power-law push-off delta ~ a^p gives
# c = |p (p - 1)| / 2 <= 0.2 for the exponents here; Colwell's turning chord and a feed term of opposite sign
# raise it (0.3 to 0.5 seen). 2 leaves a margin; a first-order slip would exceed it by a_met / delta >= 15.
NEWTON_FACTOR = 2.0

FINISH_TOOL = Tool(name="T1", nose_radius_mm=0.4, approach_deg=93.0, rake_deg=7.0)
BAR = BoringBar(diameter_mm=16.0, overhang_mm=60.0, E_mpa=210000.0)
FINISH_PASS = Pass(name="finish OD", surface="od", tool="T1", allowance_mm=0.0, feed_mm=0.1, speed_m_min=200.0,
                   start_mm=40.0, end_mm=6.0, depth_mm=None, spring=0, offset_mm=0.0, key="pass[0]")

# (met depth mm, C_nn mm/N, C_na / C_nn, feed sign s)
STATIONS = [
    (0.3, 1e-5, 0.0, -1.0),        # stiff: nearly the whole stock is cut
    (0.3, 3e-4, 0.1, -1.0),
    (0.3, 1e-3, -0.2, -1.0),       # the sleeve's free end
    (0.3, 1e-3, 0.3, 1.0),
    (0.3, 1e-2, 0.0, 1.0),         # a very soft wall: about half the stock is given back
    (0.1, 2e-3, 0.2, -1.0),
    (0.6, 5e-4, -0.3, 1.0),        # deeper than the nose radius: the straight edge engages
    (0.002, 1e-3, 0.0, -1.0),      # below the cusp height (about 3 um here): the chord lies along the feed
]


def material(name: str):
    return load_library()[name]


def compliance_matrices(rows) -> np.ndarray:
    matrices = np.zeros((len(rows), 3, 3))
    for i, (_, c_nn, ratio, _) in enumerate(rows):
        matrices[i, 0, 0] = c_nn
        matrices[i, 0, 2] = ratio * c_nn
        matrices[i, 2, 0] = ratio * c_nn
    return matrices


def brent_depth(met_mm, c_nn, c_na, s, tool_c, mat, tool, p, scale) -> float:
    """The root of a + (C_nn + c_tool) F_p(a) + C_na s F_f(a) - a_met by Brent's method."""
    def g(a):
        forces = cutting_forces(mat, tool, a, p.feed_mm, p.speed_m_min, force_scale=scale)
        return a + (c_nn + tool_c) * forces.passive_n + c_na * s * forces.feed_n - met_mm
    assert g(0.0) < 0.0 < g(met_mm)
    return brentq(g, 0.0, met_mm, xtol=BRENT_XTOL_MM, rtol=4 * np.finfo(float).eps, maxiter=500)


@pytest.mark.parametrize("name", ["al-6061-t6", "ti-6al-4v"])
@pytest.mark.parametrize("scale", [0.85, 1.0, 1.15])
@pytest.mark.parametrize("with_bar", [False, True], ids=["rigid tool", "boring bar"])
def test_equilibrium_matches_brent(name, scale, with_bar):
    mat = material(name)
    tool = Tool(name="B1", nose_radius_mm=0.4, approach_deg=93.0, rake_deg=7.0, bar=BAR) if with_bar else FINISH_TOOL
    tool_c = tool.compliance_mm_per_n()
    assert (tool_c > 0.0) == with_bar
    met = np.array([row[0] for row in STATIONS])
    feed_sign = np.array([row[3] for row in STATIONS])
    matrices = compliance_matrices(STATIONS)
    depth, delta, forces = equilibrium(met, matrices, feed_sign, tool_c, SimpleNamespace(material=mat), tool,
                                       FINISH_PASS, scale)
    for i, (met_mm, c_nn, ratio, s) in enumerate(STATIONS):
        expected = brent_depth(met_mm, c_nn, ratio * c_nn, s, tool_c, mat, tool, FINISH_PASS, scale)
        assert depth[i] == pytest.approx(expected, rel=ROOT_REL_TOL), (i, depth[i], expected)
        assert depth[i] + delta[i] == pytest.approx(met_mm, rel=1e-12)
        # the forces returned are those of the depth cut
        at_root = cutting_forces(mat, tool, depth[i], FINISH_PASS.feed_mm, FINISH_PASS.speed_m_min, force_scale=scale)
        assert forces.passive_n[i] == pytest.approx(at_root.passive_n, rel=1e-12)
        assert forces.feed_n[i] == pytest.approx(at_root.feed_n, rel=1e-12)


def test_no_stock_no_cut():
    mat = material("al-6061-t6")
    depth, delta, forces = equilibrium(np.zeros(2), compliance_matrices([(0.0, 1e-3, 0.0, 1.0)] * 2),
                                       np.array([1.0, -1.0]), 0.0, SimpleNamespace(material=mat), FINISH_TOOL,
                                       FINISH_PASS, 1.0)
    assert np.all(depth == 0.0) and np.all(delta == 0.0) and np.all(np.asarray(forces.passive_n) == 0.0)


def test_below_the_cusp_the_chord_lies_along_the_feed():
    """Colwell's chord for ap below the cusp height r - sqrt(r^2 - f^2/4): both ends on the nose at height ap,
    so kr_eff = 0 and the whole thrust is passive (the station of STATIONS at 2 um relies on it)."""
    cusp = 0.4 - math.sqrt(0.4**2 - 0.1**2 / 4.0)
    assert 0.002 < cusp
    assert chip_geometry(0.002, 0.1, 0.4, 93.0).effective_approach_deg == 0.0


def test_one_newton_step_is_the_root_to_second_order():
    """Closed form re-evaluated: for a stiff wall a = a_met - delta(a_met) / (1 + delta'(a_met)) + O(delta^3).

    The remainder of one Newton step from a_met is delta'' e^2 / (2 (1 + delta')), e = a_met - a ~ delta; the
    forces bend over depths of the order of a_met, so delta'' ~ delta / a_met^2 and the remainder is of the
    order of delta^3 / a_met^2 (NEWTON_FACTOR). A first-order mistake (a missing term of the push-off, a wrong
    sign of C_na s F_f) breaks the bound by orders of magnitude.
    """
    mat = material("al-6061-t6")
    met_mm, step = 0.3, 1e-7
    for c_nn, ratio, s in [(1e-5, 0.3, -1.0), (3e-5, -0.3, 1.0), (1e-4, 0.2, 1.0), (1e-3, 0.0, 1.0)]:
        c_na = ratio * c_nn

        def push_off(a):
            forces = cutting_forces(mat, FINISH_TOOL, a, FINISH_PASS.feed_mm, FINISH_PASS.speed_m_min)
            return c_nn * forces.passive_n + c_na * s * forces.feed_n

        delta_met = push_off(met_mm)
        slope = (push_off(met_mm + step) - push_off(met_mm - step)) / (2.0 * step)
        newton = met_mm - delta_met / (1.0 + slope)
        depth, _, _ = equilibrium(np.array([met_mm]), compliance_matrices([(met_mm, c_nn, ratio, s)]), np.array([s]),
                                  0.0, SimpleNamespace(material=mat), FINISH_TOOL, FINISH_PASS, 1.0)
        assert abs(depth[0] - newton) <= NEWTON_FACTOR * delta_met**3 / met_mm**2, (c_nn, depth[0], newton)
        # and it is not the trivial answer: the push-off is resolved
        assert met_mm - depth[0] == pytest.approx(delta_met, rel=0.05)
