"""What a gauge reads on a half-section: diameters and wall at a height, a face's height at a radius.

Takes a closed (r, z) polygon of a section (the drawn part, or the as-machined part of a prediction) and a
place; gives the radius (or height) of the boundary there and the radial (axial) part of its outward normal.
A diameter is read where a horizontal line at height z crosses the boundary; a face height where a line at
radius r parallel to the axis crosses it. Of the material met along the line at z, the outermost stretch is
the one a gauge reaches: its outside is the OD, its inside (where it does not reach the axis) the bore, and
the two together the wall (a cup's wall, a sleeve, a housing; a part with walls nested inside each other is
read on its outer wall).

Each crossing is found on the straight edges of the polygon with a half-open rule (an edge holds its lower end,
not its upper), so a vertex on the line is counted once and an edge lying along the line not at all.
"""

from __future__ import annotations

import numpy as np

AXIS_MM = 1e-6          # a stretch of material whose inside lies this close to the axis has no bore


def _closed_edges(polygon_rz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and end points of every edge, the polygon taken counter-clockwise."""
    points = np.asarray(polygon_rz, float)
    r, z = points[:, 0], points[:, 1]
    if np.dot(r, np.roll(z, -1)) - np.dot(np.roll(r, -1), z) < 0.0:   # twice the signed area
        points = points[::-1]
    return points, np.roll(points, -1, axis=0)


def _crossings(polygon_rz: np.ndarray, axis: int, level: float) -> tuple[np.ndarray, np.ndarray]:
    """Where the boundary crosses the line on which coordinate `axis` (0: r, 1: z) equals `level`: the other
    coordinate of each crossing, in order, and that component of the boundary's outward unit normal there."""
    start, end = _closed_edges(polygon_rz)
    a0, a1 = start[:, axis], end[:, axis]
    hit = ((a0 <= level) & (level < a1)) | ((a1 <= level) & (level < a0))
    s, e = start[hit], end[hit]
    other = 1 - axis
    t = (level - s[:, axis]) / (e[:, axis] - s[:, axis])
    position = s[:, other] + t * (e[:, other] - s[:, other])
    d = e - s
    normal = np.column_stack([d[:, 1], -d[:, 0]]) / np.hypot(d[:, 0], d[:, 1])[:, None]  # (dz, -dr) / |d|: CCW
    order = np.argsort(position)
    return position[order], normal[order, other]


def crossings_at_height(polygon_rz: np.ndarray, z_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """(r, n_r) of every crossing of the boundary with the line at height z, by r: the radius and the radial
    part of the boundary's outward unit normal there (+1 on an OD, -1 in a bore, near 0 on a face's edge)."""
    return _crossings(polygon_rz, 1, z_mm)


def crossings_at_radius(polygon_rz: np.ndarray, r_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """(z, n_z) of every crossing of the boundary with the line at radius r (parallel to the axis), by z."""
    return _crossings(polygon_rz, 0, r_mm)


def outer_wall(polygon_rz: np.ndarray, z_mm: float) -> tuple[tuple[float, float], tuple[float, float]] | None:
    """((r, n_r) inside, (r, n_r) outside) of the outermost stretch of material at height z; None where the
    line misses the part. The inside is at r = 0 where the material reaches the axis (a section of a solid
part runs along the axis)."""
    r, n_r = crossings_at_height(polygon_rz, z_mm)
    if len(r) < 2:        # with the half-open rule a closed boundary is crossed an even number of times
        return None
    return (float(r[-2]), float(n_r[-2])), (float(r[-1]), float(n_r[-1]))


def surface_radius(polygon_rz: np.ndarray, surface: str, z_mm: float) -> tuple[float, float] | None:
    """(r, n_r) of the OD ("od") or bore ("id") at height z; None where the part has none there."""
    wall = outer_wall(polygon_rz, z_mm)
    if wall is None:
        return None
    inside, outside = wall
    if surface == "od":
        return outside
    return inside if inside[0] > AXIS_MM else None


def nearest_radius(polygon_rz: np.ndarray, z_mm: float, r_mm: float) -> tuple[float, float] | None:
    """(r, n_r) of the crossing at height z nearest to radius r: the same surface on a part that differs
    from another by micrometres (the as-machined part against the drawn one)."""
    r, n_r = crossings_at_height(polygon_rz, z_mm)
    if len(r) == 0:
        return None
    k = int(np.argmin(np.abs(r - r_mm)))
    return float(r[k]), float(n_r[k])


def nearest_face(polygon_rz: np.ndarray, r_mm: float, z_mm: float) -> tuple[float, float] | None:
    """(z, n_z) of the crossing at radius r nearest to height z."""
    z, n_z = crossings_at_radius(polygon_rz, r_mm)
    if len(z) == 0:
        return None
    k = int(np.argmin(np.abs(z - z_mm)))
    return float(z[k]), float(n_z[k])
