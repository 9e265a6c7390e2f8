"""The mass gain split by surface and by cause, so that the lines add up to the gain.

Takes the machined and the drawn half-sections (polygons), the points along the drawn boundary with the
surface each belongs to (`SurfaceDeviation.surface`; "od", "id", "face" or "unmachined") and the mask of those
in the tools' shape (`SurfaceDeviation.apart`), the corners' nose material and the pieces the edges leave
(`deflect.machining.leftover`), and the density; gives the mass of each line in grams.

The gain is the machined part less the drawn one: the material beyond the drawn outline counts +, the material
cut below it -, each as a solid of revolution (Pappus-Guldinus: rho 2 pi A r_centroid, exact for polygons).
These two regions are cut, not approximated:

* `corners` is what of them lies in the corners' nose material, `reach` what lies in the pieces the edges
  leave (less the corners): the material the tools' shape leaves, each counted once;
* the rest (the layer the push-off leaves, also where it lies over a corner's or a piece's material, and the
  stock no pass removed) is cut across at every change of surface along the drawn boundary (a line along the
  boundary's normal, midway between the two points) and each piece goes to the surface of the boundary point
  nearest to it.

So the lines are a partition of the gain: they add up to the machined part's mass less the drawn polygon's,
which differs from the gain over the drawn section's own arcs by the polygon's chord error (`POLYGON_CHORD_MM`).
The layer's mass point by point (`simulate.ring_mass_g`) is first order in the layer's thickness and misses
the material where a thick layer wraps a corner (1 % of the gain went missing that way on a sleeve with 1 mm of
stock left on its face); it stays for the passes' mass left, read point by point by the pass that finished each.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.geometry import LineString, MultiLineString, Polygon
from shapely.ops import split

from deflect.geometry.section import POLYGON_CHORD_MM

SURFACE_ORDER = ("od", "id", "face", "unmachined")
# A cut line reaches this far beyond the thickest layer on either side of the drawn boundary [mm].
CUT_MARGIN_MM = 0.05


def revolved_mass_g(geometry, density_g_cm3: float) -> float:
    """rho 2 pi sum(A r_centroid) over the polygons of `geometry` (Pappus-Guldinus), in g."""
    parts = shapely.get_parts(geometry)
    parts = parts[~shapely.is_empty(parts) & (shapely.area(parts) > 0.0)]
    if not len(parts):
        return 0.0
    r_centroid = shapely.get_coordinates(shapely.centroid(parts))[:, 0]
    return density_g_cm3 * 1e-3 * 2.0 * math.pi * float(np.sum(shapely.area(parts) * r_centroid))


def gain_by_surface_g(machined_rz, nominal_rz, points_rz, normals, surfaces: list[str], apart, corners, reach,
                      density_g_cm3: float) -> dict[str, float]:
    """The mass gain in lines: each surface kind its boundary points hold (outside the tools' shape) in
    `SURFACE_ORDER`, then `corners` (when a nose leaves material in one) and `reach` (when the edges leave a
    piece). The lines add up to the machined polygon's mass less the drawn polygon's (module docstring)."""
    machined, nominal = Polygon(machined_rz).buffer(0), Polygon(nominal_rz).buffer(0)
    beyond, below = machined.difference(nominal), nominal.difference(machined)
    lines: dict[str, float] = {}
    kinds = np.asarray(surfaces, object)
    own = np.ones(len(kinds), bool) if apart is None else ~np.asarray(apart, bool)
    for name in SURFACE_ORDER:
        if np.any(own & (kinds == name)):
            lines[name] = 0.0
    taken = Polygon()
    shaped = [("corners", [Polygon(c.material.polygon(POLYGON_CHORD_MM)) for c in corners if c.material is not None]),
              ("reach", [piece.polygon for piece in reach])]
    for name, regions in shaped:
        if not regions:
            continue
        region = shapely.union_all(regions).buffer(0).difference(taken)
        lines[name] = (revolved_mass_g(beyond.intersection(region), density_g_cm3)
                       - revolved_mass_g(below.intersection(region), density_g_cm3))
        taken = taken.union(region)
    rest_beyond, rest_below = beyond.difference(taken), below.difference(taken)
    if not np.any(own):
        return lines
    points, normals, kinds = np.asarray(points_rz)[own], np.asarray(normals)[own], kinds[own]
    reach_mm = _farthest([rest_beyond, rest_below], nominal) + CUT_MARGIN_MM
    cuts = surface_changes(points, normals, kinds, reach_mm)
    nearest = cKDTree(points)
    for sign, region in ((1.0, rest_beyond), (-1.0, rest_below)):
        for piece in _pieces(region, cuts):
            inside = shapely.get_coordinates(piece.representative_point())[0]
            kind = kinds[nearest.query(inside)[1]]
            lines[kind] = lines.get(kind, 0.0) + sign * revolved_mass_g(piece, density_g_cm3)
    return lines


def _farthest(regions: list, nominal: Polygon) -> float:
    """How far the regions' corners lie from the drawn outline at most [mm] (0 for empty regions). Each corner
    is measured to its nearest edge of the outline found through an R-tree of the edges (shapely's STRtree), not
    to every edge: the layers carry thousands of corners, and `tune` splits the gain of every plan it predicts."""
    corners = shapely.get_coordinates(regions)
    if not len(corners):
        return 0.0
    ring = shapely.get_coordinates(nominal.exterior)
    edges = shapely.linestrings(np.stack([ring[:-1], ring[1:]], axis=1))
    _, distance = shapely.STRtree(edges).query_nearest(shapely.points(corners), return_distance=True,
                                                         all_matches=False)
    return float(distance.max())


def surface_changes(points, normals, kinds, reach_mm: float) -> MultiLineString | None:
    """The lines across the layer where the surface changes along the (closed) drawn boundary: along the mean
    normal of the two points, through their midpoint, `reach_mm` to either side."""
    change = np.flatnonzero(kinds != np.roll(kinds, -1))
    if not len(change):
        return None
    lines = []
    for k in change:
        j = (k + 1) % len(points)
        middle = 0.5 * (points[k] + points[j])
        normal = normals[k] + normals[j]
        length = float(np.hypot(*normal))
        normal = normal / length if length > 1e-9 else normals[k]
        lines.append(LineString([middle - reach_mm * normal, middle + reach_mm * normal]))
    return MultiLineString(lines)


def _pieces(region, cuts) -> list:
    """The polygons of `region`, each cut by the lines `cuts` (None: not cut)."""
    pieces = []
    for part in shapely.get_parts(region):
        if part.is_empty or part.area <= 0.0:
            continue
        pieces += [p for p in shapely.get_parts(split(part, cuts)) if p.area > 0.0] if cuts is not None else [part]
    return pieces
