"""Benchmark: the harmonic compliance sum on a cup-sized shell, on one core (a plain script, not a test).

A cup of aluminium (E 70000 MPa, nu 0.33): wall mid radius 24.5 mm, wall 1 mm, height 40 mm, bottom 3 mm,
held by jaws on the lowest 8 mm of the wall; elements 0.4 mm along the wall and 0.5 mm across the bottom
(146 nodes).
The compliance along the surface normal is computed at 200 points spread along the free meridian, each under
a 2 mm x 2 mm patch, tol 1e-3. Prints the seconds, the harmonics used and the DOFs. Target: <= 0.5 s.

Run:  python tests/bench_compliance.py
"""

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"  # one core, set before numpy is imported

import time  # noqa: E402

import numpy as np  # noqa: E402

import deflect.mechanics.shell.harmonic as harmonic  # noqa: E402
from deflect.mechanics.shell.harmonic import HarmonicShell, ShellLoad, compliance  # noqa: E402
from deflect.mechanics.shell.mesh import ShellMesh  # noqa: E402

E_MPA, NU = 70000.0, 0.33
WALL_R, WALL_T, HEIGHT, BOTTOM_T = 24.5, 1.0, 40.0, 3.0
HELD_Z = 8.0
PATCH_MM = 2.0
N_POINTS = 200


def cup_mesh() -> ShellMesh:
    """Bottom mid-surface from the axis to the wall, then the wall up to the rim (one chain of nodes)."""
    z_bottom = BOTTOM_T / 2.0
    r = np.linspace(0.0, WALL_R, 50)
    z = np.linspace(z_bottom, HEIGHT, 97)[1:]
    nodes = np.r_[np.stack([r, np.full_like(r, z_bottom)], axis=1), np.stack([np.full_like(z, WALL_R), z], axis=1)]
    thickness = np.r_[np.full(len(r), BOTTOM_T), np.full(len(z), WALL_T)]
    thickness[len(r) - 1] = WALL_T  # the junction node takes the wall's thickness
    elements = np.stack([np.arange(len(nodes) - 1), np.arange(1, len(nodes))], axis=1)
    fixed = np.zeros((len(nodes), 6), dtype=bool)
    fixed[(nodes[:, 0] == WALL_R) & (nodes[:, 1] <= HELD_Z)] = True
    return ShellMesh(nodes, thickness, elements, fixed)


def patch_loads(mesh: ShellMesh, n_points: int):
    """Unit loads pushing into the outside face: the underside of the bottom and the wall above the jaws.

    n = (t_z, -t_r) points out of the cup on both (down under the bottom, outward on the wall), so each patch
    sits at the arm +h/2 n and pushes along -n. Eight sub-points over the 2 mm, weights proportional to r."""
    a, b = mesh.nodes_rz[mesh.elements[:, 0]], mesh.nodes_rz[mesh.elements[:, 1]]
    length = np.linalg.norm(b - a, axis=1)
    arc = np.r_[0.0, np.cumsum(length)]  # arc length from the axis, along the bottom and up the wall
    jaws = arc[-1] - (HEIGHT - HELD_Z)
    stations = np.r_[np.linspace(1.5, WALL_R - 1.5, n_points // 4),
                     np.linspace(jaws + 1.5, arc[-1] - 1.0, n_points - n_points // 4)]
    offsets = (np.arange(8) + 0.5) / 8.0 * PATCH_MM - PATCH_MM / 2.0
    loads, directions = [], []
    for s0 in stations:
        s = s0 + offsets
        element = np.clip(np.searchsorted(arc, s) - 1, 0, len(length) - 1)
        xi = (s - arc[element]) / length[element]
        t = (b - a)[element] / length[element, None]
        normal = np.stack([t[:, 1], -t[:, 0]], axis=1)
        ends = mesh.thickness_mm[mesh.elements[element]]
        arm = normal * ((1 - xi) * ends[:, 0] + xi * ends[:, 1])[:, None] / 2.0
        surface_r = (a[element] + xi[:, None] * (b - a)[element] + arm)[:, 0]
        half_angle = min(np.pi, PATCH_MM / 2.0 / surface_r.mean())
        loads.append(ShellLoad(element, xi, surface_r / surface_r.sum(), arm, half_angle))
        directions.append([-normal[4], t[4]])
    return loads, np.array(directions)


def main() -> None:
    mesh = cup_mesh()
    loads, directions = patch_loads(mesh, N_POINTS)
    t0 = time.process_time()
    shell = HarmonicShell(mesh, E_MPA, NU)
    setup = time.process_time() - t0
    runs = []
    for _ in range(3):  # the first call in a process also pays numpy's and the allocator's warm-up
        w0, c0 = time.perf_counter(), time.process_time()
        c, n_used = compliance(shell, loads, directions, tol=1e-3)
        runs.append((time.perf_counter() - w0, time.process_time() - c0))
    free = int((~mesh.fixed).sum())
    print(f"nodes {mesh.n_nodes}, DOFs {shell.n_dofs} ({free} free), points {len(loads)}, harmonics 0..{n_used}")
    # CPU time of this process is the figure to compare: wall time grows when other work shares the core
    print(f"stiffness set-up {setup:.3f} s; compliance: first call {runs[0][1]:.3f} s cpu ({runs[0][0]:.3f} wall), "
          f"best of 3 {min(r[1] for r in runs):.3f} s cpu")
    normal = c[:, 0, 0]
    print(f"normal compliance [mm/N]: rim {normal[-1]:.4e}, lowest wall point {normal[N_POINTS // 4]:.4e}, "
          f"bottom near the axis {normal[0]:.4e}")
    # the alternative: a banded Cholesky factor per harmonic and 3 right-hand sides per load (forced by
    # letting no load count as local); timed on 20 harmonics and scaled to the harmonics used above
    sample = np.arange(100, 120)
    fast = shell.harmonic_terms(loads, directions, sample)
    saved, harmonic.WIDEST_WINDOW = harmonic.WIDEST_WINDOW, -1
    c0 = time.process_time()
    direct = shell.harmonic_terms(loads, directions, sample)
    per_harmonic = (time.process_time() - c0) / len(sample)
    harmonic.WIDEST_WINDOW = saved
    agree = abs(direct - fast).max() / abs(fast).max()
    print(f"banded Cholesky per harmonic instead: {per_harmonic * 1e3:.1f} ms per harmonic, "
          f"{per_harmonic * (n_used + 1):.2f} s for 0..{n_used}; the same terms to {agree:.1e}")


if __name__ == "__main__":
    main()
