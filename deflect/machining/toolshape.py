"""The insert's shape as the material removal sees it: its nose radius, and the wedge of insert and holder
behind the nose, which limits how steeply the tool can follow a contour.

Takes a `deflect.job.tooling.Tool` and gives a `ToolShape`; `shadow` gives the region of the half-plane the
tool cannot reach beside a visible surface because its edges would run into the part.

The tool in the frame of a pass (u towards the tool, v along the surface, the feed f = +v or -v): the main
cutting edge runs back from the nose at the approach (entering) angle kappa_r from the feed direction, the
trailing edge at kappa_r' = 180 - kappa_r - epsilon from the reversed feed, epsilon the insert's included
(corner) angle from its ISO 1832 shape letter (C 80, D 55, V 35, ...; ISO 1832, "Indexable inserts for
cutting tools - Designation", position 1), and the holder rises behind them towards +u. Keeping a working
clearance c on both edges (REACH_CLEARANCE_DEG, common practice), the body fills the directions phi
(measured from f towards +u) from phi_lead = min(kappa_r - c, 90) to phi_trail = max(180 - kappa_r' + c, 90).
A point is reachable by the nose's tip exactly when no ray from it in those directions meets the part; so
the unreachable region is the part swept along the reversed directions (the Minkowski sum of the part and
the reversed cone), and with the nose of radius r the tool removes everything outside the closing of that
region by a disc of radius r (J. Serra, "Image Analysis and Mathematical Morphology", Academic Press 1982,
ch. II: opening and closing by a structuring element; for a tool made of a cone and a disc the two sums
commute). The tool is taken as it lies in the plane of the half-section: the holder's own clearance in a
face groove (its curvature around the axis) is not modelled.

An insert without an ISO 1832 code (only `nose_radius`) or a round one has no trailing edge to check: only
its nose and the holder straight behind it (phi = 90) are swept. So is every tool in a face pass: a tool's
approach angle is given for feeding along the axis, and how the same holder's edges lie when it feeds across
the face (which edge leads, where the holder rises) depends on how it is set, which the job does not say.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon

from deflect.job.tooling import Tool

# Angle kept between each cutting edge and the surface it runs along [deg] (common practice: a couple of
# degrees, so that the edge does not rub the surface it has just cut).
REACH_CLEARANCE_DEG = 2.0


@dataclass(frozen=True)
class ToolShape:
    """The tool as the removal sees it (angles in deg, measured from the feed direction towards the tool)."""

    nose_radius_mm: float
    lead_deg: float              # phi_lead: the main edge's side of the body, <= 90
    trail_deg: float             # phi_trail: the trailing edge's side, >= 90

    @property
    def steepest_rise_deg(self) -> float:
        """The steepest a surface may rise ahead of the tool (in the feed direction) for it to follow."""
        return self.lead_deg

    @property
    def steepest_descent_deg(self) -> float:
        """The steepest a surface may fall away in the feed direction for the trailing edge to clear it."""
        return 180.0 - self.trail_deg

    @property
    def has_edges(self) -> bool:
        """Whether the edges limit reach at all (beyond the holder straight behind the nose)."""
        return self.lead_deg < 90.0 or self.trail_deg > 90.0


def tool_shape(tool: Tool, surface: str = "od") -> ToolShape:
    """The shape of a tool in a pass on that surface ("od", "id" or "face": a face pass sweeps the nose only)."""
    lead = max(0.0, min(tool.approach_deg - REACH_CLEARANCE_DEG, 90.0))
    if tool.included_angle_deg is None or surface == "face":
        lead, trail = 90.0, 90.0
    else:
        trailing_edge_deg = 180.0 - tool.approach_deg - tool.included_angle_deg
        # a body of 180 deg or more would be no wedge at all: such a tool cannot feed this way; it is held just
        # short of a half-plane, so that it reaches nothing below its own level
        trail = min(max(180.0 - trailing_edge_deg + REACH_CLEARANCE_DEG, 90.0), lead + 179.0)
    return ToolShape(nose_radius_mm=tool.nose_radius_mm, lead_deg=lead, trail_deg=trail)


def _direction(phi_deg: float, feed_sign: float) -> np.ndarray:
    """The unit direction (u, v) at phi from the feed direction (0, feed_sign) towards +u."""
    phi = math.radians(phi_deg)
    return np.array([math.sin(phi), feed_sign * math.cos(phi)])


def shadow(surface_uv: np.ndarray, shape: ToolShape, feed_sign: float, length_mm: float) -> Polygon | None:
    """The region beside a visible surface (a polyline (N, 2) in (u, v)) that the tool's edges keep it out of:
    each edge of the polyline swept along the reversed directions of the tool's body, out to length_mm (more
    than the part's size), all united. None when the edges limit nothing."""
    if not shape.has_edges or len(surface_uv) < 2:
        return None
    lead, trail = _direction(shape.lead_deg, feed_sign), _direction(shape.trail_deg, feed_sign)
    a, b = surface_uv[:-1], surface_uv[1:]
    corners = np.stack([a, b, b - length_mm * lead, a - length_mm * lead, b - length_mm * trail,
                        a - length_mm * trail], axis=1)
    hulls = shapely.convex_hull(shapely.multipoints(corners))
    areas = [hull for hull in hulls if hull.geom_type == "Polygon"]
    return shapely.union_all(areas) if areas else None
