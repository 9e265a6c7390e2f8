"""Roark: annular plate clamped at the inner edge, free outer edge carrying a uniform line load.

Reference: W. C. Young, R. G. Budynas, Roark's Formulas for Stress and Strain, 7th ed., McGraw-Hill 2002,
Table 11.2, case 1 with r0 = a, "outer edge free, inner edge fixed" (1L) [M for the label]. The deflection
of the outer edge is y_a = -Ky w a^3 / D, D = E t^3 / (12 (1 - nu^2)), w the line load [N/mm], nu = 0.3.
Ky for b/a = 0.1 .. 0.9 derived from the Kirchhoff axisymmetric solution ([D]; it agrees
with the remembered Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 1959, section 19, Table 3,
k1 row). The closed form is re-evaluated here from the same Kirchhoff solution
w = C1 + C2 ln r + C3 r^2 + C4 r^2 ln r with w(b) = w'(b) = 0, M_r(a) = 0, Q_r(a) = -w.
"""

import numpy as np
import pytest

from deflect.mechanics.shell.harmonic import HarmonicShell, ShellLoad, compliance
from deflect.mechanics.shell.mesh import ShellMesh

E_MPA, NU = 70000.0, 0.3
OUTER_RADIUS, THICKNESS = 100.0, 1.0  # a / t = 100: a thin plate
PLATE_TOL = 0.02  # the bound; measured +0.02 % .. +0.10 % (Mindlin shear grows with b/a)
REFERENCE_KY = {0.1: 0.26913, 0.3: 0.13895, 0.5: 0.05045, 0.7: 0.01032}  # derived from the Kirchhoff solution [D]


def kirchhoff_ky(ratio, nu=NU):
    """Ky of the annular plate (a = 1, b = ratio) from the four boundary conditions, D = 1, w = 1."""
    def rows(r):
        # w, w', M_r / D = -(w'' + nu w'/r), Q_r / D = -(d/dr)(w'' + w'/r) for each of 1, ln r, r^2, r^2 ln r
        w = [1.0, np.log(r), r**2, r**2 * np.log(r)]
        d1 = [0.0, 1 / r, 2 * r, 2 * r * np.log(r) + r]
        d2 = [0.0, -1 / r**2, 2.0, 2 * np.log(r) + 3]
        d3 = [0.0, 2 / r**3, 0.0, 2 / r]
        moment = [-(d2[i] + nu * d1[i] / r) for i in range(4)]
        shear = [-(d3[i] + d2[i] / r - d1[i] / r**2) for i in range(4)]
        return w, d1, moment, shear
    wb, d1b, _, _ = rows(ratio)
    _, _, ma, qa = rows(1.0)
    coeff = np.linalg.solve(np.array([wb, d1b, ma, qa]), np.array([0.0, 0.0, 0.0, -1.0]))
    return -np.dot(coeff, rows(1.0)[0])


def annular_plate(ratio, n_el=200):
    """Flat plate z = 0 from r = b (all six DOFs held) to r = a; one load point at the free outer edge."""
    r = np.linspace(ratio * OUTER_RADIUS, OUTER_RADIUS, n_el + 1)
    nodes = np.stack([r, np.zeros_like(r)], axis=1)
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), dtype=bool)
    fixed[0] = True
    shell = HarmonicShell(ShellMesh(nodes, np.full(n_el + 1, THICKNESS), elements, fixed), E_MPA, NU)
    ring = ShellLoad(np.array([n_el - 1]), np.array([1.0]), np.array([1.0]), np.zeros((1, 2)), np.pi)
    return shell, ring


@pytest.mark.parametrize("ratio", sorted(REFERENCE_KY))
def test_annular_plate_outer_edge_deflection(ratio):
    d = E_MPA * THICKNESS**3 / (12 * (1 - NU**2))
    shell, ring = annular_plate(ratio)
    axial = np.array([[[0.0, 1.0], [1.0, 0.0]]])  # dir0 = axial (the plate's normal), dir1 = radial
    c, n_used = compliance(shell, [ring], axial)  # a full ring: only n = 0 carries load
    total = 2 * np.pi * OUTER_RADIUS  # a line load of 1 N/mm
    ours = c[0, 0, 0] * total / OUTER_RADIUS**3 * d  # -> Ky
    closed = kirchhoff_ky(ratio)
    print(f"b/a {ratio}: Roark Ky {REFERENCE_KY[ratio]}, re-evaluated {closed:.5f}, ours {ours:.5f} "
          f"({ours / closed - 1:+.2%}), harmonics 0..{n_used}")
    assert closed == pytest.approx(REFERENCE_KY[ratio], rel=1e-3)
    assert ours == pytest.approx(REFERENCE_KY[ratio], rel=PLATE_TOL)


def test_timoshenko_k1_is_the_same_number():
    """Timoshenko's w_max = k1 P a^2 / (E h^3) with P = 2 pi a w: k1 = Ky 12 (1 - nu^2) / (2 pi); a/b = 2
    gives 0.08769 (the printed table's 0.088, from memory)."""
    assert kirchhoff_ky(0.5) * 12 * (1 - NU**2) / (2 * np.pi) == pytest.approx(0.08769, rel=1e-3)
