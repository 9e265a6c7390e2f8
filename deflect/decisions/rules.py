"""Design rules a turned part must meet: the drawing checked against the material and the finishing tools.

Takes a checked `Job` (and, for a machining job, its `Process`) and gives `Rules`: a list of `Finding`s, each
with where it is on the half-section (r, z), the value found against its limit, the material it leaves on
the part and a message in the shop's words. The rules:

* wall: the thinnest wall of the section (`geometry.section.thinnest_wall`) against the material's least
  wall (`min_wall_mm` in the material library, common practice);
* corner: every concave corner whose drawn radius is smaller than the nose radius of the tool that finishes
  it (the last pass with no allowance whose target runs through the corner). The nose leaves its own
  radius there; the material is the region between the drawn corner and the nose's arc, computed exactly
  (`geometry.corners.nose_material`; for two straight walls A = r^2 [cot(alpha / 2) - (pi - alpha) / 2],
  alpha = 90 deg: (1 - pi / 4) r^2), and its mass from Pappus. The radius to draw instead is taken from the
  least fillet radii of common practice: 1.1 mm where the shop's tooling is not known, 0.41 mm and 0.21 mm
  where the shop finishes with fine inserts (just above the common 0.4 and 0.2 mm noses of ISO 1832, so the
  nose can follow the fillet). A job without passes has its corners checked against 1.1 mm;
* reach: stretches of the contour that the finishing tool's insert cannot follow with its edge angles (an
  undercut, the steep back wall of a groove), with the material left there: the part cut exactly to the
  targets with the tools' shapes (`machining.toolshape`) against the drawing (`machining.leftover`);
* drawing: splines in the drawing (a lathe program follows lines and arcs), segments too short to program,
  corners that turn so little that they were probably meant to be tangent, and a size that suggests the
  outline was drawn in the other unit (inch for mm).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from deflect.geometry.corners import concave_corners
from deflect.geometry.section import (
    LARGEST_PLAUSIBLE_MM,
    POLYGON_CHORD_MM,
    SMALLEST_PLAUSIBLE_MM,
    Arc,
    part_size_mm,
    thinnest_wall,
)
from deflect.job.drawing import CURVE_TOLERANCE_MM
from deflect.machining.leftover import corners_left
from deflect.machining.simulate import SimulationSettings, shape_left

# Least fillet radii to draw in internal corners [mm] (common practice): any shop; fine finishing inserts.
ANY_SHOP_FILLET_MM = 1.1
FINE_INSERT_FILLETS_MM = (0.21, 0.41)
# A segment shorter than this is too short to program or to see on the part [mm] (common practice: a
# lathe's moves are programmed to 1 um, but a move of a few um only makes the tool dwell).
TINY_SEGMENT_MM = 0.01
# A corner turning less than this was probably meant to be tangent [deg] (common practice), and more than
# SMOOTH_DEG (the rounding of coordinates a CAD program writes) to count as a corner at all.
NEAR_TANGENT_DEG = 0.5
SMOOTH_DEG = 1e-4


@dataclass(frozen=True)
class Finding:
    """One breach of a design rule. Lengths mm, angles deg (see `unit`), mass g."""

    rule: str                    # "wall" | "corner" | "reach" | "drawing"
    r_mm: float                  # where on the half-section
    z_mm: float
    value: float                 # what the drawing has
    limit: float                 # what the rule asks
    unit: str                    # unit of value and limit: "mm" or "deg"
    mass_left_g: float           # material the finding leaves on the part (0 where none)
    message: str
    area_mm2: float = 0.0        # the section of that material
    volume_mm3: float = 0.0
    pass_name: str = ""          # the pass and tool concerned, where one is
    tool: str = ""


@dataclass(frozen=True)
class Rules:
    findings: list[Finding]
    thinnest_wall_mm: float
    least_wall_mm: float | None  # the material's, None where the library gives none
    notes: list[str] = field(default_factory=list)


def check_rules(job, process=None) -> Rules:
    """Every rule on the job's section; corner and reach need the machining `process` (None: the job has no
    passes, and corners are checked against the least fillet of any shop)."""
    notes = []
    wall = thinnest_wall(job.section)
    findings = wall_findings(job, wall)
    if job.material.min_wall_mm is None:
        notes.append(f"material {job.material.name!r} gives no least wall (min_wall_mm): the wall is not checked")
    if process is None:
        findings += corner_findings(job, None)
    else:
        corners, reach = shape_left(job, process, job.section.polygon(POLYGON_CHORD_MM), SimulationSettings(), {})
        findings += corner_findings(job, process, corners)
        findings += reach_findings(job, process, corners, reach)
        unchecked = sorted({t.name for t in process.tools.values() if t.included_angle_deg is None})
        if unchecked:
            notes.append(f"tool(s) {', '.join(unchecked)} give no ISO 1832 insert shape: only their nose is checked "
                         "for reach, not their edges")
    findings += drawing_findings(job)
    return Rules(findings=findings, thinnest_wall_mm=wall.thickness_mm, least_wall_mm=job.material.min_wall_mm,
                 notes=notes)


def _grams(job, volume_mm3: float) -> float:
    return job.material.density_g_cm3 * 1e-3 * volume_mm3      # g/cm3 * mm3, 1 cm3 = 1000 mm3


# ---------------------------------------------------------------------------------------------------
# wall

def wall_findings(job, wall) -> list[Finding]:
    least = job.material.min_wall_mm
    if least is None or wall.thickness_mm >= least:
        return []
    r, z = wall.point
    return [Finding(rule="wall", r_mm=r, z_mm=z, value=wall.thickness_mm, limit=least, unit="mm", mass_left_g=0.0,
                    message=f"the thinnest wall, {wall.thickness_mm:.3f} mm at r = {r:.4g}, z = {z:.4g}, is thinner "
                            f"than the {least:g} mm usually turned in {job.material.name} (common practice): "
                            "thicken it, or plan the support (a mandrel, a filler, light finishing cuts) with the shop")]


# ---------------------------------------------------------------------------------------------------
# corners

def suggested_fillet_mm(nose_radius_mm: float) -> float:
    """The least fillet of common practice that a nose of this radius follows (the nose itself above them)."""
    levels = sorted((*FINE_INSERT_FILLETS_MM, ANY_SHOP_FILLET_MM))
    return next((level for level in levels if level >= nose_radius_mm), nose_radius_mm)


def _fillet_advice(nose_radius_mm: float) -> str:
    suggested = suggested_fillet_mm(nose_radius_mm)
    if suggested < ANY_SHOP_FILLET_MM:
        return (f"draw a fillet of at least {suggested:g} mm (shops with fine finishing inserts), or "
                f"{ANY_SHOP_FILLET_MM:g} mm for any shop")
    if suggested == ANY_SHOP_FILLET_MM:
        return f"draw a fillet of at least {ANY_SHOP_FILLET_MM:g} mm (any shop follows it)"
    return f"draw a fillet of at least {suggested:g} mm (this tool's nose), or finish it with a smaller nose"


def corner_findings(job, process, left=None) -> list[Finding]:
    """A finding for every concave corner drawn sharper than the nose that finishes it (`leftover.corners_left`);
    without passes, every one sharper than the least fillet any shop follows."""
    if process is None:
        return [_unplanned_corner(c) for c in concave_corners(job.section) if c.radius_mm < ANY_SHOP_FILLET_MM]
    findings = []
    for c in corners_left(job, process) if left is None else left:
        corner, nose = c.corner, c.nose_radius_mm
        if corner.radius_mm >= nose:
            continue
        r, z = corner.point
        drawn = "sharp" if corner.radius_mm == 0.0 else f"with a {corner.radius_mm:g} mm fillet"
        where = f"internal corner at r = {r:.4g}, z = {z:.4g} drawn {drawn}: '{c.pass_name}' finishes it with {c.tool}"
        if c.material is None:
            findings.append(Finding(
                rule="corner", r_mm=r, z_mm=z, value=corner.radius_mm, limit=nose, unit="mm", mass_left_g=0.0,
                pass_name=c.pass_name, tool=c.tool,
                message=f"{where} (nose {nose:g} mm), whose nose does not fit between its walls; "
                        + _fillet_advice(nose)))
            continue
        m = c.material
        findings.append(Finding(
            rule="corner", r_mm=r, z_mm=z, value=corner.radius_mm, limit=nose, unit="mm", mass_left_g=c.mass_g,
            area_mm2=m.area_mm2, volume_mm3=m.volume_mm3, pass_name=c.pass_name, tool=c.tool,
            message=f"{where}, whose {nose:g} mm nose leaves its own radius there ({m.area_mm2:.4g} mm2 of "
                    f"section, {c.mass_g:.4g} g on the part); " + _fillet_advice(nose)))
    return findings


def _unplanned_corner(corner) -> Finding:
    r, z = corner.point
    drawn = "sharp" if corner.radius_mm == 0.0 else f"with a {corner.radius_mm:g} mm fillet"
    return Finding(rule="corner", r_mm=r, z_mm=z, value=corner.radius_mm, limit=ANY_SHOP_FILLET_MM, unit="mm",
                   mass_left_g=0.0,
                   message=f"internal corner at r = {r:.4g}, z = {z:.4g} drawn {drawn}: no pass is given, so the tool "
                           f"is not known; any shop's tool follows {ANY_SHOP_FILLET_MM:g} mm, fine finishing inserts "
                           f"{FINE_INSERT_FILLETS_MM[1]:g} or {FINE_INSERT_FILLETS_MM[0]:g} mm")


# ---------------------------------------------------------------------------------------------------
# reach

def reach_findings(job, process, corners, reach) -> list[Finding]:
    """A finding for every piece of material a finishing tool's edges leave (`leftover.reach_left`)."""
    findings = []
    for piece in reach:
        way = "falls away" if piece.descending else "rises"
        edge = "trailing edge" if piece.descending else "cutting edge"
        findings.append(Finding(
            rule="reach", r_mm=piece.r_mm, z_mm=piece.z_mm, value=piece.steepest_deg, limit=piece.limit_deg,
            unit="deg", mass_left_g=piece.mass_g, area_mm2=piece.area_mm2, volume_mm3=piece.volume_mm3,
            pass_name=piece.pass_name, tool=piece.tool,
            message=f"near r = {piece.r_mm:.4g}, z = {piece.z_mm:.4g} the contour {way} at up to "
                    f"{piece.steepest_deg:.3g} deg from the feed of '{piece.pass_name}', steeper than the "
                    f"{piece.limit_deg:.3g} deg its tool {piece.tool} follows (its {edge} would run into the part): "
                    f"{piece.area_mm2:.4g} mm2 of section, {piece.mass_g:.4g} g are left. Finish it from the other "
                    "side, with a narrower insert or a grooving tool, or redraw it"))
    return findings


# ---------------------------------------------------------------------------------------------------
# the drawing

def drawing_findings(job) -> list[Finding]:
    findings = []
    drawing = job.drawing
    if drawing is not None:
        for curve in drawing.curves:
            r, z = (0.5 * (a + b) * drawing.mm_per_unit for a, b in zip(curve.start_rz, curve.end_rz))
            findings.append(Finding(
                rule="drawing", r_mm=r, z_mm=z, value=curve.deviation_mm, limit=CURVE_TOLERANCE_MM, unit="mm",
                mass_left_g=0.0,
                message=f"{curve.source} is a free-form curve a lathe program cannot follow; it was read as "
                        f"{curve.lines} line(s) and {curve.arcs} arc(s) within {curve.deviation_mm:.2g} mm. Export "
                        "it from the CAD program as lines and arcs (or a polyline), or redraw it so"))
    section = job.section
    for i, seg in enumerate(section.segments):
        if section.on_axis(i):
            continue
        length = seg.length()
        if length < TINY_SEGMENT_MM:
            r, z = seg.point_at(0.5)
            findings.append(Finding(
                rule="drawing", r_mm=r, z_mm=z, value=length, limit=TINY_SEGMENT_MM, unit="mm", mass_left_g=0.0,
                message=f"a {'arc' if isinstance(seg, Arc) else 'line'} only {1e3 * length:.3g} um long at "
                        f"r = {r:.4g}, z = {z:.4g}: too short to program or to see on the part; join it to its "
                        "neighbours in the drawing"))
        previous = section.segments[i - 1]
        a, b = previous.tangent_at(1.0), seg.tangent_at(0.0)
        turn = math.degrees(abs(math.atan2(a[0] * b[1] - a[1] * b[0], a[0] * b[0] + a[1] * b[1])))
        if SMOOTH_DEG < turn < NEAR_TANGENT_DEG and not section.on_axis(i - 1):
            r, z = seg.start
            findings.append(Finding(
                rule="drawing", r_mm=r, z_mm=z, value=turn, limit=NEAR_TANGENT_DEG, unit="deg", mass_left_g=0.0,
                message=f"the contour turns only {turn:.3g} deg at r = {r:.4g}, z = {z:.4g}: if it is meant to be "
                        "tangent, draw it tangent (a lathe program stops at a corner and marks the surface)"))
    findings += _unit_findings(job)
    return findings


def _unit_findings(job) -> list[Finding]:
    unit = job.drawing.unit if job.drawing is not None else job.units
    size = part_size_mm(job.section)
    r_min, r_max, z_min, z_max = job.section.bounds()
    where = (r_max, 0.5 * (z_min + z_max))
    if unit == "mm" and size < SMALLEST_PLAUSIBLE_MM:
        return [Finding(rule="drawing", r_mm=where[0], z_mm=where[1], value=size, limit=SMALLEST_PLAUSIBLE_MM,
                        unit="mm", mass_left_g=0.0,
                        message=f"the part is only {size:.3g} mm across: was it drawn in inches? (25.4 times "
                                "larger would be a usual turned part)")]
    if unit == "inch" and size > LARGEST_PLAUSIBLE_MM:
        return [Finding(rule="drawing", r_mm=where[0], z_mm=where[1], value=size, limit=LARGEST_PLAUSIBLE_MM,
                        unit="mm", mass_left_g=0.0,
                        message=f"the part is {size:.4g} mm across: was it drawn in millimetres? (25.4 times "
                                "smaller would be a usual turned part)")]
    return []
