"""Validation of the theoretical finish and of the cutting time.

References
----------
[R] Theoretical roughness of a turned surface, cusps of the nose radius r at feed f:
    peak-to-valley r - sqrt(r^2 - f^2/4) ~ f^2/(8 r); Ra ~ f^2/(32 r) (common rounding),
    f^2/(18 sqrt(3) r) for the parabolic cusp. Forms seen on several public pages; in
    G. Boothroyd, W. A. Knight, *Fundamentals of Machining and Machine Tools* (attribution
    from memory). Check values worked out by hand from these formulas ([D]), including the numerical Ra of the true circular cusp at f 0.2, r 0.8: 1.609 um.
[T] Cutting time: n = 1000 vc / (pi D), t = L / (f n) ([C], the definition of spindle speed and feed rate);
    constant-surface-speed facing with a spindle limit n_max,
    t = pi (r_o^2 - r_c^2) / (1000 vc f) + r_c / (f n_max), r_c = 1000 vc / (2 pi n_max)
    ([D] there, from dt = dr / (f n(r))), with hand-worked check numbers.

Each check shows the hand-worked value, the formula re-evaluated here, and ours.
"""

import math

import numpy as np
import pytest

from deflect.mechanics.cutting import cutting_time_s, spindle_speed_rpm, theoretical_roughness

ROUND_OFF = 1e-12
SERIES_REMAINDER = 0.01  # next term of the series is (f/r)^2 ~ 4e-3 times smaller at f/r <= 1/16
QUADRATURE = 1e-7   # 400 001-point trapezoid of a profile with kinks at the mean-line crossings


def printed(decimals: int) -> float:
    """Tolerance of a value printed to `decimals` places: half a unit of the last digit."""
    return 0.5 * 10.0**-decimals * (1.0 + 1e-9)


# f mm, r mm, Rz f^2/8r, Rz exact, Ra f^2/32r, Ra f^2/(18 sqrt3 r)  (um, as printed)
ROUGHNESS_ROWS = [
    (0.10, 0.4, 3.125, 3.137, 0.781, 0.802),
    (0.20, 0.8, 6.250, 6.275, 1.563, 1.604),
    (0.15, 0.8, 3.516, 3.523, 0.879, 0.902),
    (0.30, 1.2, 9.375, 9.412, 2.344, 2.406),
]


def ra_by_quadrature(f: float, r: float, points: int = 400001) -> float:
    """Ra of the circular cusp by brute force: profile, mean line, mean |deviation| (um)."""
    x = np.linspace(-f / 2.0, f / 2.0, points)
    profile = r - np.sqrt(r * r - x * x)
    step = x[1] - x[0]

    def trapezoid(y):
        return step * (np.sum(y) - (y[0] + y[-1]) / 2.0)

    mean_line = trapezoid(profile) / f
    return 1000.0 * trapezoid(np.abs(profile - mean_line)) / f


@pytest.mark.parametrize("f, r, rz_approx, rz_exact, ra_32, ra_parabolic", ROUGHNESS_ROWS)
def test_peak_to_valley(f, r, rz_approx, rz_exact, ra_32, ra_parabolic):
    closed_form = 1000.0 * (r - math.sqrt(r * r - f * f / 4.0))
    ra, rz = theoretical_roughness(f, r)
    assert rz == pytest.approx(closed_form, rel=ROUND_OFF)
    assert rz == pytest.approx(rz_exact, abs=printed(3))
    assert 1000.0 * f * f / (8.0 * r) == pytest.approx(rz_approx, abs=printed(3))
    assert rz > 1000.0 * f * f / (8.0 * r)  # the circle lies above its parabola


@pytest.mark.parametrize("f, r, rz_approx, rz_exact, ra_32, ra_parabolic", ROUGHNESS_ROWS)
def test_arithmetic_mean_roughness(f, r, rz_approx, rz_exact, ra_32, ra_parabolic):
    ra, _ = theoretical_roughness(f, r)
    assert ra == pytest.approx(ra_by_quadrature(f, r), rel=QUADRATURE)
    # the hand-worked approximate columns, re-evaluated
    assert 1000.0 * f * f / (32.0 * r) == pytest.approx(ra_32, abs=printed(3))
    parabolic = 1000.0 * f * f / (18.0 * math.sqrt(3.0) * r)
    assert parabolic == pytest.approx(ra_parabolic, abs=printed(3))
    # the exact circular cusp lies a little above the parabolic one at these f / r <= 0.25
    assert 0.0 < ra / parabolic - 1.0 < 0.005


def test_ra_of_the_circular_cusp_against_the_sheet():
    ra, _ = theoretical_roughness(0.2, 0.8)
    assert ra == pytest.approx(1.609, abs=printed(3))
    assert 0.2**2 / (ra / 1000.0) / 0.8 == pytest.approx(31.08, abs=printed(2))  # "f^2 / (31.08 r)"


def test_ra_tends_to_the_parabolic_cusp_at_the_derived_rate():
    # [D] derived here: the circle s = x^2/(2r) + x^4/(8 r^3) + ... perturbs the parabolic
    # cusp by delta u^4 (u = 2x/f, delta = f^2/(16 r^2)); to first order Ra grows by
    # 0.8 delta, i.e. Ra / Ra_parabolic - 1 = (f/r)^2 / 20 + O((f/r)^4).
    r = 0.8
    for f in (0.05, 0.02, 0.005):
        ra, _ = theoretical_roughness(f, r)
        parabolic = 1000.0 * f * f / (18.0 * math.sqrt(3.0) * r)
        excess = (ra / parabolic - 1.0) / (f / r) ** 2
        assert excess == pytest.approx(1.0 / 20.0, rel=SERIES_REMAINDER)


# ---------------------------------------------------------------------------------------
def test_longitudinal_pass():
    # D 60 mm, L 40 mm, f 0.15 mm, vc 200 m/min: n = 1061.03 /min, t = 0.25133 min = 15.08 s.
    n_closed = 1000.0 * 200.0 / (math.pi * 60.0)
    t_closed = 60.0 * 40.0 / (0.15 * n_closed)
    n = spindle_speed_rpm(200.0, 60.0, 6000.0)
    t = cutting_time_s([30.0, 30.0], [40.0, 0.0], 0.15, 200.0, 6000.0)
    assert n == pytest.approx(n_closed, rel=ROUND_OFF) and n == pytest.approx(1061.03, abs=printed(2))
    assert t == pytest.approx(t_closed, rel=ROUND_OFF)
    assert t / 60.0 == pytest.approx(0.25133, abs=printed(5))
    assert t == pytest.approx(15.08, abs=printed(2))


def test_css_facing_to_the_centre_with_the_spindle_limit():
    # D 80 -> 0, vc 200 m/min, f 0.1 mm, n_max 4000 /min: D_c = 15.915 mm, CSS part
    # 0.24138 min, clamped part 0.019894 min, total 15.68 s.
    vc, f, n_max, r_o = 200.0, 0.1, 4000.0, 40.0
    r_c = 1000.0 * vc / (2.0 * math.pi * n_max)
    css_closed = math.pi * (r_o**2 - r_c**2) / (1000.0 * vc * f)
    clamped_closed = r_c / (f * n_max)
    assert 2.0 * r_c == pytest.approx(15.915, abs=printed(3))
    assert css_closed == pytest.approx(0.24138, abs=printed(5))
    assert clamped_closed == pytest.approx(0.019894, abs=printed(6))

    css = cutting_time_s([r_o, r_c], [0.0, 0.0], f, vc, n_max)
    clamped = cutting_time_s([r_c, 0.0], [0.0, 0.0], f, vc, n_max)
    total = cutting_time_s([r_o, 0.0], [0.0, 0.0], f, vc, n_max)
    assert css == pytest.approx(60.0 * css_closed, rel=ROUND_OFF)
    assert clamped == pytest.approx(60.0 * clamped_closed, rel=ROUND_OFF)
    assert total == pytest.approx(css + clamped, rel=ROUND_OFF)
    assert total == pytest.approx(15.68, abs=printed(2))
    # the spindle speed where the clamp takes over
    assert spindle_speed_rpm(vc, 2.0 * r_c, n_max) == pytest.approx(n_max, rel=ROUND_OFF)
