"""A long tube squeezed all round (a collet): the n = 0 term of the grip.

References:
* G. Lame's thick cylinder, open ends (S. Timoshenko, J. N. Goodier, Theory of Elasticity, 3rd ed. 1970,
  art. 28; the plane-stress solution with sigma_z = 0 is exact for a free tube under a uniform pressure over
  its whole length): external pressure p on the outer radius b, inner radius a,
  u(b) = -(p b / E) ((b^2 + a^2) / (b^2 - a^2) - nu),  u(a) = -2 p a b^2 / (E (b^2 - a^2)).
  Thin-wall limit: u = -p b R / (E t).
* A band of pressure c wide on a long cylinder: the ring-load solution of S. Timoshenko,
  S. Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, section 114 (formulas from memory,
  cross-checked in test_timoshenko_shells.py), w(x) = q R^2 beta / (2 E t) e^(-beta x)(cos beta x + sin beta x) per unit ring
  load, integrated over the band: w(0) = q R^2 / (E t) (1 - e^(-beta c/2) cos(beta c/2)), q the pressure on
  the mid-surface, beta^4 = 3 (1 - nu^2) / (R t)^2.
The grip goes through `deflect.mechanics.clamping.released_deviation` (the public entry the prediction will use):
released deviation along the outward normal = -(displacement in the chuck).

R/t = 50: the shell has no through-thickness strain, so at R/t = 25 it misses Lame's OD by 1.05 % and the
band formula by 1.7 % (measured); at R/t = 50 by 0.5 % and 0.4 %.
"""

import math
from types import SimpleNamespace

import numpy as np
import pytest

from deflect.geometry.section import section_from_outline
from deflect.job.holding import holding_from_table
from deflect.job.materials import Material
from deflect.mechanics.clamping import released_deviation

E_MPA, NU = 70000.0, 0.3
RADIUS, WALL, LENGTH = 50.0, 1.0, 100.0      # 1 / beta = 3.9 mm: the ends are 13 decay lengths from the middle
FORCE_N = 1000.0
BAND_MM = 4.0
TUBE_TOL = 0.01        # the bound; measured +0.48 % (OD), -0.10 % (bore), band +0.39 %
INNER, OUTER = RADIUS - WALL / 2, RADIUS + WALL / 2
POINTS = np.array([[OUTER, LENGTH / 2], [INNER, LENGTH / 2]])   # mid-length, OD and bore
NORMALS = np.array([[1.0, 0.0], [-1.0, 0.0]])


def tube_job():
    section = section_from_outline([[INNER, 0.0], [OUTER, 0.0], [OUTER, LENGTH], [INNER, LENGTH]])
    return SimpleNamespace(section=section, material=Material(name="test", E_mpa=E_MPA, nu=NU, density_g_cm3=2.7))


def radial_in_chuck(z_range):
    """Radial displacement in the chuck at the OD and the bore [mm] (released deviation = -u_n)."""
    holding = holding_from_table({"kind": "collet", "z": list(z_range), "force": FORCE_N})
    released = released_deviation(tube_job(), holding, POINTS, NORMALS)
    assert np.all(released.roundness_mm == 0.0)     # all round: no lobes
    u_normal = -released.mean_mm
    return u_normal * NORMALS[:, 0]


def test_tube_under_uniform_external_pressure():
    p = FORCE_N / (2 * math.pi * OUTER * LENGTH)
    lame_b = -(p * OUTER / E_MPA) * ((OUTER**2 + INNER**2) / (OUTER**2 - INNER**2) - NU)
    lame_a = -2 * p * INNER * OUTER**2 / (E_MPA * (OUTER**2 - INNER**2))
    thin = -p * OUTER * RADIUS / (E_MPA * WALL)
    ours_b, ours_a = radial_in_chuck((0.0, LENGTH))
    print(f"OD: Lame {lame_b:.6e}, thin wall {thin:.6e}, ours {ours_b:.6e} ({100 * (ours_b / lame_b - 1):+.2f} %); "
          f"bore: Lame {lame_a:.6e}, ours {ours_a:.6e} ({100 * (ours_a / lame_a - 1):+.2f} %) [mm]")
    assert ours_b == pytest.approx(lame_b, rel=TUBE_TOL)
    assert ours_a == pytest.approx(lame_a, rel=TUBE_TOL)


def test_long_tube_under_a_band_of_pressure():
    beta = (3 * (1 - NU**2) / (RADIUS * WALL) ** 2) ** 0.25
    q = FORCE_N / (2 * math.pi * OUTER * BAND_MM) * OUTER / RADIUS    # on the mid-surface
    book = -q * RADIUS**2 / (E_MPA * WALL) * (1 - math.exp(-beta * BAND_MM / 2) * math.cos(beta * BAND_MM / 2))
    ours_b, ours_a = radial_in_chuck((LENGTH / 2 - BAND_MM / 2, LENGTH / 2 + BAND_MM / 2))
    print(f"band: Timoshenko {book:.6e}, ours {ours_b:.6e} ({100 * (ours_b / book - 1):+.2f} %) [mm]")
    assert ours_b == pytest.approx(book, rel=TUBE_TOL)
    assert ours_a == pytest.approx(ours_b, rel=1e-9)    # the rigid wall fibre: no squeeze across the wall
