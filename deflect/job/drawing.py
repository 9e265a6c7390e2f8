"""A DXF drawing of a turned part -> the outline of its half-section, in the job's `[part].outline` form.

Takes a DXF file (read with ezdxf, a general-purpose DXF library) and gives a `Drawing`: the outline items
of the half-section (`[r, z]` nodes and `{ to = [r, z], radius = R }` arcs, so that arcs stay arcs and the
mass properties stay exact), the unit they are in, the layer and axis they were read against, and notes on
everything that was assumed or repaired (joined gaps, splines turned into lines and arcs, ignored entities).

Conventions
-----------
* Drawing x runs along the spin axis (z), drawing y is the radius (r), as turned parts are drawn: the axis
  horizontal, the part above it (the lathe's own axes, ISO 841: Z along the spindle, X across it). The axis
  is the line y = 0 unless a centre line says otherwise: a LINE whose linetype is a centre line's (CENTER,
  CENTRE, DASHDOT or the ISO 128 long-dash-dot ACAD_ISO04W100) or whose layer is named for one (CENTER,
  CENTRE, AXIS, CL); the longest horizontal or vertical one is the axis. A vertical axis x = a makes drawing
  y the axis and x - a the radius. `axis` ("y=12.5", "x=0", or a number for y) overrides both.
* The drawing may hold the half-section above the axis, below it, or the full profile mirrored about it
  (one closed outline across the axis, or one above and its mirror below): the half above the axis is used.
* Units: `$INSUNITS` of the drawing's header (1 inch, 4 mm, 5 cm, 6 m, ...; DXF reference, HEADER section).
  A unitless drawing (0) is read in the caller's unit (the job's, or mm). Lengths come out in mm, except
  for an inch drawing, which stays in inches (a job written from it says `units = "inch"`).

Entities: LINE, ARC, CIRCLE (used only when a circle is the outline, e.g. a ring's round section; otherwise
ignored with a note), LWPOLYLINE and POLYLINE with bulges (bulge = tan(theta / 4), theta the included angle of
the arc to the next vertex, positive counter-clockwise: DXF reference, LWPOLYLINE group code 42), SPLINE and
ELLIPSE (turned into lines and arcs within `CURVE_TOLERANCE_MM`, with a note naming where), blocks exploded
(INSERT, recursively). Text, dimensions, hatches and the like are ignored. Arcs and bulges are taken in each
entity's object coordinate system (OCS) and brought to world coordinates, so mirrored arcs (extrusion -Z)
keep their true direction.

Chaining: ends closer than `GAP_MM` are joined (every joined gap above rounding is reported with where it
is); an end with no other near it leaves the outline open, which is an error naming where. Exactly one
closed outline must remain on the layers read; two or more is an error asking for the layer.

Every problem is an `InputError(key, message)` with a key such as "file", "header.$INSUNITS", "layer",
"entities" or "axis"; the caller names the file.
"""

from __future__ import annotations

import logging
import math
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy.spatial import cKDTree

from deflect.errors import InputError
from deflect.geometry.section import Section, section_from_outline, unit_size_warning

MM_PER_INCH = 25.4
# Ends closer than this are joined into one node [mm]: far above the rounding of coordinates written by CAD
# programs, below what a lathe program resolves on a turned part (1 um steps); a wider gap is a mistake
# in the drawing to be fixed there, not guessed at.
GAP_MM = 0.01
# Splines and ellipses are replaced by lines and arcs that stray at most this far from the curve [mm]
# (checked on the curve evaluated densely); it is below the finest turned tolerances (IT5 on 3 mm is 4 um).
CURVE_TOLERANCE_MM = 0.001
# Coordinates closer than this fraction of the drawing's size are the same point (rounding, not a gap).
SAME_POINT_REL = 1e-9
# Most nesting of block references, and most pieces read: a corrupt or hostile file cannot make the reader
# loop or exhaust memory.
MAX_BLOCK_DEPTH = 16
MAX_PIECES = 200_000
# Dense samples of a spline per piece of its flattening, to check the fitted lines and arcs against.
CHECK_SAMPLES_PER_PIECE = 16

# $INSUNITS code -> (name, mm per drawing unit) (DXF reference, HEADER section variables).
INSUNITS = {1: ("inch", 25.4), 2: ("foot", 304.8), 4: ("mm", 1.0), 5: ("cm", 10.0), 6: ("m", 1000.0),
            8: ("microinch", 25.4e-6), 9: ("mil", 0.0254), 10: ("yard", 914.4), 13: ("micron", 1e-3),
            14: ("decimetre", 100.0)}
UNIT_CODE = {"mm": 4, "inch": 1}

_CENTRE_LINETYPE = re.compile(r"CENT(ER|RE)|DASHDOT|ISO0?4W", re.IGNORECASE)
_CENTRE_LAYER = re.compile(r"^(CL|C/L|.*CENT(ER|RE).*|.*AXIS.*)$", re.IGNORECASE)
_CURVES = ("SPLINE", "ELLIPSE")
# Annotation and construction entities a drawing usually holds beside the outline: ignored without a note.
_ANNOTATIONS = {"TEXT", "MTEXT", "DIMENSION", "ARC_DIMENSION", "LARGE_RADIAL_DIMENSION", "LEADER", "MLEADER",
                "MULTILEADER", "HATCH", "POINT", "ATTDEF", "ATTRIB", "TOLERANCE", "VIEWPORT", "XLINE", "RAY",
                "WIPEOUT", "IMAGE", "ACAD_TABLE", "SOLID", "TRACE"}
_DRAWN = ("LINE", "ARC", "CIRCLE", "LWPOLYLINE", "POLYLINE", *_CURVES)

Point = tuple[float, float]

# ezdxf logs what its recovery repairs; the notes here say it once, in the user's terms.
logging.getLogger("ezdxf").addHandler(logging.NullHandler())


@dataclass(frozen=True)
class Axis:
    """The spin axis in drawing coordinates: the line y = at (horizontal) or x = at (vertical)."""

    vertical: bool
    at: float
    how: str                      # how it was found, for the notes


@dataclass(frozen=True)
class CurveNote:
    """A spline or ellipse of the outline, replaced by lines and arcs."""

    source: str                   # e.g. 'SPLINE #2F on layer "0"'
    start_rz: Point               # where it starts and ends on the half-section, in the outline's unit
    end_rz: Point
    lines: int
    arcs: int
    deviation_mm: float           # largest distance found between the curve and its replacement


@dataclass(frozen=True)
class Drawing:
    """The outline read from a drawing, in the job's `[part].outline` form."""

    path: str
    outline: list                 # [r, z] nodes and { to = [r, z], radius = R } arcs, in `unit`
    unit: str                     # "mm" or "inch": the unit of the outline's numbers
    drawing_unit: str             # the drawing's own unit ("mm", "inch", "cm", ...)
    layers: tuple[str, ...]       # the layer(s) the outline's entities lie on
    axis: Axis
    curves: tuple[CurveNote, ...] = ()
    notes: tuple[str, ...] = ()   # warnings: joined gaps, assumptions, ignored entities
    sources: tuple[str, ...] = field(default=(), repr=False)   # the entity behind each outline item

    @property
    def mm_per_unit(self) -> float:
        return MM_PER_INCH if self.unit == "inch" else 1.0


# ---------------------------------------------------------------------------------------------------
# pieces: lines and arcs in drawing coordinates

@dataclass(frozen=True)
class _Piece:
    """A line (center None) or a circular arc from start to end, in the plane of the drawing."""

    start: Point
    end: Point
    source: str
    layer: str
    center: Point | None = None
    radius: float = 0.0
    ccw: bool = True
    sweep: float = 0.0            # arcs: angle travelled [rad], in (0, 2 pi]
    curve: int | None = None      # index of the spline or ellipse it stands in for

    def reversed(self) -> _Piece:
        return _Piece(self.end, self.start, self.source, self.layer, self.center, self.radius, not self.ccw,
                      self.sweep, self.curve)

    def point_at(self, t: float) -> Point:
        if self.center is None:
            return (self.start[0] + t * (self.end[0] - self.start[0]), self.start[1] + t * (self.end[1] - self.start[1]))
        a0 = math.atan2(self.start[1] - self.center[1], self.start[0] - self.center[0])
        a = a0 + (1.0 if self.ccw else -1.0) * t * self.sweep
        return (self.center[0] + self.radius * math.cos(a), self.center[1] + self.radius * math.sin(a))

    def mapped(self, transform) -> _Piece:
        """The piece under an isometry (point -> point, and whether it mirrors)."""
        move, mirrors = transform
        return _Piece(move(self.start), move(self.end), self.source, self.layer,
                      None if self.center is None else move(self.center), self.radius,
                      self.ccw != mirrors, self.sweep, self.curve)


def _sweep_between(a0: float, a1: float, ccw: bool) -> float:
    """Angle travelled from angle a0 to a1 [rad] in the given direction, in (0, 2 pi]."""
    turn = (a1 - a0) if ccw else (a0 - a1)
    turn = math.fmod(turn, 2.0 * math.pi)
    return turn + 2.0 * math.pi if turn <= 0.0 else turn


def _arc(center: Point, radius: float, a0: float, sweep: float, ccw: bool, source: str, layer: str) -> _Piece:
    a1 = a0 + (sweep if ccw else -sweep)
    start = (center[0] + radius * math.cos(a0), center[1] + radius * math.sin(a0))
    end = (center[0] + radius * math.cos(a1), center[1] + radius * math.sin(a1))
    return _Piece(start, end, source, layer, center, radius, ccw, sweep)


def _finite(*values: float) -> bool:
    return all(math.isfinite(v) for v in values)


def _bulge_piece(p: Point, q: Point, bulge: float, source: str, layer: str) -> _Piece:
    """The line (bulge 0) or arc from p to q of a polyline vertex's bulge = tan(theta / 4), theta the
    included angle, positive counter-clockwise (DXF reference, LWPOLYLINE group code 42).

    The centre lies on the chord's perpendicular bisector, (c / 2) cot(theta / 2) = (c / 2)(1 - b^2) / (2 b)
    to the left of the chord (a negative distance is to the right), and the radius is c (1 + b^2) / (4 |b|).
    """
    if bulge == 0.0:
        return _Piece(p, q, source, layer)
    dx, dy = q[0] - p[0], q[1] - p[1]
    chord = math.hypot(dx, dy)
    if chord == 0.0:
        return _Piece(p, q, source, layer)
    ux, uy = dx / chord, dy / chord
    offset = 0.5 * chord * (1.0 - bulge * bulge) / (2.0 * bulge)
    center = (0.5 * (p[0] + q[0]) - uy * offset, 0.5 * (p[1] + q[1]) + ux * offset)
    radius = chord * (1.0 + bulge * bulge) / (4.0 * abs(bulge))
    return _Piece(p, q, source, layer, center, radius, bulge > 0.0, 4.0 * math.atan(abs(bulge)))


# ---------------------------------------------------------------------------------------------------
# reading the file

def _said(exc: Exception) -> str:
    """An exception's text on one line (ezdxf's messages may run over several), at most 200 characters."""
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if len(text) <= 200 else text[:197] + "..."


def _looks_like_dxf(path: Path) -> None:
    """A DXF file is text opening with the group code 0 (or the binary DXF sentinel)."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(4096)
    except FileNotFoundError:
        raise InputError("file", "no such file") from None
    except OSError as exc:
        raise InputError("file", f"cannot be read ({exc.strerror or exc})") from None
    if not head.strip():
        raise InputError("file", "is empty: a DXF file was expected")
    if head.startswith(b"AutoCAD Binary DXF"):
        return
    first = head.lstrip(b"\xef\xbb\xbf").lstrip().split(b"\n", 1)[0].strip()
    if first != b"0":
        raise InputError("file", "is not a DXF file (a DXF drawing begins with the group code 0 and a SECTION); "
                                 "export the drawing from the CAD program as DXF")


def _open(path: Path):
    """The ezdxf document and notes; a damaged file is read with ezdxf's recovery, with a note."""
    import ezdxf
    from ezdxf import recover

    _looks_like_dxf(path)
    try:
        return ezdxf.readfile(str(path)), []
    except OSError as exc:
        raise InputError("file", f"cannot be read ({exc.strerror or _said(exc)})") from None
    except Exception as exc:  # ezdxf raises many kinds of error on a damaged file; each means the same here
        strict = _said(exc)
    try:
        doc, auditor = recover.readfile(str(path))
    except Exception:   # the recovery gave up too: the file is not a DXF we can read
        raise InputError("file", f"is not a DXF file that can be read ({strict})") from None
    if auditor.has_errors:
        raise InputError("file", f"is a damaged DXF file ({_said(auditor.errors[0].message)})")
    return doc, [f"the file is damaged ({strict}); it was read with ezdxf's recovery: check the outline"]


def _unit(doc, units: str | None, unitless: str, notes: list[str]) -> tuple[str, float]:
    """(name, mm per drawing unit): `units` if given, else $INSUNITS, else `unitless`."""
    try:
        code = int(doc.header.get("$INSUNITS", 0))
    except (TypeError, ValueError):
        code = 0
    if units is not None:
        if units not in UNIT_CODE:
            raise InputError("--units", f'must be "mm" or "inch", got {units!r}')
        if code in INSUNITS and INSUNITS[code][0] != units:
            notes.append(f"the drawing says its unit is {INSUNITS[code][0]} ($INSUNITS = {code}); it is read in "
                         f"{units} as asked")
        return units, MM_PER_INCH if units == "inch" else 1.0
    if code in INSUNITS:
        return INSUNITS[code]
    if code != 0:
        raise InputError("header.$INSUNITS", f"unit code {code} is not a length unit deflect reads (1 inch, 4 mm, "
                                             "5 cm, 6 m); give the unit with --units mm or --units inch")
    notes.append(f"the drawing gives no unit ($INSUNITS = 0): it is read in {unitless}")
    return unitless, MM_PER_INCH if unitless == "inch" else 1.0


def _source(entity, layer: str, block: str | None) -> str:
    try:
        handle = entity.dxf.get("handle")
    except Exception:   # a damaged entity: named by its type alone
        handle = None
    name = f"{entity.dxftype()} #{handle}" if handle else entity.dxftype()
    inside = f' in block "{block}"' if block else ""
    return f'{name} on layer "{layer}"{inside}'


def _flat_xy(ocs, point, elevation: float = 0.0) -> Point:
    x, y, _ = ocs.to_wcs((float(point[0]), float(point[1]), elevation))
    return (float(x), float(y))


def _check_flat(entity) -> bool:
    """Whether the entity's object coordinate system mirrors (extrusion -Z); it must lie in a plane parallel
    to the drawing's XY plane."""
    extrusion = entity.dxf.get("extrusion", (0.0, 0.0, 1.0))
    ex, ey, ez = (float(v) for v in extrusion)
    length = math.sqrt(ex * ex + ey * ey + ez * ez)
    if not length > 0.0 or abs(ex) > 1e-9 * length or abs(ey) > 1e-9 * length:
        raise ValueError(f"it is drawn in a tilted plane (extrusion {ex:g}, {ey:g}, {ez:g}); "
                         "draw the half-section in the XY plane")
    return ez < 0.0


def _line_pieces(entity, source, layer):
    s, e = entity.dxf.start, entity.dxf.end
    start, end = (float(s[0]), float(s[1])), (float(e[0]), float(e[1]))
    return [_Piece(start, end, source, layer)]


def _arc_pieces(entity, source, layer):
    mirrored = _check_flat(entity)
    ocs = entity.ocs()
    center_ocs = entity.dxf.center
    elevation = float(center_ocs[2]) if len(center_ocs) > 2 else 0.0
    radius = float(entity.dxf.radius)
    a0, a1 = math.radians(float(entity.dxf.start_angle)), math.radians(float(entity.dxf.end_angle))
    if not (_finite(radius, a0, a1) and radius > 0.0):
        raise ValueError(f"radius {radius:g} or its angles are not usable")
    if a1 == a0:
        return []   # no length
    sweep = _sweep_between(a0, a1, True)
    start = _flat_xy(ocs, (center_ocs[0] + radius * math.cos(a0), center_ocs[1] + radius * math.sin(a0)), elevation)
    end = _flat_xy(ocs, (center_ocs[0] + radius * math.cos(a1), center_ocs[1] + radius * math.sin(a1)), elevation)
    center = _flat_xy(ocs, center_ocs, elevation)
    return [_Piece(start, end, source, layer, center, radius, not mirrored, sweep)]


def _circle_pieces(entity, source, layer):
    _check_flat(entity)
    ocs = entity.ocs()
    c = entity.dxf.center
    radius = float(entity.dxf.radius)
    if not (_finite(radius) and radius > 0.0):
        raise ValueError(f"radius {radius:g} is not usable")
    center = _flat_xy(ocs, c, float(c[2]) if len(c) > 2 else 0.0)
    # four quarter arcs, counter-clockwise in world coordinates
    return [_arc(center, radius, k * 0.5 * math.pi, 0.5 * math.pi, True, source, layer) for k in range(4)]


def _polyline_pieces(vertices: list[tuple[Point, float]], closed: bool, transform, source, layer):
    """Pieces of a polyline given as (OCS point, bulge) pairs; transform maps OCS points to world."""
    move, mirrored = transform
    pieces = []
    count = len(vertices) if closed else len(vertices) - 1
    for k in range(max(count, 0)):
        (p, bulge), (q, _) = vertices[k], vertices[(k + 1) % len(vertices)]
        if not _finite(*p, *q, bulge):
            raise ValueError("a vertex or bulge is not a finite number")
        piece = _bulge_piece(p, q, bulge, source, layer)
        pieces.append(piece.mapped((move, mirrored)))
    return pieces


def _lwpolyline_pieces(entity, source, layer):
    mirrored = _check_flat(entity)
    ocs = entity.ocs()
    elevation = float(entity.dxf.get("elevation", 0.0))
    vertices = [((float(x), float(y)), float(b)) for x, y, b in entity.get_points("xyb")]
    return _polyline_pieces(vertices, bool(entity.closed), (lambda p: _flat_xy(ocs, p, elevation), mirrored),
                            source, layer)


def _polyline2_pieces(entity, source, layer, notes):
    if entity.is_poly_face_mesh or entity.is_polygon_mesh:
        notes.append(f"{source}: a mesh, not an outline: ignored")
        return []
    # vertices that are only a spline's frame (flag 16) are not on the curve
    vertices = [v for v in entity.vertices if not int(v.dxf.get("flags", 0)) & 16]
    points = [((float(v.dxf.location[0]), float(v.dxf.location[1])), float(v.dxf.get("bulge", 0.0)))
              for v in vertices]
    if entity.is_3d_polyline:
        points = [(p, 0.0) for p, _ in points]     # a 3-D polyline is in world coordinates, without bulges
        return _polyline_pieces(points, entity.is_closed, (lambda p: p, False), source, layer)
    mirrored = _check_flat(entity)
    ocs = entity.ocs()
    elevation = float(entity.dxf.get("elevation", (0.0, 0.0, 0.0))[2])
    return _polyline_pieces(points, entity.is_closed, (lambda p: _flat_xy(ocs, p, elevation), mirrored),
                            source, layer)


# ---------------------------------------------------------------------------------------------------
# splines and ellipses -> lines and arcs

def _circle_through(a, m, b) -> tuple[np.ndarray, float] | None:
    """Centre and radius of the circle through three points; None when they are (nearly) in a line."""
    ax, ay = a
    bx, by = m[0] - ax, m[1] - ay
    cx, cy = b[0] - ax, b[1] - ay
    d = 2.0 * (bx * cy - by * cx)
    scale = max(bx * bx + by * by, cx * cx + cy * cy)
    if abs(d) <= 1e-12 * scale:
        return None
    ux = (cy * (bx * bx + by * by) - by * (cx * cx + cy * cy)) / d
    uy = (bx * (cx * cx + cy * cy) - cx * (bx * bx + by * by)) / d
    return np.array([ax + ux, ay + uy]), math.hypot(ux, uy)


def _fit(points: np.ndarray, i: int, j: int, tol: float, source: str, layer: str) -> _Piece | None:
    """A line or an arc (at most a half turn) through points i and j that passes within tol of every point
    between them, or None."""
    a, b = points[i], points[j]
    run = points[i:j + 1]
    chord = b - a
    length = float(np.hypot(*chord))
    if length > 0.0:
        off = np.abs(chord[0] * (run[:, 1] - a[1]) - chord[1] * (run[:, 0] - a[0])) / length
        along = ((run - a) @ chord) / length ** 2
        if off.max() <= tol and along.min() >= -1e-9 and along.max() <= 1.0 + 1e-9:
            return _Piece(tuple(map(float, a)), tuple(map(float, b)), source, layer)
    if j - i < 2:
        return None
    circle = _circle_through(a, points[(i + j) // 2], b)
    if circle is None:
        return None
    center, radius = circle
    if np.abs(np.hypot(*(run - center).T) - radius).max() > tol:
        return None
    m = points[(i + j) // 2]
    ccw = (m[0] - a[0]) * (b[1] - m[1]) - (m[1] - a[1]) * (b[0] - m[0]) > 0.0
    angles = np.arctan2(run[:, 1] - center[1], run[:, 0] - center[0])
    travelled = np.unwrap(angles) - angles[0]
    travelled = travelled if ccw else -travelled
    if np.any(np.diff(travelled) < -1e-12) or travelled[-1] > math.pi:
        return None
    return _Piece(tuple(map(float, a)), tuple(map(float, b)), source, layer, (float(center[0]), float(center[1])),
                  float(radius), bool(ccw), float(travelled[-1]))


def _fitted(points: np.ndarray, tol: float, source: str, layer: str) -> list[_Piece]:
    """Lines and arcs through a dense polyline, greedily as long as each stays within tol of its points
    (the reach of each piece grown by doubling, then bisected)."""
    pieces, i, last = [], 0, len(points) - 1
    while i < last:
        good, step = i + 1, 1
        while good + step <= last and _fit(points, i, good + step, tol, source, layer) is not None:
            good += step
            step *= 2
        bad = min(good + step, last + 1)
        while bad - good > 1:
            middle = (good + bad) // 2
            if _fit(points, i, middle, tol, source, layer) is not None:
                good = middle
            else:
                bad = middle
        pieces.append(_fit(points, i, good, tol, source, layer) or
                      _Piece(tuple(map(float, points[i])), tuple(map(float, points[good])), source, layer))
        i = good
    return pieces


def _distance_to(pieces: list[_Piece], points: np.ndarray) -> np.ndarray:
    """Distance of each point to the nearest piece."""
    best = np.full(len(points), np.inf)
    for piece in pieces:
        a = np.asarray(piece.start)
        if piece.center is None:
            e = np.asarray(piece.end) - a
            t = np.clip(((points - a) @ e) / max(float(e @ e), 1e-300), 0.0, 1.0)
            d = np.hypot(*(points - a - t[:, None] * e).T)
        else:
            c = np.asarray(piece.center)
            w = points - c
            angle = np.arctan2(w[:, 1], w[:, 0]) - math.atan2(a[1] - c[1], a[0] - c[0])
            angle = np.mod(angle if piece.ccw else -angle, 2.0 * math.pi)
            on_arc = angle <= piece.sweep
            ends = np.minimum(np.hypot(*(points - a).T), np.hypot(*(points - np.asarray(piece.end)).T))
            d = np.where(on_arc, np.abs(np.hypot(*w.T) - piece.radius), ends)
        best = np.minimum(best, d)
    return best


def _curve_points(entity, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """(flattening within tol, dense samples for the check) of a SPLINE or ELLIPSE, in world x, y."""
    tool = entity.construction_tool()
    flat = np.array([(float(p[0]), float(p[1])) for p in tool.flattening(tol, segments=8)])
    count = CHECK_SAMPLES_PER_PIECE * max(len(flat), 2)
    if entity.dxftype() == "SPLINE":
        dense = tool.points(np.linspace(0.0, float(tool.max_t), count))
    else:
        start = float(tool.start_param)
        span = float(tool.param_span)
        dense = tool.vertices(start + span * np.linspace(0.0, 1.0, count))
    dense = np.array([(float(p[0]), float(p[1])) for p in dense])
    return flat, dense


def _curve_pieces(entity, source: str, layer: str, tol: float) -> tuple[list[_Piece], float]:
    """Lines and arcs standing in for a spline or ellipse, and the largest distance found between them and
    the curve. The curve is flattened within tol / 4, the pieces fitted within tol / 2 of that polyline, and
    the result checked on the curve sampled densely; should it stray beyond tol, both are tightened."""
    if entity.dxftype() == "ELLIPSE":
        _check_flat(entity)
    share = 0.25
    for _ in range(6):
        flat, dense = _curve_points(entity, share * tol)
        if len(flat) < 2 or not np.isfinite(flat).all() or not np.isfinite(dense).all():
            raise ValueError("its points cannot be evaluated")
        keep = np.concatenate([[True], np.hypot(*np.diff(flat, axis=0).T) > 0.0])
        pieces = _fitted(flat[keep], 2.0 * share * tol, source, layer)
        deviation = float(_distance_to(pieces, dense).max())
        if deviation <= tol:
            return pieces, deviation
        share *= 0.5
    raise ValueError(f"it cannot be replaced by lines and arcs within {tol:g}")


# ---------------------------------------------------------------------------------------------------
# entities

@dataclass
class _Read:
    """What the walk over the drawing's entities found."""

    pieces: list = field(default_factory=list)         # _Piece, drawing units
    circles: list = field(default_factory=list)        # lists of 4 quarter-arc _Pieces
    centre_lines: list = field(default_factory=list)   # (start, end, source)
    curves: list = field(default_factory=list)         # (source, deviation in drawing units)
    ignored: Counter = field(default_factory=Counter)
    layers: Counter = field(default_factory=Counter)   # drawn entities per layer
    notes: list = field(default_factory=list)


def _layer_linetype(doc, layer: str) -> str:
    try:
        if doc.layers.has_entry(layer):
            return str(doc.layers.get(layer).dxf.get("linetype", "CONTINUOUS"))
    except Exception:   # a damaged layer table: the layer's linetype is unknown, not an error
        pass
    return "CONTINUOUS"


def _is_centre_line(entity, doc, layer: str) -> bool:
    if entity.dxftype() != "LINE":
        return False
    linetype = str(entity.dxf.get("linetype", "BYLAYER"))
    if linetype.upper() == "BYLAYER":
        linetype = _layer_linetype(doc, layer)
    return bool(_CENTRE_LINETYPE.search(linetype) or _CENTRE_LAYER.match(layer))


def _walk(entities, doc, found: _Read, tol_of, block: str | None, parent_layer: str | None, depth: int) -> None:
    """Every entity, block references exploded (entities on layer 0 inside a block take the reference's layer)."""
    for entity in entities:
        kind = str(entity.dxftype())
        if kind != "INSERT" and kind not in _DRAWN:
            found.ignored[kind] += 1
            continue
        try:
            layer = str(entity.dxf.get("layer", "0"))
        except Exception:   # a damaged entity without a usable layer: it lies on layer 0
            layer = "0"
        if parent_layer is not None and layer == "0":
            layer = parent_layer
        if kind == "INSERT":
            if depth >= MAX_BLOCK_DEPTH:
                raise InputError("entities", f"blocks are nested more than {MAX_BLOCK_DEPTH} deep: "
                                             "explode them in the CAD program")
            try:
                name = str(entity.dxf.get("name", "?"))
                exploded = [list(ref.virtual_entities()) for ref in entity.multi_insert()]
            except Exception as exc:   # ezdxf cannot resolve the block (missing, damaged, odd transform)
                raise InputError("entities", f"{_source(entity, layer, block)}: its block cannot be "
                                             f"exploded ({_said(exc)})") from None
            for parts in exploded:
                _walk(parts, doc, found, tol_of, name, layer, depth + 1)
            continue
        source = _source(entity, layer, block)
        try:
            if _is_centre_line(entity, doc, layer):
                s, e = entity.dxf.start, entity.dxf.end
                found.centre_lines.append(((float(s[0]), float(s[1])), (float(e[0]), float(e[1])), source, layer))
                continue
            if kind == "LINE":
                pieces = _line_pieces(entity, source, layer)
            elif kind == "ARC":
                pieces = _arc_pieces(entity, source, layer)
            elif kind == "CIRCLE":
                found.circles.append(_circle_pieces(entity, source, layer))
                found.layers[layer] += 1
                continue
            elif kind == "LWPOLYLINE":
                pieces = _lwpolyline_pieces(entity, source, layer)
            elif kind == "POLYLINE":
                pieces = _polyline2_pieces(entity, source, layer, found.notes)
            else:
                pieces, deviation = _curve_pieces(entity, source, layer, tol_of(CURVE_TOLERANCE_MM))
                index = len(found.curves)
                found.curves.append((source, deviation))
                pieces = [_Piece(p.start, p.end, p.source, p.layer, p.center, p.radius, p.ccw, p.sweep, index)
                          for p in pieces]
        except InputError:
            raise
        except Exception as exc:   # a damaged entity: ezdxf or the numbers in it
            raise InputError("entities", f"{source} cannot be read: {_said(exc)}") from None
        for piece in pieces:
            if not _finite(*piece.start, *piece.end) or (piece.center is not None and not _finite(*piece.center)):
                raise InputError("entities", f"{source} has a coordinate that is not a finite number")
        found.pieces.extend(pieces)
        found.layers[layer] += 1
        if len(found.pieces) > MAX_PIECES:
            raise InputError("entities", f"the drawing holds more than {MAX_PIECES} lines and arcs; "
                                         "give the layer of the half-section")


# ---------------------------------------------------------------------------------------------------
# the axis and the half above it

def parse_axis(text: str, key: str) -> Axis:
    """'y=12.5' (the axis is the horizontal line y = 12.5), 'x=0' (the vertical line x = 0) or '12.5' (y)."""
    value = str(text).strip().lower().replace(" ", "")
    vertical = value.startswith("x=")
    number = value[2:] if value[:2] in ("x=", "y=") else value
    try:
        at = float(number)
    except ValueError:
        at = math.nan
    if not math.isfinite(at):
        raise InputError(key, f"expects y=VALUE (a horizontal axis), x=VALUE (a vertical one) or a number "
                              f"(y), in the drawing's unit; got {text!r}")
    return Axis(vertical=vertical, at=at, how=f"given as {'x' if vertical else 'y'} = {at:g}")


def _find_axis(found: _Read, same: float) -> Axis:
    """The longest horizontal or vertical centre line, else the line y = 0."""
    best = None
    for start, end, source, _ in found.centre_lines:
        dx, dy = end[0] - start[0], end[1] - start[1]
        length = math.hypot(dx, dy)
        if length <= same:
            continue
        if abs(dy) <= 1e-9 * length:
            axis = Axis(False, 0.5 * (start[1] + end[1]), f"the centre line {source} (y = {start[1]:g})")
        elif abs(dx) <= 1e-9 * length:
            axis = Axis(True, 0.5 * (start[0] + end[0]), f"the centre line {source} (x = {start[0]:g})")
        else:
            continue
        if best is None or length > best[0]:
            best = (length, axis)
    return best[1] if best else Axis(False, 0.0, "the line y = 0 (no centre line found)")


def _to_section_frame(axis: Axis):
    """The isometry from drawing (x, y) to (r, z) with r the signed distance from the axis: (move, mirrors)."""
    if axis.vertical:
        return (lambda p: (p[0] - axis.at, p[1])), False
    return (lambda p: (p[1] - axis.at, p[0])), True     # x <-> y swapped: a mirror


def _r_range(piece: _Piece) -> tuple[float, float]:
    """Smallest and largest r of a piece (an arc's extreme points included)."""
    rs = [piece.start[0], piece.end[0]]
    if piece.center is not None:
        a0 = math.atan2(piece.start[1] - piece.center[1], piece.start[0] - piece.center[0])
        for angle, r in ((0.0, piece.center[0] + piece.radius), (math.pi, piece.center[0] - piece.radius)):
            if _sweep_between(a0, angle, piece.ccw) < piece.sweep:
                rs.append(r)
    return min(rs), max(rs)


def _loop_area(loop: list[_Piece]) -> float:
    """Signed area enclosed by a closed chain (> 0 counter-clockwise): shoelace on the chords plus each arc's
    circular segment R^2 (theta - sin theta) / 2."""
    area = 0.0
    for p in loop:
        area += 0.5 * (p.start[0] * p.end[1] - p.end[0] * p.start[1])
        if p.center is not None:
            segment = 0.5 * p.radius ** 2 * (p.sweep - math.sin(p.sweep))
            area += segment if p.ccw else -segment
    return area


def _split_at_axis(piece: _Piece, same: float) -> list[_Piece]:
    """The piece cut where it crosses r = 0."""
    cuts = []
    if piece.center is None:
        r0, r1 = piece.start[0], piece.end[0]
        if (r0 < -same and r1 > same) or (r0 > same and r1 < -same):
            cuts.append(r0 / (r0 - r1))
    else:
        cr, cz = piece.center
        if abs(cr) < piece.radius:
            h = math.sqrt(piece.radius ** 2 - cr * cr)
            a0 = math.atan2(piece.start[1] - cz, piece.start[0] - cr)
            for z in (cz - h, cz + h):
                t = _sweep_between(a0, math.atan2(z - cz, -cr), piece.ccw) / piece.sweep
                if 0.0 < t < 1.0 and min(t, 1.0 - t) * piece.sweep * piece.radius > same:
                    cuts.append(t)
    if not cuts:
        return [piece]
    bounds = [0.0, *sorted(cuts), 1.0]
    out = []
    for t0, t1 in zip(bounds[:-1], bounds[1:]):
        start, end = piece.point_at(t0), piece.point_at(t1)
        if t0 > 0.0:
            start = (0.0, start[1])
        if t1 < 1.0:
            end = (0.0, end[1])
        out.append(_Piece(start, end, piece.source, piece.layer, piece.center, piece.radius, piece.ccw,
                          (t1 - t0) * piece.sweep, piece.curve))
    return out


def _upper_half(loop: list[_Piece], same: float, notes: list[str]) -> list[_Piece]:
    """The half above the axis of an outline drawn across it (a full profile), closed along the axis."""
    pieces = [q for p in loop for q in _split_at_axis(p, same)]
    side = [1 if _r_range(p)[1] > same and _r_range(p)[0] >= -same else -1 if _r_range(p)[0] < -same else 0
            for p in pieces]
    runs, lower = [], []
    n = len(pieces)
    start = next((k for k in range(n) if side[k] == 1 and side[k - 1] != 1), None)
    if start is None:
        raise InputError("entities", "the outline crosses the axis but no part of it lies above: check the axis")
    k, current = start, []
    for _ in range(n):
        if side[k] == 1:
            current.append(pieces[k])
        elif current:
            runs.append(current)
            current = []
        if side[k] == -1:
            lower.append(pieces[k])
        k = (k + 1) % n
    if current:
        runs.append(current)
    if len(runs) != 1:
        raise InputError("entities", f"the outline crosses the axis {2 * len(runs)} times: a full profile of a "
                                     "turned part crosses it twice; check the axis or draw the half-section")
    run = runs[0]
    if abs(run[-1].end[0]) > same or abs(run[0].start[0]) > same:
        raise InputError("entities", "the outline crosses the axis, but its half above the axis does not end on "
                                     "it: check the axis")
    upper = [*run, _Piece(run[-1].end, run[0].start, "the axis", run[0].layer)]
    mirrored_lower = 0.0
    if lower:
        mirrored_lower = abs(_loop_area(lower + [_Piece(lower[-1].end, lower[0].start, "the axis", lower[0].layer)]))
    upper_area = abs(_loop_area(upper))
    if abs(upper_area - mirrored_lower) > 1e-6 * max(upper_area, mirrored_lower):
        notes.append(f"the full profile is not symmetric about the axis (the half above encloses {upper_area:.6g}, "
                     f"the half below {mirrored_lower:.6g}): the half above is used")
    else:
        notes.append("the drawing holds the full profile across the axis: the half above it is used")
    return upper


# ---------------------------------------------------------------------------------------------------
# chaining ends into closed outlines

@dataclass
class _Chains:
    loops: list          # closed chains: lists of _Piece in order, each oriented along the chain
    open_ends: list      # (point, source) of ends with no partner
    branches: list       # (point, [sources]) where three or more ends meet
    gaps: dict           # node -> (point, largest distance between the ends joined there, sources)


def _chain(pieces: list[_Piece], join: float, same: float) -> _Chains:
    """Join the pieces' ends into nodes and walk the closed chains. Ends at the same point (within rounding)
    are one node; then every free end (one that meets no other) is joined to the nearest other free end
    closer than `join`, nearest pairs first. Ends already joined are never pulled together further, so two
    vertices of a fine polyline that come close are not mistaken for a gap."""
    ends = np.array([p for piece in pieces for p in (piece.start, piece.end)], float).reshape(-1, 2)
    parent = list(range(len(ends)))

    def root(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    tree = cKDTree(ends)
    for i, j in tree.query_pairs(same):
        parent[root(i)] = root(j)
    count = Counter(root(i) for i in range(len(ends)))
    free = [i for i in range(len(ends)) if count[root(i)] == 1]
    if len(free) > 1:
        pairs = cKDTree(ends[free]).query_pairs(join, output_type="ndarray")
        order = np.argsort(np.hypot(*(ends[free][pairs[:, 0]] - ends[free][pairs[:, 1]]).T)) if len(pairs) else []
        taken = set()
        for a, b in (pairs[k] for k in order):
            i, j = free[a], free[b]
            if i in taken or j in taken:
                continue
            taken.update((i, j))
            parent[root(i)] = root(j)
    roots = [root(i) for i in range(len(ends))]
    members: dict[int, list[int]] = {}
    for i, r in enumerate(roots):
        members.setdefault(r, []).append(i)
    gaps = {}
    for node, idx in members.items():
        if len(idx) > 1:
            pts = ends[idx]
            spread = float(np.hypot(*(pts[:, None, :] - pts[None, :, :]).reshape(-1, 2).T).max())
            if spread > same:
                gaps[node] = (tuple(pts.mean(axis=0)), spread, [pieces[i // 2].source for i in idx])
    edges = [(roots[2 * k], roots[2 * k + 1]) for k in range(len(pieces))]
    at_node: dict[int, list[int]] = {}
    for k, (a, b) in enumerate(edges):
        at_node.setdefault(a, []).append(k)
        at_node.setdefault(b, []).append(k)
    open_ends = [(tuple(ends[members[node][0]]), pieces[ks[0]].source)
                 for node, ks in at_node.items() if len(ks) == 1]
    branches = [(tuple(ends[members[node]].mean(axis=0)), [pieces[k].source for k in ks])
                for node, ks in at_node.items() if len(ks) > 2]
    bad_nodes = {node for node, ks in at_node.items() if len(ks) != 2}
    loops, used = [], set()
    for first in range(len(pieces)):
        if first in used:
            continue
        # walk the component; it is a loop only if every node on it has exactly two ends
        chain, k, node, clean = [], first, edges[first][0], True
        for _ in range(len(pieces) + 1):
            used.add(k)
            a, b = edges[k]
            forward = a == node
            chain.append(pieces[k] if forward else pieces[k].reversed())
            node = b if forward else a
            if node in bad_nodes:
                clean = False
                break
            nxt = [m for m in at_node[node] if m != k]
            if not nxt:
                break
            k = nxt[0]
            if k == first:
                break
        if clean and node == edges[first][0]:
            loops.append(chain)
        else:
            _mark_component(first, edges, at_node, used)
    return _Chains(loops, open_ends, branches, gaps)


def _mark_component(first: int, edges, at_node, used: set) -> None:
    """Mark every piece connected to `first` as used (an open or branching chain)."""
    todo = [first]
    while todo:
        k = todo.pop()
        used.add(k)
        for node in edges[k]:
            todo.extend(m for m in at_node[node] if m not in used)


def _where(point: Point, unit: str) -> str:
    return f"(x = {point[0]:.6g}, y = {point[1]:.6g} {unit})"


# ---------------------------------------------------------------------------------------------------
# the outline items

def _outline_items(loop: list[_Piece], scale: float, same: float) -> tuple[list, list[str]]:
    """The `[part].outline` items of a closed chain in (r, z): nodes and arcs (more than a half turn split),
    lengths multiplied by scale; and the entity behind each item."""
    def node(p: Point) -> list[float]:
        r = 0.0 if abs(p[0]) <= same else p[0] * scale
        return [r, p[1] * scale]

    items, sources = [node(loop[0].start)], [loop[0].source]
    here = items[0]
    for k, piece in enumerate(loop):
        last = k == len(loop) - 1
        if piece.center is None:
            if not last:
                here = node(piece.end)
                items.append(here)
                sources.append(piece.source)
            continue
        parts = max(1, math.ceil(piece.sweep / math.pi - 1e-9))
        start, end = here, node(piece.end) if not last else items[0]
        here = end
        center = [piece.center[0] * scale, piece.center[1] * scale]
        radius = 0.5 * (math.dist(start, center) + math.dist(end, center))
        radius = max(radius, 0.5 * math.dist(start, end))
        a0 = math.atan2(start[1] - center[1], start[0] - center[0])
        turn = 1.0 if piece.ccw else -1.0
        for j in range(1, parts + 1):
            if j == parts:
                to = list(end)
            else:
                a = a0 + turn * piece.sweep * j / parts
                to = [center[0] + radius * math.cos(a), center[1] + radius * math.sin(a)]
            items.append({"to": to, "radius": turn * radius})
            sources.append(piece.source)
    return items, sources


# ---------------------------------------------------------------------------------------------------
# the whole read

def read_drawing(path: str | Path, units: str | None = None, layer: str | None = None, axis: str | None = None,
                 unitless: str = "mm", axis_key: str = "--axis") -> Drawing:
    """Read a DXF half-section (see the module docstring for the conventions).

    Parameters
    ----------
    path : the DXF file
    units : "mm" or "inch" to read the drawing in that unit whatever its header says; None: $INSUNITS
    layer : read only this layer (case-insensitive, as DXF layer names are); None: every layer
    axis : "y=VALUE", "x=VALUE" or a number (y), in drawing units; None: a centre line, else y = 0
    unitless : the unit of a drawing whose header gives none
    axis_key : the option or key the axis came from, for messages
    """
    path = Path(path)
    doc, notes = _open(path)
    unit_name, mm_per_drawing_unit = _unit(doc, units, unitless, notes)
    out_unit = "inch" if unit_name == "inch" else "mm"
    scale = mm_per_drawing_unit / (MM_PER_INCH if out_unit == "inch" else 1.0)
    try:
        entities = list(doc.modelspace())
    except Exception as exc:   # a damaged entities section
        raise InputError("entities", f"the drawing's entities cannot be read ({_said(exc)})") from None
    if not entities:
        damaged = "; the file is damaged" if any(n.startswith("the file is damaged") for n in notes) else ""
        raise InputError("entities", f"the drawing holds no entities (an empty model space){damaged}")

    found = _Read(notes=notes)
    _walk(entities, doc, found, lambda mm: mm / mm_per_drawing_unit, None, None, 0)
    all_layers = dict(found.layers)
    if layer is not None:
        wanted = layer.strip().upper()
        found.pieces = [p for p in found.pieces if p.layer.upper() == wanted]
        found.circles = [c for c in found.circles if c[0].layer.upper() == wanted]
        if not found.pieces and not found.circles:
            listed = ", ".join(f'"{name}" ({count})' for name, count in sorted(all_layers.items())) or "none"
            raise InputError("layer", f'no lines, arcs, polylines or splines on layer "{layer}"; layers with '
                                      f"them (entities): {listed}")
    coords = [abs(v) for p in found.pieces for v in (*p.start, *p.end)]
    coords += [abs(v) for c in found.circles for v in (*c[0].center, c[0].radius)]
    coords += [abs(v) for s, e, _, _ in found.centre_lines for v in (*s, *e)]
    size = max(coords, default=0.0)
    same = SAME_POINT_REL * max(size, 1.0)
    if not found.pieces and not found.circles:
        what = "only centre lines" if found.centre_lines else "no lines, arcs, polylines or splines"
        kinds = ", ".join(f"{n} {k}" for k, n in sorted(found.ignored.items()))
        raise InputError("entities", f"the drawing holds {what}" + (f" (besides: {kinds})" if kinds else "")
                         + "; it needs the closed outline of the half-section")

    chosen_axis = parse_axis(axis, axis_key) if axis is not None else _find_axis(found, same)
    frame = _to_section_frame(chosen_axis)
    pieces = [p.mapped(frame) for p in found.pieces]
    dropped = [p for p in pieces if p.center is None and math.dist(p.start, p.end) <= same]
    pieces = [p for p in pieces if p.center is not None or math.dist(p.start, p.end) > same]
    if dropped:
        notes.append(f"{len(dropped)} line(s) of no length left out (e.g. {dropped[0].source})")
    pieces = _without_duplicates(pieces, same, notes)
    if pieces and all(max(abs(v) for v in _r_range(p)) <= same for p in pieces) and not found.circles:
        raise InputError("entities", f"every line lies on the axis ({chosen_axis.how}); the drawing needs the "
                                     "outline of the half-section, not only its axis")

    chains = _chain(pieces, GAP_MM / mm_per_drawing_unit, same)
    circles = [[p.mapped(frame) for p in c] for c in found.circles]
    loop = _choose(chains.loops, circles, same, notes, chains, unit_name, frame)
    _note_gaps(loop, chains, unit_name, mm_per_drawing_unit, notes, frame)
    if chains.open_ends and len(chains.loops) + len(circles) >= 1:
        notes.append(f"{len(chains.open_ends)} open end(s) of lines not on the outline were left out, e.g. "
                     f"{chains.open_ends[0][1]}")
    unusual = {k: n for k, n in found.ignored.items() if k not in _ANNOTATIONS}
    if unusual:
        notes.append("ignored (not lines, arcs or curves of a section): "
                     + ", ".join(f"{n} {k}" for k, n in sorted(unusual.items())))
    items, sources = _outline_items(loop, scale, same)
    layers = tuple(sorted({p.layer for p in loop if p.source != "the axis"}))
    curves = _curve_notes(loop, found.curves, scale, mm_per_drawing_unit)
    return Drawing(path=str(path), outline=items, unit=out_unit, drawing_unit=unit_name, layers=layers,
                   axis=chosen_axis, curves=curves, notes=tuple(notes), sources=tuple(sources))


def _without_duplicates(pieces: list[_Piece], same: float, notes: list[str]) -> list[_Piece]:
    """The pieces with each one drawn twice over itself (either way round) kept once."""
    def key(p: _Piece):
        ends = tuple(sorted((round(p.start[0] / same), round(p.start[1] / same),
                             round(p.end[0] / same), round(p.end[1] / same))[i:i + 2] for i in (0, 2)))
        if p.center is None:
            return ("line", ends)
        mid = p.point_at(0.5)
        return ("arc", ends, round(mid[0] / same), round(mid[1] / same))

    seen, kept, twice = set(), [], []
    for p in pieces:
        k = key(p)
        if k in seen:
            twice.append(p)
            continue
        seen.add(k)
        kept.append(p)
    if twice:
        notes.append(f"{len(twice)} entity piece(s) drawn twice over themselves were read once "
                     f"(e.g. {twice[0].source})")
    return kept


def _choose(loops: list, circles: list, same: float, notes: list[str], chains: _Chains, unit: str,
            frame) -> list[_Piece]:
    """The one closed outline of the half-section among the closed chains and circles."""
    candidates = [(loop, False) for loop in loops] + [(c, True) for c in circles]
    if not candidates:
        raise InputError("entities", _open_message(chains, unit, frame))
    above, below = [], []
    for loop, is_circle in candidates:
        low = min(_r_range(p)[0] for p in loop)
        high = max(_r_range(p)[1] for p in loop)
        if low >= -same:
            above.append((loop, is_circle))
        elif high <= same:
            below.append((loop, is_circle))
        else:
            above.append((_upper_half(loop, same, notes), is_circle))
    if below:
        if not above:
            mirror = ((lambda p: (-p[0], p[1])), True)
            above = [([p.mapped(mirror) for p in loop], c) for loop, c in below]
            notes.append("the half-section is drawn below the axis: it is read mirrored above it")
        else:
            unmatched = [b for b in below if not any(_mirrors(b[0], a[0], same) for a in above)]
            if unmatched:
                above += unmatched
            else:
                notes.append("the drawing holds the full profile, mirrored about the axis: the half above it is used")
    shapes = [c for c in above if not c[1]]
    if shapes and len(shapes) < len(above):
        notes.append(f"{len(above) - len(shapes)} circle(s) ignored (not the outline: holes, marks)")
        above = shapes
    if len(above) > 1:
        raise InputError("entities", _many_message([loop for loop, _ in above], frame))
    return above[0][0]


def _mirrors(lower: list[_Piece], upper: list[_Piece], same: float) -> bool:
    """Whether a chain below the axis is the mirror image of one above it (area and extent)."""
    def extent(loop, sign):
        rs = [v for p in loop for v in _r_range(p)]
        zs = [v for p in loop for v in (p.start[1], p.end[1])]
        r_values = sorted(sign * r for r in rs)
        return (r_values[0], r_values[-1], min(zs), max(zs))

    a, b = abs(_loop_area(lower)), abs(_loop_area(upper))
    close = all(abs(x - y) <= 1e3 * same for x, y in zip(extent(lower, -1.0), extent(upper, 1.0)))
    return close and abs(a - b) <= 1e-6 * max(a, b)


def _back_to_drawing(frame, point: Point) -> Point:
    """(r, z) -> drawing (x, y) for messages (the frames are their own inverses up to the axis offset)."""
    move, mirrors = frame
    origin = move((0.0, 0.0))
    if mirrors:   # (x, y) -> (y - a, x): back is (z, r + a)
        return (point[1], point[0] - origin[0])
    return (point[0] - origin[0], point[1])


def _open_message(chains: _Chains, unit: str, frame) -> str:
    if chains.branches:
        point, sources = chains.branches[0]
        return (f"{len(sources)} ends meet at {_where(_back_to_drawing(frame, point), unit)} ({'; '.join(sources)}): "
                "an outline runs through each point once; remove the extra line or put it on another layer")
    if chains.open_ends:
        shown = "; ".join(f"{source} ends at {_where(_back_to_drawing(frame, p), unit)}"
                          for p, source in chains.open_ends[:3])
        more = f" and {len(chains.open_ends) - 3} more" if len(chains.open_ends) > 3 else ""
        return (f"the outline is open: {shown}{more}, with no other end within {GAP_MM:g} mm; close the outline "
                "in the drawing")
    return "no closed outline found"


def _many_message(loops: list, frame) -> str:
    layers = [sorted({p.layer for p in loop if p.source != "the axis"}) for loop in loops]
    described = "; ".join(f"one on layer {', '.join(repr(x) for x in lay)} through {loop[0].source}"
                          for loop, lay in zip(loops[:4], layers))
    if len({tuple(x) for x in layers}) > 1:
        hint = 'name the layer of the half-section (`layer = "..."` in [part], or --layer)'
    else:
        hint = "erase the others or put them on other layers, then name the half-section's layer"
    return f"{len(loops)} closed outlines: {described}; {hint}"


def _note_gaps(loop: list[_Piece], chains: _Chains, unit: str, mm_per_unit: float, notes: list[str],
               frame) -> None:
    # the loop's pieces may have been split at the axis or mirrored: find its gaps by where they are
    ends = np.array([p.start for p in loop], float)
    for node in sorted(chains.gaps):
        point, spread, sources = chains.gaps[node]
        near = np.hypot(np.abs(ends[:, 0]) - abs(point[0]), ends[:, 1] - point[1]).min()
        if near > 2.0 * spread:
            continue
        notes.append(f"joined a gap of {spread * mm_per_unit:.3g} mm at {_where(_back_to_drawing(frame, point), unit)} "
                     f"between {' and '.join(sorted(set(sources)))}")


def _curve_notes(loop: list[_Piece], curves: list, scale: float, mm_per_unit: float) -> tuple[CurveNote, ...]:
    notes = []
    for index, (source, deviation) in enumerate(curves):
        mine = [p for p in loop if p.curve == index]
        if not mine:
            continue
        lines = sum(p.center is None for p in mine)
        notes.append(CurveNote(source=source, start_rz=(mine[0].start[0] * scale, mine[0].start[1] * scale),
                               end_rz=(mine[-1].end[0] * scale, mine[-1].end[1] * scale), lines=lines,
                               arcs=len(mine) - lines, deviation_mm=deviation * mm_per_unit))
    return tuple(notes)


# ---------------------------------------------------------------------------------------------------
# the section of a drawing

def outline_in(drawing: Drawing, units: str) -> list:
    """The drawing's outline items in a job's unit ("mm" or "inch"), for a job's `[part] outline`."""
    scale = drawing.mm_per_unit / (MM_PER_INCH if units == "inch" else 1.0)
    return [[v * scale for v in item] if isinstance(item, list) else
            {"to": [v * scale for v in item["to"]], "radius": item["radius"] * scale} for item in drawing.outline]


def drawing_section(drawing: Drawing, key: str = "part.drawing") -> Section:
    """The validated section (mm) of a drawing's outline; a problem names the drawing's entities, not the
    outline's item numbers."""
    outline = outline_in(drawing, "mm")
    try:
        return section_from_outline(outline, "outline")
    except InputError as exc:
        def entity(match):
            k = int(match.group(1))
            return drawing.sources[k] if k < len(drawing.sources) else match.group(0)
        message = re.sub(r"item (\d+)", entity, exc.message)
        raise InputError(key, f"{Path(drawing.path).name}: the outline read from the drawing is not a "
                              f"half-section: {message}") from None


def drawing_notes(drawing: Drawing, section: Section) -> list[str]:
    """The drawing's notes, the curves replaced, and a warning when its size suggests the wrong unit."""
    notes = list(drawing.notes)
    for c in drawing.curves:
        notes.append(f"{c.source} was replaced by {c.lines} line(s) and {c.arcs} arc(s) within "
                     f"{CURVE_TOLERANCE_MM:g} mm (largest distance found {c.deviation_mm:.2g} mm), from "
                     f"(r = {c.start_rz[0]:.6g}, z = {c.start_rz[1]:.6g}) to (r = {c.end_rz[0]:.6g}, "
                     f"z = {c.end_rz[1]:.6g}) {drawing.unit}")
    warning = unit_size_warning(section, drawing.unit if drawing.drawing_unit in UNIT_CODE else "mm",
                                to_inch="set $INSUNITS = 1 in the drawing or read it with --units inch",
                                to_mm="set $INSUNITS = 4 in the drawing or read it with --units mm")
    if warning:
        notes.append(warning)
    return notes
