"""Convergence of the shell model: the rate under mesh refinement, and the harmonic series.

Mesh: two-node elements with linear u and omega and reduced shear integration should converge at second order in
the element length h (nodal deflections). The observed order comes from three successive halvings,
p = log2((w_h - w_h/2) / (w_h/2 - w_h/4)), which needs no exact solution; the Richardson limit is then compared
with the closed form of the same (shear-flexible) theory.

Harmonic series: `compliance` stops when the estimated tail term_n n / 2 (with the patch factor's envelope) falls
below tol; this assumes the weighted terms decay like n^-3 or faster. Checked here on a cup-like wall: the decay,
the estimate against the true remainder, and that halving tol moves the result by less than tol.
"""

import numpy as np
import pytest
from scipy.integrate import quad

from deflect.mechanics.shell.harmonic import SHEAR_FACTOR, HarmonicShell, ShellLoad, compliance, harmonic_weights
from deflect.mechanics.shell.mesh import ShellMesh

E_MPA, NU = 70000.0, 0.33
ORDER_BAND = (1.8, 2.2)  # observed order of a second-order method at the finest triple
LIMIT_TOL = 2e-3  # Richardson limit against the shear-flexible closed form (thick-shell terms ~ t/R remain)


def observed_order(values):
    w1, w2, w3 = values[-3:]
    return np.log2((w1 - w2) / (w2 - w3))


def ring_load_deflection(n_el, radius=50.0, t=1.0):
    """Long cylinder (30/beta each way of the load), ring load 1 N/mm at mid-length, uniform mesh, n = 0."""
    beta = (3 * (1 - NU**2) / (radius * t) ** 2) ** 0.25
    z = np.linspace(-30 / beta, 30 / beta, n_el + 1)
    nodes = np.stack([np.full_like(z, radius), z], axis=1)
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), dtype=bool)
    fixed[n_el // 2, 2] = True
    turning = np.zeros_like(fixed)
    turning[n_el // 2, 1] = True
    shell = HarmonicShell(ShellMesh(nodes, np.full(n_el + 1, t), elements, fixed), E_MPA, NU, extra_fixed={0: turning})
    load = np.zeros((n_el + 1, 6))
    load[n_el // 2, 0] = radius
    return shell.displacement(0, load.reshape(-1, 1))[n_el // 2, 0, 0]


def shear_flexible_ring_load(radius=50.0, t=1.0):
    """Timoshenko & Woinowsky-Krieger 1959 section 114 (beam on elastic foundation) with shear stiffness k G t:
    (1/pi) int dxi / (E t / R^2 + D xi^4 / (1 + D xi^2 / (k G t)))."""
    d = E_MPA * t**3 / (12 * (1 - NU**2))
    s = SHEAR_FACTOR * E_MPA / (2 * (1 + NU)) * t
    return quad(lambda x: 1 / (E_MPA * t / radius**2 + d * x**4 / (1 + d * x**2 / s)), 0, np.inf)[0] / np.pi


def test_ring_load_converges_at_second_order():
    sizes = [100, 200, 400, 800]
    values = [ring_load_deflection(n) for n in sizes]
    order = observed_order(values)
    limit = values[-1] + (values[-1] - values[-2]) / (2**order - 1)
    closed = shear_flexible_ring_load()
    print(f"ring load: {values}, observed order {order:.3f}, limit {limit:.6e}, closed form {closed:.6e}")
    assert ORDER_BAND[0] < order < ORDER_BAND[1]
    assert limit == pytest.approx(closed, rel=LIMIT_TOL)
    errors = np.abs(np.array(values) - limit)
    slope = np.polyfit(np.log(1.0 / np.array(sizes)), np.log(errors), 1)[0]
    assert ORDER_BAND[0] < slope < ORDER_BAND[1]


def test_faceted_hemisphere_converges_at_second_order():
    """n = 2 term of the pinched hemisphere (MacNeal & Harder 1985): a curved meridian of straight facets."""
    values = []
    for n_el in (80, 160, 320):
        phi = np.linspace(np.radians(18), np.pi / 2, n_el + 1)
        nodes = np.stack([10 * np.sin(phi), 10 * np.cos(phi)], axis=1)
        elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
        mesh = ShellMesh(nodes, np.full(n_el + 1, 0.04), elements, np.zeros((n_el + 1, 6), dtype=bool))
        load = ShellLoad(np.array([n_el - 1]), np.array([1.0]), np.array([1.0]), np.zeros((1, 2)), 0.0)
        values.append(HarmonicShell(mesh, 6.825e7, 0.3).harmonic_terms([load], np.eye(2)[None], [2])[0, 0, 0, 0])
    assert ORDER_BAND[0] < observed_order(values) < ORDER_BAND[1]


def cup_wall():
    """Wall R 24.5, t 1, 40 high, clamped at z = 0, elements 0.5 mm; 2 mm x 2 mm patches at mid-height and near
    the rim, on the outside, pushing inward."""
    z = np.linspace(0.0, 40.0, 81)
    nodes = np.stack([np.full_like(z, 24.5), z], axis=1)
    elements = np.stack([np.arange(80), np.arange(1, 81)], axis=1)
    fixed = np.zeros((81, 6), dtype=bool)
    fixed[0] = True
    shell = HarmonicShell(ShellMesh(nodes, np.ones(81), elements, fixed), E_MPA, NU)
    loads = []
    for z0 in (20.0, 38.0):
        s = z0 + (np.arange(8) + 0.5) / 8 * 2.0 - 1.0
        element = (s // 0.5).astype(int)
        loads.append(ShellLoad(element, s / 0.5 - element, np.full(8, 1 / 8), np.tile([[0.5, 0.0]], (8, 1)), 1 / 25.0))
    directions = np.array([[[-1.0, 0.0], [0.0, 1.0]]] * 2)
    return shell, loads, directions


def test_weighted_terms_decay_like_n_cubed_or_faster():
    shell, loads, directions = cup_wall()
    n = np.arange(32, 513)
    raw = np.abs(shell.harmonic_terms(loads, directions, n))
    for p, load in enumerate(loads):
        envelope = np.minimum(1.0, 1.0 / (n * load.half_angle_rad)) ** 2 / np.pi
        scaled = raw[:, p, [0, 1, 2], [0, 1, 2]] * (envelope * n**3)[:, None]  # (n, 3) diagonal entries
        octaves = [scaled[(n >= lo) & (n < 2 * lo)].max(axis=0) for lo in (32, 64, 128, 256)]
        for earlier, later in zip(octaves, octaves[1:]):
            assert np.all(later <= earlier)


def test_tail_estimate_bounds_the_true_remainder():
    shell, loads, directions = cup_wall()
    tol = 1e-3
    c, n_stop = compliance(shell, loads, directions, tol=tol)
    n = np.arange(0, 1001)
    terms = shell.harmonic_terms(loads, directions, n)
    for p, load in enumerate(loads):
        weighted = harmonic_weights(n, load.half_angle_rad)[:, None, None] * terms[:, p]
        _, n_p = compliance(shell, [load], directions[p:p + 1], tol=tol)
        partial, remainder = weighted[: n_p + 1].sum(axis=0), weighted[n_p + 1:].sum(axis=0)
        envelope = min(1.0, 1.0 / (n_p * load.half_angle_rad)) ** 2 / np.pi
        estimate = np.abs(terms[n_p, p]) * envelope * n_p / 2
        diag = np.abs(np.diagonal(partial))
        print(f"load {p}: stopped at n {n_p}; remainder / sum {np.abs(remainder).max() / diag.min():.2e}")
        assert np.allclose(c[p], partial, rtol=1e-12, atol=1e-20)
        assert np.all(np.abs(np.diagonal(remainder)) <= np.diagonal(estimate))
        assert np.all(np.abs(np.diagonal(remainder)) < tol * diag)
        assert np.all(np.abs(remainder) < tol * np.sqrt(np.outer(diag, diag)))  # off-diagonal: Cauchy-Schwarz scale


def test_halving_tol_moves_the_result_less_than_tol():
    shell, loads, directions = cup_wall()
    for tol in (1e-2, 1e-3):
        coarse, _ = compliance(shell, loads, directions, tol=tol)
        fine, _ = compliance(shell, loads, directions, tol=tol / 2)
        diag = np.abs(np.diagonal(fine, axis1=1, axis2=2))
        assert np.all(np.abs(np.diagonal(coarse - fine, axis1=1, axis2=2)) < tol * diag)
