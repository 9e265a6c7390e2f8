"""What the tools' shape leaves on the part: the nose's radius in internal corners, and the stretches the
insert's edges cannot follow.

Takes a checked `Job` and its `Process` and gives

* `corners_left` - for every internal (concave) corner of the drawn section, the pass that finishes it (the
  last pass with no allowance whose target runs through the corner, the target taken without the tool's
  shape) and, where the drawn radius is smaller than that tool's nose, the material the nose leaves there,
  exact (`deflect.geometry.corners.nose_material`), and its mass;
* `reach_left` - the material a part cut exactly to the targets with the tools' shapes keeps beyond the
  drawn section (`inprocess.target_surface` with the tool, `deflect.machining.toolshape`), less the corners
  above: each piece a finishing pass's target runs past and where the drawn contour faces that pass's tool
  (an undercut, a wall too steep for the insert's edges; not the stock beyond a face the pass does not turn),
  with its area, volume (Pappus, on the piece's centroid) and mass, where it is, the steepest the drawn
  contour runs there from the feed direction and the steepest the tool can follow.

The corners are exact; the pieces are polygons cut with arcs of `inprocess.BUFFER_CHORD_MM` chord error, so
a piece thinner than a few chord errors is noise, not a finding.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon

from deflect.geometry.corners import ConcaveCorner, NoseMaterial, concave_corners, nose_material
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.process import Pass, Process
from deflect.machining.inprocess import BUFFER_CHORD_MM, target_surface
from deflect.machining.toolshape import tool_shape

# A pass's target within this of a corner or a piece runs through it [mm], beside the pass's own offset.
THROUGH_MM = 1e-3
# A piece left beyond the drawing counts only when it holds more than this many chord errors of area along
# its boundary (less is the polygons' own rounding).
NOISE_CHORDS = 4.0
# Spacing of the drawn contour's points inside a piece, to find how steep it runs there [mm].
CONTOUR_SPACING_MM = 0.01
# A stretch of the contour faces a pass's tool when its outward normal leans this much (cosine) towards it.
FACING_COS = 0.1
# A wall square to the feed counts for a pass's reach only this far inside the pass's extent [mm] (at the
# extent's ends the pass meets the part's end, or stops).
WALL_CLEAR_MM = 0.05


@dataclass(frozen=True)
class CornerLeft:
    """An internal corner, the pass and tool that finish it, and what the nose leaves there."""

    corner: ConcaveCorner
    pass_name: str
    tool: str
    nose_radius_mm: float
    material: NoseMaterial | None    # None: the nose follows the drawn radius, or does not fit between the walls
    mass_g: float


@dataclass(frozen=True)
class ReachLeft:
    """Material a finishing tool's edges leave beyond the drawing (beside the corners' nose radius)."""

    r_mm: float                      # the piece's centroid
    z_mm: float
    area_mm2: float
    volume_mm3: float
    mass_g: float
    pass_name: str
    tool: str
    steepest_deg: float              # how steeply the drawn contour runs there, from the feed direction
    limit_deg: float                 # the steepest the tool follows on that side
    descending: bool                 # True: the contour falls away in the feed direction (trailing edge limits)
    polygon: Polygon


def covered(points_rz: np.ndarray, corners: list[CornerLeft], reach: list[ReachLeft]) -> np.ndarray:
    """(N,) True for the points (on the drawn boundary) that lie in a corner's nose material or a piece the
    edges leave (their material is counted there, not in the layer left on the surface)."""
    regions = [Polygon(c.material.polygon(POLYGON_CHORD_MM)) for c in corners if c.material is not None]
    regions += [piece.polygon for piece in reach]
    if not regions:
        return np.zeros(len(points_rz), bool)
    area = shapely.union_all(regions).buffer(THROUGH_MM)
    return shapely.contains_xy(area, points_rz[:, 0], points_rz[:, 1])


def grams(density_g_cm3: float, volume_mm3: float) -> float:
    return density_g_cm3 * 1e-3 * volume_mm3       # g/cm3 * mm3, 1 cm3 = 1000 mm3


def finishing_targets(job, process: Process, memo: dict | None = None) -> list[tuple[Pass, object, LineString]]:
    """(pass, tool, target line) of every pass that finishes (no allowance), in the order they cut; the
    target is the drawn contour offset by the pass's wear offset, as seen from the pass's side, without the
    tool's shape. memo (shared by the variants of one job) keeps each line by the pass's geometry."""
    memo = {} if memo is None else memo
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    size = float(np.ptp(nominal_rz, axis=0).max())
    out = []
    for p in process.passes:
        if p.allowance_mm > 0.0:
            continue
        name = ("finishing target", nominal_rz.tobytes(), p.surface, p.offset_mm, p.start_mm, p.end_mm)
        if name not in memo:
            target = target_surface(nominal_rz, p.surface, p.offset_mm, p.start_mm, p.end_mm, spacing_mm=size)
            memo[name] = LineString(target.points_rz)
        out.append((p, process.tools[p.tool], memo[name]))
    return out


def _last_through(geometry, targets) -> tuple | None:
    found = None
    for p, tool, line in targets:
        if line.distance(geometry) <= abs(p.offset_mm) + THROUGH_MM:
            found = (p, tool)
    return found


def corners_left(job, process: Process, targets=None) -> list[CornerLeft]:
    """Every internal corner some finishing pass runs through, with what that pass's nose leaves there."""
    targets = finishing_targets(job, process) if targets is None else targets
    out = []
    for corner in concave_corners(job.section):
        finisher = _last_through(Point(corner.point), targets)
        if finisher is None:
            continue
        p, tool = finisher
        material = nose_material(job.section, corner, tool.nose_radius_mm)
        out.append(CornerLeft(corner=corner, pass_name=p.name, tool=tool.name, nose_radius_mm=tool.nose_radius_mm,
                              material=material,
                              mass_g=0.0 if material is None else grams(job.material.density_g_cm3,
                                                                         material.volume_mm3)))
    return out


def _feed_and_tool_side(p: Pass) -> tuple[np.ndarray, np.ndarray]:
    """Unit feed direction and the direction from the part towards the tool, in (r, z)."""
    sign = 1.0 if p.end_mm > p.start_mm else -1.0
    if p.surface == "face":
        return np.array([sign, 0.0]), np.array([0.0, 1.0])
    return np.array([0.0, sign]), np.array([1.0 if p.surface == "od" else -1.0, 0.0])


def _steepness(samples, piece: Polygon, p: Pass) -> tuple[float, bool] | None:
    """The steepest the drawn contour runs inside the piece, from the feed direction [deg], and whether it falls
    away (the normal leans along the feed) or rises ahead; None where no stretch of the contour there faces the
    pass's tool. A wall square to the feed (a groove's side: its normal across the tool's side) counts where it
    stands inside the pass's extent; the part's end beyond which the pass carries on into air does not."""
    inside = shapely.contains_xy(piece.buffer(10.0 * BUFFER_CHORD_MM), samples.points[:, 0], samples.points[:, 1])
    feed, towards_tool = _feed_and_tool_side(p)
    points, normals = samples.points[inside], samples.normals[inside]
    along = points @ np.abs(feed)                    # z for an od or a bore, r for a face
    low, high = sorted((p.start_mm, p.end_mm))
    within = (along > low + WALL_CLEAR_MM) & (along < high - WALL_CLEAR_MM)
    facing = (normals @ towards_tool > FACING_COS) | ((normals @ towards_tool > -FACING_COS) & within)
    normals = normals[facing]
    if not len(normals):
        return None
    angles = np.degrees(np.arctan2(normals @ feed, normals @ towards_tool))
    steepest = angles[np.argmax(np.abs(angles))]
    return float(abs(steepest)), bool(steepest > 0.0)


def reach_left(job, process: Process, shaped_rz: np.ndarray, corners: list[CornerLeft],
               targets=None) -> list[ReachLeft]:
    """The pieces of material a part cut exactly to the targets with the tools' shapes (shaped_rz) keeps
    beyond the drawn section, that a finishing pass's target runs past, less the corners' exact material."""
    targets = finishing_targets(job, process) if targets is None else targets
    nominal = Polygon(job.section.polygon(POLYGON_CHORD_MM))
    beyond = Polygon(shaped_rz).difference(nominal)
    samples = job.section.sample(CONTOUR_SPACING_MM)
    out = []
    for piece in shapely.get_parts(beyond):
        if piece.geom_type != "Polygon" or piece.is_empty:
            continue
        finisher = _last_through(piece, targets)
        if finisher is None:
            continue
        area = piece.area
        first_r, first_z = area * piece.centroid.x, area * piece.centroid.y
        for c in corners:
            if c.material is not None and piece.buffer(NOISE_CHORDS * BUFFER_CHORD_MM).contains(
                    Point(c.corner.point)):
                area -= c.material.area_mm2
                first_r -= c.material.area_mm2 * c.material.centroid_r_mm
                first_z -= c.material.area_mm2 * c.material.centroid_z_mm
        if area <= NOISE_CHORDS * BUFFER_CHORD_MM * piece.length:
            continue
        p, tool = finisher
        shape = tool_shape(tool, p.surface)
        found = _steepness(samples, piece, p)
        if found is None:
            continue
        steepest, descending = found
        limit = shape.steepest_descent_deg if descending else shape.steepest_rise_deg
        if steepest <= limit:
            # the tool follows the contour there: what is left is stock the pass stops short of (or no pass
            # turns), counted as the layer on that surface, not a piece its edges cannot reach
            continue
        volume = 2.0 * math.pi * first_r
        out.append(ReachLeft(r_mm=float(first_r / area), z_mm=float(first_z / area), area_mm2=float(area),
                             volume_mm3=float(volume), mass_g=grams(job.material.density_g_cm3, volume),
                             pass_name=p.name, tool=tool.name, steepest_deg=steepest, limit_deg=limit,
                             descending=descending, polygon=piece))
    return out
