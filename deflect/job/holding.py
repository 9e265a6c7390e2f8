"""The `[holding]` table of a job: how the part is gripped, checked, and where the grip bears on the section.

Takes the `[holding]` table as the job reader passes it (lengths already in mm; keys in INTERFACE.md,
"Work holding") and the part's `Section`; gives a `Holding` (kind, jaws, grip side, contact z range, jaw
width, grip force, friction, jaw mass and radius, safety factor), the `Contact` where it bears (boundary
samples of the gripped surface, each with its share of the grip force), the finished OD and bore of the
section as `SurfacePoints`, and the held box the cutting-stiffness model uses when the job gives no
`[[held]]` box (`held_from_holding`).

Defaults (said in `Holding.notes` when used): kind "jaws", 3 jaws, grip "od" ("id" for a mandrel),
friction 0.1 (the low end quoted for smooth jaws on a finished surface, from memory, so the safe side
for holding), safety 1.5 (the least machining safety factor S_z that VDI 3106 (2004) asks for, as quoted in
chuck makers' operating manuals: seen second-hand). `z`, `force` and, for jaws, `width` have no sensible default and must be given.
`jaw_mass` may be left out: then no loss of grip at speed is counted, and a note says so. For a collet or
mandrel the grip goes all round (a full-circumference pressure); `jaws` and `width` do not apply, and
`jaw_mass` is the mass of all its gripping segments together.

Every problem is an `InputError` naming `holding.KEY`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from deflect.errors import InputError
from deflect.geometry.boxes import HeldBox
from deflect.geometry.section import Section
from deflect.job.checks import check_keys, check_range, check_table, number

HOLDING_KEYS = ("kind", "jaws", "grip", "z", "width", "force", "friction", "jaw_mass", "jaw_radius", "safety")
KINDS = ("jaws", "collet", "mandrel")
GRIPS = ("od", "id")
DEFAULT_JAWS = 3
DEFAULT_FRICTION = 0.1        # from memory: about 0.1 smooth jaws on a finished surface, 0.2-0.35 serrated
DEFAULT_SAFETY = 1.5          # VDI 3106 (2004) as quoted second-hand: S_z >= 1.5

SIDE_COS = math.cos(math.radians(45.0))   # a boundary point faces outwards (od) or inwards (id) within 45 deg
CONTACT_GAP_MM = 0.02         # a jaw bears on the largest OD (smallest bore) in its z range and what lies
                              # within this of it; a step further away is clear of the jaw
HELD_BAND_MM = 0.5            # the held box for the cutting stiffness reaches this far either side of the
                              # gripped surface (it catches the wall fibres that end on the gripped surface)
CONTACT_SAMPLES = 64          # boundary samples along the contact (load points of the grip)
SURFACE_SAMPLES = 400         # boundary samples along the whole perimeter for the finished surfaces


@dataclass(frozen=True)
class Holding:
    """The checked [holding] table (mm, N, kg)."""

    kind: str                          # "jaws" | "collet" | "mandrel"
    jaws: int                          # number of jaws; 0 for a collet or mandrel (all round)
    grip: str                          # "od": closes on the outside; "id": expands in a bore
    z_mm: tuple[float, float]          # axial extent of the contact, low to high
    width_mm: float | None             # each jaw's contact width around the circumference; None all round
    force_n: float                     # total grip force at standstill, all jaws together
    friction: float                    # friction coefficient between grip and part
    jaw_mass_kg: float | None          # per jaw (jaws) or of all gripping segments (collet, mandrel)
    jaw_radius_mm: float | None        # radius of the jaws' centre of mass
    safety: float                      # factor on the torque and axial force to hold
    notes: tuple[str, ...] = field(default=())   # defaults that were assumed, in the trade's words

    @property
    def all_round(self) -> bool:
        """A collet or mandrel: the grip is a pressure all round the circumference."""
        return self.kind != "jaws"

    @property
    def centrifugal_moment_kg_m(self) -> float:
        """sum m_B r_s of the gripping set [kg m] (VDI 3106 "centrifugal moment", as quoted second-hand); 0 if no
        jaw mass was given."""
        if not self.jaw_mass_kg:
            return 0.0
        count = self.jaws if self.kind == "jaws" else 1
        return count * self.jaw_mass_kg * self.jaw_radius_mm / 1000.0


@dataclass(frozen=True)
class SurfacePoints:
    """Boundary samples of the OD or bore: outermost (od) or innermost (id) at their z, with the wall behind."""

    surface: str                 # "od" | "id"
    points_rz: np.ndarray        # (k, 2) [mm]
    normals: np.ndarray          # (k, 2) unit outward normals
    ds_mm: np.ndarray            # (k,) boundary length each sample stands for [mm]
    wall_mm: np.ndarray          # (k,) radial wall thickness of the material behind each sample [mm]


@dataclass(frozen=True)
class Contact:
    """Where the grip bears on the section."""

    grip: str                    # "od" | "id"
    points_rz: np.ndarray        # (k, 2) boundary samples in contact [mm]
    normals: np.ndarray          # (k, 2) unit outward normals there
    weights: np.ndarray          # (k,) share of the grip force of each sample (sum 1), proportional to r ds
    radius_mm: float             # the gripped radius (largest OD or smallest bore in the z range)
    z_mm: tuple[float, float]    # axial extent actually touched
    wall_mm: float               # mean radial wall under the contact [mm]

    @property
    def length_mm(self) -> float:
        return self.z_mm[1] - self.z_mm[0]


# ---------------------------------------------------------------------------------------------------
# reading the table

def _positive(table: dict, name: str, what: str) -> float:
    value = number(table[name], f"holding.{name}")
    if value <= 0.0:
        raise InputError(f"holding.{name}", f"must be more than 0, got {value:g}; give {what}")
    return value


def _choice(table: dict, name: str, allowed: tuple[str, ...], default: str) -> str:
    value = table.get(name, default)
    if value not in allowed:
        raise InputError(f"holding.{name}", f"must be one of {', '.join(repr(a) for a in allowed)}, got {value!r}")
    return value


def _jaw_count(table: dict, kind: str, notes: list[str]) -> int:
    if kind != "jaws":
        if "jaws" in table:
            notes.append(f"holding.jaws: a {kind} grips all round; the number of jaws does not apply")
        return 0
    if "jaws" not in table:
        notes.append(f"holding.jaws: not given; assumed {DEFAULT_JAWS}")
        return DEFAULT_JAWS
    value = table["jaws"]
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError("holding.jaws", f"must be a whole number of jaws, e.g. 3, got {value!r}")
    if value < 2:
        raise InputError("holding.jaws", f"must be 2 or more, got {value}; a chuck grips with 2, 3, 4 or 6 jaws "
                                         "(for a grip all round use kind = \"collet\")")
    return value


def _z_range(table: dict) -> tuple[float, float]:
    if "z" not in table:
        raise InputError("holding.z", "missing; give the axial extent of the contact on the part, z = [low, high]")
    low, high = check_range(table["z"], "holding.z")
    if not high > low:
        raise InputError("holding.z", f"[{low:g}, {high:g}] has no length; the grip must bear over some z")
    return low, high


def _width(table: dict, kind: str, notes: list[str]) -> float | None:
    if kind != "jaws":
        if "width" in table:
            notes.append(f"holding.width: a {kind} grips all round; the jaw width does not apply")
        return None
    if "width" not in table:
        raise InputError("holding.width", "missing; give each jaw's contact width around the circumference in mm "
                                          "(about the jaw's width for soft jaws bored to the part)")
    return _positive(table, "width", "each jaw's contact width around the circumference in mm")


def _friction(table: dict, notes: list[str]) -> float:
    if "friction" not in table:
        notes.append(f"holding.friction: not given; assumed {DEFAULT_FRICTION:g} (smooth jaws on a finished "
                     "surface, the safe side for holding)")
        return DEFAULT_FRICTION
    friction = number(table["friction"], "holding.friction")
    if not 0.0 < friction <= 1.0:
        raise InputError("holding.friction", f"must lie in (0, 1], got {friction:g}; about 0.1 for smooth jaws on "
                                             "a finished surface, 0.2-0.35 for serrated jaws")
    return friction


def _safety(table: dict, notes: list[str]) -> float:
    if "safety" not in table:
        notes.append(f"holding.safety: not given; assumed {DEFAULT_SAFETY:g} (the least VDI 3106 asks for)")
        return DEFAULT_SAFETY
    safety = number(table["safety"], "holding.safety")
    if safety < 1.0:
        raise InputError("holding.safety", f"must be 1 or more, got {safety:g}; VDI 3106 asks for at least 1.5")
    return safety


def holding_from_table(table) -> Holding:
    """The checked `[holding]` table (lengths in mm); InputError naming `holding.KEY` for bad input."""
    table = check_table(table, "holding")
    check_keys(table, HOLDING_KEYS, "holding")
    notes: list[str] = []
    kind = _choice(table, "kind", KINDS, "jaws")
    grip = _choice(table, "grip", GRIPS, "id" if kind == "mandrel" else "od")
    if kind == "mandrel" and grip != "id":
        raise InputError("holding.grip", "a mandrel expands in the bore: grip must be \"id\"")
    jaws = _jaw_count(table, kind, notes)
    z_mm = _z_range(table)
    width = _width(table, kind, notes)
    if "force" not in table:
        raise InputError("holding.force", "missing; give the total grip force of all jaws at standstill in N")
    force = _positive(table, "force", "the total grip force of all jaws at standstill in N")
    friction = _friction(table, notes)
    mass, radius = _jaw_mass(table, notes)
    safety = _safety(table, notes)
    return Holding(kind=kind, jaws=jaws, grip=grip, z_mm=z_mm, width_mm=width, force_n=force, friction=friction,
                   jaw_mass_kg=mass, jaw_radius_mm=radius, safety=safety, notes=tuple(notes))


def _jaw_mass(table: dict, notes: list[str]) -> tuple[float | None, float | None]:
    if "jaw_mass" not in table:
        if "jaw_radius" in table:
            _positive(table, "jaw_radius", "the radius of the jaws' centre of mass in mm")
        notes.append("holding.jaw_mass: not given; the loss of grip at speed (the jaws' centrifugal force) is NOT "
                     "counted - give the jaws' mass and jaw_radius from the chuck maker's data")
        return None, None
    mass = number(table["jaw_mass"], "holding.jaw_mass")
    if mass < 0.0:
        raise InputError("holding.jaw_mass", f"must not be negative, got {mass:g} kg")
    if "jaw_radius" not in table:
        raise InputError("holding.jaw_radius", "missing; with jaw_mass give the radius of the jaws' centre of mass "
                                               "in mm (for their centrifugal force)")
    return mass, _positive(table, "jaw_radius", "the radius of the jaws' centre of mass in mm")


# ---------------------------------------------------------------------------------------------------
# the section's OD and bore

def _crossings(polygon_rz: np.ndarray, z: np.ndarray) -> np.ndarray:
    """(k, E) radius where each polygon edge crosses the level z_i (half-open in z), NaN where it does not."""
    a, b = polygon_rz, np.roll(polygon_rz, -1, axis=0)
    z = z[:, None]
    straddles = (a[:, 1] > z) != (b[:, 1] > z)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = a[:, 0] + (z - a[:, 1]) * (b[:, 0] - a[:, 0]) / (b[:, 1] - a[:, 1])
    return np.where(straddles, r, np.nan)


def _radial_wall(polygon_rz: np.ndarray, points_rz: np.ndarray, outward_r: np.ndarray) -> np.ndarray:
    """Radial length of the material behind each point (k,) at its z: from the point along -outward_r to the
    next crossing of the boundary [mm]."""
    cross = _crossings(polygon_rz, points_rz[:, 1])
    r = points_rz[:, :1]
    sign = np.sign(outward_r)[:, None]
    depth = sign * (r - cross)
    behind = np.where(depth > 1e-3, depth, np.inf)  # crossings inside the material (past the chords' error)
    return np.min(behind, axis=1)


def _midpoint_samples(section: Section, spacing_mm: float):
    """Points at the middles of equal pieces (at most spacing_mm long) of every segment, never at a corner
    (where the side a point faces, and the levels' crossings, would be ambiguous): points (k, 2), unit outward
    normals (k, 2), piece lengths (k,) [mm], segment index (k,)."""
    points, normals, lengths, segment = [], [], [], []
    for i, seg in enumerate(section.segments):
        n = max(1, math.ceil(seg.length() / spacing_mm))
        t = (np.arange(n) + 0.5) / n
        tangents = seg.tangents_at(t)
        points.append(seg.points_at(t))
        normals.append(np.column_stack([tangents[:, 1], -tangents[:, 0]]))
        lengths.append(np.full(n, seg.length() / n))
        segment.append(np.full(n, i))
    return np.concatenate(points), np.concatenate(normals), np.concatenate(lengths), np.concatenate(segment)


def surface_points(section: Section, surface: str, spacing_mm: float | None = None) -> SurfacePoints:
    """Boundary samples of the section's OD (outermost at their z, facing outwards within 45 deg) or bore
    (innermost at their z, facing the axis, not on the axis)."""
    points, normals, ds, segment = _midpoint_samples(section, spacing_mm or section.perimeter() / SURFACE_SAMPLES)
    polygon = section.polygon(1e-4)
    sign = 1.0 if surface == "od" else -1.0
    facing = (sign * normals[:, 0] > SIDE_COS) & ~np.array([section.on_axis(int(i)) for i in segment])
    points, normals, ds = points[facing], normals[facing], ds[facing]
    # the extreme crossing of each sample's level; a facing sample's own edge (or chord) crosses it
    cross = np.column_stack([_crossings(polygon, points[:, 1]), points[:, 0]])
    extreme = np.nanmax(cross, axis=1) if surface == "od" else np.nanmin(cross, axis=1)
    keep = sign * (points[:, 0] - extreme) > -1e-3
    points, normals = points[keep], normals[keep]
    return SurfacePoints(surface=surface, points_rz=points, normals=normals, ds_mm=ds[keep],
                         wall_mm=_radial_wall(polygon, points, normals[:, 0]))


def contact_of(section: Section, holding: Holding) -> Contact:
    """Where the grip bears: the gripped side's boundary in the z range, at its extreme radius (a jaw bears
    on the largest OD, an expanding grip on the smallest bore, there), each sample weighted by r ds (a uniform
    pressure). InputError (holding.z) when the z range holds no boundary of the gripped side, (holding.width)
    when the jaws would not fit round the gripped circumference."""
    low, high = holding.z_mm
    spacing = min((high - low) / CONTACT_SAMPLES, section.perimeter() / SURFACE_SAMPLES)
    side = surface_points(section, holding.grip, spacing)
    z = side.points_rz[:, 1]
    inside = (z >= low - 1e-9) & (z <= high + 1e-9)
    name = "OD" if holding.grip == "od" else "ID"
    if not inside.any():
        span = f"its {name} spans z = {z.min():g} to {z.max():g} mm" if len(z) else f"it has no {name}"
        raise InputError("holding.z", f"the grip at z = [{low:g}, {high:g}] touches no {name} of the part "
                                      f"({span}); give the z range where the {holding.kind} bear on the part")
    r = side.points_rz[:, 0]
    radius = float(r[inside].max() if holding.grip == "od" else r[inside].min())
    touching = inside & (np.abs(r - radius) <= CONTACT_GAP_MM)
    if holding.kind == "jaws" and holding.jaws * holding.width_mm > 2.0 * math.pi * radius * (1.0 + 1e-9):
        raise InputError("holding.width", f"{holding.jaws} jaws {holding.width_mm:g} mm wide do not fit round the "
                                          f"gripped circumference of {2.0 * math.pi * radius:.4g} mm (diameter "
                                          f"{2.0 * radius:.4g} mm); give a width of at most "
                                          f"{2.0 * math.pi * radius / holding.jaws:.4g} mm")
    weights = side.ds_mm[touching] * side.points_rz[touching, 0]
    # each sample stands for a piece of the boundary ds long: the contact reaches to the pieces' ends
    reach = 0.5 * side.ds_mm[touching] * np.abs(side.normals[touching, 0])
    z_lo, z_hi = max(low, float(np.min(z[touching] - reach))), min(high, float(np.max(z[touching] + reach)))
    return Contact(grip=holding.grip, points_rz=side.points_rz[touching], normals=side.normals[touching],
                   weights=weights / weights.sum(), radius_mm=radius, z_mm=(z_lo, z_hi),
                   wall_mm=float(np.average(side.wall_mm[touching], weights=weights)))


def held_from_holding(section: Section, table) -> list[HeldBox]:
    """The held box the cutting-stiffness model uses when the job gives no [[held]] box: the material under the
    contact is what holds the part. A box HELD_BAND_MM either side of the gripped radius over the contact's z
    extent catches the wall fibres that end on the gripped surface (as a [[held]] box drawn round the jaws'
    contact does, data/examples/housing.toml). The model then holds the wall all round at the contact, where
    the jaws hold it at their patches only: the stiffness between the jaws is somewhat overstated."""
    contact = contact_of(section, holding_from_table(table))
    low = max(contact.radius_mm - HELD_BAND_MM, 0.0)
    return [HeldBox(r_range=(low, contact.radius_mm + HELD_BAND_MM), z_range=contact.z_mm, key="holding")]
