"""Unit tests of the mid-surface derivation (pruned medial axis of the section, deflect.mechanics.shell.midsurface).

Expected values are the medial axes of the test outlines worked out by hand: the mid-line of two parallel
faces, the bisector of two faces at an angle, and the centre of the disc touching three features at a
junction (e.g. a cup's wall and bottom of thickness t meet where the disc touches the outer wall face, the
outer bottom face and the inner corner: at distance d = sqrt(2) t / (1 + sqrt(2)) from both outer faces).
"""

import math
import time

import numpy as np
import pytest

from deflect.errors import InputError
from deflect.geometry.boxes import HeldBox
from deflect.mechanics.shell.midsurface import ShellGeometry, _chains, derive_shell, shell_from_section

THICKNESS_REL = 0.005      # Voronoi radius bias at 1/20-wall sampling is s^2 / (2 t) = 0.13 % of t
POSITION_MM = 1e-3         # mid-line position: bias ~ s^2 / (8 t) = 0.3 um at 1 mm walls, plus smoothing
JUNCTION_MM = 0.03         # a junction is a single Voronoi vertex: its place is good to ~ half a sample spacing
ROUND_OFF = 1e-9           # lengths that equal by construction, up to floating point
COARSE_THICKNESS_REL = 0.01    # at 1/8-wall sampling the radius bias grows to s^2 / (2 t) = 0.8 %
NOISY_THICKNESS_REL = 0.03     # faces scattered by 2.5 um (sd): inscribed discs touch the peaks, 1-2 % thinner
SPEED_LIMIT_S = 0.1            # brief: a cup-sized section derives in well under 0.1 s
SIZE = 2.0                     # element size [mm] of most tests

SLEEVE = [(19, 0), (20, 0), (20, 40), (19, 40)]
TAPER = [(19, 0), (21, 0), (20, 40), (19, 40)]                                # OD 21 -> 20: t 2 -> 1
STEP = [(19, 0), (21, 0), (21, 20), (20, 20), (20, 40), (19, 40)]             # OD pass stopped at z = 20
CUP = [(0, 0), (20, 0), (20, 30), (19, 30), (19, 1), (0, 1)]                  # bottom reaches the axis
CUP_HOLE = [(5, 0), (20, 0), (20, 30), (19, 30), (19, 2), (5, 2)]             # 2 mm bottom, central hole
FLANGE_T = [(19, 0), (20, 0), (20, 2), (30, 2), (30, 5), (20, 5), (20, 40), (19, 40)]   # 2 mm lip below
L_RING = [(30, 0), (40, 0), (40, 2), (32, 2), (32, 20), (30, 20)]
DISC = [(20, 0), (60, 0), (60, 2), (20, 2)]
HUB_DISC = [(20, -8), (26, -8), (26, 0), (60, 0), (60, 2), (26, 2), (26, 10), (20, 10)]
THICK_SLEEVE = [(14, 0), (20, 0), (20, 40), (14, 40)]                          # t / R = 0.3


def derive(outline, held=(), size=SIZE, **kwargs) -> ShellGeometry:
    return derive_shell(np.asarray(outline, float), list(held), size, **kwargs)


def cone(half_angle_deg: float, t: float = 1.5, height: float = 30.0) -> np.ndarray:
    """A conical wall of normal thickness t, its inner face through (20, 0), ends faced at z = 0 and height."""
    slope = math.tan(math.radians(half_angle_deg))
    width = t / math.cos(math.radians(half_angle_deg))        # horizontal width of the wall
    return np.array([(20, 0), (20 + width, 0), (20 + width + height * slope, height), (20 + height * slope, height)])


def rounded(corners, radii, step_deg: float = 5.0) -> np.ndarray:
    """A polygon whose corner i is rounded with a fillet of radius radii[i] (0 = sharp), arcs as chords."""
    corners = np.asarray(corners, float)
    points = []
    for i, radius in enumerate(radii):
        c = corners[i]
        if radius == 0:
            points.append(c)
            continue
        u = corners[i - 1] - c
        v = corners[(i + 1) % len(corners)] - c
        u, v = u / np.linalg.norm(u), v / np.linalg.norm(v)
        half = 0.5 * math.acos(float(np.clip(u @ v, -1.0, 1.0)))
        centre = c + (u + v) / np.linalg.norm(u + v) * radius / math.sin(half)
        start, end = c + u * radius / math.tan(half), c + v * radius / math.tan(half)
        a0 = math.atan2(*(start - centre)[::-1])
        sweep = (math.atan2(*(end - centre)[::-1]) - a0 + math.pi) % (2 * math.pi) - math.pi
        n = max(2, math.ceil(abs(math.degrees(sweep)) / step_deg))
        for a in a0 + sweep * np.linspace(0.0, 1.0, n + 1):
            points.append(centre + radius * np.array([math.cos(a), math.sin(a)]))
    return np.array(points)


def junctions(geometry: ShellGeometry) -> dict[int, int]:
    """Node -> number of branches ending there, for nodes where two or more branches end."""
    count: dict[int, int] = {}
    for chain in geometry.branches:
        for node in (int(chain[0]), int(chain[-1])):
            count[node] = count.get(node, 0) + 1
    return {node: n for node, n in count.items() if n >= 2}


def branch_near(geometry: ShellGeometry, point) -> np.ndarray:
    """The branch whose nodes come nearest to a point: (n, 3) rows of r, z, thickness."""
    mesh = geometry.mesh
    best = min(geometry.branches, key=lambda c: np.min(np.hypot(*(mesh.nodes_rz[c] - point).T)))
    return np.column_stack([mesh.nodes_rz[best], mesh.thickness_mm[best]])


def thickness_at(geometry: ShellGeometry, point) -> float:
    """Thickness of the mid-surface where it passes nearest to a point (linear along an element)."""
    mesh = geometry.mesh
    a, b = mesh.nodes_rz[mesh.elements[:, 0]], mesh.nodes_rz[mesh.elements[:, 1]]
    xi = np.clip(np.einsum("mi,mi->m", np.asarray(point) - a, b - a) / np.einsum("mi,mi->m", b - a, b - a), 0, 1)
    k = int(np.argmin(np.hypot(*(a + xi[:, None] * (b - a) - point).T)))
    ta, tb = mesh.thickness_mm[mesh.elements[k]]
    return float(ta + xi[k] * (tb - ta))


def has_ends(branch: np.ndarray, *points) -> bool:
    """Whether each point is one of the branch's two end nodes (to POSITION_MM)."""
    ends = branch[[0, -1], :2]
    return all(np.min(np.hypot(*(ends - p).T)) < POSITION_MM for p in points)


# ---------------------------------------------------------------------------------------------------
# the shapes

def test_sleeve_is_one_branch_on_the_mid_radius_from_face_to_face():
    geometry = derive(SLEEVE)
    assert len(geometry.branches) == 1
    wall = branch_near(geometry, (19.5, 20))
    assert np.all(np.abs(wall[:, 0] - 19.5) < POSITION_MM)
    assert has_ends(wall, (19.5, 0.0), (19.5, 40.0))
    assert wall[:, 2] == pytest.approx(1.0, rel=THICKNESS_REL)
    assert len(wall) == geometry.mesh.n_nodes


def test_tapered_wall_follows_the_bisector_and_its_thickness_varies_linearly():
    geometry = derive(TAPER)
    assert len(geometry.branches) == 1
    wall = branch_near(geometry, (20, 20))
    # OD line through (21, 0) and (20, 40), unit normal (40, 1) / sqrt(1601); on the bisector the distance to
    # the ID face, r - 19, equals the distance to the OD face, (40 (21 - r) - z) / sqrt(1601)
    root = math.sqrt(1601.0)
    inner = (wall[:, 1] > 1.0) & (wall[:, 1] < 39.0)              # away from the end faces
    r, z, t = wall[inner].T
    r_bisector = (19.0 + (840.0 - z) / root) / (1.0 + 40.0 / root)
    assert np.all(np.abs(r - r_bisector) < POSITION_MM)
    assert t == pytest.approx(2.0 * (r_bisector - 19.0), rel=THICKNESS_REL)
    slope, offset = np.polyfit(z, t, 1)
    assert np.max(np.abs(t - (slope * z + offset))) < THICKNESS_REL * t.min()
    assert slope == pytest.approx(-2.0 / (root + 40.0), rel=0.01)                # d(2 (r - 19)) / dz


def test_wall_with_a_step_is_one_branch_whose_thickness_jumps():
    geometry = derive(STEP)
    assert len(geometry.branches) == 1
    wall = branch_near(geometry, (20, 20))
    thick, thin = wall[wall[:, 1] < 18.0], wall[wall[:, 1] > 22.0]
    assert np.all(np.abs(thick[:, 0] - 20.0) < POSITION_MM) and np.all(np.abs(thin[:, 0] - 19.5) < POSITION_MM)
    assert thick[:, 2] == pytest.approx(2.0, rel=THICKNESS_REL)
    assert thin[:, 2] == pytest.approx(1.0, rel=THICKNESS_REL)
    assert has_ends(wall, (20.0, 0.0), (19.5, 40.0))


def test_cup_has_wall_and_bottom_meeting_at_one_junction_and_the_bottom_ends_on_the_axis():
    geometry = derive(CUP)
    assert len(geometry.branches) == 2
    (node, count), = junctions(geometry).items()
    assert count == 2
    d = math.sqrt(2.0) / (1.0 + math.sqrt(2.0))            # disc touching OD, bottom face and inner corner
    mesh = geometry.mesh
    assert mesh.nodes_rz[node] == pytest.approx([20.0 - d, d], abs=JUNCTION_MM)
    assert mesh.thickness_mm[node] == pytest.approx(2.0 * d, rel=0.02)
    bottom, wall = branch_near(geometry, (10, 0.5)), branch_near(geometry, (19.5, 15))
    assert bottom[:, 0].min() == 0.0                          # the last node sits on the axis exactly
    assert np.all(np.abs(bottom[bottom[:, 0] < 18.0, 1] - 0.5) < POSITION_MM)
    assert np.all(np.abs(wall[wall[:, 1] > 2.0, 0] - 19.5) < POSITION_MM)
    assert bottom[bottom[:, 0] < 18.0, 2] == pytest.approx(1.0, rel=THICKNESS_REL)
    assert wall[wall[:, 1] > 2.0, 2] == pytest.approx(1.0, rel=THICKNESS_REL)
    assert wall[:, 1].max() == pytest.approx(30.0, abs=ROUND_OFF)


def test_cup_with_a_central_hole_and_a_thicker_bottom():
    geometry = derive(CUP_HOLE)
    assert len(geometry.branches) == 2
    (node, _), = junctions(geometry).items()
    # the disc touching the OD (r = 20), the bottom (z = 0), the inner corner (19, 2) and the bottom's top face
    assert geometry.mesh.nodes_rz[node] == pytest.approx([19.0, 1.0], abs=JUNCTION_MM)
    bottom, wall = branch_near(geometry, (10, 1)), branch_near(geometry, (19.5, 15))
    assert bottom[:, 0].min() == pytest.approx(5.0, abs=ROUND_OFF)
    assert bottom[:, 2] == pytest.approx(2.0, rel=THICKNESS_REL)
    assert wall[wall[:, 1] > 3.0, 2] == pytest.approx(1.0, rel=THICKNESS_REL)


def test_flanged_bushing_has_three_branches_at_one_junction_and_the_short_lip_stays():
    geometry = derive(FLANGE_T)
    assert len(geometry.branches) == 3
    (node, count), = junctions(geometry).items()
    assert count == 3
    # disc touching the bore (r = 19) and both flange faces (z = 2, z = 5)
    assert geometry.mesh.nodes_rz[node] == pytest.approx([20.5, 3.5], abs=JUNCTION_MM)
    lip, wall, flange = (branch_near(geometry, p) for p in ((19.5, 0.5), (19.5, 30), (28, 3.5)))
    assert lip[np.argmin(lip[:, 1]), :2] == pytest.approx([19.5, 0.0], abs=POSITION_MM)
    assert wall[:, 1].max() == pytest.approx(40.0, abs=ROUND_OFF)
    assert flange[:, 0].max() == pytest.approx(30.0, abs=ROUND_OFF)
    assert flange[flange[:, 0] > 23.0, 2] == pytest.approx(3.0, rel=THICKNESS_REL)
    assert wall[wall[:, 1] > 8.0, 2] == pytest.approx(1.0, rel=THICKNESS_REL)


def test_four_walls_meeting_are_four_branches_at_one_junction():
    cross = [(19, 0), (20, 0), (20, 18), (30, 18), (30, 21), (20, 21), (20, 40), (19, 40), (19, 21), (12, 21),
             (12, 18), (19, 18)]
    geometry = derive(cross)
    assert len(geometry.branches) == 4
    (node, count), = junctions(geometry).items()
    assert count == 4
    # the disc touching the four concave corners (19, 18), (20, 18), (20, 21), (19, 21)
    assert geometry.mesh.nodes_rz[node] == pytest.approx([19.5, 19.5], abs=JUNCTION_MM)
    assert geometry.mesh.thickness_mm[node] == pytest.approx(2 * math.hypot(0.5, 1.5), rel=0.01)


def test_l_section_ring_is_two_branches_at_the_corner():
    geometry = derive(L_RING)
    assert len(geometry.branches) == 2
    (node, count), = junctions(geometry).items()
    d = math.sqrt(2.0) * 2.0 / (1.0 + math.sqrt(2.0))     # both legs 2 mm thick
    assert geometry.mesh.nodes_rz[node] == pytest.approx([30.0 + d, d], abs=JUNCTION_MM)
    axial, radial = branch_near(geometry, (31, 15)), branch_near(geometry, (38, 1))
    assert has_ends(axial, (31.0, 20.0)) and has_ends(radial, (40.0, 1.0))
    assert axial[axial[:, 1] > 4.0, 2] == pytest.approx(2.0, rel=THICKNESS_REL)
    assert radial[radial[:, 0] > 34.0, 2] == pytest.approx(2.0, rel=THICKNESS_REL)


@pytest.mark.parametrize("half_angle_deg", [30.0, 45.0])
def test_cone_with_faced_ends_is_one_branch_on_its_mid_surface(half_angle_deg):
    t = 1.5
    geometry = derive(cone(half_angle_deg, t=t))
    assert len(geometry.branches) == 1
    r, z = geometry.mesh.nodes_rz.T
    a = math.radians(half_angle_deg)
    # distance from the inner face (through (20, 0), direction (sin a, cos a)), along its normal (cos a, -sin a)
    distance = (r - 20.0) * math.cos(a) - z * math.sin(a)
    assert np.all(np.abs(distance - t / 2) < POSITION_MM)
    assert geometry.mesh.thickness_mm == pytest.approx(t, rel=THICKNESS_REL)
    assert z.min() == pytest.approx(0.0, abs=ROUND_OFF) and z.max() == pytest.approx(30.0, abs=ROUND_OFF)


def test_annular_disc_is_one_radial_branch():
    geometry = derive(DISC)
    assert len(geometry.branches) == 1
    r, z = geometry.mesh.nodes_rz.T
    assert np.all(np.abs(z - 1.0) < POSITION_MM)
    assert r.min() == pytest.approx(20.0, abs=ROUND_OFF) and r.max() == pytest.approx(60.0, abs=ROUND_OFF)
    assert geometry.mesh.thickness_mm == pytest.approx(2.0, rel=THICKNESS_REL)


def test_disc_with_a_thick_hub_keeps_the_hub_as_thick_branches():
    geometry = derive(HUB_DISC)
    assert len(geometry.branches) == 3
    (node, count), = junctions(geometry).items()
    # disc touching the bore (r = 20) and the corners (26, 0), (26, 2): r - 20 = sqrt((26 - r)^2 + 1)
    r_junction = 277.0 / 12.0
    assert geometry.mesh.nodes_rz[node] == pytest.approx([r_junction, 1.0], abs=JUNCTION_MM)
    assert geometry.mesh.thickness_mm[node] == pytest.approx(2.0 * (r_junction - 20.0), rel=0.01)
    upper, lower, disc = (branch_near(geometry, p) for p in ((23, 8), (23, -6), (50, 1)))
    for hub in (upper, lower):
        middle = hub[np.abs(hub[:, 1] - 1.0) > 4.0]
        assert np.all(np.abs(middle[:, 0] - 23.0) < POSITION_MM)
        assert middle[:, 2] == pytest.approx(6.0, rel=THICKNESS_REL)
    assert disc[disc[:, 0] > 30.0, 2] == pytest.approx(2.0, rel=THICKNESS_REL)


def test_thick_sleeve():
    geometry = derive(THICK_SLEEVE)
    assert len(geometry.branches) == 1
    r, z = geometry.mesh.nodes_rz.T
    assert np.all(np.abs(r - 17.0) < POSITION_MM)
    assert z.min() == pytest.approx(0.0, abs=ROUND_OFF) and z.max() == pytest.approx(40.0, abs=ROUND_OFF)
    assert geometry.mesh.thickness_mm == pytest.approx(6.0, rel=THICKNESS_REL)


@pytest.mark.parametrize("outline, n_branches, wall_point", [
    (rounded(SLEEVE, [0.3, 0.3, 0.3, 0.3]), 1, (19.5, 20)),
    (rounded(SLEEVE, [0.0, 0.0, 0.5, 0.5], step_deg=3.0), 1, (19.5, 20)),       # full-round rim
    (rounded(CUP, [0, 0.5, 0.3, 0.3, 0.5, 0]), 2, (19.5, 15)),
    (rounded(FLANGE_T, [0.2, 0.2, 0.5, 0.5, 0.5, 0.5, 0.2, 0.2]), 3, (19.5, 30)),
], ids=["sleeve", "full-round rim", "cup", "flange"])
def test_fillets_change_neither_the_branches_nor_the_wall(outline, n_branches, wall_point):
    geometry = derive(outline)
    assert len(geometry.branches) == n_branches
    wall = branch_near(geometry, wall_point)
    straight = wall[(wall[:, 1] > 8.0) & (wall[:, 1] < 36.0)]
    assert np.all(np.abs(straight[:, 0] - 19.5) < POSITION_MM)
    assert straight[:, 2] == pytest.approx(1.0, rel=THICKNESS_REL)
    top = wall[np.argmax(wall[:, 1])]
    assert top[:2] == pytest.approx([19.5, outline[:, 1].max()], abs=POSITION_MM)


def test_section_object_through_shell_from_section():
    section = pytest.importorskip("deflect.geometry.section")
    outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 2.0, 0.5], [30.0, 2.0], [30.0, 5.0], [20.0, 5.0, 0.5],
               [20.0, 40.0], [19.0, 40.0]]
    geometry = shell_from_section(section.section_from_outline(outline), [], SIZE)
    assert len(geometry.branches) == 3


# ---------------------------------------------------------------------------------------------------
# robustness of the branch structure

SHAPES = {"sleeve": SLEEVE, "taper": TAPER, "step": STEP, "cup": CUP, "cup with hole": CUP_HOLE,
          "flange": FLANGE_T, "L ring": L_RING, "cone": cone(30.0), "disc": DISC, "hub": HUB_DISC,
          "thick sleeve": THICK_SLEEVE}
BRANCHES = {"sleeve": 1, "taper": 1, "step": 1, "cup": 2, "cup with hole": 2, "flange": 3, "L ring": 2,
            "cone": 1, "disc": 1, "hub": 3, "thick sleeve": 1}
PROBES = {"sleeve": (19.5, 20), "taper": (19.75, 20), "step": (20, 10), "cup": (10, 0.5), "cup with hole": (12, 1),
          "flange": (25, 3.5), "L ring": (31, 12), "cone": (20.866 + 15 * math.tan(math.radians(30)), 15),
          "disc": (40, 1), "hub": (23, 6), "thick sleeve": (17, 20)}     # points on a wall's mid-surface


@pytest.mark.parametrize("name", SHAPES)
def test_sample_spacing_does_not_change_the_branches(name):
    fine = derive(SHAPES[name])
    coarse = derive(SHAPES[name], sample_spacing_mm=1.0 / 8.0)        # 1/8 of the thinnest (1 mm) wall
    assert len(fine.branches) == len(coarse.branches) == BRANCHES[name]
    assert fine.sample_spacing_mm < coarse.sample_spacing_mm
    assert thickness_at(coarse, PROBES[name]) == pytest.approx(thickness_at(fine, PROBES[name]),
                                                               rel=COARSE_THICKNESS_REL)


@pytest.mark.parametrize("name", SHAPES)
def test_noisy_outline_gives_the_same_branches(name):
    """The outline re-drawn through points 0.2 mm apart, each scattered at random by 2.5 um (normal)."""
    outline = np.asarray(SHAPES[name], float)
    rng = np.random.default_rng(7)
    pieces = []
    for a, b in zip(outline, np.roll(outline, -1, axis=0)):
        n = math.ceil(np.linalg.norm(b - a) / 0.2)
        pieces.append(a + np.outer(np.arange(n) / n, b - a))
    noisy = np.vstack(pieces)
    noisy = noisy + rng.normal(0.0, 0.0025, noisy.shape)
    noisy[:, 0] = np.maximum(noisy[:, 0], 0.0)
    geometry = derive(noisy)
    assert len(geometry.branches) == BRANCHES[name]
    assert thickness_at(geometry, PROBES[name]) == pytest.approx(thickness_at(derive(outline), PROBES[name]),
                                                                 rel=NOISY_THICKNESS_REL)


def test_orientation_of_the_outline_does_not_matter():
    forward, backward = derive(FLANGE_T), derive(FLANGE_T[::-1])
    assert len(forward.branches) == len(backward.branches)
    assert forward.mesh.n_nodes == backward.mesh.n_nodes
    order = lambda g: np.lexsort(g.mesh.nodes_rz.T)             # noqa: E731
    assert forward.mesh.nodes_rz[order(forward)] == pytest.approx(backward.mesh.nodes_rz[order(backward)],
                                                                   abs=JUNCTION_MM)


def test_same_input_same_result():
    one, two = derive(HUB_DISC), derive(HUB_DISC)
    assert np.array_equal(one.mesh.nodes_rz, two.mesh.nodes_rz)
    assert np.array_equal(one.mesh.elements, two.mesh.elements)
    assert np.array_equal(one.mesh.thickness_mm, two.mesh.thickness_mm)


def walked_chains(n_vertices: int, edges: np.ndarray) -> list[list[int]]:
    """Reference for `_chains`: from every end (degree not 2) in index order, along each of its edges in their
    order, walk through the degree-2 vertices to the next end; a chain met again from its other end is skipped."""
    neighbours = [[] for _ in range(n_vertices)]
    for a, b in edges.tolist():
        neighbours[a].append(b)
        neighbours[b].append(a)
    chains, done = [], set()
    for start in (v for v in range(n_vertices) if len(neighbours[v]) != 2):
        for step in neighbours[start]:
            chain = [start, step]
            while len(neighbours[chain[-1]]) == 2:
                chain.append(next(v for v in neighbours[chain[-1]] if v != chain[-2]))
            if (chain[-1], chain[-2]) not in done:
                done.add((start, step))
                chains.append(chain)
    return chains


def test_chains_of_random_trees_are_the_walked_ones():
    rng = np.random.default_rng(3)
    for size in [1, 2, 3, 4, 5, 8, 13, 40, 300] * 8:
        # vertex i joins an earlier one; then random labels, edge order and edge directions
        edges = np.array([[rng.integers(0, i), i] for i in range(1, size)], int).reshape(-1, 2)
        edges = rng.permutation(size)[edges][rng.permutation(len(edges))]
        flip = rng.random(len(edges)) < 0.5
        edges[flip] = edges[flip][:, ::-1]
        assert _chains(size, edges) == walked_chains(size, edges)


@pytest.mark.parametrize("name", SHAPES)
@pytest.mark.parametrize("size", [0.5, 3.0])
def test_mesh_is_consistent(name, size):
    geometry = derive(SHAPES[name], size=size)
    mesh = geometry.mesh
    assert mesh.fixed.shape == (mesh.n_nodes, 6) and not mesh.fixed.any()
    assert np.all(mesh.thickness_mm > 0)
    lengths = np.hypot(*(mesh.nodes_rz[mesh.elements[:, 1]] - mesh.nodes_rz[mesh.elements[:, 0]]).T)
    assert np.all(lengths <= size * (1 + ROUND_OFF)) and np.all(lengths > 0)
    assert set(np.unique(mesh.elements)) == set(range(mesh.n_nodes))
    # the branches are the elements, each once, each branch at least two elements long
    from_branches = sorted(tuple(sorted(p)) for c in geometry.branches for p in zip(c[:-1].tolist(), c[1:].tolist()))
    assert from_branches == sorted(tuple(sorted(e)) for e in mesh.elements.tolist())
    assert all(len(c) >= 3 for c in geometry.branches)
    # nodes numbered for a narrow band
    assert np.max(np.abs(mesh.elements[:, 1] - mesh.elements[:, 0])) <= len(geometry.branches)


def test_cup_derives_fast():
    outline = np.asarray(CUP, float)                   # ~100 mm perimeter, 1 mm walls
    derive_shell(outline, [], SIZE)
    times = []
    for _ in range(3):
        start = time.perf_counter()
        derive_shell(outline, [], SIZE)
        times.append(time.perf_counter() - start)
    assert min(times) < SPEED_LIMIT_S


# ---------------------------------------------------------------------------------------------------
# held boxes

def held_z(geometry: ShellGeometry) -> np.ndarray:
    return np.sort(geometry.mesh.nodes_rz[geometry.mesh.held_nodes, 1])


def test_held_box_holds_the_nodes_whose_fibre_it_touches():
    geometry = derive(SLEEVE, [HeldBox((0.0, 100.0), (0.0, 5.0), "held[0]")])
    mesh = geometry.mesh
    z = mesh.nodes_rz[:, 1]
    assert np.array_equal(mesh.fixed.all(axis=1), z <= 5.0)
    assert np.array_equal(mesh.fixed.any(axis=1), z <= 5.0)        # a held node has all six DOFs fixed
    # a node where the wall leaves the box (z = 5), the stretch below it split evenly at <= 2 mm
    assert held_z(geometry) == pytest.approx(np.linspace(0.0, 5.0, 4))


def test_mandrel_touching_only_the_bore_holds_through_the_fibre():
    geometry = derive(SLEEVE, [HeldBox((0.0, 19.0), (0.0, 5.0), "held[0]")])
    assert held_z(geometry) == pytest.approx(np.linspace(0.0, 5.0, 4))


def test_face_plate_touching_only_the_end_face_holds_the_end_node():
    geometry = derive(SLEEVE, [HeldBox((0.0, 100.0), (-5.0, 0.0), "held[0]")])
    assert held_z(geometry) == pytest.approx([0.0])


def test_box_between_fibres_holds_the_nearest_node():
    # the mesh puts a node where the wall enters the box (z = 10.3); its exit at 10.4 is closer to that node
    # than a tenth of an element, so no second node is made there, and the one node holds
    geometry = derive(SLEEVE, [HeldBox((19.9, 20.0), (10.3, 10.4), "held[0]")])
    assert np.allclose(geometry.mesh.nodes_rz[geometry.mesh.held_nodes], [[19.5, 10.3]], atol=POSITION_MM)


def test_no_box_no_held_node():
    assert len(derive(CUP).mesh.held_nodes) == 0


def test_box_away_from_the_part_names_its_key():
    with pytest.raises(InputError, match="touches no material of the part") as error:
        derive(SLEEVE, [HeldBox((0.0, 100.0), (0.0, 5.0), "held[0]"), HeldBox((30.0, 40.0), (0.0, 5.0), "held[1]")])
    assert error.value.key == "held[1]"


def test_box_inside_the_material_holds():
    geometry = derive(THICK_SLEEVE, [HeldBox((16.0, 18.0), (19.0, 21.0), "held[0]")])
    assert held_z(geometry) == pytest.approx([19.0, 21.0])   # nodes where the wall enters and leaves the box


def test_box_with_reversed_range_is_refused():
    with pytest.raises(InputError, match="must not exceed") as error:
        derive(SLEEVE, [HeldBox((0.0, 100.0), (5.0, 0.0), "held[2]")])
    assert error.value.key == "held[2]"


# ---------------------------------------------------------------------------------------------------
# attach

def test_attach_gives_half_thickness_arms_on_the_faces_and_the_tip_on_the_rim():
    geometry = derive(SLEEVE)
    points = np.array([[20.0, 21.0], [19.0, 21.0], [19.8, 40.0], [20.0, 0.0]])   # OD, ID, rim face, OD corner
    normals = np.array([[-1.0, 0.0], [1.0, 0.0], [0.0, -1.0], [-2.0, 0.0]])
    element, xi, arm = geometry.attach(points, normals)
    assert arm[0] == pytest.approx([0.5, 0.0], abs=POSITION_MM)
    assert arm[1] == pytest.approx([-0.5, 0.0], abs=POSITION_MM)
    assert arm[3] == pytest.approx([0.5, 0.0], abs=POSITION_MM)
    assert np.all((xi >= 0.0) & (xi <= 1.0))
    mesh = geometry.mesh
    tip = int(np.argmax(mesh.nodes_rz[:, 1]))
    assert tip in mesh.elements[element[2]]
    assert arm[2] == pytest.approx([0.3, 0.0], abs=POSITION_MM)
    foot = points - arm
    a, b = mesh.nodes_rz[mesh.elements[element, 0]], mesh.nodes_rz[mesh.elements[element, 1]]
    assert foot == pytest.approx(a + xi[:, None] * (b - a), abs=ROUND_OFF)


def test_attach_on_the_cup_bottom_and_flange_faces():
    element, xi, arm = derive(CUP_HOLE).attach(np.array([[10.0, 0.0], [10.0, 2.0]]), np.array([[0, 1.0], [0, -1.0]]))
    assert arm == pytest.approx(np.array([[0.0, -1.0], [0.0, 1.0]]), abs=POSITION_MM)
    element, xi, arm = derive(FLANGE_T).attach(np.array([[27.0, 5.0]]), np.array([[0.0, -1.0]]))
    assert arm == pytest.approx(np.array([[0.0, 1.5]]), abs=POSITION_MM)


# ---------------------------------------------------------------------------------------------------
# bad geometry

@pytest.mark.parametrize("outline, message", [
    ([(19, 0), (20, 0)], "at least three"),
    ([(19, 0), (20, 0), (21, 0)], "no area"),
    ([(19, 0), (20, 0), (19, 40), (20, 40)], "crosses or touches itself"),
    ([(-1, 0), (20, 0), (20, 40), (19, 40)], "r >= 0"),
    ([(19, 0), (float("nan"), 0), (20, 40), (19, 40)], "not a finite number"),
    ([(99, 0), (99.01, 0), (99.01, 1000), (99, 1000)], "too thin to resolve"),
    ([[1, 2, 3], [4, 5, 6], [7, 8, 9]], "list of \\[r, z\\] points"),
    ([(10, 0), (12, 0), (12, 2), (10, 2)], "no wall"),
    ([(20 + 2 * math.cos(a), 2 * math.sin(a)) for a in np.linspace(0, 2 * math.pi, 72, endpoint=False)], "no wall"),
], ids=["two points", "collinear", "bow tie", "negative r", "nan", "too thin", "three columns", "square blob",
        "round blob"])
def test_bad_outline_raises_input_error_with_the_key(outline, message):
    with pytest.raises(InputError, match=message) as error:
        derive_shell(np.asarray(outline, float), [], 10.0, key="part.outline")
    assert error.value.key == "part.outline"


def test_closing_point_repeated_is_accepted():
    geometry = derive(SLEEVE + [SLEEVE[0]])
    assert len(geometry.branches) == 1


@pytest.mark.parametrize("size", [0.0, -1.0, float("inf")])
def test_bad_element_size_is_refused(size):
    with pytest.raises(InputError, match="element size"):
        derive(SLEEVE, size=size)
