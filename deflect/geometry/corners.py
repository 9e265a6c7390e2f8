"""Concave corners of a half-section, and the material a tool nose of radius r leaves in them.

Takes a `Section` (counter-clockwise, material on the left) and gives

* `concave_corners` - every place where the boundary turns away from the material (to the right as it
  is travelled): a sharp corner, or a clockwise arc (a fillet drawn into an internal corner), with its drawn
  radius and the opening angle of the empty side;
* `nose_material` - the region a nose of radius r leaves in such a corner: between the drawn boundary and
  the arc of radius r tangent to the two segments either side of the corner, the arc a tool nose cuts when
  it follows both walls. Its area, centroid and volume of revolution are integrated exactly on its lines
  and arcs (`section.region_moments`: Green's theorem with Gauss-Legendre quadrature, exact to rounding).

The closed form for two straight walls meeting at a sharp corner whose empty side opens at an angle alpha
(alpha = 90 deg for a shoulder): the nose circle of radius r is tangent to both walls, so its centre lies on
the bisector and each tangent point lies r cot(alpha / 2) from the corner (the radius to a tangent point is
perpendicular to the tangent: Euclid, Elements, Book III, Proposition 18). The corner, the two tangent points
and the centre form a kite of two right triangles with legs r and r cot(alpha / 2), area r^2 cot(alpha / 2);
the circular sector at the centre between the tangent points turns through pi - alpha (the kite's angles
add up to 2 pi) and has area r^2 (pi - alpha) / 2. The material left is the kite less the sector:

    A(r) = r^2 [cot(alpha / 2) - (pi - alpha) / 2],     alpha = 90 deg:  A = (1 - pi / 4) r^2 = 0.21460 r^2.

A fillet of radius f < r drawn in the corner is itself such a region of the walls, so the nose leaves
A(r) - A(f). On the part of revolution the region's volume is 2 pi r_c A, r_c the radius of its centroid
(the second theorem of Pappus-Guldinus: P. Guldin, "Centrobaryca", 1635-1641).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.geometry.section import Arc, Point, Section, part_of, region_moments, tangent_arc

# A corner turning less than this [rad] is straight or smooth (as in the section's own outline rules).
STRAIGHT_RAD = 1e-9


@dataclass(frozen=True)
class ConcaveCorner:
    """A place where the section's boundary turns away from the material."""

    point: tuple[float, float]   # (r, z) of the sharp corner, or the middle of the fillet arc [mm]
    radius_mm: float             # drawn radius: 0 for a sharp corner, the fillet's radius otherwise
    opening_deg: float           # alpha: the angle the empty side opens between the two walls [deg]
    before: int                  # index of the segment that runs into the corner
    after: int                   # index of the segment that runs out of it
    fillet: int | None           # index of the drawn fillet arc, None for a sharp corner


@dataclass(frozen=True)
class NoseMaterial:
    """The material a nose of radius r leaves in a concave corner (exact, lines and arcs)."""

    nose_radius_mm: float
    area_mm2: float
    centroid_r_mm: float
    centroid_z_mm: float
    volume_mm3: float            # 2 pi centroid_r area (Pappus)
    nose_arc: Arc                # the arc the nose cuts, from its tangent point on `before` to the one on `after`
    boundary: tuple = ()         # the region's closed chain of lines and arcs (clockwise)

    def polygon(self, max_chord_error_mm: float) -> np.ndarray:
        """The region as a polygon (N, 2), arcs split into chords straying at most max_chord_error_mm."""
        return Section(self.boundary).polygon(max_chord_error_mm)


def _turn(a: Point, b: Point) -> float:
    """Signed angle [rad] from direction a to direction b: > 0 turning left (counter-clockwise)."""
    return math.atan2(a[0] * b[1] - a[1] * b[0], a[0] * b[0] + a[1] * b[1])


def concave_corners(section: Section) -> list[ConcaveCorner]:
    """Every concave corner of the section, in boundary order: sharp corners turning right and clockwise arcs
    (fillets in internal corners). Corners on the spin axis (a segment lying on it is a cut through the solid,
    not a surface) are left out."""
    segments = section.segments
    n = len(segments)
    corners = []
    for i, seg in enumerate(segments):
        before, after = (i - 1) % n, (i + 1) % n
        if section.on_axis(i):
            continue
        if isinstance(seg, Arc) and not seg.ccw:
            # the opening of the empty side: pi less the arc's sweep and any kinks at its ends
            kinks = (_turn(segments[before].tangent_at(1.0), seg.tangent_at(0.0))
                     + _turn(seg.tangent_at(1.0), segments[after].tangent_at(0.0)))
            opening = math.pi - seg.sweep + kinks
            corners.append(ConcaveCorner(point=seg.point_at(0.5), radius_mm=seg.radius,
                                         opening_deg=math.degrees(opening), before=before, after=after, fillet=i))
        if section.on_axis(before):
            continue
        turn = _turn(segments[before].tangent_at(1.0), seg.tangent_at(0.0))
        if turn < -STRAIGHT_RAD:
            corners.append(ConcaveCorner(point=seg.start, radius_mm=0.0, opening_deg=math.degrees(math.pi + turn),
                                         before=before, after=i, fillet=None))
    return corners


def nose_material(section: Section, corner: ConcaveCorner, nose_radius_mm: float) -> NoseMaterial | None:
    """The region a nose of radius nose_radius_mm leaves in the corner, exactly; None where the nose follows
    the drawn corner (drawn radius >= nose radius) or where a circle of that radius tangent to both
    walls does not fit on them (the nose cannot reach into the corner at all: a narrow groove, a short
    step; the machining simulation's swept part measures that case)."""
    if corner.radius_mm >= nose_radius_mm:
        return None
    before, after = section.segments[corner.before], section.segments[corner.after]
    found = tangent_arc(before, after, nose_radius_mm)
    if found is None:
        return None
    arc, t_in, t_out = found
    chain = [part_of(before, t_in, 1.0)]
    if corner.fillet is not None:
        chain.append(section.segments[corner.fillet])
    chain += [part_of(after, 0.0, t_out), arc.reversed()]
    chain = [seg for seg in chain if seg.length() > 0.0]
    z0 = corner.point[1]
    area, first_r, _, first_z = region_moments(chain, z0)
    # the drawn boundary leaves the region on its right: the chain runs clockwise round it
    sign = -1.0 if area < 0.0 else 1.0
    area, first_r, first_z = sign * area, sign * first_r, sign * first_z
    return NoseMaterial(nose_radius_mm=nose_radius_mm, area_mm2=float(area),
                        centroid_r_mm=float(first_r / area), centroid_z_mm=float(z0 + first_z / area),
                        volume_mm3=float(2.0 * math.pi * first_r), nose_arc=arc, boundary=tuple(chain))


def corner_area_closed_form(nose_radius_mm: float, opening_deg: float) -> float:
    """A(r) = r^2 [cot(alpha / 2) - (pi - alpha) / 2] for two straight walls (module docstring) [mm2]."""
    alpha = math.radians(opening_deg)
    return nose_radius_mm ** 2 * (1.0 / math.tan(0.5 * alpha) - 0.5 * (math.pi - alpha))
