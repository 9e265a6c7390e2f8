"""Unit tests of deflect.mechanics.shell.harmonic: rigid-body modes, spurious modes, symmetry, the drilling tie, unheld
parts, the two solution paths, and a branched mesh."""

import numpy as np
import pytest

from deflect.errors import ModelError
from deflect.mechanics.shell.harmonic import HarmonicShell, ShellLoad, compliance, harmonic_weights
from deflect.mechanics.shell.mesh import ShellMesh

E_MPA, NU = 70000.0, 0.33
RIGID_TOL = 1e-13  # strain energy of a rigid motion / (largest stiffness * |q|^2): round-off only
ZERO_MODE_TOL = 1e-10  # eigenvalue / largest eigenvalue below which a mode counts as zero energy
DRILLING_TOL = 2e-4  # relative change of a compliance when the drilling tie modulus moves sqrt(10)x


def line_mesh(p0, p1, n_el, thickness=1.0, fixed_nodes=()):
    t = np.linspace(0.0, 1.0, n_el + 1)[:, None]
    nodes = np.asarray(p0, float) * (1 - t) + np.asarray(p1, float) * t
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), dtype=bool)
    fixed[list(fixed_nodes)] = True
    return ShellMesh(nodes, np.full(n_el + 1, thickness), elements, fixed)


def arc_mesh(radius, phi0, phi1, n_el, thickness, fixed_nodes=()):
    phi = np.linspace(phi0, phi1, n_el + 1)
    nodes = np.stack([radius * np.sin(phi), radius * np.cos(phi)], axis=1)
    elements = np.stack([np.arange(n_el), np.arange(1, n_el + 1)], axis=1)
    fixed = np.zeros((n_el + 1, 6), dtype=bool)
    fixed[list(fixed_nodes)] = True
    return ShellMesh(nodes, np.full(n_el + 1, thickness), elements, fixed)


def node_load(element, xi, half_angle=0.0):
    return ShellLoad(np.array([element]), np.array([xi]), np.array([1.0]), np.zeros((1, 2)), half_angle)


RADIAL_AXIAL = np.array([[1.0, 0.0], [0.0, 1.0]])


def rigid_modes(mesh):
    """{name: (n, (N, 6) amplitudes)} of the rigid motions of harmonics 0 and 1 (symmetric set)."""
    r, z = mesh.nodes_rz[:, 0], mesh.nodes_rz[:, 1]
    one, zero = np.ones_like(r), np.zeros_like(r)
    return {
        "axial translation": (0, np.stack([zero, zero, one, zero, zero, zero], axis=1)),
        "torsion": (0, np.stack([zero, r, zero, zero, zero, one], axis=1)),
        "lateral translation": (1, np.stack([one, -one, zero, zero, zero, zero], axis=1)),
        "tilt": (1, np.stack([z, -z, -r, one, one, zero], axis=1)),
    }


CONE = line_mesh((10.0, 0.0), (14.0, 8.0), 6, thickness=0.5)
CYLINDER = line_mesh((20.0, 0.0), (20.0, 10.0), 5, thickness=1.0)


@pytest.mark.parametrize("mesh", [CONE, CYLINDER], ids=["cone", "cylinder"])
@pytest.mark.parametrize("mode", ["axial translation", "torsion", "lateral translation", "tilt"])
def test_rigid_body_modes_have_zero_strain_energy(mesh, mode):
    n, amplitudes = rigid_modes(mesh)[mode]
    k = HarmonicShell(mesh, E_MPA, NU).stiffness(n)
    q = amplitudes.ravel()
    assert abs(q @ (k @ q)) <= RIGID_TOL * abs(k).max() * (q @ q)


@pytest.mark.parametrize("mesh", [CONE, CYLINDER, arc_mesh(10.0, 0.3, 1.5, 8, 0.1)], ids=["cone", "cyl", "arc"])
def test_free_shell_has_only_the_rigid_zero_modes(mesh):
    """n = 0 and 1 have exactly two rigid modes each (symmetric set incl. torsion); n >= 2 none."""
    shell = HarmonicShell(mesh, E_MPA, NU)
    for n in range(6):
        eig = np.linalg.eigvalsh(shell.stiffness(n).toarray())
        zeros = int(np.sum(eig < ZERO_MODE_TOL * eig.max()))
        assert zeros == (2 if n <= 1 else 0), (n, eig[:4] / eig.max())


def test_held_shell_has_no_zero_energy_mode():
    mesh = line_mesh((10.0, 0.0), (14.0, 8.0), 6, thickness=0.5, fixed_nodes=[0])
    shell = HarmonicShell(mesh, E_MPA, NU)
    free = ~mesh.fixed.ravel()
    for n in range(6):
        eig = np.linalg.eigvalsh(shell.stiffness(n).toarray()[np.ix_(free, free)])
        assert eig.min() > ZERO_MODE_TOL * eig.max(), n


@pytest.mark.parametrize("n", [0, 1, 3, 40])
def test_stiffness_is_symmetric(n):
    k = HarmonicShell(CONE, E_MPA, NU).stiffness(n)
    assert abs(k - k.T).max() <= 1e-14 * abs(k).max()


def sphere_patch(n_el):
    """A faceted sphere R 10, t 0.1 (held at its upper edge) under a 0.2 mm patch at polar angle 1.2 rad."""
    mesh = arc_mesh(10.0, 0.3, 1.5, n_el, 0.1, fixed_nodes=[0])
    phi = np.linspace(0.3, 1.5, n_el + 1)
    s = 1.2 + np.linspace(-0.01, 0.01, 4)
    element = np.searchsorted(phi, s) - 1
    xi = (s - phi[element]) / (phi[element + 1] - phi[element])
    return mesh, ShellLoad(element, xi, np.full(4, 0.25), np.zeros((4, 2)), 0.1)


def drilling_spread(mesh, load, betas=(0.1 / np.sqrt(10.0), 0.1, 0.1 * np.sqrt(10.0))):
    values = [compliance(HarmonicShell(mesh, E_MPA, NU, drilling_penalty=b), [load], RADIAL_AXIAL[None])[0][0, 0, 0]
              for b in betas]
    return max(values) / min(values) - 1.0


def test_drilling_tie_modulus_barely_matters():
    """The drilling tie modulus beta G moved a factor sqrt(10) either way from the default (0.1 G).

    Measured: cone (straight meridian, 40 elements) 1.1e-4; faceted sphere 6e-4 at 60 elements, 1.9e-4 at 240
    (the tie is a discretisation device: its influence fades as the facets' kink angles shrink)."""
    cone = line_mesh((10.0, 0.0), (14.0, 8.0), 40, 0.5, fixed_nodes=[0])
    cone_load = ShellLoad(np.array([30, 31]), np.array([0.5, 0.5]), np.array([0.5, 0.5]), np.zeros((2, 2)), 0.1)
    assert drilling_spread(cone, cone_load) < DRILLING_TOL
    coarse, fine = drilling_spread(*sphere_patch(60)), drilling_spread(*sphere_patch(240))
    assert fine < DRILLING_TOL
    assert fine < 0.5 * coarse


def test_unheld_shell_raises_model_error_at_n0_and_n1():
    shell = HarmonicShell(CYLINDER, E_MPA, NU)
    load = node_load(2, 0.0)
    for n in (0, 1):
        with pytest.raises(ModelError, match="not held: it would move as a rigid body"):
            shell.harmonic_terms([load], RADIAL_AXIAL[None], [n])
        with pytest.raises(ModelError, match="not held"):
            shell.displacement(n, shell.load_vectors(load, RADIAL_AXIAL))
    with pytest.raises(ModelError, match="not held"):
        compliance(shell, [load], RADIAL_AXIAL[None])
    # n >= 2 has no rigid modes: an unheld shell is fine there
    assert shell.harmonic_terms([load], RADIAL_AXIAL[None], [2, 3])[:, 0, 0, 0].min() > 0.0


def test_partly_held_shell_names_the_free_motion():
    """Only the axial DOF held at one node: turning about the axis (n = 0) and tilt (n = 1) stay free."""
    fixed = np.zeros((6, 6), dtype=bool)
    fixed[0, 2] = True
    shell = HarmonicShell(ShellMesh(CYLINDER.nodes_rz, CYLINDER.thickness_mm, CYLINDER.elements, fixed), E_MPA, NU)
    with pytest.raises(ModelError, match="turning about the spin axis"):
        shell.harmonic_terms([node_load(2, 0.0)], RADIAL_AXIAL[None], [0])
    fixed[:] = False
    fixed[0, 0] = True  # u_r on one ring stops the shift but not the tilt about that ring (at z = 0)
    shell = HarmonicShell(ShellMesh(CYLINDER.nodes_rz, CYLINDER.thickness_mm, CYLINDER.elements, fixed), E_MPA, NU)
    with pytest.raises(ModelError, match="sideways shift or tilt"):
        shell.harmonic_terms([node_load(2, 0.0)], RADIAL_AXIAL[None], [1])


def test_a_mechanism_is_a_model_error_not_a_linalg_error():
    """Two pieces joined by nothing: the held node of one piece passes the rigid-body check of the whole mesh,
    but the loose piece can still slide along the axis (n = 0): the factorisation must catch it."""
    nodes = np.array([[10.0, 0.0], [10.0, 1.0], [10.0, 2.0], [10.0, 3.0]])
    fixed = np.zeros((4, 6), dtype=bool)
    fixed[0] = True
    mesh = ShellMesh(nodes, np.ones(4), np.array([[0, 1], [2, 3]]), fixed)
    shell = HarmonicShell(mesh, E_MPA, NU)
    load = node_load(0, 1.0)
    with pytest.raises(ModelError, match="not held"):
        shell.harmonic_terms([load], RADIAL_AXIAL[None], [0])
    with pytest.raises(ModelError, match="not held"):
        shell.displacement(0, shell.load_vectors(load, RADIAL_AXIAL))


def branched_cup():
    """Wall r = 20 from z = -5 (skirt) to z = 30, a 2 mm bottom plate at z = 0 from the axis to the wall; the
    wall, the skirt and the plate meet at one node. Held at the skirt's lower end."""
    skirt = np.stack([np.full(6, 20.0), np.linspace(-5.0, 0.0, 6)], axis=1)
    wall = np.stack([np.full(31, 20.0), np.linspace(0.0, 30.0, 31)], axis=1)[1:]
    plate = np.stack([np.linspace(0.0, 20.0, 21), np.zeros(21)], axis=1)[:-1]
    nodes = np.r_[skirt, wall, plate]
    junction = 5
    chain = lambda idx: np.stack([idx[:-1], idx[1:]], axis=1)  # noqa: E731
    elements = np.r_[chain(np.arange(6)), chain(np.r_[junction, np.arange(6, 36)]),
                     chain(np.r_[np.arange(36, 56), junction])]
    thickness = np.r_[np.full(36, 1.0), np.full(20, 2.0)]
    fixed = np.zeros((len(nodes), 6), dtype=bool)
    fixed[0] = True
    return ShellMesh(nodes, thickness, elements, fixed)


def test_branched_mesh_solves_and_the_rim_is_more_compliant():
    mesh = branched_cup()
    shell = HarmonicShell(mesh, E_MPA, NU)
    rim = ShellLoad(np.array([34]), np.array([1.0]), np.array([1.0]), np.array([[0.5, 0.0]]), 0.05)
    low = ShellLoad(np.array([6]), np.array([1.0]), np.array([1.0]), np.array([[0.5, 0.0]]), 0.05)
    inward = np.array([[[-1.0, 0.0], [0.0, 1.0]]] * 2)
    c, n_used = compliance(shell, [rim, low], inward)
    assert c[0, 0, 0] > 10.0 * c[1, 0, 0] > 0.0
    assert n_used >= 4
    for p in range(2):
        assert np.all(np.linalg.eigvalsh(c[p]) > 0.0)  # a compliance is positive definite


@pytest.mark.parametrize("n", [0, 1, 2, 7, 60])
def test_selected_inverse_matches_banded_cholesky(n):
    """harmonic_terms (block selected inversion) against displacement (banded Cholesky), branched mesh."""
    mesh = branched_cup()
    extra = np.zeros_like(mesh.fixed)
    shell = HarmonicShell(mesh, E_MPA, NU, extra_fixed={7: extra})
    loads = [ShellLoad(np.array([e, e + 1]), np.array([0.3, 0.6]), np.array([0.4, 0.6]),
                       np.array([[0.5, 0.0], [0.5, 0.1]]), 0.1) for e in (3, 12, 33, 40, 53)]
    directions = np.array([[[-1.0, 0.0], [0.0, 1.0]]] * len(loads))
    terms = shell.harmonic_terms(loads, directions, [n])[0]
    for p, load in enumerate(loads):
        f = shell.load_vectors(load, directions[p])
        u = shell.displacement(n, f).reshape(-1, 3)
        direct = f.T @ u
        direct[0, 1] = direct[1, 0] = direct[1, 2] = direct[2, 1] = 0.0  # the two sets do not couple
        assert np.allclose(terms[p], direct, rtol=1e-9, atol=1e-12 * abs(direct).max())


def test_harmonic_weights():
    """w_0 = 1/(2 pi); w_n = (sin(n a)/(n a))^2 / pi; a point load has g_n = 1; a full ring only n = 0."""
    assert harmonic_weights(0, 0.3) == pytest.approx(1 / (2 * np.pi))
    assert harmonic_weights(5, 0.0) == pytest.approx(1 / np.pi)
    assert harmonic_weights(3, 0.2) == pytest.approx((np.sin(0.6) / 0.6) ** 2 / np.pi)
    assert harmonic_weights(np.arange(1, 6), np.pi) == pytest.approx(np.zeros(5), abs=1e-30)


def test_patch_too_small_for_the_mesh_is_a_model_error():
    mesh = line_mesh((20.0, 0.0), (20.0, 10.0), 20, thickness=0.2, fixed_nodes=[0])
    shell = HarmonicShell(mesh, E_MPA, NU)
    with pytest.raises(ModelError, match="did not converge"):
        compliance(shell, [node_load(19, 1.0)], RADIAL_AXIAL[None], tol=1e-3, n_max=20)


def test_load_vectors_carry_the_arm_moment():
    """Unit axial force on the outer face (arm +h/2 in r) of a vertical wall, at xi = 0.25 of element 2: force
    shares 0.75 / 0.25 on the element's nodes, moment (d x e)_theta = d_z e_r - d_r e_z = -h/2 on w_theta;
    the circumferential column carries (d x e_theta) = (-d_z, 0, d_r) on (w_r, w_theta, w_z)."""
    shell = HarmonicShell(CYLINDER, E_MPA, NU)
    load = ShellLoad(np.array([2]), np.array([0.25]), np.array([1.0]), np.array([[0.5, 0.0]]), 0.1)
    f = shell.load_vectors(load, np.array([[0.0, 1.0], [1.0, 0.0]])).reshape(6, 6, 3)  # dir0 axial, dir1 radial
    assert f[:, 2, 0].sum() == pytest.approx(1.0) and f[2, 2, 0] == pytest.approx(0.75)
    assert f[2, 4, 0] == pytest.approx(-0.75 * 0.5) and f[3, 4, 0] == pytest.approx(-0.25 * 0.5)
    assert f[:, 0, 2].sum() == pytest.approx(1.0) and np.allclose(f[:, 4, 2], 0.0)  # radial: no moment
    assert f[:, 1, 1].sum() == pytest.approx(1.0) and f[3, 5, 1] == pytest.approx(0.25 * 0.5)


def test_wide_loads_take_the_direct_path_with_the_same_answer(monkeypatch):
    """A load reaching across more levels than WIDEST_WINDOW is solved for directly; both paths agree."""
    import deflect.mechanics.shell.harmonic as harmonic

    mesh = branched_cup()
    shell = HarmonicShell(mesh, E_MPA, NU)
    element = np.arange(8, 30)
    wide = ShellLoad(element, np.full(len(element), 0.5), np.full(len(element), 1 / len(element)),
                     np.tile([[0.5, 0.0]], (len(element), 1)), 0.2)
    directions = np.array([[[-1.0, 0.0], [0.0, 1.0]]])
    n = [2, 5, 30]
    monkeypatch.setattr(harmonic, "WIDEST_WINDOW", 1000)
    selected = shell.harmonic_terms([wide], directions, n)
    monkeypatch.setattr(harmonic, "WIDEST_WINDOW", 2)
    direct = shell.harmonic_terms([wide], directions, n)
    assert np.allclose(selected, direct, rtol=1e-9, atol=1e-14 * abs(direct).max())


def test_a_loads_compliance_does_not_depend_on_the_loads_summed_with_it():
    """Each load stops on its own error estimate and sums its own tail (its patch's own extent): five loads
    summed together (the batched selected inverse) give what each gives alone (a direct solve per harmonic),
    to round-off."""
    mesh = branched_cup()
    shell = HarmonicShell(mesh, E_MPA, NU)
    loads = [ShellLoad(np.array([e, e + 1]), np.array([0.3, 0.6]), np.array([0.4, 0.6]),
                       np.array([[0.5, 0.0], [0.5, 0.1]]), a) for e, a in ((0, 0.1), (12, 0.05), (33, 0.02),
                                                                           (40, 0.2), (53, 0.08))]
    directions = np.array([[[-1.0, 0.0], [0.0, 1.0]]] * len(loads))
    together, _ = compliance(shell, loads, directions, tol=1e-3)
    for p, load in enumerate(loads):
        alone, _ = compliance(shell, [load], directions[p:p + 1], tol=1e-3)
        assert np.allclose(together[p], alone[0], rtol=1e-9, atol=1e-14 * abs(together).max())
