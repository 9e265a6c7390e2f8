"""The half-section of a turned part: outline -> lines and arcs -> mass properties and thinnest wall.

Takes the `[part].outline` list of a job (parsed TOML, lengths already in mm) and gives a validated,
closed `Section` of straight lines and circular arcs, stored counter-clockwise in the (r, z) plane
(r as x, z as y) so that the material lies on the left of travel. Fillets on corners become arcs
tangent to both neighbours. On a section:

* `mass_properties` gives area, volume, mass, the area centroid and the axial mass moment of inertia.
  The area moments are turned into boundary integrals by Green's theorem (G. Green, "An Essay on the
  Application of Mathematical Analysis to the Theories of Electricity and Magnetism", 1828) and
  integrated on each segment by 24-point Gauss-Legendre quadrature (C. F. Gauss, "Methodus nova
  integralium valores per approximationem inveniendi", 1814): exact for the polynomials of lines and,
  for arcs (trigonometric polynomials of degree <= 5 over at most half a turn), exact to machine
  precision. Volume and mass follow from the second theorem of Pappus-Guldinus (P. Guldin,
  "Centrobaryca", 1635-1641).
* `min_wall` gives the thinnest wall as the contract defines it: rays cast along the inward normal
  from points on every surface segment, intersected exactly with lines and circles, counted where
  they meet the opposite face within 20 degrees of head-on (not a corner, chamfer or rim fillet), the thinnest
  rays refined on the thinnest few segments together, on grids that narrow round by round around their least
  (one ray cast per round for all of them).

Outline rules (see INTERFACE.md): `[r, z]` a corner, `[r, z, f]` a corner rounded with a fillet of
radius f, `{ to = [r, z], radius = R }` an arc from the previous node, turning left (counter-
clockwise) for R > 0 and right for R < 0, never more than a half circle. A fillet on a straight or
smooth (tangent) corner has nothing to round and is ignored. Fillets are supported between any two
of lines and arcs.
"""

from __future__ import annotations

import bisect
import math
import numbers
import sys
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np
import shapely

from deflect.errors import InputError, ModelError, shown

Point = tuple[float, float]  # (r, z) in mm

# Lengths below this fraction of the part's size count as zero: far above floating-point rounding
# (1e-16), far below any drawing tolerance (a 1 m part gives 1 nm).
# Chord error [mm] for turning a Section into the polygons the machining works on (Section.polygon): 0.01 um,
# so that cutting to chords instead of arcs does not show in a deviation reported in um.
POLYGON_CHORD_MM = 1e-5
_REL_TOL = 1e-9
# ... but never below what rounding leaves of a coordinate this far from the origin: a few units in the last
# place of the largest coordinate (an outline drawn at z = 9000 still tells r 19 from r 19.00001).
_ROUNDING_ULPS = 8.0

# Limits of what the tool turns (README, "Limits the tool enforces"); each is an `error:` when crossed.
# Every coordinate within 10 m of the origin: the largest vertical turning lathes swing about 10 m (common
# practice), so a larger number is a typo or a unit slip (42000000.0 for 42.0); it also keeps the squares and
# cross products of the geometry far from overflow.
MAX_COORDINATE_MM = 10_000.0
# A part at least 10 um across: the smallest turned parts (watch pivots) are about ten times that.
MIN_PART_MM = 0.01
# An arc of a radius above 1 km is a straight line to well under a micrometre over 10 m: draw a line.
MAX_ARC_RADIUS_MM = 1_000_000.0
# The outline's items: a drawing exported with fine splines has thousands; every check of the outline scales
# about linearly in their number (tests/bench_outline.py measures 5,000 to 40,000 nodes).
MAX_OUTLINE_ITEMS = 100_000
# A corner turning less than this [rad] is straight (or smooth), and one turning back within this is a cusp.
_ANGLE_TOL = 1e-9
# Gauss-Legendre order on every segment. Arc integrands are trigonometric polynomials of degree <= 5
# over at most half a turn: 14 points already reach rounding on a half circle (checked against the
# closed form of a half disc); 24 leave a wide margin. Lines (polynomials of degree <= 5) are exact.
_GAUSS_ORDER = 24
_GAUSS_X, _GAUSS_W = np.polynomial.legendre.leggauss(_GAUSS_ORDER)
_GAUSS_T = 0.5 * (_GAUSS_X + 1.0)  # nodes moved from [-1, 1] to [0, 1]
_GAUSS_W = 0.5 * _GAUSS_W

# Rays for min_wall: this many over the whole perimeter, at least a few on every segment, kept this
# fraction of a segment away from its ends (the normal is undefined at a corner; a wall that thins like
# a square root towards a corner, e.g. under a fillet meeting a face square, is then high by about
# sqrt(2 f * 1e-12 L), micrometres at most); then the thinnest few segments are refined.
_WALL_RAYS = 2000
_WALL_RAYS_PER_SEGMENT = 8
_WALL_END_OFFSET = 1e-12
_WALL_REFINED_SEGMENTS = 8
# A ray measures a wall only where it leaves the material through a face turned at most this much from
# head-on; kept clear of the usual 30 and 45 degree chamfers so that rounding cannot flip the answer.
_WALL_MAX_INCIDENCE_DEG = 20.0   # a 0.3 mm fillet on a 1 mm rim then reads >= 0.98 of the wall
_WALL_XATOL = 1e-11
_WALL_ZOOM_POINTS = 33   # samples per refined segment and round: each round narrows the interval 16 times

# unit_size_warning: a turned part smaller or larger than this [mm] was probably drawn in the other unit.
SMALLEST_PLAUSIBLE_MM = 2.5
LARGEST_PLAUSIBLE_MM = 2500.0
_MM_PER_INCH = 25.4


# ---------------------------------------------------------------------------------------------------
# small plane-vector helpers on (r, z) tuples (plain floats are faster than numpy for single points)

def _sub(a: Point, b: Point) -> Point:
    return (a[0] - b[0], a[1] - b[1])


def _add(a: Point, b: Point) -> Point:
    return (a[0] + b[0], a[1] + b[1])


def _mul(a: Point, s: float) -> Point:
    return (a[0] * s, a[1] * s)


def _dot(a: Point, b: Point) -> float:
    return a[0] * b[0] + a[1] * b[1]


def _cross(a: Point, b: Point) -> float:
    return a[0] * b[1] - a[1] * b[0]


def _dist(a: Point, b: Point) -> float:
    return math.hypot(a[0] - b[0], a[1] - b[1])


def _unit(a: Point) -> Point:
    n = math.hypot(a[0], a[1])
    return (a[0] / n, a[1] / n)


def _left(a: Point) -> Point:
    """`a` turned a quarter turn counter-clockwise."""
    return (-a[1], a[0])


def length_tolerance(r_min: float, r_max: float, z_min: float, z_max: float) -> float:
    """Lengths below this [mm] count as zero for a part within these bounds: _REL_TOL of the part's size (far
    below any drawing tolerance), but never below the rounding of its coordinates (_ROUNDING_ULPS units in the
    last place of the largest): the part's size sets it, not how far the part lies from the origin."""
    size = max(r_max - r_min, z_max - z_min)
    reach = max(abs(r_min), abs(r_max), abs(z_min), abs(z_max))
    return max(_REL_TOL * size, _ROUNDING_ULPS * sys.float_info.epsilon * reach)


def _fmt(p: Point) -> str:
    return f"(r = {p[0]:.6g}, z = {p[1]:.6g})"


# ---------------------------------------------------------------------------------------------------
# segments

@dataclass(frozen=True)
class Line:
    """A straight segment from `start` to `end` [mm]; parameter t runs from 0 at start to 1 at end."""

    start: Point
    end: Point

    def length(self) -> float:
        return _dist(self.start, self.end)

    def point_at(self, t: float) -> Point:
        return (self.start[0] + t * (self.end[0] - self.start[0]),
                self.start[1] + t * (self.end[1] - self.start[1]))

    def tangent_at(self, t: float) -> Point:
        """Unit tangent in the direction of travel."""
        return _unit(_sub(self.end, self.start))

    def normal_at(self, t: float) -> Point:
        """Unit normal to the right of travel: the outward normal on a counter-clockwise section."""
        tr, tz = self.tangent_at(t)
        return (tz, -tr)

    def points_at(self, t: np.ndarray) -> np.ndarray:
        """Points (N, 2) at the parameters t (N,)."""
        t = np.asarray(t, float)[:, None]
        start = np.asarray(self.start, float)
        return start + t * (np.asarray(self.end, float) - start)

    def tangents_at(self, t: np.ndarray) -> np.ndarray:
        """Unit tangents (N, 2) at the parameters t (N,)."""
        return np.tile(np.asarray(self.tangent_at(0.0)), (len(t), 1))

    def param_of(self, p: Point) -> float:
        """Parameter of the foot of the perpendicular from p (not clamped to [0, 1])."""
        e = _sub(self.end, self.start)
        return _dot(_sub(p, self.start), e) / _dot(e, e)

    def reversed(self) -> Line:
        return Line(self.end, self.start)


@dataclass(frozen=True)
class Arc:
    """A circular arc from `start` to `end` around `center` [mm], travelled counter-clockwise when `ccw`.

    `radius` > 0 always; the sweep is at most half a turn. Parameter t is proportional to the angle
    travelled, 0 at start, 1 at end.
    """

    start: Point
    end: Point
    center: Point
    radius: float
    ccw: bool

    @property
    def sweep(self) -> float:
        """Angle travelled from start to end [rad], in (0, pi]."""
        a = _sub(self.start, self.center)
        b = _sub(self.end, self.center)
        turn = math.atan2(_cross(a, b), _dot(a, b))
        if not self.ccw:
            turn = -turn
        return turn if turn > 0.0 else turn + 2.0 * math.pi

    @property
    def start_angle(self) -> float:
        return math.atan2(self.start[1] - self.center[1], self.start[0] - self.center[0])

    def _direction(self) -> float:
        return 1.0 if self.ccw else -1.0

    def _angles(self, t):
        return self.start_angle + self._direction() * self.sweep * np.asarray(t, float)

    def length(self) -> float:
        return self.radius * self.sweep

    def point_at(self, t: float) -> Point:
        a = float(self._angles(t))
        return (self.center[0] + self.radius * math.cos(a), self.center[1] + self.radius * math.sin(a))

    def tangent_at(self, t: float) -> Point:
        a = float(self._angles(t))
        s = self._direction()
        return (-s * math.sin(a), s * math.cos(a))

    def normal_at(self, t: float) -> Point:
        """Unit normal to the right of travel: the outward normal on a counter-clockwise section."""
        tr, tz = self.tangent_at(t)
        return (tz, -tr)

    def points_at(self, t: np.ndarray) -> np.ndarray:
        a = self._angles(t)
        return np.column_stack([self.center[0] + self.radius * np.cos(a),
                                self.center[1] + self.radius * np.sin(a)])

    def tangents_at(self, t: np.ndarray) -> np.ndarray:
        a = self._angles(t)
        s = self._direction()
        return np.column_stack([-s * np.sin(a), s * np.cos(a)])

    def params_of(self, points: np.ndarray) -> np.ndarray:
        """Parameters (N,) of the directions from the centre to points (N, 2).

        Directions outside the arc get t < 0 when nearer (in angle) to the start, t > 1 when nearer the end.
        """
        pts = np.asarray(points, float)
        a = np.asarray(_sub(self.start, self.center))
        w = pts - np.asarray(self.center)
        angle = self._direction() * np.arctan2(a[0] * w[:, 1] - a[1] * w[:, 0], a[0] * w[:, 0] + a[1] * w[:, 1])
        sweep = self.sweep
        # angle is in (-pi, pi]; the part of the circle off the arc is split half to each end
        angle = np.where(angle < 0.5 * (sweep - 2.0 * math.pi), angle + 2.0 * math.pi, angle)
        return angle / sweep

    def param_of(self, p: Point) -> float:
        return float(self.params_of(np.asarray([p], float))[0])

    def reversed(self) -> Arc:
        return Arc(self.end, self.start, self.center, self.radius, not self.ccw)


Segment = Line | Arc


def _bbox(seg: Segment) -> tuple[float, float, float, float]:
    """r_min, r_max, z_min, z_max of one segment (arcs include the extreme points they pass)."""
    rs = [seg.start[0], seg.end[0]]
    zs = [seg.start[1], seg.end[1]]
    if isinstance(seg, Arc):
        cr, cz = seg.center
        for k, (dr, dz) in enumerate([(1.0, 0.0), (0.0, 1.0), (-1.0, 0.0), (0.0, -1.0)]):
            extreme = (cr + seg.radius * dr, cz + seg.radius * dz)
            if 0.0 < seg.param_of(extreme) < 1.0:
                rs.append(extreme[0])
                zs.append(extreme[1])
    return min(rs), max(rs), min(zs), max(zs)


def _on_axis(seg: Segment, tol: float) -> bool:
    """A line lying on the spin axis: a cut through the solid, not a surface."""
    return isinstance(seg, Line) and abs(seg.start[0]) <= tol and abs(seg.end[0]) <= tol


def _closest_param(seg: Segment, p: Point) -> float:
    """Parameter of the point of the segment nearest to p."""
    if isinstance(seg, Arc) and _dist(p, seg.center) == 0.0:
        return 0.0  # every point of the arc is equally near its centre
    return min(1.0, max(0.0, seg.param_of(p)))


# ---------------------------------------------------------------------------------------------------
# the section

@dataclass(frozen=True, eq=False)
class BoundarySamples:
    """Points along a section's boundary, with the segment each lies on."""

    points: np.ndarray     # (N, 2) r, z [mm]
    normals: np.ndarray    # (N, 2) unit outward normal
    arclength: np.ndarray  # (N,) distance along the boundary from the first segment's start [mm]
    segment: np.ndarray    # (N,) index of the segment each point lies on


@dataclass(frozen=True)
class Section:
    """A closed chain of lines and arcs, counter-clockwise in the (r, z) plane: material on the left.

    The outward normal is the unit tangent turned clockwise, (t_z, -t_r). Build it with
    `section_from_outline`, which validates the chain.
    """

    segments: tuple[Segment, ...]

    @cached_property
    def _lengths(self) -> list[float]:
        return [seg.length() for seg in self.segments]

    @cached_property
    def _starts(self) -> list[float]:
        """Arclength at each segment's start [mm]."""
        return [0.0, *np.cumsum(self._lengths)[:-1].tolist()]

    @cached_property
    def _tol(self) -> float:
        """Lengths below this [mm] count as zero (`length_tolerance` of the section's bounds)."""
        return length_tolerance(*self.bounds())

    def on_axis(self, index: int) -> bool:
        """Whether segment `index` is a line lying on the spin axis: a cut through the solid, not a surface."""
        return _on_axis(self.segments[index], self._tol)

    def perimeter(self) -> float:
        """Length of the whole boundary [mm]."""
        return float(sum(self._lengths))

    def _locate(self, arclength_mm: float) -> tuple[int, float]:
        """Segment index and parameter at an arclength, wrapped round the perimeter."""
        s = arclength_mm % self.perimeter()
        i = max(0, bisect.bisect_right(self._starts, s) - 1)  # a corner belongs to the segment starting there
        return i, min(1.0, (s - self._starts[i]) / self._lengths[i])

    def point_at(self, arclength_mm: float) -> tuple[Point, Point]:
        """(point, unit outward normal) at an arclength [mm] from the first segment's start; wraps around."""
        i, t = self._locate(arclength_mm)
        seg = self.segments[i]
        return seg.point_at(t), seg.normal_at(t)

    def points_at(self, arclengths_mm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """`point_at` for many arclengths at once: (points (N, 2), unit outward normals (N, 2))."""
        s = np.mod(np.asarray(arclengths_mm, float).ravel(), self.perimeter())
        starts, lengths = np.asarray(self._starts), np.asarray(self._lengths)
        index = np.maximum(0, np.searchsorted(starts, s, side="right") - 1)  # a corner: the segment starting there
        t = np.minimum(1.0, (s - starts[index]) / lengths[index])
        points, tangents = np.empty((len(s), 2)), np.empty((len(s), 2))
        for i in np.unique(index):
            mine = index == i
            points[mine] = self.segments[i].points_at(t[mine])
            tangents[mine] = self.segments[i].tangents_at(t[mine])
        return points, np.column_stack([tangents[:, 1], -tangents[:, 0]])

    def sample(self, spacing_mm: float) -> BoundarySamples:
        """Points along every segment at most `spacing_mm` apart, each segment end included once.

        A corner point belongs to the segment that starts there and carries that segment's normal.
        """
        if not (spacing_mm > 0.0 and math.isfinite(spacing_mm)):
            raise ValueError(f"sample spacing must be a positive length in mm, got {spacing_mm!r}")
        points, normals, arclength, segment = [], [], [], []
        for i, seg in enumerate(self.segments):
            n = max(1, math.ceil(self._lengths[i] / spacing_mm))
            t = np.arange(n) / n
            tangents = seg.tangents_at(t)
            points.append(seg.points_at(t))
            normals.append(np.column_stack([tangents[:, 1], -tangents[:, 0]]))
            arclength.append(self._starts[i] + t * self._lengths[i])
            segment.append(np.full(n, i))
        return BoundarySamples(np.concatenate(points), np.concatenate(normals),
                               np.concatenate(arclength), np.concatenate(segment))

    def closest_point(self, r: float, z: float) -> tuple[Point, Point, float, float]:
        """(nearest boundary point, unit outward normal there, its arclength [mm], distance [mm]).

        At a corner the point is taken on the segment that starts there.
        """
        p = (float(r), float(z))
        best = None
        for i, seg in enumerate(self.segments):
            t = _closest_param(seg, p)
            d = _dist(p, seg.point_at(t))
            if best is None or d < best[0]:
                best = (d, i, t)
        d, i, t = best
        if t == 1.0:
            i, t = (i + 1) % len(self.segments), 0.0
        seg = self.segments[i]
        return seg.point_at(t), seg.normal_at(t), self._starts[i] + t * self._lengths[i], d

    def contains(self, points: np.ndarray) -> np.ndarray:
        """True (N,) for the points (N, 2) inside the material; points on the boundary may go either way.

        Even-odd crossing count on the polygon of the segments' chords, each arc then adding or taking
        away its circular segment (between chord and arc): the parities simply add up.
        """
        pts = np.atleast_2d(np.asarray(points, float))
        r, z = pts[:, 0], pts[:, 1]
        inside = np.zeros(len(pts), bool)
        for seg in self.segments:
            (r1, z1), (r2, z2) = seg.start, seg.end
            straddles = (z1 > z) != (z2 > z)
            with np.errstate(divide="ignore", invalid="ignore"):
                r_cross = r1 + (z - z1) * (r2 - r1) / (z2 - z1)
            inside ^= straddles & (r < r_cross)
            if isinstance(seg, Arc):
                chord = _sub(seg.end, seg.start)
                bulge = _cross(chord, _sub(seg.point_at(0.5), seg.start))
                side = chord[0] * (z - z1) - chord[1] * (r - r1)
                in_disc = (r - seg.center[0]) ** 2 + (z - seg.center[1]) ** 2 < seg.radius ** 2
                inside ^= in_disc & (side * bulge > 0.0)
        return inside

    def bounds(self) -> tuple[float, float, float, float]:
        """r_min, r_max, z_min, z_max of the section [mm], arcs included exactly."""
        boxes = np.array([_bbox(seg) for seg in self.segments])
        return (float(boxes[:, 0].min()), float(boxes[:, 1].max()),
                float(boxes[:, 2].min()), float(boxes[:, 3].max()))

    def polygon(self, max_chord_error_mm: float = 1e-3) -> np.ndarray:
        """The outline as a counter-clockwise polyline (N, 2), first point not repeated at the end.

        Arcs are split into chords that stray at most `max_chord_error_mm` from the arc.
        """
        pieces = []
        for seg in self.segments:
            if isinstance(seg, Line) or max_chord_error_mm >= seg.radius:
                n = 1
            else:
                # sagitta of a chord over angle a: R (1 - cos(a / 2))
                n = math.ceil(seg.sweep / (2.0 * math.acos(1.0 - max_chord_error_mm / seg.radius)))
            t = np.arange(n) / n
            pts = seg.points_at(t)
            pts[0] = seg.start
            pieces.append(pts)
        return np.concatenate(pieces)


# ---------------------------------------------------------------------------------------------------
# reading an outline

@dataclass(frozen=True)
class _Node:
    point: Point
    fillet: float
    item: int                        # index of the outline item that gives this node
    arc_radius: float | None = None  # signed radius of the arc arriving at this node, None for a line
    arc_item: int | None = None      # index of the item that gives that arc


@dataclass(frozen=True)
class _Owner:
    """Which outline item a segment comes from, for error messages."""

    item: int
    text: str


def _number(value, key: str, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise InputError(key, f"{what} must be a number, got {shown(value)}")
    try:
        x = float(value)
    except OverflowError:           # a TOML integer has no size limit
        x = math.inf
    if not math.isfinite(x):
        raise InputError(key, f"{what} must be a finite number, got {shown(value)}")
    return x


def _point(value, key: str, what: str) -> Point:
    if not isinstance(value, (list, tuple)) or len(value) != 2:
        raise InputError(key, f"{what} must be [r, z] (two numbers in mm), got {shown(value)}")
    r = _number(value[0], key, f"r of {what}")
    z = _number(value[1], key, f"z of {what}")
    if max(abs(r), abs(z)) > MAX_COORDINATE_MM:
        raise InputError(key, f"({r:g}, {z:g}) lies more than {MAX_COORDINATE_MM / 1000:g} m ({MAX_COORDINATE_MM:g} mm) "
                              "from the origin, beyond what any lathe turns (a typo or a unit slip?); deflect "
                              f"takes coordinates within {MAX_COORDINATE_MM:g} mm of r = 0, z = 0")
    if r < 0.0:
        raise InputError(key, f"r = {r:g} is below the spin axis; a half-section lies at r >= 0 "
                              "(r is the radius, not the diameter)")
    return (r, z)


def _parse_node(item, key: str, index: int) -> _Node:
    if len(item) not in (2, 3):
        raise InputError(key, f"a node is [r, z] or [r, z, f] (f = fillet radius); got {len(item)} values: {shown(item)}")
    point = _point(list(item[:2]), key, "the node")
    fillet = _number(item[2], key, "the fillet radius f") if len(item) == 3 else 0.0
    if fillet < 0.0:
        raise InputError(key, f"the fillet radius f = {fillet:g} is negative; give f >= 0 (0 for a sharp corner)")
    if fillet > MAX_COORDINATE_MM:
        raise InputError(key, f"the fillet radius f = {fillet:g} mm is larger than any turned part "
                              f"(at most {MAX_COORDINATE_MM:g} mm)")
    return _Node(point, fillet, index)


def _parse_arc(item: dict, key: str, index: int) -> _Node:
    unknown = sorted(set(item) - {"to", "radius"})
    if unknown:
        raise InputError(key, f"unknown key(s) {', '.join(map(str, unknown))} in an arc; "
                              "an arc is { to = [r, z], radius = R }")
    for needed in ("to", "radius"):
        if needed not in item:
            raise InputError(key, f"an arc needs '{needed}': {{ to = [r, z], radius = R }}")
    point = _point(item["to"], key, "the arc's end 'to'")
    radius = _number(item["radius"], key, "the arc's radius")
    if radius == 0.0:
        raise InputError(key, "the arc's radius is 0; give R > 0 to turn left (counter-clockwise) "
                              "or R < 0 to turn right, or use a node [r, z] for a straight line")
    if abs(radius) > MAX_ARC_RADIUS_MM:
        raise InputError(key, f"the arc's radius {abs(radius):g} mm is over {MAX_ARC_RADIUS_MM / 1e6:g} km: over "
                              "a part it is a straight line to well under a micrometre; use a node [r, z]")
    return _Node(point, 0.0, index, radius, index)


def _parse_items(outline, key: str) -> list[_Node]:
    if not isinstance(outline, (list, tuple)):
        raise InputError(key, "the outline must be a list of nodes [r, z], [r, z, f] and arcs "
                              f"{{ to = [r, z], radius = R }}; got {type(outline).__name__} {shown(outline)}")
    if len(outline) > MAX_OUTLINE_ITEMS:
        raise InputError(key, f"the outline has {len(outline)} items; deflect takes at most {MAX_OUTLINE_ITEMS} "
                              "(simplify the drawing's splines, e.g. to a chord error of 1 um, before export)")
    nodes = []
    for i, item in enumerate(outline):
        k = f"{key}[{i}]"
        if isinstance(item, dict):
            if i == 0:
                raise InputError(k, "the outline must start with a node [r, z] or [r, z, f]: an arc runs "
                                    "from the previous node, and there is none before the first item")
            nodes.append(_parse_arc(item, k, i))
        elif isinstance(item, (list, tuple)):
            nodes.append(_parse_node(item, k, i))
        else:
            raise InputError(k, "expected a node [r, z], [r, z, f] or an arc { to = [r, z], radius = R }; "
                                f"got {shown(item)}")
    return nodes


def _outline_tolerance(nodes: list[_Node], key: str) -> float:
    """The length tolerance of the outline's nodes (`length_tolerance`); InputError for a part smaller than
    MIN_PART_MM across (which no lathe turns, and where rounding would decide what touches)."""
    if len(nodes) < 3:
        return 0.0          # too few nodes for a section: said as such by the caller
    r, z = np.array([node.point for node in nodes]).T
    size = max(float(np.ptp(r)), float(np.ptp(z)))
    if size < MIN_PART_MM:
        raise InputError(key, f"the outline's nodes span only {size:.3g} mm; a turned part is at least "
                              f"{MIN_PART_MM:g} mm across (is the drawing in metres?)")
    return length_tolerance(float(r.min()), float(r.max()), float(z.min()), float(z.max()))


def _close(nodes: list[_Node], key: str, tol: float) -> list[_Node]:
    """Drop a last node that repeats the first; its arc, if any, then closes the outline."""
    if len(nodes) < 2 or _dist(nodes[0].point, nodes[-1].point) > tol:
        return nodes
    first, last = nodes[0], nodes[-1]
    if first.fillet and last.fillet and first.fillet != last.fillet:
        raise InputError(f"{key}[{last.item}]", f"this node closes the outline on item {first.item} but gives "
                                                f"another fillet ({last.fillet:g} vs {first.fillet:g}); give one")
    closed = replace(first, fillet=first.fillet or last.fillet, arc_radius=last.arc_radius, arc_item=last.arc_item)
    return [closed, *nodes[1:-1]]


def _arc_between(a: Point, b: Point, radius: float, key: str, tol: float) -> Arc:
    """The arc of signed radius from a to b: left (counter-clockwise) for radius > 0, at most a half circle."""
    chord = _dist(a, b)
    if abs(radius) < 0.5 * chord - tol:
        raise InputError(key, f"the arc's radius {abs(radius):g} is too small for the {chord:g} mm between its "
                              f"ends {_fmt(a)} and {_fmt(b)}; it must be at least {0.5 * chord:g} (a half circle)")
    u = _unit(_sub(b, a))
    # the centre lies on the perpendicular bisector, on the side the arc turns towards
    h = math.sqrt(max(radius * radius - 0.25 * chord * chord, 0.0))
    centre = _add(_mul(_add(a, b), 0.5), _mul(_left(u), math.copysign(h, radius)))
    return Arc(a, b, centre, abs(radius), radius > 0.0)


def _edges(nodes: list[_Node], key: str, tol: float) -> tuple[list[Segment], list[_Owner]]:
    """Segment k runs from node k to node k+1 (the last one closes the outline)."""
    n = len(nodes)
    edges, owners = [], []
    for k in range(n):
        a, b = nodes[k], nodes[(k + 1) % n]
        if _dist(a.point, b.point) <= tol:
            later = a if k == n - 1 else b
            other = b if k == n - 1 else a
            raise InputError(f"{key}[{later.item}]", f"this node is the same point {_fmt(a.point)} as item "
                                                     f"{other.item}: remove one of them")
        if b.arc_radius is None:
            edges.append(Line(a.point, b.point))
            closing = " back to item 0" if k == n - 1 else ""
            owners.append(_Owner(a.item, f"the line from item {a.item}{closing}"))
        else:
            edges.append(_arc_between(a.point, b.point, b.arc_radius, f"{key}[{b.arc_item}]", tol))
            owners.append(_Owner(b.arc_item, f"the arc of item {b.arc_item}"))
    return edges, owners


# --- fillets: an arc of radius f tangent to both segments at a corner. Its centre is at distance f from
# both segments' carrier curves (line or circle) on the inside of the turn, i.e. on the two carriers
# offset by f to that side.

def _offset_carrier(seg: Segment, left_offset: float):
    """The carrier of seg moved `left_offset` to the left of travel: ('line', point, unit) or ('circle', c, R)."""
    if isinstance(seg, Line):
        u = _unit(_sub(seg.end, seg.start))
        return ("line", _add(seg.start, _mul(_left(u), left_offset)), u)
    # left of travel points to the centre on a counter-clockwise arc
    radius = seg.radius - left_offset if seg.ccw else seg.radius + left_offset
    return ("circle", seg.center, radius) if radius > 0.0 else None


def _line_circle_points(p: Point, u: Point, c: Point, radius: float, tol: float) -> list[Point]:
    """Where the line through p along unit u meets the circle; a miss by at most tol counts as touching."""
    w = _sub(p, c)
    h = _cross(u, w)  # signed distance of the centre from the line
    foot = _add(p, _mul(u, -_dot(w, u)))
    if abs(h) > radius:
        return [foot] if abs(h) <= radius + tol else []
    half = math.sqrt(radius * radius - h * h)
    return [_add(foot, _mul(u, -half)), _add(foot, _mul(u, half))]


def _circle_circle_points(c1: Point, r1: float, c2: Point, r2: float, tol: float) -> list[Point]:
    """Where two circles with distinct centres meet; a miss by at most tol counts as touching."""
    d = _dist(c1, c2)
    if d <= tol or d > r1 + r2 + tol or d < abs(r1 - r2) - tol:
        return []
    e = _mul(_sub(c2, c1), 1.0 / d)
    a = (d * d + r1 * r1 - r2 * r2) / (2.0 * d)
    base = _add(c1, _mul(e, a))
    h2 = r1 * r1 - a * a
    if h2 <= 0.0:
        return [base]
    h = math.sqrt(h2)
    return [_add(base, _mul(_left(e), h)), _add(base, _mul(_left(e), -h))]


def _carrier_points(a, b, tol: float) -> list[Point]:
    if a[0] == "line" and b[0] == "line":
        denom = _cross(a[2], b[2])
        return [_add(a[1], _mul(a[2], _cross(_sub(b[1], a[1]), b[2]) / denom))]
    if a[0] == "circle" and b[0] == "circle":
        return _circle_circle_points(a[1], a[2], b[1], b[2], tol)
    line, circle = (a, b) if a[0] == "line" else (b, a)
    return _line_circle_points(line[1], line[2], circle[1], circle[2], tol)


def _foot(seg: Segment, p: Point) -> Point:
    """Foot of the perpendicular from p on the carrier of seg."""
    if isinstance(seg, Line):
        return seg.point_at(seg.param_of(p))
    return _add(seg.center, _mul(_unit(_sub(p, seg.center)), seg.radius))


@dataclass(frozen=True)
class _Fillet:
    arc: Arc
    t_in: float   # the incoming segment now ends at this parameter
    t_out: float  # the outgoing segment now starts at this parameter


def _round_corner(seg_in: Segment, seg_out: Segment, fillet: float, key: str, tol: float) -> _Fillet | None:
    """The fillet arc at the corner where seg_in ends and seg_out starts; None for a straight corner."""
    t_in, t_out = seg_in.tangent_at(1.0), seg_out.tangent_at(0.0)
    turn = math.atan2(_cross(t_in, t_out), _dot(t_in, t_out))
    if abs(turn) < _ANGLE_TOL:
        return None  # straight or smooth corner: nothing to round
    if abs(turn) > math.pi - _ANGLE_TOL:
        raise InputError(key, "the outline turns straight back at this node, so its fillet cannot round it; "
                              "check the order of the nodes")
    side = 1.0 if turn > 0.0 else -1.0
    carriers = [_offset_carrier(seg, side * fillet) for seg in (seg_in, seg_out)]
    if None in carriers:
        raise InputError(key, f"the fillet radius {fillet:g} is not smaller than the radius of the arc it "
                              "meets at this corner; use a smaller fillet")
    len_in, len_out = seg_in.length(), seg_out.length()
    best = None
    for centre in _carrier_points(*carriers, tol):
        p_in, p_out = _foot(seg_in, centre), _foot(seg_out, centre)
        u_in, u_out = seg_in.param_of(p_in), seg_out.param_of(p_out)
        fits = -tol / len_in <= u_in <= 1.0 + tol / len_in and -tol / len_out <= u_out <= 1.0 + tol / len_out
        trimmed = (1.0 - u_in) * len_in + u_out * len_out
        if fits and (best is None or trimmed < best[0]):
            best = (trimmed, _Fillet(Arc(p_in, p_out, centre, fillet, side > 0.0),
                                     min(1.0, max(0.0, u_in)), min(1.0, max(0.0, u_out))))
    if best is None:
        hint = ""
        if isinstance(seg_in, Line) and isinstance(seg_out, Line):
            # tangent length f tan(turn / 2) must fit on both lines
            hint = f" (at most {min(len_in, len_out) / math.tan(abs(turn) / 2.0):.4g} here)"
        raise InputError(key, f"the fillet radius {fillet:g} is too large for this corner: it would run past the "
                              f"end of a neighbouring segment; use a smaller fillet{hint}")
    if best[1].arc.sweep > math.pi:
        raise InputError(key, f"the fillet radius {fillet:g} would turn more than a half circle at this corner; "
                              "use a smaller fillet")
    return best[1]


def _trimmed(seg: Segment, start: Point | None, end: Point | None) -> Segment:
    return replace(seg, start=seg.start if start is None else start, end=seg.end if end is None else end)


def _apply_fillets(nodes, edges, owners, key, tol) -> tuple[list[Segment], list[_Owner]]:
    """Round every filleted corner; node k sits between edges k-1 and k."""
    n = len(nodes)
    fillets = [_round_corner(edges[k - 1], edges[k], nodes[k].fillet, f"{key}[{nodes[k].item}]", tol)
               if nodes[k].fillet > 0.0 else None for k in range(n)]
    segments, seg_owners = [], []
    for k in range(n):
        here, after = fillets[k], fillets[(k + 1) % n]
        if here is not None:
            segments.append(here.arc)
            seg_owners.append(_Owner(nodes[k].item, f"the fillet at item {nodes[k].item}"))
        t0 = here.t_out if here else 0.0
        t1 = after.t_in if after else 1.0
        left_mm = (t1 - t0) * edges[k].length()
        if left_mm < -tol:
            nxt = nodes[(k + 1) % n]
            raise InputError(f"{key}[{max(nodes[k].item, nxt.item)}]",
                             f"the fillets at items {nodes[k].item} and {nxt.item} overlap on {owners[k].text}: "
                             f"together they need {edges[k].length() - left_mm:.4g} mm of its "
                             f"{edges[k].length():.4g} mm; make them smaller")
        if left_mm <= tol:
            continue  # the two fillets meet tangentially; nothing of the segment is left
        segments.append(_trimmed(edges[k], here.arc.end if here else None, after.arc.start if after else None))
        seg_owners.append(owners[k])
    # where a segment vanished, join the fillets that now meet exactly
    for k in range(len(segments)):
        prev = segments[k - 1]
        if segments[k].start != prev.end:
            segments[k] = replace(segments[k], start=prev.end)
    return segments, seg_owners


# --- is the outline simple (no crossing, touching or running back)?

def _on_segment(seg: Segment, p: Point, tol: float) -> bool:
    """p (known to lie on the carrier) lies on the segment, within tol."""
    slack = tol / seg.length()
    return -slack <= seg.param_of(p) <= 1.0 + slack


def _same_circle(a: Arc, b: Arc, tol: float) -> bool:
    return _dist(a.center, b.center) <= tol and abs(a.radius - b.radius) <= tol


def _lines_meet(a: Line, b: Line, tol: float) -> Point | None:
    e1, e2 = _sub(a.end, a.start), _sub(b.end, b.start)
    l1, l2 = a.length(), b.length()
    w = _sub(b.start, a.start)
    denom = _cross(e1, e2)
    if abs(denom) <= _ANGLE_TOL * l1 * l2:  # parallel
        if abs(_cross(w, e1)) / l1 > tol:
            return None
        t0, t1 = sorted((a.param_of(b.start), a.param_of(b.end)))
        lo, hi = max(0.0, t0), min(1.0, t1)
        return a.point_at(lo) if hi >= lo - tol / l1 else None
    s, u = _cross(w, e2) / denom, _cross(w, e1) / denom
    inside = -tol / l1 <= s <= 1.0 + tol / l1 and -tol / l2 <= u <= 1.0 + tol / l2
    return a.point_at(s) if inside else None


def _segments_meet(a: Segment, b: Segment, tol: float) -> Point | None:
    """A point shared by two segments that are not neighbours in the chain, or None."""
    if isinstance(a, Line) and isinstance(b, Line):
        return _lines_meet(a, b, tol)
    if isinstance(a, Arc) and isinstance(b, Arc):
        if _same_circle(a, b, tol):
            # two arcs of one circle share points exactly when one holds an end of the other
            for p, other in ((a.start, b), (a.end, b), (b.start, a), (b.end, a)):
                if _on_segment(other, p, tol):
                    return p
            return None
        candidates = _circle_circle_points(a.center, a.radius, b.center, b.radius, tol)
    else:
        line, arc = (a, b) if isinstance(a, Line) else (b, a)
        candidates = _line_circle_points(line.start, line.tangent_at(0.0), arc.center, arc.radius, tol)
    for p in candidates:
        if _on_segment(a, p, tol) and _on_segment(b, p, tol):
            return p
    return None


def _neighbours_meet(a: Segment, b: Segment, tol: float) -> Point | None:
    """A point, other than the shared corner, where segment a and the next segment b meet, or None.

    Both carriers pass through the corner, so their second meeting point follows without a square root.
    """
    corner = b.start
    if isinstance(a, Line) and isinstance(b, Line):
        ta, tb = a.tangent_at(1.0), b.tangent_at(0.0)
        if abs(_cross(ta, tb)) <= _ANGLE_TOL and _dot(ta, tb) < 0.0:  # runs straight back
            return _add(corner, _mul(ta, -0.5 * min(a.length(), b.length())))
        return None
    if isinstance(a, Arc) and isinstance(b, Arc):
        if _same_circle(a, b, tol):
            return (a if a.length() < b.length() else b).point_at(0.5) if a.ccw != b.ccw else None
        n = _unit(_left(_sub(b.center, a.center)))
        other = _sub(corner, _mul(n, 2.0 * _dot(_sub(corner, a.center), n)))  # corner mirrored in the centre line
    else:
        line, arc = (a, b) if isinstance(a, Line) else (b, a)
        u = _unit(_sub(line.start if line is a else line.end, corner))  # along the line, away from the corner
        other = _add(corner, _mul(u, -2.0 * _dot(u, _sub(corner, arc.center))))
    if _dist(other, corner) > tol and _on_segment(a, other, tol) and _on_segment(b, other, tol):
        return other
    return None


def _near_pairs(boxes: np.ndarray, tol: float) -> np.ndarray:
    """(P, 2) index pairs i < j, in order, of the boxes (r_min, r_max, z_min, z_max) that come within tol of
    each other. An R-tree of the boxes finds them (shapely's STRtree: Sort-Tile-Recursive packing, S. T.
    Leutenegger, M. A. Lopez, J. Edgington, "STR: a simple and efficient algorithm for R-tree packing", 1997), so
    the work grows with the outline's length and the pairs found, not with the square of its segments."""
    half = 0.5 * tol
    geometries = shapely.box(boxes[:, 0] - half, boxes[:, 2] - half, boxes[:, 1] + half, boxes[:, 3] + half)
    first, second = shapely.STRtree(geometries).query(geometries)   # boxes whose envelopes meet
    keep = first < second
    pairs = np.column_stack([first[keep], second[keep]])
    return pairs[np.lexsort((pairs[:, 1], pairs[:, 0]))]


def _check_simple(segments: list[Segment], owners: list[_Owner], key: str, tol: float) -> None:
    m = len(segments)
    boxes = np.array([_bbox(seg) for seg in segments])
    for i, j in _near_pairs(boxes, tol).tolist():
        if j == i + 1:
            p = _neighbours_meet(segments[i], segments[j], tol)
        elif i == 0 and j == m - 1:
            p = _neighbours_meet(segments[j], segments[i], tol)
        else:
            p = _segments_meet(segments[i], segments[j], tol)
        if p is not None:
            a, b = owners[i], owners[j]
            raise InputError(f"{key}[{max(a.item, b.item)}]",
                             f"the outline crosses, touches or runs back over itself: {a.text} and {b.text} "
                             f"meet at {_fmt(p)}; list the nodes in order once round the section")


def section_from_outline(outline: list, key: str = "part.outline") -> Section:
    """The validated, counter-clockwise `Section` of an outline list (parsed TOML, lengths in mm).

    Raises `InputError` with the key of the offending item (e.g. ``part.outline[4]``) for any problem.
    """
    nodes = _parse_items(outline, key)
    tol = _outline_tolerance(nodes, key)
    nodes = _close(nodes, key, tol)
    if len(nodes) < 3:
        raise InputError(key, f"the outline has {len(nodes)} distinct node(s); a closed half-section needs at "
                              "least 3, e.g. [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]")
    edges, owners = _edges(nodes, key, tol)
    segments, owners = _apply_fillets(nodes, edges, owners, key, tol)
    for seg, owner in zip(segments, owners):
        r_min, r_max, z_min, z_max = _bbox(seg)
        if max(r_max, abs(z_min), abs(z_max)) > MAX_COORDINATE_MM:
            raise InputError(f"{key}[{owner.item}]", f"{owner.text} bulges more than {MAX_COORDINATE_MM:g} mm from "
                                                     "the origin, beyond what any lathe turns; check its radius")
        if r_min < -tol:
            raise InputError(f"{key}[{owner.item}]", f"{owner.text} bulges to r = {r_min:.6g}, below the spin axis; "
                                                     "give the radius the other sign or make it larger")
    _check_simple(segments, owners, key, tol)
    area = _area_moments(segments, 0.0)[0]
    # a guard: a simple closed outline encloses area, so a flat one is already caught above as running back
    if abs(area) <= tol * tol:
        raise InputError(key, "the outline encloses no area; give the corners of the half-section once round")
    if area < 0.0:  # clockwise as given: store counter-clockwise
        segments = [seg.reversed() for seg in reversed(segments)]
    return Section(tuple(segments))


def part_size_mm(section: Section) -> float:
    """The part's size for the unit check: the larger of its diameter and its length [mm]."""
    r_min, r_max, z_min, z_max = section.bounds()
    return max(2.0 * r_max, z_max - z_min)


def unit_size_warning(section: Section, units: str, to_inch: str = 'set units = "inch" in [job]',
                      to_mm: str = 'set units = "mm" in [job]') -> str | None:
    """A warning when the part's size suggests the outline was drawn in the other unit, else None.

    The size is the larger of the part's diameter and its length, in mm (inch jobs already converted).
    `to_inch` and `to_mm` say how to switch the unit where the outline came from (the job, a drawing).
    """
    size_mm = part_size_mm(section)
    if units == "mm":
        if size_mm < SMALLEST_PLAUSIBLE_MM:
            return (f"the part is only {size_mm:.3g} mm across (largest of diameter and length); if the drawing "
                    f"is in inches, {to_inch}")
        return None
    if units == "inch":
        if size_mm > LARGEST_PLAUSIBLE_MM:
            return (f"the part is {size_mm / _MM_PER_INCH:.4g} in ({size_mm:.4g} mm) across (largest of diameter "
                    f"and length); if the drawing is in millimetres, {to_mm}")
        return None
    raise InputError("job.units", f'units must be "mm" or "inch", got {units!r}')


def tangent_arc(seg_in: Segment, seg_out: Segment, radius_mm: float) -> tuple[Arc, float, float] | None:
    """The arc of radius_mm tangent to both segments on the inside of the turn from seg_in to seg_out, as a
    fillet rounds a corner: (arc from its point on seg_in to its point on seg_out, parameter of that point
    on seg_in, on seg_out); None where no such arc fits on the two segments (or they do not turn).

    The segments need not meet: with a drawn fillet between them, this is the larger arc a tool nose
    leaves there.
    """
    size = max(abs(v) for seg in (seg_in, seg_out) for v in _bbox(seg))
    try:
        fillet = _round_corner(seg_in, seg_out, radius_mm, "", _REL_TOL * size)
    except InputError:
        return None
    return None if fillet is None else (fillet.arc, fillet.t_in, fillet.t_out)


def part_of(seg: Segment, t0: float, t1: float) -> Segment:
    """The piece of a segment between the parameters t0 < t1."""
    return _trimmed(seg, seg.point_at(t0) if t0 > 0.0 else None, seg.point_at(t1) if t1 < 1.0 else None)


def region_moments(segments, z0: float = 0.0) -> np.ndarray:
    """[A, integral r dA, integral r^3 dA, integral (z - z0) dA] over the region a closed chain of lines and
    arcs encloses: positive for a counter-clockwise chain, negative for a clockwise one (see `_area_moments`)."""
    return _area_moments(segments, z0)


# ---------------------------------------------------------------------------------------------------
# mass properties

@dataclass(frozen=True)
class MassProperties:
    """Mass properties of the solid of revolution of a section."""

    area_mm2: float              # area of the half-section
    volume_mm3: float
    mass_g: float
    centroid_r_mm: float         # centroid of the section's area (Pappus: volume = 2 pi centroid_r area)
    centroid_z_mm: float
    inertia_axial_kg_mm2: float  # mass moment of inertia about the spin axis z


def _area_moments(segments, z0: float) -> np.ndarray:
    """[A, integral r dA, integral r^3 dA, integral (z - z0) dA] over the region the chain encloses.

    Green's theorem turns each into a boundary integral: integral r^k dA = contour integral
    r^(k+1)/(k+1) dz, and integral z dA = contour integral r z dz (positive for a counter-clockwise chain).
    z0 keeps the z-moment free of cancellation for parts far along the axis.
    """
    total = np.zeros(4)
    for seg in segments:
        pts = seg.points_at(_GAUSS_T)
        dz_dt = seg.tangents_at(_GAUSS_T)[:, 1] * seg.length()
        r, z = pts[:, 0], pts[:, 1] - z0
        integrands = np.stack([r, 0.5 * r * r, 0.25 * r ** 4, r * z])
        total += integrands @ (_GAUSS_W * dz_dt)
    return total


def mass_properties(section: Section, density_g_cm3: float) -> MassProperties:
    """Area, volume, mass, area centroid and axial inertia of the part; density in g/cm3."""
    density = _number(density_g_cm3, "material.density", "the density")
    if density <= 0.0:
        raise InputError("material.density", f"the density must be positive (g/cm3), got {density:g}")
    _, _, z_min, z_max = section.bounds()
    z0 = 0.5 * (z_min + z_max)
    area, first_r, third_r, first_z = _area_moments(section.segments, z0)
    rho_g_mm3 = density * 1e-3
    volume = 2.0 * math.pi * first_r                          # Pappus-Guldinus: V = 2 pi integral r dA
    inertia_g_mm2 = rho_g_mm3 * 2.0 * math.pi * third_r      # I_z = rho 2 pi integral r^3 dA
    return MassProperties(area_mm2=float(area), volume_mm3=float(volume), mass_g=float(rho_g_mm3 * volume),
                          centroid_r_mm=float(first_r / area), centroid_z_mm=float(z0 + first_z / area),
                          inertia_axial_kg_mm2=float(inertia_g_mm2 * 1e-3))


# ---------------------------------------------------------------------------------------------------
# thinnest wall

@dataclass(frozen=True, eq=False)
class _RayTargets:
    """The surface segments packed into arrays, with an R-tree of their boxes, to intersect many rays with the
    segments each ray can reach (never rays x segments, which grows with the square of a dense outline)."""

    line_start: np.ndarray   # (L, 2)
    line_vector: np.ndarray  # (L, 2) end - start
    line_normal: np.ndarray  # (L, 2) unit outward normal
    arc_centre: np.ndarray   # (K, 2)
    arc_radius: np.ndarray   # (K,)
    arc_start: np.ndarray    # (K, 2) start - centre
    arc_sweep: np.ndarray    # (K,)
    arc_turn: np.ndarray     # (K,) +1 counter-clockwise, -1 clockwise
    tree: shapely.STRtree    # boxes of the lines (0 .. L-1), then of the arcs (L .. L+K-1)
    reach_mm: float          # longer than any ray through the section

    @classmethod
    def of(cls, surfaces: list[Segment], reach_mm: float, tol: float) -> _RayTargets:
        lines = [seg for seg in surfaces if isinstance(seg, Line)]
        arcs = [seg for seg in surfaces if isinstance(seg, Arc)]
        boxes = np.array([_bbox(seg) for seg in lines + arcs], float).reshape(-1, 4)
        tree = shapely.STRtree(shapely.box(boxes[:, 0] - tol, boxes[:, 2] - tol, boxes[:, 1] + tol, boxes[:, 3] + tol))
        return cls(line_start=np.array([seg.start for seg in lines], float).reshape(-1, 2),
                   line_vector=np.array([_sub(seg.end, seg.start) for seg in lines], float).reshape(-1, 2),
                   line_normal=np.array([seg.normal_at(0.0) for seg in lines], float).reshape(-1, 2),
                   arc_centre=np.array([seg.center for seg in arcs], float).reshape(-1, 2),
                   arc_radius=np.array([seg.radius for seg in arcs], float),
                   arc_start=np.array([_sub(seg.start, seg.center) for seg in arcs], float).reshape(-1, 2),
                   arc_sweep=np.array([seg.sweep for seg in arcs], float),
                   arc_turn=np.array([seg._direction() for seg in arcs], float),
                   tree=tree, reach_mm=reach_mm)

    def first_hits(self, origins: np.ndarray, dirs: np.ndarray, s_min: float) -> tuple[np.ndarray, np.ndarray]:
        """Distance (N,) along each ray (unit dirs) to the first surface it meets beyond s_min (inf if
        none), and the unit outward normal (N, 2) of that surface there."""
        distance = np.full(len(origins), np.inf)
        normal = np.zeros((len(origins), 2))
        if len(origins) == 0:
            return distance, normal
        rays = shapely.linestrings(np.stack([origins, origins + self.reach_mm * dirs], axis=1))
        ray, target = self.tree.query(rays, predicate="intersects")
        n_lines = len(self.line_start)
        is_line = target < n_lines
        candidates = [self._line_hits(origins, dirs, ray[is_line], target[is_line], s_min),
                      *self._arc_hits(origins, dirs, ray[~is_line], target[~is_line] - n_lines, s_min)]
        rays_of = np.concatenate([c[0] for c in candidates])
        s = np.concatenate([c[1] for c in candidates])
        n = np.concatenate([c[2] for c in candidates]).reshape(-1, 2)
        hit = np.isfinite(s)
        rays_of, s, n = rays_of[hit], s[hit], n[hit]
        first = np.lexsort((s, rays_of))                       # by ray, nearest first
        lead = first[np.r_[True, rays_of[first][1:] != rays_of[first][:-1]]] if len(first) else first
        distance[rays_of[lead]] = s[lead]
        normal[rays_of[lead]] = n[lead]
        return distance, normal

    def _line_hits(self, origins, dirs, ray, line, s_min):
        """(rays, distances (inf for a miss), normals) of (ray, line) pairs: o + s d = start + u (end - start)."""
        o, d = origins[ray], dirs[ray]
        e = self.line_vector[line]
        w = self.line_start[line] - o
        denom = _cross_rows(d, e)
        with np.errstate(divide="ignore", invalid="ignore"):
            s = _cross_rows(w, e) / denom
            u = _cross_rows(w, d) / denom
        length = np.hypot(e[:, 0], e[:, 1])
        hit = (np.abs(denom) > 1e-14 * length) & (u >= -_REL_TOL) & (u <= 1.0 + _REL_TOL) & (s > s_min)
        return ray, np.where(hit, s, np.inf), self.line_normal[line]

    def _arc_hits(self, origins, dirs, ray, arc, s_min):
        """Both roots of |o + s d - centre| = radius for (ray, arc) pairs, each as (rays, distances, normals)."""
        o, d = origins[ray], dirs[ray]
        w = o - self.arc_centre[arc]
        b = np.sum(d * w, axis=1)
        disc = b * b - (np.sum(w * w, axis=1) - self.arc_radius[arc] ** 2)
        root = np.sqrt(np.maximum(disc, 0.0))
        start, sweep, turn = self.arc_start[arc], self.arc_sweep[arc], self.arc_turn[arc]
        out = []
        for s in (-b - root, -b + root):
            radial = w + s[:, None] * d  # hit point - centre
            angle = turn * np.arctan2(_cross_rows(start, radial), np.sum(start * radial, axis=1))
            angle = np.where(angle < 0.5 * (sweep - 2.0 * math.pi), angle + 2.0 * math.pi, angle)
            t = angle / sweep
            hit = (disc >= 0.0) & (t >= -_REL_TOL) & (t <= 1.0 + _REL_TOL) & (s > s_min)
            # outward normal: away from the centre on a counter-clockwise arc, towards it on a clockwise one
            out.append((ray, np.where(hit, s, np.inf), radial * (turn / self.arc_radius[arc])[:, None]))
        return out


def _cross_rows(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def _points_and_inward(section: Section, seg_ids: np.ndarray, params: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Points (N, 2) at (segment, parameter) and the unit inward normals (N, 2) there, the segments taken in
    runs of the same index (so the work is one numpy call per run, not per point)."""
    origins = np.empty((len(params), 2))
    inward = np.empty((len(params), 2))
    order = np.argsort(seg_ids, kind="stable")
    ids = seg_ids[order]
    starts = np.flatnonzero(np.r_[True, ids[1:] != ids[:-1]])
    for first, last in zip(starts, np.r_[starts[1:], len(ids)]):
        rows = order[first:last]
        seg = section.segments[int(ids[first])]
        origins[rows] = seg.points_at(params[rows])
        tangents = seg.tangents_at(params[rows])
        inward[rows] = np.column_stack([-tangents[:, 1], tangents[:, 0]])  # tangent turned left, into the material
    return origins, inward


def _walls(section: Section, surfaces: _RayTargets, seg_ids: np.ndarray,
           params: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Along the inward normal from each (segment, parameter) point: the distance (N,) to where the ray
    leaves the material, and the cosine (N,) of the angle between the ray and that surface's normal.

    A ray that reaches the spin axis goes on in the mirrored half of the section (the solid continues
    through the axis): its r-direction is reflected there.
    """
    origins, inward = _points_and_inward(section, seg_ids, params)
    s_min = 10.0 * section._tol
    hit, normal = surfaces.first_hits(origins, inward, s_min)
    facing = np.einsum("ij,ij->i", inward, normal)
    with np.errstate(divide="ignore", invalid="ignore"):
        to_axis = np.where(inward[:, 0] < 0.0, -origins[:, 0] / inward[:, 0], np.inf)
    mirror = to_axis < hit
    if mirror.any():
        on_axis = np.column_stack([np.zeros(mirror.sum()), origins[mirror, 1] + to_axis[mirror] * inward[mirror, 1]])
        mirrored = np.column_stack([-inward[mirror, 0], inward[mirror, 1]])
        beyond, beyond_normal = surfaces.first_hits(on_axis, mirrored, s_min)
        hit[mirror] = to_axis[mirror] + beyond
        facing[mirror] = np.einsum("ij,ij->i", mirrored, beyond_normal)
    return hit, facing


def min_wall(section: Section) -> float:
    """The thinnest wall [mm] (see `thinnest_wall`, which also says where it is)."""
    return thinnest_wall(section).thickness_mm


@dataclass(frozen=True)
class WallReading:
    """The thinnest wall of a section and the boundary point it is measured from."""

    thickness_mm: float
    point: Point                 # (r, z) on the boundary where the thinnest ray starts [mm]


def thinnest_wall(section: Section) -> WallReading:
    """The thinnest wall [mm]: the smallest distance from a boundary point, along its inward normal
    through the material, to the opposite boundary (for a tube OD/2 - ID/2), and where it starts.

    The opposite boundary is one the ray meets within 20 degrees of head-on, i.e. a face within 20
    degrees of parallel to the one the ray starts from. A ray leaving through a face at a steeper angle
    measures a corner (a square end face meets the tapered OD of a wall at 87 degrees, and the metal
    there thins to nothing at the tip) or a chamfer, not a wall, and is left out; only if no ray at all
    meets a face that squarely (a solid cone, say) do all rays count. Segments on the spin axis are cuts
    through the solid, not surfaces: no rays start on them and rays pass through them into the mirrored half.
    """
    tol = section._tol
    surface_ids = [i for i, seg in enumerate(section.segments) if not _on_axis(seg, tol)]
    r_min, r_max, z_min, z_max = section.bounds()
    reach = 2.0 * math.hypot(2.0 * r_max, z_max - z_min) + 1.0     # across the solid, mirrored half included
    surfaces = _RayTargets.of([section.segments[i] for i in surface_ids], reach, tol)
    spacing = section.perimeter() / _WALL_RAYS
    grids = {i: np.linspace(_WALL_END_OFFSET, 1.0 - _WALL_END_OFFSET,
                            max(_WALL_RAYS_PER_SEGMENT, math.ceil(section._lengths[i] / spacing)) + 1)
             for i in surface_ids}
    seg_ids = np.concatenate([np.full(len(t), i) for i, t in grids.items()])
    params = np.concatenate(list(grids.values()))
    hit, facing = _walls(section, surfaces, seg_ids, params)
    least_facing = math.cos(math.radians(_WALL_MAX_INCIDENCE_DEG))
    if not np.isfinite(hit[facing >= least_facing]).any():
        least_facing = -1.0  # no two faces are near parallel: every ray counts
    # rays that meet no opposite face get a finite stand-in, longer than any wall, so the search stays finite
    no_wall = 2.0 * section.perimeter()

    def walls(ids: np.ndarray, ts: np.ndarray) -> np.ndarray:
        distance, cosine = _walls(section, surfaces, ids, ts)
        return np.where((cosine >= least_facing) & np.isfinite(distance), distance, no_wall)

    sampled = np.where((facing >= least_facing) & np.isfinite(hit), hit, no_wall)
    if not (sampled < no_wall).any():
        raise ModelError("could not measure the wall: no ray from the boundary met the opposite side",
                         key="part.outline")

    # refine around the thinnest ray of each of the thinnest few segments (seg_ids come in runs, segment by segment)
    run_starts = np.flatnonzero(np.r_[True, seg_ids[1:] != seg_ids[:-1]])
    per_segment = sorted(zip(np.minimum.reduceat(sampled, run_starts).tolist(), seg_ids[run_starts].tolist()))
    first = int(np.argmin(sampled))
    thinnest = (float(sampled[first]), int(seg_ids[first]), float(params[first]))
    refined = np.array([i for _, i in per_segment[:_WALL_REFINED_SEGMENTS]], int)
    lo, hi = np.empty(len(refined)), np.empty(len(refined))
    for row, i in enumerate(refined):
        t = grids[i]
        k = int(np.argmin(sampled[seg_ids == i]))
        lo[row], hi[row] = t[max(k - 1, 0)], t[min(k + 1, len(t) - 1)]
    thickness, i, t = min(thinnest, *_zoomed_minima(walls, refined, lo, hi)) if len(refined) else thinnest
    return WallReading(thickness_mm=thickness, point=section.segments[i].point_at(t))


def _zoomed_minima(walls, ids: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> list[tuple[float, int, float]]:
    """(least wall, segment, parameter) on each segment ids[k] within [lo[k], hi[k]]: walls(ids, ts) sampled at
    _WALL_ZOOM_POINTS evenly spaced parameters of every interval at once, each interval then narrowed to the
    two samples beside its least, until it is narrower than _WALL_XATOL (about nine rounds). One ray cast per
    round for all segments, where a scalar minimiser casts one ray per step and segment."""
    rows = np.arange(len(ids))
    best = [(math.inf, int(i), float(a)) for i, a in zip(ids, lo)]
    share = np.linspace(0.0, 1.0, _WALL_ZOOM_POINTS)
    while True:
        ts = lo[:, None] + (hi - lo)[:, None] * share[None, :]
        values = walls(np.repeat(ids, _WALL_ZOOM_POINTS), ts.ravel()).reshape(len(ids), _WALL_ZOOM_POINTS)
        k = np.argmin(values, axis=1)
        best = [min(found, (float(values[row, k[row]]), int(ids[row]), float(ts[row, k[row]])))
                for row, found in enumerate(best)]
        if np.max(hi - lo) <= _WALL_XATOL:
            return best
        lo, hi = ts[rows, np.maximum(k - 1, 0)], ts[rows, np.minimum(k + 1, _WALL_ZOOM_POINTS - 1)]
