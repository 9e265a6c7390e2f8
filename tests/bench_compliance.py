"""Benchmark: compliance at many boundary points, on one core (a plain script, not a test).

Two workloads, each timed in-process in fresh child processes (CPU seconds), in this tree and in a
temporary worktree of an earlier revision (`--against REV`, by default the commit the speed work started
from), alternating; the medians and their ratio are printed (bench_against.py):

* "1000 points, demo": `deflect compliance`'s model of the demo housing (data/examples/housing.toml, a
  2 x 2 mm patch, tolerance 1e-3) asked for the compliance at about 1000 points along its whole boundary
  (`WallModel.map`): the shell model, placing the loads and the harmonic sums. The target of issue 16: at
  least 3 times faster than the starting revision.
* "200 loads, cup": the harmonic sum alone on a cup-sized shell of aluminium (E 70000 MPa, nu 0.33): wall
  mid radius 24.5 mm, wall 1 mm, height 40 mm, bottom 3 mm, held by jaws on the lowest 8 mm of the wall;
  elements 0.4 mm along the wall and 0.5 mm across the bottom (146 nodes); the normal compliance at 200
  points along the free meridian, each under a 2 mm x 2 mm patch, tol 1e-3.

Each child prints its figures (points, harmonics, a few compliances), which must agree between the trees.

Run:  python tests/bench_compliance.py [--against REV | --alone] [--runs N]
"""

import json
import os
import sys
import time
from pathlib import Path

import bench_against

DEMO = bench_against.EXAMPLES / "housing.toml"
MAP_POINTS = 1000
E_MPA, NU = 70000.0, 0.33
WALL_R, WALL_T, HEIGHT, BOTTOM_T = 24.5, 1.0, 40.0, 3.0
HELD_Z = 8.0
PATCH_MM = 2.0
N_POINTS = 200
TARGET_RATIO = 3.0


def cup_mesh():
    """Bottom mid-surface from the axis to the wall, then the wall up to the rim (one chain of nodes)."""
    import numpy as np

    from deflect.mechanics.shell.mesh import ShellMesh

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


def patch_loads(mesh, n_points: int):
    """Unit loads pushing into the outside face: the underside of the bottom and the wall above the jaws.

    n = (t_z, -t_r) points out of the cup on both (down under the bottom, outward on the wall), so each patch
    sits at the arm +h/2 n and pushes along -n. Eight sub-points over the 2 mm, weights proportional to r."""
    import numpy as np

    from deflect.mechanics.shell.harmonic import ShellLoad

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


def cup_child() -> dict:
    from deflect.mechanics.shell.harmonic import HarmonicShell, compliance

    mesh = cup_mesh()
    loads, directions = patch_loads(mesh, N_POINTS)
    compliance(HarmonicShell(mesh, E_MPA, NU), loads[:2], directions[:2], tol=1e-3)   # numpy's warm-up
    start, wall = time.process_time(), time.perf_counter()
    shell = HarmonicShell(mesh, E_MPA, NU)
    c, n_used = compliance(shell, loads, directions, tol=1e-3)
    normal = c[:, 0, 0]
    return {"cpu_s": time.process_time() - start, "wall_s": time.perf_counter() - wall,
            "figures": f"{len(loads)} loads, harmonics to {n_used}; normal compliance rim {normal[-1]:.4e}, lowest "
                       f"wall point {normal[N_POINTS // 4]:.4e}, bottom near the axis {normal[0]:.4e} mm/N"}


def map_child() -> dict:
    from deflect.job.reader import read_job
    from deflect.mechanics.compliance import WallModel

    job = read_job(DEMO)
    start, wall = time.process_time(), time.perf_counter()
    model = WallModel(job.section, job.held, job.material.E_mpa, job.material.nu)
    points = model.map(job.section.perimeter() / MAP_POINTS)
    normal = [p.normal_mm_per_n for p in points]
    return {"cpu_s": time.process_time() - start, "wall_s": time.perf_counter() - wall,
            "figures": f"{len(points)} points, harmonics to {points[0].harmonics}; normal compliance largest "
                       f"{max(normal):.4e}, median {sorted(normal)[len(normal) // 2]:.4e} mm/N"}


def main() -> None:
    args = bench_against.options(__doc__.splitlines()[0]).parse_args()
    workloads = {f"{MAP_POINTS} points, demo": bench_against.script_command(Path(__file__), {"work": "map"}),
                 f"{N_POINTS} loads, cup": bench_against.script_command(Path(__file__), {"work": "cup"})}
    with bench_against.trees(None if args.alone else args.against) as sources:
        print(f"{os.cpu_count()} cores; trees: " + ", ".join(f"{k} = {v}" for k, v in sources.items()))
        medians = bench_against.compare(workloads, sources, args.runs, reported=True)
        bench_against.print_table("compliance, in-process", medians, args.runs)
        for name, per_tree in medians.items():
            for label, m in per_tree.items():
                print(f"  {name}, {label}: {json.loads(m['stdout'])['figures']}")
        if len(sources) == 2:
            this, other = (m["cpu_s"] for m in medians[f"{MAP_POINTS} points, demo"].values())
            verdict = "meets" if other / this >= TARGET_RATIO else "misses"
            print(f"\n{MAP_POINTS} points: {other / this:.2f}x faster: {verdict} the {TARGET_RATIO:g}x target")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        work = json.loads(sys.argv[2])["work"]
        print(json.dumps(map_child() if work == "map" else cup_child()))
    else:
        main()
