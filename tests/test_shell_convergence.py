"""Convergence of the shell model: the rate under mesh refinement, and the harmonic series.

Mesh: two-node elements with linear u and omega and reduced shear integration should converge at second order in
the element length h (nodal deflections). The observed order comes from three successive halvings,
p = log2((w_h - w_h/2) / (w_h/2 - w_h/4)), which needs no exact solution; the Richardson limit is then compared
with the closed form of the same (shear-flexible) theory.

Harmonic series: `compliance` sums the series with its tail fitted as a power of n (the patch's weights known)
and stops when the estimated error of the whole sum falls below tol. Checked here: the decay of the terms on a
cup-like wall, the result against the fully summed series (n to 2000) on that wall, the MacNeal-Harder pinched
cylinder and the 3-D solid check's shapes, that halving tol moves the result by less than tol, and that the
terms interpolated between the computed harmonics (`sampled`) leave the sum of every key station of the
shipped examples where every harmonic computed puts it.
"""

import sys
from glob import glob
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad

from deflect.mechanics.shell.harmonic import (
    SHEAR_FACTOR,
    HarmonicShell,
    ShellLoad,
    compliance,
    harmonic_weights,
    interpolated_terms,
)
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


def validation_shells():
    """{name: (shell, loads, directions, floor)}: the cup wall above, the pinched cylinder's patch (MacNeal &
    Harder 1985, tests/validation/test_macneal_harder.py) and the 3-D solid check's shapes and points
    (tests/validation/test_against_3d_solid.py), each as the product builds it."""
    sys.path.insert(0, str(Path(__file__).resolve().parent / "validation"))
    from test_against_3d_solid import CASES, PATCH_MM, SHELL_TOL
    from test_against_3d_solid import E_MPA as SOLID_E
    from test_against_3d_solid import NU as SOLID_NU
    from test_macneal_harder import pinched_cylinder

    from deflect.geometry.boxes import HeldBox
    from deflect.geometry.section import section_from_outline
    from deflect.mechanics.compliance import Patch, WallModel

    shells = {"cup wall": (*cup_wall(), 0.0)}
    shell, load = pinched_cylinder()
    # the floor WallModel sets: a half-space's compliance under the 3 x 3 mm patch (here the axial entry at
    # the loaded section, held axially by symmetry, is 3000 times smaller than the radial one)
    floor = (1.0 - shell.nu**2) / (shell.E_mpa * 3.0)
    shells["pinched cylinder"] = (shell, [load], np.array([[[1.0, 0.0], [0.0, 1.0]]]), floor)
    for case, (outline, _, (r_range, z_range), points) in CASES.items():
        model = WallModel(section_from_outline(outline), [HeldBox(r_range, z_range, "held[0]")], SOLID_E, SOLID_NU,
                          Patch(*PATCH_MM), SHELL_TOL)
        placed = []
        for (r, z), _ in points.values():
            s, point, normal = model.snap(r, z)
            placed.append((model.load_at(s, point, normal), point, normal))
        directions = np.array([[-n, [-n[1], n[0]]] for _, _, n in placed])
        shells[case] = (model.shell, [load for load, _, _ in placed], directions, model.floor_mm_per_n)
    return shells


FULL_SERIES = 2000   # the "fully summed" series: every harmonic to n = 2000 (its last terms are printed)


@pytest.fixture(scope="module")
def fully_summed():
    """{name: (shell, loads, directions, floor, weighted terms (n, P, 3, 3) to FULL_SERIES)}."""
    n = np.arange(FULL_SERIES + 1)
    out = {}
    for name, (shell, loads, directions, floor) in validation_shells().items():
        weights = np.stack([harmonic_weights(n, load.half_angle_rad) for load in loads], axis=1)
        out[name] = (shell, loads, directions, floor, weights[:, :, None, None] * shell.harmonic_terms(loads, directions, n))
    return out


@pytest.mark.parametrize("tol", [1e-2, 1e-3])
def test_summed_series_against_the_fully_summed_series(tol, fully_summed):
    """The fitted tail's whole sum against the series summed term by term to n = 2000, on every load of the
    validation shells: within tol (relative, Cauchy-Schwarz scale off the diagonal) in the meridian-plane
    entries, which is what the stopping rule promises; the figures are printed."""
    for name, (shell, loads, directions, floor, weighted) in fully_summed.items():
        result, n_used = compliance(shell, loads, directions, tol=tol, floor_mm_per_n=floor)
        for p in range(len(loads)):
            full = weighted[:, p].sum(axis=0)
            diag = np.abs(np.diagonal(full))
            scale = np.maximum(np.sqrt(np.outer(diag, diag)), floor)[np.ix_([0, 2], [0, 2])]
            error = (np.abs(result[p] - full)[np.ix_([0, 2], [0, 2])] / scale).max()
            last = (np.abs(weighted[-100:, p]).sum(axis=0)[np.ix_([0, 2], [0, 2])] / scale).max()
            print(f"tol {tol:g}, {name}, load {p}: error of the summed series {error:.1e} (harmonics to {n_used}); "
                  f"the last 100 terms of the full series {last:.1e}")
            assert error < tol


def test_halving_tol_moves_the_result_less_than_tol():
    shell, loads, directions = cup_wall()
    for tol in (1e-2, 1e-3):
        coarse, _ = compliance(shell, loads, directions, tol=tol)
        fine, _ = compliance(shell, loads, directions, tol=tol / 2)
        diag = np.abs(np.diagonal(fine, axis1=1, axis2=2))
        assert np.all(np.abs(np.diagonal(coarse - fine, axis1=1, axis2=2)) < tol * diag)


SAMPLED_TOL = 1e-3  # the interpolated terms' share of the error budget: tol (1e-3) of the sum, at most
EXAMPLES = sorted(glob(str(Path(__file__).resolve().parent.parent / "data" / "examples" / "*.toml")))


@pytest.mark.parametrize("job_path", [path for path in EXAMPLES if "first-article" not in path],
                         ids=lambda path: Path(path).stem)
def test_interpolated_terms_against_every_harmonic(job_path, monkeypatch):
    """Every key station of a shipped example's simulation, summed twice: with the terms between the checks
    interpolated (the product's way) and with every harmonic computed. They agree within SAMPLED_TOL of
    sqrt(|C_ii C_jj|) in all entries, and stop at the same harmonic; the worst difference is printed."""
    from deflect.geometry.section import POLYGON_CHORD_MM
    from deflect.job.reader import read_job
    from deflect.machining import simulate
    from deflect.machining.targets import process_from_job
    from deflect.mechanics import compliance as compliance_module

    worst, factored = [], []
    factor = HarmonicShell._factor

    def counted(shell, n, setup):
        factored[-1] += 1
        return factor(shell, n, setup)

    def both_ways(shell, loads, directions, **options):
        factored.append(0)
        every, n_every = compliance(shell, loads, directions, sampled=False, **options)
        factored.append(0)
        result, n_used = compliance(shell, loads, directions, **options)
        diag = np.abs(np.diagonal(every, axis1=1, axis2=2))
        scale = np.sqrt(diag[:, :, None] * diag[:, None, :])
        worst.append(np.max(np.abs(result - every) / np.maximum(scale, 1e-300)))
        assert n_used == n_every
        return result, n_used

    monkeypatch.setattr(compliance_module, "harmonic_compliance", both_ways)
    monkeypatch.setattr(HarmonicShell, "_factor", counted)
    monkeypatch.setattr(simulate, "free_cores", lambda: 1)  # the key stations in this process, where the spy is
    job = read_job(job_path)
    simulate.plan_compliance(job, process_from_job(job), simulate.SimulationSettings(),
                             job.section.polygon(POLYGON_CHORD_MM))
    every, sampled = sum(factored[0::2]), sum(factored[1::2])
    print(f"{Path(job_path).stem}: {len(worst)} key stations, worst difference {max(worst):.1e}; "
          f"{every} factorisations with every harmonic, {sampled} sampled")
    assert len(worst) > 10 and sampled < 0.7 * every  # the key stations' loads go one harmonic at a time
    assert max(worst) < SAMPLED_TOL


def test_interpolation_reproduces_a_power_law():
    """On terms that are an exact power of n (a straight line in log-log, any cubic through it is that line)
    with a fixed correlation, the interpolated terms are the power law; a held point's zeros stay zero."""
    samples_n = np.array([10, 11, 12, 16, 20])
    wanted = np.array([13, 14, 15, 17, 18, 19])

    def power_law(n):
        n = np.asarray(n, dtype=float)[None, :]  # (1, H): load 0 follows the law, load 1 is held
        terms = np.zeros((2, n.shape[1], 3, 3))
        terms[0, :, 0, 0], terms[0, :, 1, 1], terms[0, :, 2, 2] = 3e-4 * n[0]**-1.7, 2e-5 * n[0]**-0.2, 5e-5 / n[0]
        terms[0, :, 0, 2] = terms[0, :, 2, 0] = -0.4 * np.sqrt(terms[0, :, 0, 0] * terms[0, :, 2, 2])
        return terms

    result = interpolated_terms(samples_n, power_law(samples_n), wanted)  # (H, P, 3, 3)
    expected = np.moveaxis(power_law(wanted), 0, 1)
    assert np.allclose(result, expected, rtol=1e-12, atol=0)
    assert np.all(result[:, 1] == 0.0)
