"""The in-process part: the half-section as passes take material away, and what the finished part keeps.

Takes polygons of the (r, z) half-section (counter-clockwise (N, 2) arrays, mm) and the passes of a job
(`deflect.job.process.Pass`), and gives:

* `target_surface` - where a pass's tool tip should leave the surface: the finished contour offset along its
  outward normal, as seen from the pass's side (od from large r, id from the axis, face from large z),
  sampled in feed order;
* `cuts_for_pass` - the cuts a pass makes: equal-depth roughing steps when the stock is deeper than the
  pass's most depth per cut (ceil(d / depth) cuts, common practice), the final cut, spring cuts;
* `depth_of_material` - the stock beyond each target point along its normal;
* `remove` - the part after a cut (or while the tool is part-way along it) when the surface actually left
  lies `left_mm` outside the target;
* `deviation_along` - the material left beyond the drawn surface, along the finished boundary;
* `polygon_mass` - volume, mass and axial mass moment of inertia of a polygon section.

A surface "as seen from a side" is the visible envelope: for an od pass, at each z the outermost boundary
point, found slab by slab between the polygon's vertex levels; where the outermost edge changes with a
jump, the envelope runs across (a shoulder the tool moves along). Offsets of it are exact Minkowski sums
(dilation or erosion by a disc) computed by shapely/GEOS, with arcs split finely enough to stray less
than `BUFFER_CHORD_MM` from the true offset. Volumes and inertias integrate over the polygon
by Green's theorem (G. Green, "An Essay on the Application of Mathematical Analysis to the Theories of
Electricity and Magnetism", 1828) with the solid of revolution from Pappus-Guldinus (P. Guldin,
"Centrobaryca", 1635-1641).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon
from shapely.geometry.polygon import orient
from shapely.ops import nearest_points

from deflect.errors import InputError, ModelError
from deflect.geometry.section import POLYGON_CHORD_MM, Section
from deflect.job.process import SURFACES, Pass
from deflect.job.tooling import Tool
from deflect.machining.toolshape import ToolShape, shadow, tool_shape

# Each side as a frame (u, v): u grows towards the tool, v runs along the surface. The maps are symmetric
# reflections or the identity, so the same matrix takes (r, z) to (u, v) and back.
_FRAME = {
    "od": np.array([[1.0, 0.0], [0.0, 1.0]]),     # u = r,  v = z
    "id": np.array([[-1.0, 0.0], [0.0, 1.0]]),    # u = -r, v = z
    "face": np.array([[0.0, 1.0], [1.0, 0.0]]),   # u = z,  v = r
}
# Offset arcs are split so that no chord strays more than this from the true offset circle [mm]:
# 0.1 um, far below any turned tolerance.
BUFFER_CHORD_MM = 1e-4
_MIN_QUAD_SEGS = 8
_MAX_QUAD_SEGS = 512
# A piece cut loose that is smaller than this share of the section's area is a chip, not a second part.
CHIP_SHARE = 1e-3
# Lengths below this fraction of the part's size count as zero (float rounding is ~1e-16 of it).
_REL_TOL = 1e-9
# Two segments whose directions differ by more than this [rad] meet in a corner (a fillet meets its
# neighbours tangentially, to float rounding)
_CORNER_RAD = 1e-6
# Most entries of the (slabs x edges) and (rays x edges) work arrays handled at once.
_WORK_ENTRIES = 2_000_000
# Most cuts one pass makes (roughing steps, the finishing cut and its spring cuts): each cut costs shell models of
# its own (a tenth of a second or so), and a real roughing pass takes its stock in a few dozen cuts at most
# (40 mm of radial stock at 1 mm a cut); `depth = 1e-9` would otherwise ask for billions (README, limits).
MAX_CUTS_PER_PASS = 100


@dataclass(frozen=True, eq=False)
class CutPath:
    """One cut of a pass: where the tool tip's finished surface should be, station by station."""

    points_rz: np.ndarray   # (K, 2) target points [mm] in feed order (start -> end)
    normals: np.ndarray     # (K, 2) unit outward normal of the target surface (pointing at the tool)
    feed_dir: np.ndarray    # (K, 2) unit feed direction along the path


@dataclass(frozen=True, eq=False)
class Deviation:
    """Material left beyond the drawn surface along the finished boundary."""

    points_rz: np.ndarray     # (N, 2) points on the nominal boundary [mm]
    normals: np.ndarray       # (N, 2) unit outward normal of the nominal boundary
    deviation_mm: np.ndarray  # (N,) material beyond the nominal surface along the normal [mm]; > 0 thicker
    segment: np.ndarray       # (N,) index of the section segment each point lies on
    corner: np.ndarray        # (N,) bool: the point is a corner of the drawn outline (two surfaces meet there)


# ---------------------------------------------------------------------------------------------------
# the visible envelope of a polygon from one side

def _frame(surface: str) -> np.ndarray:
    if surface not in _FRAME:
        raise ValueError(f"surface must be one of {', '.join(SURFACES)}, got {surface!r}")
    return _FRAME[surface]


def _ring_edges(geometry) -> np.ndarray:
    """Every boundary edge (E, 4) as u0, v0, u1, v1 of a shapely polygon or multipolygon."""
    edges = []
    for poly in shapely.get_parts(geometry):
        for ring in (poly.exterior, *poly.interiors):
            xy = np.asarray(ring.coords)
            edges.append(np.column_stack([xy[:-1], xy[1:]]))
    return np.concatenate(edges) if edges else np.zeros((0, 4))


def _drop_repeats_and_collinear(points: np.ndarray, tol: float) -> np.ndarray:
    """The polyline without repeated points and without interior points on a straight run."""
    keep = np.ones(len(points), bool)
    keep[1:] = np.linalg.norm(np.diff(points, axis=0), axis=1) > tol
    points = points[keep]
    if len(points) < 3:
        return points
    a = points[1:-1] - points[:-2]
    b = points[2:] - points[1:-1]
    cross = a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]
    dot = np.einsum("ij,ij->i", a, b)
    straight = (np.abs(cross) <= _REL_TOL * np.linalg.norm(a, axis=1) * np.linalg.norm(b, axis=1)) & (dot > 0)
    return points[np.concatenate([[True], ~straight, [True]])]


def _upper_envelope(edges: np.ndarray, v_lo: float, v_hi: float, tol: float) -> np.ndarray:
    """The largest-u boundary over v_lo <= v <= v_hi as a polyline (M, 2) of (u, v), v non-decreasing.

    Between two consecutive vertex levels of v no edge of a simple polygon crosses another, so one edge is
    outermost over the whole slab; where the outermost edge changes with a jump in u, the polyline runs
    across at constant v (a shoulder as the tool sees it).
    """
    u0, v0, u1, v1 = edges.T
    slanted = v1 != v0
    u0, v0, u1, v1 = u0[slanted], v0[slanted], u1[slanted], v1[slanted]
    levels = np.concatenate([v0, v1])
    # every edge end is a level, however close to another (levels a rounding apart, a buffered outline's
    # vertices, make thin slabs that the edges ending there span exactly)
    levels = np.unique(np.concatenate([[v_lo, v_hi], levels[(levels > v_lo) & (levels < v_hi)]]))
    bottom, top = levels[:-1], levels[1:]
    lo_edge, hi_edge = np.minimum(v0, v1), np.maximum(v0, v1)
    slope = (u1 - u0) / (v1 - v0)
    # every edge end is a level, so an edge either covers a whole slab or none of its inside: edge e spans the
    # slabs first[e] .. stop[e] - 1, found exactly on the levels themselves (a midpoint of two levels one
    # rounding step apart rounds onto one of them, and would find only edges that do not belong there). Only
    # these (slab, edge) pairs are compared, a few per slab (as many as a line across the part crosses edges)
    first = np.searchsorted(levels, lo_edge, side="left")
    count = np.maximum(np.searchsorted(levels, hi_edge, side="right") - 1 - first, 0)
    best = np.full(len(bottom), -np.inf)
    chosen = np.full(len(bottom), -1)
    ends = np.cumsum(count)
    start = 0
    while start < len(count):
        # edges in order, at most _WORK_ENTRIES pairs at once (one edge's own pairs may be more)
        stop = max(start + 1, int(np.searchsorted(ends, (ends[start - 1] if start else 0) + _WORK_ENTRIES, "right")))
        edge = np.repeat(np.arange(start, stop), count[start:stop])
        offsets = np.repeat(ends[start:stop] - count[start:stop], count[start:stop])
        slab = first[edge] + np.arange(len(edge)) - offsets
        # outermost over the slab: the largest sum of the ends (edges do not cross inside a slab; two that
        # meet at one end part at the other); of equals, the first edge
        u_sum = 2.0 * u0[edge] + ((bottom[slab] - v0[edge]) + (top[slab] - v0[edge])) * slope[edge]
        order = np.lexsort((edge, -u_sum, slab))
        lead = order[np.r_[True, slab[order][1:] != slab[order][:-1]]] if len(order) else order
        better = u_sum[lead] > best[slab[lead]]
        best[slab[lead][better]] = u_sum[lead][better]
        chosen[slab[lead][better]] = edge[lead][better]
        start = stop
    if (chosen < 0).any():
        raise ModelError(f"the surface has a gap at {float(bottom[np.argmax(chosen < 0)]):.6g} mm along the pass")
    u_bottom = u0[chosen] + (bottom - v0[chosen]) * slope[chosen]
    u_top = u0[chosen] + (top - v0[chosen]) * slope[chosen]
    points = np.empty((2 * len(bottom), 2))
    points[0::2] = np.column_stack([u_bottom, bottom])
    points[1::2] = np.column_stack([u_top, top])
    return _drop_repeats_and_collinear(points, tol)


def _quad_segs(distance_mm: float) -> int:
    """Segments per quarter circle so that an offset arc's chords stray < BUFFER_CHORD_MM (sagitta)."""
    if abs(distance_mm) <= BUFFER_CHORD_MM:
        return _MIN_QUAD_SEGS
    half_angle = math.acos(1.0 - BUFFER_CHORD_MM / abs(distance_mm))
    if half_angle == 0.0:          # an offset so large that the chord error rounds away: the finest allowed
        return _MAX_QUAD_SEGS
    return int(min(_MAX_QUAD_SEGS, max(_MIN_QUAD_SEGS, math.ceil(math.pi / (4.0 * half_angle)))))


def _face_without_walls(envelope: np.ndarray, v_lo: float, v_hi: float, tol: float) -> np.ndarray:
    """A face pass's envelope that never runs down a wall: from the face (the highest point within the pass's
    extent) outwards, where the envelope drops at constant v (down the OD or into the bore, as the face's
    highest-z view sees them), it carries on at the level above the drop instead, as a facing tool that
    overruns the edge of the face does."""
    within = np.flatnonzero((envelope[:, 1] >= v_lo - tol) & (envelope[:, 1] <= v_hi + tol))
    if len(within) == 0:
        return envelope
    held = envelope.copy()
    top = int(within[np.argmax(envelope[within, 0])])
    for step in (1, -1):
        level = None
        i = top
        while 0 <= i + step < len(held):
            here, there = held[i], envelope[i + step]
            if level is None and abs(there[1] - here[1]) <= tol and there[0] < here[0] - tol:
                level = here[0]
            if level is not None:
                held[i + step, 0] = level
            i += step
    return _drop_repeats_and_collinear(held, tol)


def _offset_envelope(nominal_uv: np.ndarray, offset_mm: float, v_lo: float, v_hi: float, tol: float,
                     hold_walls: bool = False, shape: ToolShape | None = None, feed_sign: float = 1.0) -> np.ndarray:
    """The nominal's visible envelope offset by offset_mm towards +u, over [v_lo, v_hi], in (u, v).

    The envelope is first carried on at constant u beyond the part's ends (the tool keeps its last
    position and feeds on to the end of the pass), closed far on the -u side into a region that holds
    everything the tool cannot see, and that region is dilated (offset > 0) or eroded (offset < 0) by a
    disc. Offsetting this region rather than the part moves only the surface on the pass's side, never the
    opposite wall. With the tool's shape, the region also takes in what the insert's edges cannot reach
    (`toolshape.shadow`, feeding towards +v for feed_sign > 0) and is closed by the nose's disc, so internal
    corners keep the nose radius (`_swept_by_nose`).
    """
    part_lo, part_hi = nominal_uv[:, 1].min(), nominal_uv[:, 1].max()
    envelope = _upper_envelope(np.column_stack([nominal_uv, np.roll(nominal_uv, -1, axis=0)]),
                               part_lo, part_hi, tol)
    if hold_walls:
        envelope = _face_without_walls(envelope, v_lo, v_hi, tol)
    size = float(np.ptp(nominal_uv, axis=0).max())
    margin = abs(offset_mm) + 1.0
    ext_lo, ext_hi = min(part_lo, v_lo) - margin, max(part_hi, v_hi) + margin
    u_far_side = envelope[:, 0].min() - 2.0 * abs(offset_mm) - size - 1.0
    hidden = Polygon(np.vstack([[envelope[0, 0], ext_lo], envelope, [envelope[-1, 0], ext_hi],
                                [u_far_side, ext_hi], [u_far_side, ext_lo]]))
    if shape is not None:
        hidden = _swept_by_nose(hidden, nominal_uv, offset_mm, shape, feed_sign, tol)
    elif offset_mm != 0.0:
        hidden = hidden.buffer(offset_mm, quad_segs=_quad_segs(offset_mm), join_style="round")
    return _upper_envelope(_ring_edges(hidden), v_lo, v_hi, tol)


def _swept_by_nose(hidden: Polygon, nominal_uv: np.ndarray, offset_mm: float, shape: ToolShape, feed_sign: float,
                   tol: float) -> Polygon:
    """The hidden region offset by offset_mm, and where the tool's shape leaves more: the part's own side (the
    region behind its visible envelope, without the path carried on beyond its ends, whose corner with the
    part's end is no corner of the part) with what the insert's edges cannot reach beside it
    (`toolshape.shadow`), offset too and closed by the nose's disc of radius r (dilated by offset + r, eroded
    by r). A concave corner then keeps exactly the arc of radius r tangent to both walls.

    The closing is done only in windows around the corners sharper than the nose (`_nose_corners`) and the
    edges' shadows, each window wide enough that the disc does not feel its edges; elsewhere the surface is
    the offset alone, exactly as without the tool's shape. The arcs are chords of at most BUFFER_CHORD_MM, so
    a corner's polygon differs from the exact region by less than that chord error times the arc's length.
    """
    moved = hidden.buffer(offset_mm, quad_segs=_quad_segs(offset_mm), join_style="round") if offset_mm else hidden
    u_far, v_low, u_near, v_high = hidden.bounds
    part_lo, part_hi = nominal_uv[:, 1].min(), nominal_uv[:, 1].max()
    envelope = _upper_envelope(np.column_stack([nominal_uv, np.roll(nominal_uv, -1, axis=0)]), part_lo, part_hi, tol)
    part_side = Polygon(np.vstack([envelope, [u_far, envelope[-1, 1]], [u_far, envelope[0, 1]]]))
    nose = shape.nose_radius_mm
    windows = _nose_corners(envelope, nose + offset_mm)
    surface = np.asarray(shapely.simplify(LineString(envelope), 0.1 * BUFFER_CHORD_MM).coords)
    edges = shadow(surface, shape, feed_sign, (u_near - u_far) + (v_high - v_low))
    if edges is not None:
        beyond = edges.intersection(shapely.box(u_far, v_low, u_near, v_high)).difference(part_side)
        pieces = [q for q in shapely.get_parts(beyond) if q.area > BUFFER_CHORD_MM * q.length]
        if pieces:
            part_side = part_side.union(shapely.union_all(pieces))
            windows += [q.bounds for q in pieces]
    reach = 2.0 * (abs(offset_mm) + nose) + 1.0
    for lo_u, lo_v, hi_u, hi_v in windows:
        near = shapely.box(lo_u - reach, lo_v - reach, hi_u + reach, hi_v + reach)
        # long edges beside dense arcs make GEOS smooth its buffers' input by up to 1 % of the distance (a
        # face moved micrometres); edges no longer than NOSE_EDGE_MM keep every face where it is
        local = shapely.segmentize(part_side.intersection(near.buffer(reach, join_style="mitre")), NOSE_EDGE_MM)
        if offset_mm < 0.0:
            local = local.buffer(offset_mm, quad_segs=_quad_segs(offset_mm), join_style="round")
        grown = max(offset_mm, 0.0) + nose
        if grown > 0.0:
            local = local.buffer(grown, quad_segs=_quad_segs(grown), join_style="round")
        if nose > 0.0:
            local = local.buffer(-nose, quad_segs=_quad_segs(nose), join_style="round")
        moved = moved.union(local.intersection(near))
    return moved


# Longest edge handed to the nose's closing [mm] (see `_swept_by_nose`).
NOSE_EDGE_MM = 0.05
# A stretch of the surface turning this much more [rad] than an arc of the nose's radius would is a corner the
# nose rounds off (less leaves a sliver below a nanometre: r (theta / 2)^2 / 2 for r = 1 mm).
NOSE_CORNER_RAD = 0.01


def _nose_corners(envelope: np.ndarray, radius_mm: float) -> list[tuple[float, float, float, float]]:
    """Bounds (u_lo, v_lo, u_hi, v_hi) of the stretches of the envelope (v increasing, the hidden region on its
    left) whose concave turning outruns an arc of radius_mm: sum of (turn - length / radius) over the stretch
    above NOSE_CORNER_RAD (the largest such sums found by Kadane's scan). A sharp corner turns with no
    length; a drawn arc of radius f turns length / f, more than the nose's only when f < radius."""
    steps = np.diff(envelope, axis=0)
    lengths = np.linalg.norm(steps, axis=1)
    keep = lengths > 0.0
    steps, lengths, points = steps[keep], lengths[keep], envelope[np.concatenate([[True], keep])]
    # a right turn (clockwise) is concave for the region on the left
    concave = -np.arctan2(steps[:-1, 0] * steps[1:, 1] - steps[:-1, 1] * steps[1:, 0],
                          np.einsum("ij,ij->i", steps[:-1], steps[1:]))
    per_length = 1.0 / radius_mm if radius_mm > 0.0 else 0.0
    marked = np.zeros(len(points), bool)
    run, start = 0.0, 1
    for i, turn in enumerate(concave, start=1):      # vertex i lies between steps i - 1 and i
        if run <= 0.0:
            run, start = 0.0, i
        run += turn
        if run > NOSE_CORNER_RAD:
            marked[start:i + 1] = True
        run -= lengths[i] * per_length
    boxes = []
    for stretch in np.split(np.flatnonzero(marked), np.flatnonzero(np.diff(np.flatnonzero(marked)) > 1) + 1):
        if len(stretch):
            chosen = points[stretch]
            boxes.append((*chosen.min(axis=0), *chosen.max(axis=0)))
    return boxes


# ---------------------------------------------------------------------------------------------------
# cut paths

def _unit_rows(vectors: np.ndarray) -> np.ndarray:
    return vectors / np.linalg.norm(vectors, axis=1)[:, None]


def _sampled(polyline: np.ndarray, spacing_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """Points along the polyline, every vertex kept and no two more than spacing_mm apart, with unit
    tangents (at a vertex the mean of the two neighbouring segments' directions; an envelope never turns
    back on itself, so the mean is never zero)."""
    steps = np.diff(polyline, axis=0)
    lengths = np.linalg.norm(steps, axis=1)
    directions = steps / lengths[:, None]
    counts = np.maximum(1, np.ceil(lengths / spacing_mm - _REL_TOL).astype(int))
    points, tangents = [], []
    for i, n in enumerate(counts):
        t = np.arange(n)[:, None] / n
        points.append(polyline[i] + t * steps[i])
        seg_tangents = np.tile(directions[i], (n, 1))
        if i > 0:
            seg_tangents[0] = directions[i - 1] + directions[i]
        tangents.append(seg_tangents)
    points.append(polyline[-1:])
    tangents.append(directions[-1:])
    return np.concatenate(points), _unit_rows(np.concatenate(tangents))


def _cut_path(envelope_uv: np.ndarray, frame: np.ndarray, start_mm: float, end_mm: float,
              spacing_mm: float) -> CutPath:
    """A CutPath in (r, z) along an envelope polyline (v non-decreasing), in feed order start -> end."""
    points, tangents = _sampled(envelope_uv, spacing_mm)
    # v grows along the envelope and the tool lies at +u: the outward normal is the tangent turned clockwise
    normals = np.column_stack([tangents[:, 1], -tangents[:, 0]])
    if start_mm > end_mm:
        points, tangents, normals = points[::-1], -tangents[::-1], normals[::-1]
    return CutPath(points_rz=points @ frame, normals=normals @ frame, feed_dir=tangents @ frame)


def _tolerance(rz: np.ndarray) -> float:
    return _REL_TOL * max(1.0, float(np.abs(rz).max()))


class BeyondAxis(ModelError):
    """A target that leaves the half-section's plane r >= 0 other than by running into the axis at an end."""


def short_of_the_axis(path: CutPath, tol: float) -> CutPath:
    """The path up to where it meets the spin axis, r = 0, at either end.

    The half-section is bounded by the spin axis, which is no surface: a path that runs into the axis at
    its start or end (a face pass to the centre or past it, a bore pass across a floor to the centre and
    on along the axis into the bottom, or round the floor's end by its allowance) has covered its surface
    there; beyond, it would run along the axis or over the other side of the same surface of revolution.
    Such ends are cut off where the path first meets r = 0. A path that lies beyond the axis all along, or
    crosses it and comes back, is wrong (an allowance or offset larger than the radius there): BeyondAxis
    says where. A path on the axis all along is left as it is (it cuts nothing).
    """
    r = path.points_rz[:, 0]
    off = np.flatnonzero(r > tol)
    worst = int(np.argmin(r))
    deepest = f"down to r = {r[worst]:.4g} mm, at z = {path.points_rz[worst, 1]:.4g} mm"
    if off.size == 0:
        if r[worst] < -tol:
            raise BeyondAxis(f"lies beyond the axis all along ({deepest})")
        return path
    first, last = int(off[0]), int(off[-1])
    if (r[first:last + 1] < -tol).any():
        k = first + int(np.flatnonzero(r[first:last + 1] < -tol)[0])
        raise BeyondAxis(f"crosses the axis at z = {path.points_rz[k, 1]:.4g} mm and comes back ({deepest})")
    if first == 0 and last == len(r) - 1:
        return path

    def meeting(on: int, off_axis: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Where the segment from a point off the axis to one on or beyond it meets r = 0."""
        t = r[off_axis] / (r[off_axis] - r[on])
        point = path.points_rz[off_axis] + t * (path.points_rz[on] - path.points_rz[off_axis])
        point[0] = 0.0
        return point[None, :], path.normals[off_axis][None, :], path.feed_dir[off_axis][None, :]

    rows = ([path.points_rz[first:last + 1]], [path.normals[first:last + 1]], [path.feed_dir[first:last + 1]])
    if first > 0:
        for column, value in zip(rows, meeting(first - 1, first)):
            column.insert(0, value)
    if last < len(r) - 1:
        for column, value in zip(rows, meeting(last + 1, last)):
            column.append(value)
    points, normals, feed_dir = (np.concatenate(column) for column in rows)
    return CutPath(points_rz=points, normals=normals, feed_dir=feed_dir)


def target_surface(nominal_rz: np.ndarray, surface: str, offset_mm: float, start_mm: float, end_mm: float,
                   spacing_mm: float, shape: ToolShape | None = None) -> CutPath:
    """The finished contour offset by offset_mm along its outward normal, seen from the pass's side.

    Parameters
    ----------
    nominal_rz : (N, 2) polygon of the finished part [mm]
    surface : "od" (the outermost boundary at each z), "id" (the innermost at each z) or "face" (the
        highest z at each r)
    offset_mm : distance of the target outside the finished contour [mm]; negative cuts deeper
    start_mm, end_mm : the pass's extent, z for od / id and r for face [mm]; start -> end is the feed
        direction. Where the extent runs beyond the part the target carries on at its last radius (od, id)
        or height (face); a face pass whose extent runs past the edge of its face carries on at the face's
        edge height rather than running down the wall beyond it.
    spacing_mm : most distance between two target points [mm]
    shape : the tool's nose radius and edges (`toolshape.ToolShape`); the target then keeps the nose radius
        in internal corners and stays out of what the edges cannot reach. None: a point tool with no edges
        (the drawn contour itself, as a program gives it)

    A target that runs into the spin axis at its start or end stops there (`short_of_the_axis`); one that
    passes the axis elsewhere raises BeyondAxis.

    Targets are kept by their exact inputs (a bounded few, their arrays read-only): `predict` asks for the
    same ones in the simulation, the chatter check and the design rules, and the remedy search's variants ask
    again for every pass after one whose allowance changed (a target does not depend on the part it cuts).
    """
    nominal_rz = np.asarray(nominal_rz, float)
    key = (nominal_rz.tobytes(), nominal_rz.shape, surface, float(offset_mm), float(start_mm), float(end_mm),
           float(spacing_mm), shape)
    if key not in _TARGETS:
        target = _target_surface(nominal_rz, surface, offset_mm, start_mm, end_mm, spacing_mm, shape)
        for array in (target.points_rz, target.normals, target.feed_dir):
            array.flags.writeable = False
        if len(_TARGETS) >= _KEPT_TARGETS:
            del _TARGETS[next(iter(_TARGETS))]  # the oldest
        _TARGETS[key] = target
    return _TARGETS[key]


_TARGETS: dict[tuple, CutPath] = {}
_KEPT_TARGETS = 256


def _target_surface(nominal_rz: np.ndarray, surface: str, offset_mm: float, start_mm: float, end_mm: float,
                    spacing_mm: float, shape: ToolShape | None) -> CutPath:
    frame = _frame(surface)
    if not spacing_mm > 0.0:
        raise ValueError(f"spacing must be a positive length in mm, got {spacing_mm!r}")
    if start_mm == end_mm:
        raise ValueError("a pass needs a start and an end that differ")
    nominal_uv = np.asarray(nominal_rz, float) @ frame
    tol = _tolerance(nominal_uv)
    envelope = _offset_envelope(nominal_uv, float(offset_mm), min(start_mm, end_mm), max(start_mm, end_mm),
                                tol, hold_walls=surface == "face", shape=shape,
                                feed_sign=1.0 if end_mm > start_mm else -1.0)
    return short_of_the_axis(_cut_path(envelope, frame, start_mm, end_mm, spacing_mm), tol)


def compensated(target: CutPath, p: Pass) -> CutPath:
    """The target with the pass's programmed compensation: each point moved along the pass's in-feed (in X
    for an od or bore pass, in Z for a face pass, as a lathe program is corrected) by the compensation
    interpolated at its position (z for od / id, r for face; held beyond the pairs given). On the cylinder
    this is the outward normal; where the path runs onto a face or a fillet, the face is not cut into."""
    if not p.compensation:
        return target
    shift = compensation_mm(target.points_rz, p)
    return CutPath(points_rz=target.points_rz + shift[:, None] * _in_feed(p.surface)[None, :],
                   normals=target.normals, feed_dir=target.feed_dir)


def compensation_mm(points_rz: np.ndarray, p: Pass) -> np.ndarray:
    """The pass's programmed compensation at each point [mm]: interpolated at its position (z for od / id,
    r for face) and held beyond the pairs given; 0 without compensation."""
    if not p.compensation:
        return np.zeros(len(points_rz))
    positions, offsets = np.array(p.compensation).T
    return np.interp(points_rz[:, 0 if p.surface == "face" else 1], positions, offsets)


def _in_feed(surface: str) -> np.ndarray:
    """Unit direction (r, z) from the part towards the tool: +r for od, -r for id, +z for face."""
    return np.array([1.0, 0.0]) @ _frame(surface)


def final_target(nominal_rz: np.ndarray, p: Pass, spacing_mm: float, shape: ToolShape | None = None) -> CutPath:
    """The pass's final target: the finished contour offset by allowance + offset (with the tool's shape,
    `target_surface`), with its programmed compensation, up to where it meets the spin axis (compensation
    moves a bore's target towards the axis, and a floor run to the centre slides past it). Raises BeyondAxis
    for a target beyond the axis."""
    target = target_surface(nominal_rz, p.surface, p.allowance_mm + p.offset_mm, p.start_mm, p.end_mm, spacing_mm,
                            shape)
    return short_of_the_axis(compensated(target, p), _tolerance(nominal_rz))


def cuts_for_pass(current_rz: np.ndarray, nominal_rz: np.ndarray, p: Pass, spacing_mm: float,
                  tool: Tool | None = None) -> list[CutPath]:
    """The cuts of one pass on the current part, in order.

    When the deepest stock beyond the final target exceeds the pass's most depth per cut, the stock is
    taken in n = ceil(d_max / depth) cuts of equal depth s = d_max / n (common practice): the k-th cut
    (k = 1 .. n-1) runs on the final target moved out by (n - k) s. The target is moved, and d_max measured, along the pass's in-feed (radially out for od, towards the axis for id,
    axially for face): on the cylinders and faces a pass is for this is its normal, and unlike moving each
    point along its own normal it never folds the target over itself at a shoulder or a corner, nor counts
    the stock above a shoulder (which the tool takes radially) as depth. Then the final cut, then `spring`
    more cuts on the final target. With the pass's tool, every target keeps its nose radius in internal corners
    and stays out of what its edges cannot reach (`target_surface`).
    """
    tol = _tolerance(nominal_rz)
    shape = tool_shape(tool, p.surface) if tool is not None else None
    try:
        final = final_target(nominal_rz, p, spacing_mm, shape)
        cuts = []
        if p.depth_mm is not None:
            in_feed = _in_feed(p.surface)
            along_in_feed = np.tile(in_feed, (len(final.points_rz), 1))
            deepest = float(_material_along(current_rz, final.points_rz, along_in_feed)[0].max())
            n_cuts = max(1, math.ceil(deepest / p.depth_mm - _REL_TOL))
            if n_cuts + p.spring > MAX_CUTS_PER_PASS:
                raise InputError(f"{p.key}.depth", f"{p.depth_mm:g} mm a cut takes the {deepest:.4g} mm of stock in "
                                                   f"{n_cuts:.3g} cuts; deflect simulates at most {MAX_CUTS_PER_PASS} "
                                                   f"cuts a pass: give a depth of at least "
                                                   f"{deepest / (MAX_CUTS_PER_PASS - p.spring):.3g} mm")
            for k in range(1, n_cuts):
                shift = (n_cuts - k) * deepest / n_cuts * in_feed
                # a bore's roughing steps move towards the axis: a floor run to the centre slides past it
                cuts.append(short_of_the_axis(CutPath(points_rz=final.points_rz + shift, normals=final.normals,
                                                      feed_dir=final.feed_dir), tol))
    except BeyondAxis as exc:   # machining/targets.py refuses such targets first; this is the last guard
        raise ModelError(f"the target of '{p.name}' {exc.message}; check its allowance, offset and compensation",
                         key=p.key) from None
    cuts.append(final)
    cuts.extend([final] * p.spring)
    return cuts


# ---------------------------------------------------------------------------------------------------
# rays through the material

def _edge_tree(polygon_rz: np.ndarray) -> shapely.STRtree:
    """An R-tree of the polygon's edges, built once per polygon: the same in-process part is asked for its
    depth of material, its deviation and its corners many times (kept by the exact points, a bounded few)."""
    key = polygon_rz.tobytes()
    if key not in _EDGE_TREES:
        if len(_EDGE_TREES) >= _KEPT_TREES:
            del _EDGE_TREES[next(iter(_EDGE_TREES))]  # the oldest
        edges = np.stack([polygon_rz, np.roll(polygon_rz, -1, axis=0)], axis=1)
        _EDGE_TREES[key] = shapely.STRtree(shapely.linestrings(edges))
    return _EDGE_TREES[key]


_EDGE_TREES: dict[bytes, shapely.STRtree] = {}
_KEPT_TREES = 64


def _ray_crossings(polygon_rz: np.ndarray, origins: np.ndarray, directions: np.ndarray):
    """Every (ray, edge) pair whose bounding boxes meet, for rays from origins (K, 2) along unit directions
    (K, 2) through a polygon (N, 2): (ray (P,), side of the edge's ends a and b (P,) each, the distance along
    the ray to where the edge meets its line (P,), tolerance [mm]); see `_ray_hits`."""
    a, b = polygon_rz, np.roll(polygon_rz, -1, axis=0)
    both = np.vstack([polygon_rz, origins])
    tol = _tolerance(both)
    # only edges whose bounding box meets the ray (cut at twice the size of everything) can cross it: an
    # R-tree of the edges gives those pairs, so the work grows with the crossings, not rays x edges
    reach = 2.0 * float(np.ptp(both, axis=0).max()) + 1.0
    rays = shapely.linestrings(np.stack([origins, origins + reach * directions], axis=1))
    ray, edge = _edge_tree(polygon_rz).query(rays)
    o, d, a, b = origins[ray], directions[ray], a[edge], b[edge]
    # cross(d, p - o): > 0 on the ray's left
    side_a = d[:, 0] * (a[:, 1] - o[:, 1]) - d[:, 1] * (a[:, 0] - o[:, 0])
    side_b = d[:, 0] * (b[:, 1] - o[:, 1]) - d[:, 1] * (b[:, 0] - o[:, 0])
    with np.errstate(divide="ignore", invalid="ignore"):
        share = side_a / (side_a - side_b)          # where along the edge it meets the ray's line
    t = (d[:, 0] * (a[:, 0] - o[:, 0]) + d[:, 1] * (a[:, 1] - o[:, 1])
         + share * (d[:, 0] * (b[:, 0] - a[:, 0]) + d[:, 1] * (b[:, 1] - a[:, 1])))
    return ray, side_a, side_b, t, tol


def _hits(crossings, count: int, lean: float) -> tuple[np.ndarray, np.ndarray]:
    """(inside, first crossing) of `_ray_hits` from the pairs of `_ray_crossings`."""
    ray, side_a, side_b, t, tol = crossings
    crosses = (lean * side_a > 0.0) != (lean * side_b > 0.0)
    ahead = crosses & (t > tol)
    inside = np.bincount(ray[ahead], minlength=count) % 2 == 1
    first = np.full(count, np.inf)
    np.minimum.at(first, ray[ahead], t[ahead])
    return inside, first


def _ray_hits(polygon_rz: np.ndarray, origins: np.ndarray, directions: np.ndarray,
              lean: float) -> tuple[np.ndarray, np.ndarray]:
    """For rays from origins (K, 2) along unit directions (K, 2) through a polygon (N, 2): whether each
    ray starts in the material, and the distance [mm] to its first crossing of the boundary (inf: none).

    Even-odd crossing count along the ray, read as shifted an infinitesimal step to its left (lean = +1)
    or right (lean = -1): a vertex on the ray's line then lies on one side, so a vertex is counted once
    and a ray along a boundary edge has a definite answer. Crossings within a rounding length of the
    origin are the origin's own surface and do not count: a point on the boundary is read as lying on the
    side the ray goes into.
    """
    return _hits(_ray_crossings(np.asarray(polygon_rz, float), origins, directions), len(origins), lean)


def _material_along(polygon_rz: np.ndarray, origins: np.ndarray,
                    directions: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(length of material from each origin along its ray [mm], 0 in air; distance to the first material
    ahead of an origin in air [mm], inf if none), the polygon taken with its boundary (a ray along an edge
    runs in the material). Both readings of `_ray_hits` (leaning left and right) from one set of pairs."""
    crossings = _ray_crossings(np.asarray(polygon_rz, float), origins, directions)
    left_inside, left_first = _hits(crossings, len(origins), +1.0)
    right_inside, right_first = _hits(crossings, len(origins), -1.0)
    length = np.maximum(np.where(left_inside, left_first, 0.0), np.where(right_inside, right_first, 0.0))
    gap = np.minimum(np.where(left_inside, np.inf, left_first), np.where(right_inside, np.inf, right_first))
    return length, np.where(length > 0.0, 0.0, gap)


def depth_of_material(current_rz: np.ndarray, path: CutPath) -> np.ndarray:
    """(K,) depth of material [mm] beyond each target point: the length of the ray from the point along
    its outward normal that stays inside the current part (0 where the point is in air)."""
    return _material_along(current_rz, path.points_rz, path.normals)[0]


def deviation_along(nominal_section: Section, machined_rz: np.ndarray, spacing_mm: float) -> Deviation:
    """Material left beyond the nominal surface along its outward normal, at points of the finished
    boundary at most spacing_mm apart (points on the spin axis left out).

    Positive where the machined part is thicker than drawn (stock no pass removed counts), negative where
    it is thinner (the distance from the drawn surface inwards to the machined one), 0 where the machined
    surface is the drawn one.

    The machined surface met along the normal is this point's own only while the drawn surface nearest to
    where it is met is this point (the normal line then stays in the point's own reach: it neither crosses
    the drawn outline nor runs along or into another drawn surface). At a corner or a fillet smaller than
    the deviation the normal's line can run along the wall beyond the corner, inside the material left on
    it or in the air beside the part, to whatever surface it meets far away; there, and where the line meets
    nothing, the deviation is the distance to the nearest machined surface (+ inside the machined part,
    - outside it). On a stretch of constant normal both are the same length.
    """
    samples = nominal_section.sample(spacing_mm)
    machined_rz = np.asarray(machined_rz, float)
    keep = samples.points[:, 0] > _tolerance(np.vstack([machined_rz, samples.points]))
    points, normals, segment = samples.points[keep], samples.normals[keep], samples.segment[keep]
    corner = _at_corner(nominal_section, samples.segment)[keep]
    beyond, _ = _material_along(machined_rz, points, normals)
    behind, gap = _material_along(machined_rz, points, -normals)
    along = beyond.copy()                       # on the machined surface with the material inside: 0
    in_air = (beyond == 0.0) & (behind == 0.0)  # cut below the drawing by the gap to the material
    along[in_air] = -gap[in_air]
    met = np.flatnonzero(np.isfinite(along))
    drawn = shapely.LinearRing(nominal_section.polygon(POLYGON_CHORD_MM))
    crossing = shapely.points(points[met] + along[met, None] * normals[met])
    # chords of the drawn arcs stray up to POLYGON_CHORD_MM from the arcs the points lie on
    reach_tol = 2.0 * POLYGON_CHORD_MM + _tolerance(np.vstack([machined_rz, samples.points]))
    own = np.zeros(len(points), bool)
    own[met] = shapely.distance(crossing, drawn) >= np.abs(along[met]) - reach_tol
    deviation = along
    elsewhere = np.flatnonzero(~own)
    if elsewhere.size:
        machined = Polygon(machined_rz)
        where = shapely.points(points[elsewhere])
        nearest = shapely.distance(where, machined.exterior)
        deviation[elsewhere] = np.where(shapely.covers(machined, where), nearest, -nearest)
    return Deviation(points_rz=points, normals=normals, deviation_mm=deviation, segment=segment, corner=corner)


def _at_corner(section: Section, segment: np.ndarray) -> np.ndarray:
    """(N,) True for the samples that sit on a corner of the outline: the first sample of a segment (its
    start, `Section.sample`) where the segment before ends in another direction."""
    corner = np.zeros(len(segment), bool)
    for k in np.flatnonzero(np.r_[True, segment[1:] != segment[:-1]]):
        i = int(segment[k])
        before = section.segments[i - 1].tangents_at(np.array([1.0]))[0]
        after = section.segments[i].tangents_at(np.array([0.0]))[0]
        corner[k] = abs(math.atan2(before[0] * after[1] - before[1] * after[0], before @ after)) > _CORNER_RAD
    return corner


# ---------------------------------------------------------------------------------------------------
# taking material away

def _ccw_array(polygon: Polygon) -> np.ndarray:
    """The exterior ring counter-clockwise, first point not repeated, points on straight runs dropped
    (the stations of a cut along a line would otherwise pile up pass after pass)."""
    return np.asarray(orient(shapely.simplify(polygon, 0.0), sign=1.0).exterior.coords)[:-1]


def _swept(surface_uv: np.ndarray, u_far: float) -> Polygon:
    """Each segment of the polyline swept to u_far, all together."""
    a, b = surface_uv[:-1], surface_uv[1:]
    moving = a[:, 1] != b[:, 1]
    a, b = a[moving], b[moving]
    far_a = np.column_stack([np.full(len(a), u_far), a[:, 1]])
    far_b = np.column_stack([np.full(len(b), u_far), b[:, 1]])
    return shapely.union_all(shapely.polygons(np.stack([a, b, far_b, far_a, a], axis=1)))


def _region_beyond(surface_uv: np.ndarray, u_far: float) -> Polygon:
    """The region on the tool's side (+u) of the surface polyline, over the polyline's v-extent:
    everything the tool, coming from +u, passes over as its tip runs along the surface.

    The polyline is split where it turns back along v (where the push-off turns the normals); each run
    that goes one way is closed at u_far into one polygon (or, should it touch itself, swept segment by
    segment), and the runs are united.
    """
    sign = np.sign(np.diff(surface_uv[:, 1]))
    moving = np.flatnonzero(sign)
    turns = moving[1:][sign[moving[1:]] != sign[moving[:-1]]]
    ends = [0, *turns.tolist(), len(surface_uv) - 1]
    regions = []
    for first, last in zip(ends[:-1], ends[1:]):
        run = surface_uv[first:last + 1]
        if run[0, 1] == run[-1, 1]:
            continue   # runs across the pass only: sweeps nothing
        region = Polygon(np.vstack([run, [u_far, run[-1, 1]], [u_far, run[0, 1]]]))
        regions.append(region if region.is_valid else _swept(run, u_far))
    return shapely.union_all(regions)


def remove(current_rz: np.ndarray, path: CutPath, left_mm: np.ndarray, surface: str, upto: int | None = None,
           name: str = "the pass") -> np.ndarray:
    """The part after a cut: the current part minus everything beyond the surface actually left.

    Parameters
    ----------
    current_rz : (N, 2) polygon of the part before the cut [mm]
    path : the cut's target
    left_mm : (K,) how far the surface actually left lies outside the target, along its normals [mm]
        (the push-off of part and tool); 0 cuts exactly to the target
    surface : "od", "id" or "face": the side the tool comes from
    upto : when given, only stations 0..upto are cut: the part while the tool stands at station upto,
        with the material ahead of it still there
    name : the pass's name, for messages

    Returns the counter-clockwise (M, 2) polygon of what is left. Raises ModelError when the cut leaves the
    part in two pieces or nothing at all.
    """
    frame = _frame(surface)
    left_mm = np.broadcast_to(np.asarray(left_mm, float), (len(path.points_rz),))
    left_surface = path.points_rz + left_mm[:, None] * path.normals
    if upto is not None:
        if not 0 <= upto < len(left_surface):
            raise ValueError(f"upto must be a station index 0..{len(left_surface) - 1}, got {upto}")
        left_surface = left_surface[:upto + 1]
    current = Polygon(current_rz)
    if len(left_surface) < 2:
        return _ccw_array(current)
    current_uv = np.asarray(current_rz, float) @ frame
    surface_uv = left_surface @ frame
    u_far = max(current_uv[:, 0].max(), surface_uv[:, 0].max()) + 1.0
    region = shapely.transform(_region_beyond(surface_uv, u_far), lambda xy: xy @ frame)
    # a scrap far smaller than the part (the skin an earlier push-off left, cut loose at an edge) comes
    # off as a chip; only a real second piece means the pass cuts the part in two
    pieces = [piece for piece in shapely.get_parts(current.difference(region))
              if piece.geom_type == "Polygon" and piece.area > CHIP_SHARE * current.area]
    if not pieces:
        raise ModelError(f"{name} consumes the wall: nothing of the part is left beyond its target; "
                         "check its allowance, offset and extent")
    if len(pieces) > 1:
        pieces.sort(key=lambda piece: piece.area, reverse=True)
        a, b = nearest_points(pieces[0], pieces[1])
        r, z = 0.5 * (a.x + b.x), 0.5 * (a.y + b.y)
        raise ModelError(f"{name} cuts the part in two at r = {r:.4g}, z = {z:.4g}: its target reaches the "
                         "opposite surface there; check its allowance, offset and extent")
    return _ccw_array(pieces[0])


# ---------------------------------------------------------------------------------------------------
# mass properties

def polygon_mass(rz: np.ndarray, density_g_cm3: float) -> tuple[float, float, float]:
    """(mass [g], axial mass moment of inertia [kg mm2], volume [mm3]) of the solid of revolution of a
    polygon (N, 2) of (r, z), either orientation.

    Green's theorem turns each area integral into a boundary one: with Q = r^(n+1) / (n+1),
    int int r^n dA = closed int Q dz, which on a straight edge from (r0, z0) to (r1, z1) is exactly
    (z1 - z0) / ((n + 1)(n + 2)) * sum_{k=0}^{n+1} r0^k r1^(n+1-k). Volume = 2 pi int int r dA (Pappus),
    inertia = rho 2 pi int int r^3 dA.
    """
    rz = np.asarray(rz, float)
    r0, z0 = rz[:, 0], rz[:, 1]
    r1, z1 = np.roll(r0, -1), np.roll(z0, -1)
    dz = z1 - z0
    area = 0.5 * np.sum(r0 * z1 - r1 * z0)
    sign = 1.0 if area >= 0.0 else -1.0   # clockwise input: every boundary integral changes sign
    first_moment = sign * np.sum(dz * (r0**2 + r0 * r1 + r1**2)) / 6.0
    third_moment = sign * np.sum(dz * (r0**4 + r0**3 * r1 + r0**2 * r1**2 + r0 * r1**3 + r1**4)) / 20.0
    volume_mm3 = 2.0 * math.pi * first_moment
    mass_g = density_g_cm3 * volume_mm3 * 1e-3            # g/cm3 * mm3: 1 cm3 = 1000 mm3
    inertia_kg_mm2 = density_g_cm3 * 1e-6 * 2.0 * math.pi * third_moment   # 1 g/cm3 = 1e-6 kg/mm3
    return float(mass_g), float(inertia_kg_mm2), float(volume_mm3)
