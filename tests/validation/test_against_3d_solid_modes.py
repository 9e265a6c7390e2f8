"""The shell model's natural frequencies against an independent 3-D solid of revolution with a consistent mass.

Check solver: `solid_of_revolution.py` beside this module (test-only, nothing imported from deflect.mechanics),
the semi-analytical finite-element method for axisymmetric solids (E. L. Wilson, "Structural analysis of
axisymmetric solids", AIAA Journal 3 (1965) 2269-2274; O. C. Zienkiewicz, R. L. Taylor, The Finite Element
Method, vol. 2, semi-analytical processes), full 3-D elasticity with 9-node rectangles, and here its consistent
mass (the integral of rho N^T N r dr dz, O. C. Zienkiewicz, R. L. Taylor, vol. 1, ch. on dynamics) and the
lowest eigenpairs of K_n q = w^2 M q by shift-invert Lanczos. Its mesh is checked converged (a finer one moves
its frequencies less than CONVERGED).

Parts, aluminium: a thin sleeve held at one end (R / t = 20, the in-process walls of the examples), and a cup
(thin wall on a 3 mm bottom, held under the wall: the housing's kind of part, with a junction). The shell keeps
the wall's thickness (no through-thickness strain) and idealises the junction as one node; the modes of thin
walls are the bending of the wall itself, where the two models agree.
"""


import numpy as np
import pytest
from solid_of_revolution import Rect, SolidOfRevolution, graded_lines

from deflect.geometry.boxes import HeldBox
from deflect.geometry.section import section_from_outline
from deflect.mechanics.compliance import Patch, WallModel
from deflect.mechanics.modes import harmonic_modes
from deflect.mechanics.shell.harmonic import mass_matrix

E_MPA, NU, DENSITY_T_MM3 = 68900.0, 0.33, 2.70e-9
THIN_AIM = 0.02        # the bound for thin cases
JUNCTION_AIM = 0.05    # a mode that bends the junction of wall and bottom (the shell's junction is one node)
CONVERGED = 0.002      # the solid's own mesh error

CASES = {
    "sleeve": ([Rect((19.0, 20.0), (0.0, 40.0))], Rect((0.0, 100.0), (0.0, 5.0)),
               [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]),
    "cup": ([Rect((23.8, 25.0), (0.0, 30.0)), Rect((3.0, 25.0), (0.0, 3.0))], Rect((23.8, 25.0), (0.0, 3.0)),
            [[3.0, 0.0], [25.0, 0.0], [25.0, 30.0], [23.8, 30.0], [23.8, 3.0], [3.0, 3.0]]),
}


def solid_hz(case: str, n: int, count: int, size_mm: float) -> np.ndarray:
    rects, held, _ = CASES[case]
    lines = []
    for axis in (0, 1):
        breaks = [x for box in rects + [held] for x in (box.r_mm, box.z_mm)[axis]]
        low = min(min((box.r_mm, box.z_mm)[axis]) for box in rects)
        high = max(max((box.r_mm, box.z_mm)[axis]) for box in rects)
        lines.append(graded_lines([x for x in breaks if low <= x <= high], size_mm, size_mm))
    solid = SolidOfRevolution(rects, lines[0], lines[1], E_MPA, NU, [held])
    return solid.natural_frequencies_hz(n, count, DENSITY_T_MM3)


def shell_hz(case: str, n: int, count: int) -> np.ndarray:
    _, held, outline = CASES[case]
    wall = WallModel(section_from_outline(outline, "part.outline"),
                     [HeldBox(r_range=held.r_mm, z_range=held.z_mm, key="held[0]")], E_MPA, NU, Patch(1.0, 2.0),
                     element_mm=0.5)
    modes = harmonic_modes(wall.shell, mass_matrix(wall.geometry.mesh, DENSITY_T_MM3), n, count + 2)
    if n == 0:
        # the solid holds the torsion of n = 0 (V) at zero: compare the axisymmetric modes only
        modes = [m for m in modes if np.abs(m.shape[:, 1]).max() < np.abs(m.shape[:, [0, 2]]).max()]
    return np.array([m.frequency_hz for m in modes[:count]])


# measured (shell / solid - 1), first two modes: sleeve n = 0: -0.06 %, -; n = 1..5 within 0.12 %;
# cup n = 0: +2.0 % (its breathing mode bends the junction, which the shell idealises as one node), -11.6 % on
# the second; n = 1: -0.03 %, +1.7 %; n = 2..5 within 0.11 %
@pytest.mark.parametrize("case, n, modes, aim", [
    ("sleeve", 0, 1, THIN_AIM), ("sleeve", 1, 2, THIN_AIM), ("sleeve", 2, 2, THIN_AIM), ("sleeve", 3, 2, THIN_AIM),
    ("sleeve", 4, 2, THIN_AIM), ("cup", 0, 1, JUNCTION_AIM), ("cup", 1, 2, THIN_AIM), ("cup", 2, 2, THIN_AIM),
    ("cup", 3, 2, THIN_AIM), ("cup", 4, 2, THIN_AIM)])
def test_shell_modes_against_solid(case, n, modes, aim):
    assert shell_hz(case, n, modes) == pytest.approx(solid_hz(case, n, modes, 0.5), rel=aim)


@pytest.mark.parametrize("case", ["sleeve", "cup"])
def test_solid_is_converged(case):
    assert solid_hz(case, 3, 1, 0.5) == pytest.approx(solid_hz(case, 3, 1, 0.25), rel=CONVERGED)
