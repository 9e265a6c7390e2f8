"""The consistent mass, the modes and the wall's frequency response (deflect.mechanics.modes).

Expected values: the mass and rotary inertia of a cylinder in closed form; the response against a direct solve
of (K_n - w^2 M) u = f summed over the harmonics (no modes), which the modal sum with its residual must
approach below the first resonance; the static compliance at w = 0.
"""

import math

import numpy as np
import pytest

from deflect.errors import ModelError
from deflect.geometry.boxes import HeldBox
from deflect.geometry.section import section_from_outline
from deflect.mechanics.compliance import Patch, WallModel
from deflect.mechanics.modes import WallDynamics, bar_frf, bar_natural_hz, harmonic_modes, wall_modes
from deflect.mechanics.shell.harmonic import HarmonicShell, harmonic_weights, mass_matrix
from deflect.mechanics.shell.mesh import ShellMesh

E_MPA, NU, DENSITY_G_CM3 = 68900.0, 0.33, 2.70
RHO = DENSITY_G_CM3 * 1e-9
SLEEVE = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]
HELD = [HeldBox(r_range=(0.0, 100.0), z_range=(0.0, 5.0), key="held[0]")]


def straight_wall(radius, thickness, length, n_el=8, held=False):
    z = np.linspace(0.0, length, n_el + 1)
    nodes = np.stack([np.full_like(z, radius), z], axis=1)
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), bool)
    if held:
        fixed[0] = True
    return ShellMesh(nodes, np.full(n_el + 1, thickness), elements, fixed)


def test_mass_of_a_cylinder_translating():
    """Every node moved 1 mm along z: u^T M u = rho R h L per radian (the wall's mass over 2 pi), exactly."""
    mesh = straight_wall(20.0, 1.5, 40.0)
    u = np.zeros((mesh.n_nodes, 6))
    u[:, 2] = 1.0
    mass = mass_matrix(mesh, RHO)
    assert u.ravel() @ mass @ u.ravel() == pytest.approx(RHO * 20.0 * 1.5 * 40.0, rel=1e-12)


def test_rotary_inertia_of_the_wall_fibre():
    """The fibres turned by 1 rad about the circumference (w_theta = 1), no mid-surface motion: the kinetic
    energy's form is rho int zeta^2 r dzeta dz = rho L (R h^3 / 12) per radian (the fibre's rotary inertia at
    the true radius r = R + zeta, whose odd term cancels)."""
    radius, h, length = 20.0, 1.5, 40.0
    mesh = straight_wall(radius, h, length)
    u = np.zeros((mesh.n_nodes, 6))
    u[:, 4] = 1.0
    assert u.ravel() @ mass_matrix(mesh, RHO) @ u.ravel() == pytest.approx(RHO * length * radius * h**3 / 12,
                                                                           rel=1e-12)


def test_drilling_rotation_carries_no_mass():
    mesh = straight_wall(20.0, 1.5, 40.0)
    u = np.zeros((mesh.n_nodes, 6))
    u[:, 3] = 1.0    # on a cylinder the rotation about the wall normal (r) is the drilling rotation
    assert u.ravel() @ mass_matrix(mesh, RHO) @ u.ravel() == pytest.approx(0.0, abs=1e-30)


def test_an_unheld_part_is_refused():
    mesh = straight_wall(20.0, 1.5, 40.0)
    shell = HarmonicShell(mesh, E_MPA, NU)
    with pytest.raises(ModelError, match="not held"):
        harmonic_modes(shell, mass_matrix(mesh, RHO), 1, 3)


def test_modes_are_mass_normalised_and_sorted():
    mesh = straight_wall(20.0, 1.0, 40.0, n_el=40, held=True)
    shell, mass = HarmonicShell(mesh, E_MPA, NU), mass_matrix(mesh, RHO)
    modes = wall_modes(shell, mass)
    frequencies = [m.frequency_hz for m in modes]
    assert frequencies == sorted(frequencies)
    assert frequencies[-1] <= 6.0 * frequencies[0] * (1 + 1e-12)
    for mode in modes[:4]:
        assert mode.shape.ravel() @ mass @ mode.shape.ravel() == pytest.approx(1.0, rel=1e-9)
    # the lowest mode of a clamped-free thin tube of this length is a shell mode, not the beam (n = 1)
    assert modes[0].n >= 2


@pytest.fixture(scope="module")
def sleeve_dynamics():
    wall = WallModel(section_from_outline(SLEEVE, "part.outline"), HELD, E_MPA, NU, Patch(1.0, 2.0), 1e-3,
                     element_mm=0.5)
    return WallDynamics(wall, DENSITY_G_CM3)


def direct_response(dynamics, point, normal, frequency_hz, n_max=400):
    """G_nn(w) without modes: (K_n - w^2 M) u = f solved per harmonic, summed with the harmonic weights."""
    wall = dynamics.wall
    arclength = wall.snap(*point)[0]
    p, _ = wall.section.point_at(arclength)
    load = wall.load_at(arclength, np.asarray(p, float), np.asarray(normal, float))
    f = wall.shell.load_vectors(load, np.array([-np.asarray(normal, float), [-normal[1], normal[0]]]))[:, 0]
    omega2 = (2 * math.pi * frequency_hz) ** 2
    total = 0.0
    for n in range(n_max + 1):
        free = ~wall.shell.fixed_mask(n).ravel()
        k = (wall.shell.stiffness(n) - omega2 * dynamics.mass)[free][:, free].tocsc()
        from scipy.sparse.linalg import spsolve
        u = spsolve(k, f[free])
        total += harmonic_weights(n, load.half_angle_rad) * float(f[free] @ u)
    return total


def test_response_at_zero_frequency_is_the_static_compliance(sleeve_dynamics):
    response = sleeve_dynamics.response_at([(20.0, 38.0)], [np.array([1.0, 0.0])])[0]
    g0 = response.frf(np.array([0.0]), np.full(len(response.n), 0.01))[0]
    assert g0.real == pytest.approx(response.static_mm_per_n, rel=1e-12)


@pytest.mark.parametrize("share", [0.3, 0.7, 1.3, 2.0])
def test_modal_sum_with_residual_against_direct_solution(sleeve_dynamics, share):
    """Below and above the first resonances (no damping): the kept modes plus the static residual of the others
    against the direct solution of every harmonic, within 1 % of the static compliance (the scale of the
    harmonics' terms; above the first resonances they cancel in part, so the sum itself is small). The residual
    treats the modes beyond the span (6 times the lowest) as static, an error that grows as (w / w_mode)^2:
    measured 0.06 %, 0.2 % and 0.55 % of the static compliance at 0.7, 1.3 and 2 times the first frequency."""
    first = sleeve_dynamics.modes[0].frequency_hz
    frequency = share * first
    response = sleeve_dynamics.response_at([(20.0, 38.0)], [np.array([1.0, 0.0])])[0]
    modal = response.frf(np.array([frequency]), np.zeros(len(response.n)))[0, 0, 0].real
    direct = direct_response(sleeve_dynamics, (20.0, 38.0), [1.0, 0.0], frequency)
    assert abs(modal - direct) < 0.01 * response.static_mm_per_n[0, 0]


def test_tap_test_frequency_moves_the_resonance(sleeve_dynamics):
    """A measured frequency replaces the model's: the peak of the mode that dominates at the point follows it."""
    response = sleeve_dynamics.response_at([(20.0, 38.0)], [np.array([1.0, 0.0])])[0]
    damping = np.full(len(response.n), 0.01)
    strongest = int(np.argmax(response.residues[:, 0, 0] / response.frequency_hz**2))
    natural = response.frequency_hz.copy()
    natural[strongest] *= 1.1
    f = np.linspace(1.05, 1.15, 4001) * response.frequency_hz[strongest]
    moved = np.abs(response.frf(f, damping, natural)[:, 0, 0])
    assert f[np.argmax(moved)] == pytest.approx(natural[strongest], rel=2e-3)


def test_boring_bar_as_a_cantilever_mode():
    """Static compliance L^3 / (3 E I) at w = 0 and the first bending frequency of Euler-Bernoulli's cantilever,
    1.8751^2 / (2 pi L^2) sqrt(E I / (rho A)) (Blevins 1979, table 8-1), re-evaluated for a 20 mm bar 80 mm out."""
    from deflect.job.tooling import BoringBar
    bar = BoringBar(diameter_mm=20.0, overhang_mm=80.0, E_mpa=210000.0)
    inertia, area = math.pi * 20.0**4 / 64, math.pi * 20.0**2 / 4
    closed = 1.8751040687**2 / (2 * math.pi * 80.0**2) * math.sqrt(210000.0 * inertia / (7.85e-9 * area))
    assert bar_natural_hz(bar) == pytest.approx(closed, rel=1e-12)
    assert bar_frf(bar, np.array([0.0]), 0.02)[0].real == pytest.approx(80.0**3 / (3 * 210000.0 * inertia), rel=1e-12)
