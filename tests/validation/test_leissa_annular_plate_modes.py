"""Natural frequencies of an annular plate clamped at its inner edge, free at its outer edge.

Reference: A. W. Leissa, Vibration of Plates, NASA SP-160, 1969, ch. 2 (annular plates): the classical (Kirchhoff)
solution W(r) cos(n theta) with W = A J_n(b r) + B Y_n(b r) + C I_n(b r) + D K_n(b r), b^4 = rho h w^2 / D,
and the frequency equation the four edge conditions give,
    inner edge r = c, clamped:   W = 0,   W' = 0
    outer edge r = a, free:      M_r ~ W'' + nu (W' / r - n^2 W / r^2) = 0
                                 V_r ~ (lap W)' + (1 - nu) n^2 (W / r^3 - W' / r^2) = 0   (Kirchhoff's shear)
with lap W = -b^2 W for the J, Y parts and +b^2 W for the I, K parts. The determinant is solved here with
scipy.special (Bessel functions and their derivatives) and scipy.optimize.brentq; no table is copied. The
plate (a flange, the bottom of a cup) is thin here: a / h = 100; Mindlin shear and the rotary inertia of the
shell model lower the frequency by O((b h)^2): measured within 0.1 % on the first mode of each n, 0.35 % on
the second.
"""

import math

import numpy as np
import pytest
from scipy import special
from scipy.optimize import brentq

from deflect.mechanics.modes import harmonic_modes
from deflect.mechanics.shell.harmonic import HarmonicShell, mass_matrix
from deflect.mechanics.shell.mesh import ShellMesh

E_MPA, NU, DENSITY_T_MM3 = 70000.0, 0.3, 2.7e-9
OUTER, THICKNESS = 100.0, 1.0
PLATE_TOL = 0.02   # the bound for thin cases; measured within 0.35 %
D_BENDING = E_MPA * THICKNESS**3 / (12 * (1 - NU**2))


def frequency_determinant(beta, n: int, inner: float):
    """The 4 x 4 determinant of the edge conditions at each beta [1/mm], each column scaled by its largest entry
    (positive factors: the roots and the signs stay)."""
    beta = np.atleast_1d(np.asarray(beta, float))
    a = OUTER
    columns = []
    for value, slope, sign in ((special.jv, special.jvp, -1.0), (special.yv, special.yvp, -1.0),
                               (special.iv, special.ivp, 1.0), (special.kv, special.kvp, 1.0)):
        def f(r, order=0):
            return value(n, beta * r) if order == 0 else beta**order * slope(n, beta * r, order)
        column = np.stack([
            f(inner), f(inner, 1),
            f(a, 2) + NU * (f(a, 1) / a - n * n * f(a) / a**2),
            sign * beta**2 * f(a, 1) + (1 - NU) * n * n * (f(a) / a**3 - f(a, 1) / a**2),
        ], axis=-1)
        columns.append(column / np.abs(column).max(axis=-1, keepdims=True))
    return np.linalg.det(np.stack(columns, axis=-1))


def kirchhoff_hz(n: int, inner: float, count: int, widest_beta: float = 0.4) -> list[float]:
    """The lowest `count` roots of the frequency equation up to widest_beta [1/mm], as frequencies [Hz]."""
    betas = np.linspace(0.002, widest_beta, 8000)
    values = frequency_determinant(betas, n, inner)
    roots = [brentq(lambda b: frequency_determinant(b, n, inner)[0], b0, b1, xtol=1e-14)
             for b0, b1, v0, v1 in zip(betas, betas[1:], values, values[1:]) if v0 * v1 < 0.0]
    return [b * b * math.sqrt(D_BENDING / (DENSITY_T_MM3 * THICKNESS)) / (2 * math.pi) for b in roots[:count]]


def ours_hz(n: int, inner: float, count: int, n_el: int = 200) -> list[float]:
    r = np.linspace(inner, OUTER, n_el + 1)
    nodes = np.stack([r, np.zeros_like(r)], axis=1)
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), bool)
    fixed[0] = True
    mesh = ShellMesh(nodes, np.full(n_el + 1, THICKNESS), elements, fixed)
    modes = harmonic_modes(HarmonicShell(mesh, E_MPA, NU), mass_matrix(mesh, DENSITY_T_MM3), n, count + 2)
    # bending modes: the plate's normal (axial) motion leads; the in-plane ones of a thin plate lie far above
    bending = [m.frequency_hz for m in modes if np.abs(m.shape[:, 2]).max() > np.abs(m.shape[:, :2]).max()]
    return bending[:count]


@pytest.mark.parametrize("ratio", [0.3, 0.5])
@pytest.mark.parametrize("n", [0, 1, 2, 3])
def test_annular_plate_clamped_inside_free_outside(n, ratio):
    exact = kirchhoff_hz(n, ratio * OUTER, 2)
    assert ours_hz(n, ratio * OUTER, 2) == pytest.approx(exact, rel=PLATE_TOL)
    # measured within 0.35 % (the second mode: the shell model's shear and rotary inertia, O((b h)^2))
    assert ours_hz(n, ratio * OUTER, 2) == pytest.approx(exact, rel=5e-3)


def test_frequency_equation_re_evaluated_on_a_known_limit():
    """The determinant's roots for a narrow annulus tend to a clamped-free beam (strip) of the annulus' width:
    b L = 1.8751 (cantilever, Blevins 1979, table 8-1), with the plate modulus D. At c / a = 0.98 the strip is
    2 mm wide on a 98 mm radius: within 0.5 % (curvature corrections O(L / a))."""
    inner = 0.98 * OUTER
    width = OUTER - inner
    beam = 1.8751040687**2 / width**2 * math.sqrt(D_BENDING / (DENSITY_T_MM3 * THICKNESS)) / (2 * math.pi)
    assert kirchhoff_hz(0, inner, 1, widest_beta=2.0)[0] == pytest.approx(beam, rel=0.005)
