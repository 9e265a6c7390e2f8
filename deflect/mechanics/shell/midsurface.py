"""Mid-surface of a turned part, derived from its half-section outline and its held boxes.

Takes a closed polyline of the section in (r, z) [mm] (or a `Section`), the held boxes and an element size;
gives a `ShellGeometry`: the `ShellMesh` of the mid-surface (nodes, thickness, 2-node frustum elements, held
nodes fixed), its branches as node chains, and `attach()`, which ties boundary points to the mid-surface.
The user never draws a mid-surface.

Method: the mid-surface is the pruned medial axis of the section (Blum, "A transformation for extracting
new descriptors of shape", in Models for the Perception of Speech and Visual Form, MIT Press, 1967): the
locus of centres of the largest discs inscribed in the section, each disc's diameter being the local wall
thickness. It is approximated by the Voronoi diagram of dense boundary samples, whose vertices inside the
section converge to the medial axis as the samples get denser (Brandt & Algazi, "Continuous skeleton
computation by Voronoi diagram", CVGIP: Image Understanding 55 (1992) 329-338).

    1. Sample the outline at ~1/20 of the thinnest wall (a coarse first pass measures the walls); keep the
       Voronoi vertices (circumcentres of the Delaunay triangles) inside the section and the ridges between
       two of them; a vertex's radius is its distance to the samples it is equidistant from.
    2. Chains of degree-2 vertices become branches between junctions (degree >= 3) and tips.
    3. Prune tip branches that are corner artefacts (`_is_artefact`): a tip branch whose length plus tip
       radius is under two radii of the disc at its junction (the bisector running into a convex corner, the
       two forks at a wall's square end, noise hairs), or whose radius falls into a corner like the bisector
       of a corner wider than 20 deg (the acute corner of a cone faced square to the axis). A real wall,
       however short, stays when it reaches farther (a 2 mm lip of 1 mm wall below a 3 mm flange stays).
       Rounds go from the finest scale up, so the hairs of a filleted corner go before the fork into it.
       Then the branches left at a former junction are joined, and split again at corners, where the walls
       either side turn by 30 deg or more (a cup's wall and bottom: two branches sharing the corner node).
    4. Each tip is extended along its end direction to the boundary (a free rim ends on the rim face), with
       the tip's thickness.
    5. The chains are smoothed lightly (Voronoi chains zig-zag at the sample spacing) and resampled into
       nodes at most `element_size_mm` apart, at least two elements per branch. Node thickness is twice the
       inscribed radius: at a junction this is the thick corner, so hubs and rims stay thick and stiff.
    6. A node is held (all six DOFs fixed) when its wall fibre, the segment through it along the mid-surface
       normal from -t/2 to +t/2, touches or lies inside a held box (closed box).

Nodes are numbered by reverse Cuthill-McKee (Cuthill & McKee, "Reducing the bandwidth of sparse symmetric
matrices", Proc. 24th ACM National Conference, 1969), so a banded solver sees a narrow band even where
branches meet. A bottom that reaches the axis ends with a node at r = 0 exactly; the solver applies the
axis condition there.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components, depth_first_order, minimum_spanning_tree, reverse_cuthill_mckee
from scipy.spatial import Delaunay, QhullError
from shapely.geometry import Polygon

from deflect.errors import InputError
from deflect.geometry.boxes import HeldBox
from deflect.mechanics.shell.mesh import DOFS_PER_NODE, ShellMesh

SAMPLES_PER_WALL = 20          # boundary samples across the thinnest wall (Voronoi radius error ~ t / 1600)
FIRST_PASS_SAMPLES = 2000      # samples of the first pass, which measures the walls
MAX_SAMPLES = 20000            # bound on the sample count, keeps one derivation well under a second
RESAMPLE_RATIO = 1.25          # a second pass runs when the first one's spacing is coarser than this x target
MIN_COVERAGE = 0.99            # share of samples the skeleton must reach; fewer means a wall is unresolved
MIN_WALL_SAMPLES = 5           # a wall thinner than this many sample spacings cannot be resolved
WALL_PERCENTILE = 10.0         # the "thinnest wall" is the 10th length-percentile of the skeleton's thickness
PRUNE_REACH = 2.0              # a tip branch reaching less than 2 junction radii is a corner artefact (brief)
WEDGE_SLOPE = math.sin(math.radians(10.0))   # radius falling faster than this: bisector of a > 20 deg corner
WEDGE_TIP_RATIO = 0.1          # ... ending in a corner: tip radius below a tenth of the junction's
SCALE_BAND = 0.1               # a pruning round takes the artefacts at junction radii within 10 % of the smallest
CORNER_BEND_DEG = 30.0         # two branches left at a junction stay apart when they turn more than this
BEND_NEAR, BEND_REACH = 2.0, 6.0   # ... judged on the walls 2 to 6 junction radii away, beyond the curve
                                   # of the axis into the junction
CONTRACT_RATIO = 1.0           # junctions closer than the larger junction radius are one knot
COLLAPSE_RATIO = 0.01         # Voronoi vertices closer than 1 % of the sample spacing are one vertex
SMOOTH_PASSES = 3              # (1, 2, 1) / 4 passes at the sample spacing: ~1.2 spacings of Gaussian width
ATTACH_REACH = 0.75            # a boundary point meets its mid-surface within 0.75 t along its normal (brief)
ATTACH_WORK = 200_000          # most (point, element) pairs attach() works on at once
CHORD_ERROR_MM = 1e-3          # arcs of a Section become chords straying at most 1 um
RELATIVE_EPS = 1e-9            # geometric tolerance relative to the part's size


@dataclass(frozen=True)
class ShellGeometry:
    """The derived shell model of a section.

    mesh : the mid-surface mesh (held nodes have all six DOFs fixed)
    branches : node index chains, one per branch of the mid-surface, from end to end
    sample_spacing_mm : boundary sample spacing the medial axis was computed with [mm]
    """

    mesh: ShellMesh
    branches: list[np.ndarray]
    sample_spacing_mm: float

    def attach(self, points_rz: np.ndarray, inward_normals: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Tie boundary points to the mid-surface point they belong to.

        That point is the centre of the largest inscribed disc touching the boundary point: marching along the
        inward normal, the first crossing of the mid-surface, if it lies within 0.75 of the local thickness;
        otherwise (an end face, whose normal runs along the wall) the nearest mid-surface point.

        points_rz : (k, 2) boundary points [mm]
        inward_normals : (k, 2) normals pointing into the material (need not be unit)
        Returns element index (k,), xi in [0, 1] from the element's first node to its second (k,), and the arm
        (k, 2) = boundary point minus its mid-surface point [mm].
        """
        points = np.asarray(points_rz, float).reshape(-1, 2)
        normals = np.asarray(inward_normals, float).reshape(-1, 2)
        if normals.shape != points.shape:
            raise ValueError(f"attach: {len(points)} points but {len(normals)} normals")
        lengths = np.hypot(normals[:, 0], normals[:, 1])
        if np.any(~(lengths > 0)):
            raise ValueError("attach: every normal must have a positive length")
        normals = normals / lengths[:, None]
        mesh = self.mesh
        a = mesh.nodes_rz[mesh.elements[:, 0]]
        b = mesh.nodes_rz[mesh.elements[:, 1]]
        ta = mesh.thickness_mm[mesh.elements[:, 0]]
        tb = mesh.thickness_mm[mesh.elements[:, 1]]
        eps = RELATIVE_EPS * _size(mesh.nodes_rz)
        element, xi = np.empty(len(points), int), np.empty(len(points))
        rows = max(1, ATTACH_WORK // max(1, len(a)))  # points per pass: the work arrays are points x elements
        for first in range(0, len(points), rows):
            part = slice(first, first + rows)
            crossing, along, distance = _first_crossing(points[part], normals[part], a, b, eps)
            crossed = crossing >= 0
            thickness = np.where(crossed, ta[crossing] + along * (tb[crossing] - ta[crossing]), 0.0)
            accept = crossed & (distance <= ATTACH_REACH * thickness + eps)
            near_element, near_xi = _nearest_on_segments(points[part], a, b)
            element[part] = np.where(accept, crossing, near_element)
            xi[part] = np.where(accept, along, near_xi)
        foot = a[element] + xi[:, None] * (b[element] - a[element])
        return element, xi, points - foot


# ---------------------------------------------------------------------------------------------------
# public entry points

def derive_shell(polygon_rz: np.ndarray, held: list[HeldBox], element_size_mm: float,
                 key: str = "part.outline", *, sample_spacing_mm: float | None = None) -> ShellGeometry:
    """Shell model of a section given as a closed polyline.

    polygon_rz : (N, 2) closed polyline of the section (r, z) [mm]; either orientation; a repeated first
        point at the end is allowed
    held : held boxes; a box that touches material of the part but catches no node's wall fibre holds the
        node nearest to it (a box thinner than the element spacing still holds the part)
    element_size_mm : largest node spacing along the mid-surface [mm]
    key : job-file key named in errors about the outline
    sample_spacing_mm : boundary sample spacing [mm]; by default ~1/20 of the thinnest wall

    Raises InputError(key, ...) for an outline that cannot be a section (fewer than three points, no area,
    r < 0, crossing itself, walls too thin to resolve at its size) or has no wall (a round or square blob,
    nowhere longer than thick), and InputError(box.key, ...) for a box that touches no material. No held
    node at all is allowed here (the solver reports the unheld part).
    """
    size = _check_element_size(element_size_mm)
    outline = _clean_outline(polygon_rz, key)
    for box in held:
        _check_box(box)
    skeleton = _medial_axis(outline, key, sample_spacing_mm)
    nodes, thickness, elements, branches = _mesh_branches(skeleton, size, held)
    nodes, thickness, elements, branches = _renumber(nodes, thickness, elements, branches)
    fixed = np.zeros((len(nodes), DOFS_PER_NODE), bool)
    for box in held:
        fixed[_held_nodes(box, outline, nodes, thickness, elements)] = True
    mesh = ShellMesh(nodes_rz=nodes, thickness_mm=thickness, elements=elements, fixed=fixed)
    return ShellGeometry(mesh=mesh, branches=branches, sample_spacing_mm=skeleton.spacing)


def shell_from_section(section, held: list[HeldBox], element_size_mm: float) -> ShellGeometry:
    """Shell model of a `deflect.geometry.section.Section` (anything with `.polygon(max_chord_error_mm)`)."""
    return derive_shell(section.polygon(CHORD_ERROR_MM), held, element_size_mm, key="part.outline")


# ---------------------------------------------------------------------------------------------------
# input checks

def _size(points: np.ndarray) -> float:
    """The part's size: diagonal of the bounding box [mm]."""
    return float(np.hypot(*(points.max(axis=0) - points.min(axis=0))))


def _check_element_size(element_size_mm: float) -> float:
    if not (isinstance(element_size_mm, (int, float, np.floating)) and math.isfinite(element_size_mm)
            and element_size_mm > 0):
        raise InputError("element_size_mm", f"the element size must be a positive length in mm, "
                                            f"got {element_size_mm!r}")
    return float(element_size_mm)


def _check_box(box: HeldBox) -> None:
    for name, (low, high) in (("r", box.r_range), ("z", box.z_range)):
        if not (math.isfinite(low) and math.isfinite(high)):
            raise InputError(box.key, f"{name} = [{low}, {high}]: both ends must be finite numbers of mm")
        if low > high:
            raise InputError(box.key, f"{name} = [{low:g}, {high:g}]: the first value must not exceed the "
                                      "second")


def _clean_outline(polygon_rz: np.ndarray, key: str) -> np.ndarray:
    """The outline as a counter-clockwise (n, 2) array without repeated points, checked."""
    try:
        points = np.asarray(polygon_rz, float)
    except (TypeError, ValueError):
        raise InputError(key, "the outline must be a list of [r, z] points") from None
    if points.ndim != 2 or points.shape[1] != 2:
        raise InputError(key, f"the outline must be a list of [r, z] points, got an array of shape "
                              f"{points.shape}")
    if not np.all(np.isfinite(points)):
        raise InputError(key, "the outline holds a coordinate that is not a finite number")
    if len(points) < 3:
        raise InputError(key, f"the outline has {len(points)} points; a section needs at least three")
    scale = _size(points)
    eps = RELATIVE_EPS * max(scale, 1.0)
    step = np.hypot(*(np.roll(points, -1, axis=0) - points).T)
    points = points[step > eps]
    if len(points) < 3 or scale <= 0:
        raise InputError(key, "the outline has fewer than three distinct points; a section needs at least three")
    if points[:, 0].min() < -eps:
        i = int(np.argmin(points[:, 0]))
        raise InputError(key, f"the outline reaches r = {points[i, 0]:.4g} mm at z = {points[i, 1]:.4g} mm; a "
                              "half-section lies in r >= 0")
    points[:, 0] = np.maximum(points[:, 0], 0.0)
    _check_simple(points, key)
    area = _signed_area(points)
    if abs(area) <= eps * scale:
        raise InputError(key, "the outline encloses no area")
    if area < 0:
        points = points[::-1].copy()
    return points


def _signed_area(points: np.ndarray) -> float:
    """Shoelace area, positive for a counter-clockwise loop [mm2]."""
    r, z = points[:, 0], points[:, 1]
    return 0.5 * float(np.dot(r, np.roll(z, -1)) - np.dot(np.roll(r, -1), z))


def _cross(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return u[..., 0] * v[..., 1] - u[..., 1] * v[..., 0]


def _check_simple(points: np.ndarray, key: str) -> None:
    """InputError when two edges that are not neighbours cross or touch. The pairs whose boxes meet come from an
    R-tree of the edges (shapely's STRtree), so the work grows with the outline, not with its square."""
    n = len(points)
    start, end = points, np.roll(points, -1, axis=0)
    edges = shapely.linestrings(np.stack([start, end], axis=1))
    ii, jj = shapely.STRtree(edges).query(edges)              # pairs of edges whose boxes meet
    later = (jj > ii + 1) & ~((ii == 0) & (jj == n - 1))     # each pair once, neighbours excluded (last-first too)
    ii, jj = ii[later], jj[later]
    order = np.lexsort((jj, ii))
    ii, jj = ii[order], jj[order]
    di, dj = end[ii] - start[ii], end[jj] - start[jj]
    o1, o2 = _cross(di, start[jj] - start[ii]), _cross(di, end[jj] - start[ii])
    o3, o4 = _cross(dj, start[ii] - start[jj]), _cross(dj, end[ii] - start[jj])
    crossing = np.flatnonzero((o1 * o2 <= 0) & (o3 * o4 <= 0))
    if len(crossing):
        k = crossing[0]
        r, z = start[jj[k]]
        raise InputError(key, f"the outline crosses or touches itself near (r, z) = ({r:.4g}, {z:.4g}); "
                              "it must be one closed loop that does not meet itself")


# ---------------------------------------------------------------------------------------------------
# 1. Voronoi approximation of the medial axis

def _sample_boundary(outline: np.ndarray, spacing: float) -> np.ndarray:
    """Points along the outline at most `spacing` apart, every outline vertex among them."""
    edge = np.roll(outline, -1, axis=0) - outline
    count = np.maximum(1, np.ceil(np.hypot(edge[:, 0], edge[:, 1]) / spacing).astype(int))
    owner = np.repeat(np.arange(len(outline)), count)
    step = np.arange(len(owner)) - np.repeat(np.cumsum(count) - count, count)
    fraction = step / count[owner]
    return outline[owner] + fraction[:, None] * edge[owner]


def _inside(points: np.ndarray, outline: np.ndarray) -> np.ndarray:
    """Points strictly inside the outline (GEOS's point-in-polygon on a prepared polygon: an edge index
    instead of every point against every edge, which was a third of a derivation)."""
    polygon = Polygon(outline)
    shapely.prepare(polygon)
    return shapely.contains_xy(polygon, points[:, 0], points[:, 1])


@dataclass(frozen=True)
class _VoronoiSkeleton:
    """Inner Voronoi vertices (a tree) with their radii, and the share of samples the tree reaches."""

    xy: np.ndarray           # (K, 2) vertices [mm]
    radius: np.ndarray       # (K,) inscribed radius [mm]
    edges: np.ndarray        # (K - 1, 2) tree edges
    coverage: float


def _circumcentres(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Circumcentres (T, 2) and circumradii (T,) of triangles given as (T, 3, 2) corners; inf if flat."""
    b = corners[:, 1] - corners[:, 0]
    c = corners[:, 2] - corners[:, 0]
    d = 2.0 * _cross(b, c)
    bb, cc = np.einsum("ti,ti->t", b, b), np.einsum("ti,ti->t", c, c)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.column_stack([c[:, 1] * bb - b[:, 1] * cc, b[:, 0] * cc - c[:, 0] * bb]) / d[:, None]
    return corners[:, 0] + u, np.hypot(u[:, 0], u[:, 1])


def _collapse_short_edges(xy: np.ndarray, radius: np.ndarray, edges: np.ndarray, shortest: float):
    """Merge tree vertices joined by edges shorter than `shortest`: the samples along a finely chorded arc are
    cocircular, and their Voronoi vertices pile up at the arc's centre as a knot of zero-length hairs."""
    short = np.hypot(*(xy[edges[:, 0]] - xy[edges[:, 1]]).T) < shortest
    n = len(xy)
    graph = coo_matrix((np.ones(np.count_nonzero(short)), (edges[short, 0], edges[short, 1])), shape=(n, n))
    count, label = connected_components(graph, directed=False)
    members = np.bincount(label, minlength=count)
    merged_xy = np.column_stack([np.bincount(label, xy[:, k], count) for k in (0, 1)]) / members[:, None]
    merged_radius = np.zeros(count)
    np.maximum.at(merged_radius, label, radius)
    return merged_xy, merged_radius, label[edges[~short]]


def _voronoi_skeleton(outline: np.ndarray, spacing: float, key: str) -> _VoronoiSkeleton | None:
    """Inner Voronoi vertices of the boundary samples, as the circumcentres of their Delaunay triangles
    (the Voronoi diagram's dual), joined where two triangles share an edge."""
    samples = _sample_boundary(outline, spacing)
    # samples spaced evenly along parallel faces are exactly cocircular, which Qhull resolves slowly by
    # merging facets; a fixed perturbation of 1e-6 spacing removes that and moves radii by as little
    samples = samples + np.random.default_rng(0).uniform(-1e-6, 1e-6, samples.shape) * spacing
    try:
        triangulation = Delaunay(samples)
    except (QhullError, ValueError) as exc:
        raise InputError(key, f"the outline's medial axis could not be computed ({exc.__class__.__name__}); "
                              "check that the outline is a proper closed section") from None
    triangles = triangulation.simplices
    centre, radius = _circumcentres(samples[triangles])
    kept = np.all(np.isfinite(centre), axis=1)
    kept[kept] = _inside(centre[kept], outline)
    if np.count_nonzero(kept) < 2:
        return None
    neighbour = triangulation.neighbors
    first = np.repeat(np.arange(len(triangles)), 3)
    second = neighbour.ravel()
    both = (second > first) & kept[first] & kept[np.maximum(second, 0)]
    if not both.any():
        return None
    index = np.full(len(triangles), -1)
    index[kept] = np.arange(np.count_nonzero(kept))
    edges = np.column_stack([index[first[both]], index[second[both]]])
    xy, rad, kept_triangles = centre[kept], radius[kept], triangles[kept]

    # the medial axis of a simply connected section is a connected tree: keep the largest component and
    # break any cycle a degenerate sample configuration leaves, by a minimum spanning tree
    length = np.hypot(*(xy[edges[:, 0]] - xy[edges[:, 1]]).T) + RELATIVE_EPS * _size(outline)
    n = len(xy)
    graph = coo_matrix((length, (edges[:, 0], edges[:, 1])), shape=(n, n)).tocsr()
    graph = graph + graph.T
    _, labels = connected_components(graph, directed=False)
    counts = np.bincount(labels[edges[:, 0]], minlength=labels.max() + 1)
    main = labels == int(np.argmax(counts))
    tree = minimum_spanning_tree(graph[main][:, main]).tocoo()
    tree_edges = np.column_stack([tree.row, tree.col])
    tree_xy, tree_radius, tree_edges = _collapse_short_edges(xy[main], rad[main], tree_edges,
                                                             COLLAPSE_RATIO * spacing)

    # coverage: a sample is reached when a vertex of its Voronoi cell (a triangle it belongs to) is on the tree
    reached = np.zeros(len(samples), bool)
    reached[kept_triangles[main].ravel()] = True
    return _VoronoiSkeleton(xy=tree_xy, radius=tree_radius, edges=tree_edges, coverage=float(reached.mean()))


# ---------------------------------------------------------------------------------------------------
# 2. branches, 3. pruning

def _chains(n_vertices: int, edges: np.ndarray) -> list[list[int]]:
    """Split a tree (connected) into chains of vertices between vertices of degree other than 2.

    Each chain runs from its end of lower index; the chains come in the order of that end, then of the edge
    by which they leave it (its row in `edges`). In a depth-first order of the tree from an end, every chain
    is that end's child and the run of degree-2 vertices after it, up to and with the next end: a chain
    starts wherever a vertex's parent is an end.
    """
    if len(edges) == 0:
        return []
    degree = np.bincount(edges.ravel(), minlength=n_vertices)
    is_end = degree != 2
    graph = coo_matrix((np.ones(len(edges)), (edges[:, 0], edges[:, 1])), shape=(n_vertices, n_vertices))
    order, parent = depth_first_order(graph.tocsr(), int(np.argmax(is_end)), directed=False)
    starts = np.flatnonzero(is_end[parent[order[1:]]]) + 1
    chains = [np.concatenate([[parent[run[0]]], run]) for run in np.split(order, starts)[1:]]
    chains = [c if c[0] < c[-1] else c[::-1] for c in chains]
    first, second = np.array([c[0] for c in chains]), np.array([c[1] for c in chains])
    # the row of the edge (first, second) in `edges`, looked up by the pair's number a n + b, either way round
    pair = np.concatenate([edges[:, 0] * n_vertices + edges[:, 1], edges[:, 1] * n_vertices + edges[:, 0]])
    row = np.tile(np.arange(len(edges)), 2)
    by_pair = np.argsort(pair)
    leaving = row[by_pair[np.searchsorted(pair, first * n_vertices + second, sorter=by_pair)]]
    return [chains[k].tolist() for k in np.lexsort((leaving, first))]


def _arclength(points: np.ndarray) -> np.ndarray:
    step = np.hypot(*np.diff(points, axis=0).T)
    return np.concatenate([[0.0], np.cumsum(step)])


def _is_artefact(points: np.ndarray, radius: np.ndarray) -> tuple[bool, float]:
    """Whether a tip branch (points from its junction to its tip) is a corner artefact, and its reach ratio.

    Two tests. (a) Reach: the branch with its tip disc reaches less than PRUNE_REACH junction radii from the
    junction, (length + r_tip) < 2 r_junction: the bisector of a right-angled or blunter corner (reach
    1.41 r), the forks at a wall's square end, noise hairs. A wall stub sticking out of the junction's disc
    by more than about one junction radius stays. (b) Wedge: beyond the junction's disc the radius falls
    linearly into a corner (tip radius < 0.1 r_junction) as it does along the bisector of a corner of
    included angle a, at the rate sin(a / 2); above sin(10 deg) the branch is the corner of a faced-off end
    (a cone faced square to the axis, up to 70 deg half-angle), not a wall. Sharper slivers stay as
    feather edges.
    """
    s = _arclength(points)
    length, r_junction, r_tip = s[-1], radius[0], radius[-1]
    reach = (length + r_tip) / (PRUNE_REACH * r_junction)
    if reach < 1.0:
        return True, reach
    if r_tip < WEDGE_TIP_RATIO * r_junction and length > r_junction:
        r_out = float(np.interp(r_junction, s, radius))
        slope = (r_out - r_tip) / (length - r_junction)
        if slope > WEDGE_SLOPE:
            return True, reach
    return False, reach


def _leaving_direction(points: np.ndarray, far: float, near: float = 0.0) -> np.ndarray:
    """Unit direction of a chain leaving points[0]: the chord from the point `near` along it (at most half
    way) to the point `far` along it (at most its end)."""
    s = _arclength(points)
    ends = np.array([min(near, 0.5 * s[-1]), min(far, s[-1])])
    chord = np.column_stack([np.interp(ends, s, points[:, 0]), np.interp(ends, s, points[:, 1])])
    u = chord[1] - chord[0]
    return u / max(float(np.hypot(*u)), 1e-300)


def _walk(node: int, chain: int, chains: list[list[int]], lengths: list[float], at: dict[int, set[int]],
          xy: np.ndarray, distance: float) -> np.ndarray:
    """Points from `node` along `chain` and on through nodes where two branches meet, until `distance`
    is covered or the walk reaches a tip or a junction."""
    pieces, travelled = [xy[[node]]], 0.0
    while True:
        c = chains[chain]
        oriented = c if c[0] == node else c[::-1]
        pieces.append(xy[oriented[1:]])
        travelled += lengths[chain]
        node = oriented[-1]
        if travelled >= distance or len(at[node]) != 2:
            return np.vstack(pieces)
        (chain,) = at[node] - {chain}


def _bend_deg(first: np.ndarray, second: np.ndarray, radius: float) -> float:
    """How far two point chains leaving the same node turn from running on straight [deg], judged on the
    walls BEND_NEAR to BEND_REACH radii away (the medial axis curves into a junction: a hair's former junction
    on that curve must not look like a corner)."""
    u, v = (_leaving_direction(chain, BEND_REACH * radius, BEND_NEAR * radius) for chain in (first, second))
    return 180.0 - math.degrees(math.acos(float(np.clip(np.dot(u, v), -1.0, 1.0))))


def _tip_path(tip: int, chains: list[list[int]], lengths: list[float], at: dict[int, set[int]], xy: np.ndarray,
              radius: np.ndarray, straight: dict[tuple[int, int, int], bool]) -> tuple[list[int], list[int]] | None:
    """From a tip to its junction: (chain ids, vertices from the junction to the tip), or None when the walk
    reaches another tip (nothing is left to prune against).

    The walk runs on through former junctions whose other branches are gone where it runs on straight (a wall
    that noise hairs cut into pieces is judged whole) and stops where it turns (the second fork of a wall's
    end, when the first went in an earlier round). `straight` holds the verdict of each passage through a
    former junction (node, chain in, chain out) once judged.
    """
    ids, vertices, node = [], [tip], tip
    (chain,) = at[tip]
    while True:
        c = chains[chain]
        oriented = c if c[0] == node else c[::-1]
        vertices.extend(oriented[1:])
        ids.append(chain)
        node = oriented[-1]
        if len(at[node]) == 1:
            return None
        if len(at[node]) >= 3:
            return ids, vertices[::-1]
        (following,) = at[node] - {chain}
        passage = (node, chain, following)
        if passage not in straight:
            reach = BEND_REACH * radius[node]
            back = _walk(node, chain, chains, lengths, at, xy, reach)
            onward = _walk(node, following, chains, lengths, at, xy, reach)
            straight[passage] = _bend_deg(back, onward, radius[node]) < CORNER_BEND_DEG
        if not straight[passage]:
            return ids, vertices[::-1]
        chain = following


def _prune(chains: list[list[int]], xy: np.ndarray, radius: np.ndarray, key: str) -> list[bool]:
    """Remove corner-artefact tip branches, round by round; returns which branches stay.

    A tip branch runs from a tip to its junction (see `_tip_path`). A round takes the artefacts at the
    finest scale left (junction radius within SCALE_BAND of the smallest), so the hairs of a filleted corner
    go before the fork into that corner is judged; all artefacts of a round go together (both forks at a
    wall's square end). A junction left with nothing but artefacts is a compact section: InputError.
    """
    at: dict[int, set[int]] = {}
    for i, c in enumerate(chains):
        at.setdefault(c[0], set()).add(i)
        at.setdefault(c[-1], set()).add(i)
    lengths = [float(_arclength(xy[c])[-1]) for c in chains]
    straight: dict[tuple[int, int, int], bool] = {}
    alive = [True] * len(chains)
    verdicts: dict[tuple[int, ...], tuple[bool, float]] = {}
    while True:
        by_junction: dict[int, list[tuple[float, list[int]]]] = {}
        for tip in sorted(v for v, ids in at.items() if len(ids) == 1):
            found = _tip_path(tip, chains, lengths, at, xy, radius, straight)
            if found is None:
                continue
            ids, vertices = found
            path = tuple(ids)
            if path not in verdicts:
                verdicts[path] = _is_artefact(xy[vertices], radius[vertices])
            artefact, reach = verdicts[path]
            if artefact:
                by_junction.setdefault(vertices[0], []).append((reach, ids))
        if not by_junction:
            return alive
        # finest scale first: a fork's own hairs (at smaller radii) go before the fork is judged
        smallest = min(radius[j] for j in by_junction)
        removed = []
        for junction, paths in by_junction.items():
            if radius[junction] > (1.0 + SCALE_BAND) * smallest:
                continue
            if len(paths) == len(at[junction]):
                # every branch left is a corner of one compact blob: no part of the section is a wall
                r, z = xy[junction]
                raise InputError(key, f"the section is no wall: around (r, z) = ({r:.4g}, {z:.4g}) it is about "
                                      f"{2.0 * radius[junction]:.3g} mm thick but nowhere longer than thick; a "
                                      "shell model needs walls (a sleeve, a bottom, a flange, a disc)")
            removed.extend(i for _, ids in paths for i in ids)
        if not removed:
            return alive
        for i in removed:
            alive[i] = False
            for v in (chains[i][0], chains[i][-1]):
                at[v].discard(i)


# ---------------------------------------------------------------------------------------------------
# joining, contraction, extension

@dataclass(frozen=True)
class _Skeleton:
    """The pruned medial axis: branches as point chains between end nodes, ready to mesh."""

    node_xy: np.ndarray                  # (E, 2) end nodes (junctions, corners, tips) [mm]
    node_radius: np.ndarray              # (E,) [mm]
    branches: list[tuple[int, int, np.ndarray, np.ndarray]]   # (end a, end b, points (m, 2), radii (m,))
    spacing: float                       # boundary sample spacing [mm]


def _join(chains: list[list[int]], nodes: set[int]) -> list[list[int]]:
    """Join the two chains that meet at each of `nodes` into one."""
    chains = [list(c) for c in chains]
    alive = [True] * len(chains)
    at: dict[int, set[int]] = {}
    for i, c in enumerate(chains):
        for v in (c[0], c[-1]):
            at.setdefault(v, set()).add(i)
    for v in sorted(nodes):
        i, j = sorted(at[v])
        ci = chains[i] if chains[i][0] == v else chains[i][::-1]
        cj = chains[j] if chains[j][0] == v else chains[j][::-1]
        joined = ci[::-1] + cj[1:]
        chains.append(joined)
        alive.append(True)
        alive[i] = alive[j] = False
        k = len(chains) - 1
        for end, old in ((joined[0], i), (joined[-1], j)):
            at[end] = (at[end] - {old}) | {k}
        at[v] = set()
    return [c for c, keep in zip(chains, alive) if keep]


def _join_and_split(chains: list[list[int]], xy: np.ndarray, radius: np.ndarray,
                    junctions: set[int]) -> list[list[int]]:
    """Join the branches left at former junctions into runs between tips and junctions, then split the runs
    again at corners: former junctions where the walls on either side turn by CORNER_BEND_DEG or more.

    Of former junctions close together on one turn (hairs near a corner) only the sharpest turn is a corner;
    a former junction on the curve of the axis into a junction (within BEND_REACH radii of it) is none.
    """
    runs = _join(chains, junctions)
    degree: dict[int, int] = {}
    for run in runs:
        for v in (run[0], run[-1]):
            degree[v] = degree.get(v, 0) + 1
    pieces = []
    for run in runs:
        s = _arclength(xy[run])
        r_run = radius[run]
        candidates = []
        for k in range(1, len(run) - 1):
            if run[k] not in junctions:
                continue
            # the scale of the walls here: the largest radius nearby (a thin wall's hair beside a thick
            # wall's end lies on the curve of the axis from the one to the other)
            low, high = np.searchsorted(s, [s[k] - BEND_REACH * r_run[k], s[k] + BEND_REACH * r_run[k]])
            scale = float(r_run[low:high + 1].max())
            reach = BEND_REACH * scale
            if (s[k] < reach and degree[run[0]] >= 3) or (s[-1] - s[k] < reach and degree[run[-1]] >= 3):
                continue
            low, high = np.searchsorted(s, [s[k] - reach, s[k] + reach])
            backward, forward = run[max(low - 1, 0):k + 1][::-1], run[k:high + 1]
            bend = _bend_deg(xy[backward], xy[forward], scale)
            if bend >= CORNER_BEND_DEG:
                candidates.append((bend, k, reach))
        corners: list[int] = []
        for _, k, reach in sorted(candidates, reverse=True):
            if all(abs(s[k] - s[c]) > reach for c in corners):
                corners.append(k)
        cuts = [0] + sorted(corners) + [len(run) - 1]
        pieces.extend(run[a:b + 1] for a, b in zip(cuts[:-1], cuts[1:]))
    return pieces


def _ray_hit(origin: np.ndarray, direction: np.ndarray, outline: np.ndarray, eps: float) -> np.ndarray | None:
    """First point where the ray origin + s direction (s > 0) meets the outline, or None."""
    start = outline
    edge = np.roll(outline, -1, axis=0) - outline
    denominator = _cross(direction, edge)
    w = start - origin
    with np.errstate(divide="ignore", invalid="ignore"):
        s = _cross(w, edge) / denominator
        u = _cross(w, direction) / denominator
    ok = (np.abs(denominator) > 1e-300) & (s > eps) & (u >= -1e-12) & (u <= 1.0 + 1e-12)
    if not ok.any():
        return None
    k = np.flatnonzero(ok)[np.argmin(s[ok])]
    hit = start[k] + np.clip(u[k], 0.0, 1.0) * edge[k]
    if start[k, 0] == 0.0 and start[(k + 1) % len(outline), 0] == 0.0:
        hit[0] = 0.0                      # the axis face: the bottom's last node at r = 0 exactly
    return hit


def _medial_axis(outline: np.ndarray, key: str, spacing: float | None) -> _Skeleton:
    perimeter = float(np.sum(np.hypot(*(np.roll(outline, -1, axis=0) - outline).T)))
    finest = perimeter / MAX_SAMPLES
    if spacing is not None:
        if not (math.isfinite(spacing) and spacing > 0):
            raise ValueError(f"sample_spacing_mm must be a positive length, got {spacing!r}")
        spacing = max(float(spacing), finest)
        found = _pruned(outline, spacing, key)
    else:
        spacing = max(perimeter / FIRST_PASS_SAMPLES, finest)
        found = _pruned(outline, spacing, key)
        target = finest if found is None else max(found[3] / SAMPLES_PER_WALL, finest)
        if spacing > RESAMPLE_RATIO * target:
            spacing = target
            found = _pruned(outline, spacing, key)
    if found is None or found[3] < MIN_WALL_SAMPLES * spacing:
        raise InputError(key, f"a wall of the section is too thin to resolve for its size: at a perimeter of "
                              f"{perimeter:.4g} mm walls must be at least {MIN_WALL_SAMPLES * spacing:.3g} mm "
                              "thick; check the outline for a sliver or a near-touching pair of faces")
    chains, xy, radius, _ = found
    return _finish(outline, chains, xy, radius, spacing)


def _pruned(outline: np.ndarray, spacing: float, key: str):
    """Pruned branches at one sample spacing: (chains, xy, radius, thinnest wall [mm]) or None."""
    skeleton = _voronoi_skeleton(outline, spacing, key)
    if skeleton is None or skeleton.coverage < MIN_COVERAGE:
        return None
    chains = _chains(len(skeleton.xy), skeleton.edges)
    alive = _prune(chains, skeleton.xy, skeleton.radius, key)
    chains = [c for c, keep in zip(chains, alive) if keep]
    if not chains:
        return None
    # thinnest wall: a low length-percentile of the thickness along what is left
    values, weights = [], []
    for c in chains:
        pts, rad = skeleton.xy[c], skeleton.radius[c]
        step = np.hypot(*np.diff(pts, axis=0).T)
        values.append(0.5 * (rad[1:] + rad[:-1]))
        weights.append(step)
    values, weights = np.concatenate(values), np.concatenate(weights)
    order = np.argsort(values)
    cumulative = np.cumsum(weights[order])
    if cumulative[-1] <= 0:
        return None
    k = int(np.searchsorted(cumulative, WALL_PERCENTILE / 100.0 * cumulative[-1]))
    thinnest = 2.0 * float(values[order][min(k, len(order) - 1)])
    return chains, skeleton.xy, skeleton.radius, thinnest


def _finish(outline: np.ndarray, chains: list[list[int]], xy: np.ndarray, radius: np.ndarray,
            spacing: float) -> _Skeleton:
    """Join straight runs and split them at corners, contract junctions that are one knot, extend tips to the
    boundary."""
    degree: dict[int, int] = {}
    for c in chains:
        for v in (c[0], c[-1]):
            degree[v] = degree.get(v, 0) + 1
    # chains end where the tree's degree is not 2: an end shared by two chains was a junction
    junctions = {v for v, d in degree.items() if d == 2}
    chains = _join_and_split(chains, xy, radius, junctions)

    # junctions closer than CONTRACT_RATIO x the larger junction radius are one knot, at the thicker one (four
    # walls meeting give two Voronoi junctions a sample spacing apart); a branch of no length goes too
    merged_into: dict[int, int] = {}

    def root(v: int) -> int:
        while v in merged_into:
            v = merged_into[v]
        return v

    degree = {}
    for c in chains:
        for v in (c[0], c[-1]):
            degree[v] = degree.get(v, 0) + 1
    eps = RELATIVE_EPS * _size(outline)
    keep = []
    for c in chains:
        a, b = root(c[0]), root(c[-1])
        length = _arclength(xy[c])[-1]
        internal = degree[c[0]] >= 2 and degree[c[-1]] >= 2
        short = length < CONTRACT_RATIO * max(radius[a], radius[b]) if internal else length <= eps
        if a != b and short:
            small, big = (a, b) if radius[a] < radius[b] else (b, a)
            merged_into[small] = big
        else:
            keep.append(c)
    ends = sorted({root(v) for c in keep for v in (c[0], c[-1])})
    node_id = {v: i for i, v in enumerate(ends)}
    node_xy, node_radius = xy[ends].copy(), radius[ends].copy()
    final_degree = np.zeros(len(ends), int)
    for c in keep:
        final_degree[node_id[root(c[0])]] += 1
        final_degree[node_id[root(c[-1])]] += 1

    branches = []
    for c in keep:
        a, b = node_id[root(c[0])], node_id[root(c[-1])]
        points, radii = xy[c].copy(), radius[c].copy()
        points[0], points[-1] = node_xy[a], node_xy[b]
        radii[0], radii[-1] = node_radius[a], node_radius[b]
        branches.append([a, b, points, radii])

    # 4. a tip runs on along its end direction to the boundary, keeping its thickness
    for branch in branches:
        for end in (0, 1):
            node = branch[end]
            if final_degree[node] != 1:
                continue
            points, radii = branch[2], branch[3]
            backward = points[::-1] if end == 1 else points
            r_tip = radii[-1] if end == 1 else radii[0]
            look = min(max(2.0 * r_tip, 4.0 * spacing), 0.5 * _arclength(backward)[-1])
            direction = -_leaving_direction(backward, look)
            hit = _ray_hit(backward[0], direction, outline, eps)
            if hit is None:
                continue
            if end == 1:
                branch[2], branch[3] = np.vstack([points, hit]), np.append(radii, r_tip)
            else:
                branch[2], branch[3] = np.vstack([hit, points]), np.insert(radii, 0, r_tip)
            node_xy[node] = hit
    return _Skeleton(node_xy=node_xy, node_radius=node_radius,
                     branches=[(a, b, p, r) for a, b, p, r in branches], spacing=spacing)


# ---------------------------------------------------------------------------------------------------
# 5. smoothing and meshing

def _box_crossings(fine: np.ndarray, fine_s: np.ndarray, held: list[HeldBox]) -> np.ndarray:
    """Arclengths where a branch's mid-surface crosses an edge line of a held box (near the box): nodes put
    there make the held stretch end where the box ends, not up to one element short of it or past it."""
    found = []
    for box in held:
        for axis, other, lines, other_range in ((0, 1, box.r_range, box.z_range), (1, 0, box.z_range, box.r_range)):
            reach = fine[:, 2]   # within a wall's half thickness of the box's other extent
            for line in lines:
                side = fine[:, axis] - line
                k = np.flatnonzero(np.sign(side[:-1]) * np.sign(side[1:]) < 0)
                for i in k:
                    t = side[i] / (side[i] - side[i + 1])
                    at_other = fine[i, other] + t * (fine[i + 1, other] - fine[i, other])
                    if other_range[0] - reach[i] <= at_other <= other_range[1] + reach[i]:
                        found.append(fine_s[i] + t * (fine_s[i + 1] - fine_s[i]))
    return np.unique(np.array(found))


def _node_arclengths(length: float, size: float, breaks: np.ndarray) -> np.ndarray:
    """Node positions along a branch: every break (kept clear of the ends and of each other by a tenth of
    an element) and evenly <= size apart between them, at least two elements in all."""
    clear = 0.1 * size
    kept = []
    for b in np.sort(breaks):
        if clear < b < length - clear and (not kept or b - kept[-1] > clear):
            kept.append(float(b))
    edges = [0.0, *kept, length]
    nodes = [0.0]
    for a, b in zip(edges[:-1], edges[1:]):
        n = max(1, math.ceil((b - a) / size - 1e-9))
        nodes.extend(np.linspace(a, b, n + 1)[1:].tolist())
    if len(nodes) < 3:
        nodes = np.linspace(0.0, length, 3).tolist()
    return np.array(nodes)


def _smooth_resample(points: np.ndarray, radii: np.ndarray, spacing: float, size: float,
                     held: list[HeldBox] = ()) -> tuple[np.ndarray, np.ndarray]:
    """A branch's chain smoothed at the sample spacing, resampled at <= `size`, >= 2 elements, with nodes
    where it crosses the edges of held boxes."""
    s = _arclength(points)
    distinct = np.concatenate([[True], np.diff(s) > 0])
    distinct[-1] = True
    points, radii, s = points[distinct], radii[distinct], s[distinct]
    if s[-1] <= 0:
        raise ValueError("a branch of zero length")
    fine_s = np.linspace(0.0, s[-1], max(3, math.ceil(s[-1] / spacing) + 1))
    fine = np.column_stack([np.interp(fine_s, s, points[:, 0]), np.interp(fine_s, s, points[:, 1]),
                            np.interp(fine_s, s, radii)])
    for _ in range(SMOOTH_PASSES):
        fine[1:-1] = 0.25 * fine[:-2] + 0.5 * fine[1:-1] + 0.25 * fine[2:]
    fine_s = _arclength(fine[:, :2])
    node_s = _node_arclengths(fine_s[-1], size, _box_crossings(fine, fine_s, list(held)))
    nodes = np.column_stack([np.interp(node_s, fine_s, fine[:, k]) for k in range(3)])
    nodes[0], nodes[-1] = fine[0], fine[-1]
    return nodes[:, :2], nodes[:, 2]


def _mesh_branches(skeleton: _Skeleton, size: float, held: list[HeldBox] = ()):
    """Nodes (end nodes first), thickness, elements and node chains of the branches."""
    nodes = [skeleton.node_xy]
    thickness = [2.0 * skeleton.node_radius]
    n = len(skeleton.node_xy)
    elements, chains = [], []
    for a, b, points, radii in skeleton.branches:
        xy, rad = _smooth_resample(points, radii, skeleton.spacing, size, held)
        inner = np.arange(n, n + len(xy) - 2)
        n += len(inner)
        nodes.append(xy[1:-1])
        thickness.append(2.0 * rad[1:-1])
        chain = np.concatenate([[a], inner, [b]])
        chains.append(chain)
        elements.append(np.column_stack([chain[:-1], chain[1:]]))
    return np.vstack(nodes), np.concatenate(thickness), np.vstack(elements), chains


def _renumber(nodes, thickness, elements, branches):
    """Reverse Cuthill-McKee order of the nodes (narrow band for the solver)."""
    n = len(nodes)
    graph = coo_matrix((np.ones(2 * len(elements)),
                        (np.concatenate([elements[:, 0], elements[:, 1]]),
                         np.concatenate([elements[:, 1], elements[:, 0]]))), shape=(n, n)).tocsr()
    order = reverse_cuthill_mckee(graph, symmetric_mode=True)
    new = np.empty(n, int)
    new[order] = np.arange(n)
    elements = new[elements]
    elements = elements[np.lexsort((elements.max(axis=1), elements.min(axis=1)))]
    return nodes[order], thickness[order], elements, [new[c] for c in branches]


# ---------------------------------------------------------------------------------------------------
# 6. held nodes

def _segments_touch_box(p0: np.ndarray, p1: np.ndarray, r_range, z_range) -> np.ndarray:
    """Closed segment / closed box test, vectorised (Liang & Barsky, "A new concept and method for line
    clipping", ACM Transactions on Graphics 3 (1984) 1-22)."""
    d = p1 - p0
    t_in = np.zeros(len(p0))
    t_out = np.ones(len(p0))
    outside = np.zeros(len(p0), bool)
    for axis, (low, high) in enumerate((r_range, z_range)):
        for p, q in ((-d[:, axis], p0[:, axis] - low), (d[:, axis], high - p0[:, axis])):
            parallel = p == 0
            outside |= parallel & (q < 0)
            with np.errstate(divide="ignore", invalid="ignore"):
                t = q / p
            t_in = np.where(~parallel & (p < 0), np.maximum(t_in, t), t_in)
            t_out = np.where(~parallel & (p > 0), np.minimum(t_out, t), t_out)
    return ~outside & (t_in <= t_out)


def _held_nodes(box: HeldBox, outline: np.ndarray, nodes: np.ndarray, thickness: np.ndarray,
                elements: np.ndarray) -> np.ndarray:
    """Indices of the nodes a box holds (see `derive_shell`)."""
    eps = RELATIVE_EPS * _size(outline)
    r_range = (box.r_range[0] - eps, box.r_range[1] + eps)
    z_range = (box.z_range[0] - eps, box.z_range[1] + eps)
    edges_touch = _segments_touch_box(outline, np.roll(outline, -1, axis=0), r_range, z_range)
    corner = np.array([[box.r_range[0], box.z_range[0]]])
    if not (edges_touch.any() or _inside(corner, outline)[0]):
        low, high = outline.min(axis=0), outline.max(axis=0)
        raise InputError(box.key, f"the held box r = [{box.r_range[0]:g}, {box.r_range[1]:g}], "
                                  f"z = [{box.z_range[0]:g}, {box.z_range[1]:g}] touches no material of the "
                                  f"part: the part lies in r = [{low[0]:.4g}, {high[0]:.4g}], "
                                  f"z = [{low[1]:.4g}, {high[1]:.4g}]; move the box onto the part")
    # wall fibre of a node: along the normal of each element it belongs to, from -t/2 to +t/2
    tangent = nodes[elements[:, 1]] - nodes[elements[:, 0]]
    normal = np.column_stack([-tangent[:, 1], tangent[:, 0]]) / np.hypot(*tangent.T)[:, None]
    owner = elements.T.ravel()
    half = 0.5 * thickness[owner][:, None] * np.vstack([normal, normal])
    touch = _segments_touch_box(nodes[owner] - half, nodes[owner] + half, r_range, z_range)
    held = np.unique(owner[touch])
    if len(held):
        return held
    gap = np.column_stack([np.maximum.reduce([box.r_range[0] - nodes[:, 0], np.zeros(len(nodes)),
                                              nodes[:, 0] - box.r_range[1]]),
                           np.maximum.reduce([box.z_range[0] - nodes[:, 1], np.zeros(len(nodes)),
                                              nodes[:, 1] - box.z_range[1]])])
    return np.array([int(np.argmin(np.hypot(gap[:, 0], gap[:, 1])))])


# ---------------------------------------------------------------------------------------------------
# attach() helpers

def _first_crossing(points, normals, a, b, eps):
    """For each ray point + s normal: (element, xi, s) of its first crossing with a segment a-b, or -1."""
    d = b - a                                               # (M, 2)
    w = a[None, :, :] - points[:, None, :]                  # (k, M, 2)
    denominator = _cross(normals[:, None, :], d[None, :, :])
    with np.errstate(divide="ignore", invalid="ignore"):
        s = _cross(w, d[None, :, :]) / denominator
        u = _cross(w, normals[:, None, :]) / denominator
    parallel = np.abs(denominator) <= 1e-12 * np.hypot(d[:, 0], d[:, 1])[None, :]
    ok = ~parallel & (s > eps) & (u >= -1e-12) & (u <= 1.0 + 1e-12)
    s = np.where(ok, s, np.inf)
    element = np.argmin(s, axis=1)
    rows = np.arange(len(points))
    distance = s[rows, element]
    crossed = np.isfinite(distance)
    xi = np.clip(np.where(crossed, u[rows, element], 0.0), 0.0, 1.0)
    return np.where(crossed, element, -1), xi, distance


def _nearest_on_segments(points, a, b):
    """Nearest point of the segments a-b to each point: (element, xi)."""
    d = b - a
    w = points[:, None, :] - a[None, :, :]
    xi = np.clip(np.einsum("kmi,mi->km", w, d) / np.einsum("mi,mi->m", d, d)[None, :], 0.0, 1.0)
    gap = w - xi[:, :, None] * d[None, :, :]
    element = np.argmin(np.einsum("kmi,kmi->km", gap, gap), axis=1)
    return element, xi[np.arange(len(points)), element]
