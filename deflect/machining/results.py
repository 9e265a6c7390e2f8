"""Results of a machining prediction: plain data objects, read by the report, the JSON, the CSV and the plots.

Nothing here computes physics; `deflect.machining.simulate` fills these objects. Lengths mm, forces N, compliance
mm/N, mass g, inertia kg mm2, time s, power kW.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True, eq=False)
class StationTable:
    """The tool's positions along one cut, in feed order (arrays of equal length K)."""

    r_mm: np.ndarray                 # contact point (the target of the cut)
    z_mm: np.ndarray
    normal_rz: np.ndarray            # (K, 2) outward normal of the cut surface (pointing at the tool)
    met_depth_mm: np.ndarray         # depth of material the tool meets beyond its target (no push-off)
    depth_mm: np.ndarray             # depth actually cut, after the push-off of part and tool
    chip_thickness_mm: np.ndarray    # equivalent chip thickness of the nose-radius chip
    cutting_n: np.ndarray            # force components on the part
    feed_n: np.ndarray
    passive_n: np.ndarray
    compliance_mm_per_n: np.ndarray  # part's normal-normal compliance at the contact, the part as it is then
    tool_compliance_mm_per_n: float  # tool or boring bar, in series
    deflection_mm: np.ndarray        # push-off of part and tool together along the normal = material left
    power_kw: np.ndarray
    rubbing: np.ndarray              # bool: the wall gives way so far that the tool barely cuts
    cut: int                         # index of the cut within its pass, from 0 (roughing steps, finishing, spring
                                     # cuts); shown to users from 1 ("cut 1" is the first)
    # the share of deflection_mm that the feed force makes, C_na s F_f (the rest is the passive force's): on a
    # face it is < 0 where the feed force draws a free rim in, which lifts the face into the tool
    feed_push_mm: np.ndarray | None = None


@dataclass(frozen=True)
class PassResult:
    name: str
    surface: str                     # "od" | "id" | "face"
    tool: str
    feed_mm: float
    speed_m_min: float
    cuts: list[StationTable]
    cycle_time_s: float
    max_deflection_mm: float
    peak_power_kw: float
    mass_left_g: float               # material this pass left on the finished part (its share of the gain)


@dataclass(frozen=True, eq=False)
class SurfaceDeviation:
    """Material left beyond the finished surface, along its outward normal (> 0: thicker than drawn)."""

    points_rz: np.ndarray            # (P, 2) points along the finished boundary
    normals: np.ndarray              # (P, 2) unit outward normals
    deviation_mm: np.ndarray         # (P,)
    surface: list[str]               # "od", "id", "face" (the kind of pass that finished it) or "unmachined"
    finished_by: list[str]           # name of the pass that finished each point ("" where none did)
    # with [holding]: the spring-back of the jaws' squeeze on release, its uniform (n = 0) part along the
    # outward normal (already in deviation_mm), and the out-of-roundness it leaves (peak to valley, radial)
    released_mm: np.ndarray | None = None
    roundness_mm: np.ndarray | None = None
    # ... and what a gauge sees of the lobes (`deflect.mechanics.clamping.Squeeze`): their highest point above
    # the mean surface along the outward normal (>= 0, where a ring or plug gauge meets it), and the least and
    # most change of a two-point half-size they make around the circumference (<= 0, >= 0)
    lobe_peak_mm: np.ndarray | None = None
    two_point_low_mm: np.ndarray | None = None
    two_point_high_mm: np.ndarray | None = None
    corner: np.ndarray | None = None     # (P,) bool: a corner of the drawn outline, where two surfaces meet
    # (P,) bool: in a corner's nose material or a piece the edges leave (`deflect.machining.leftover`): counted
    # there, not as the layer on the surface, and not read as the surface's size
    apart: np.ndarray | None = None


@dataclass(frozen=True)
class SurfaceCheck:
    """What a machinist measures on one finished surface: push-off at the held end, middle, free end."""

    surface: str                     # "od" | "id" | "face"
    positions: dict[str, tuple[float, float]]   # "held end" / "middle" / "free end" -> (r, z)
    deviation_mm: dict[str, float]   # material left there (on the radius, i.e. "a side")
    nominal_diameter_mm: dict[str, float]
    predicted_diameter_mm: dict[str, float]
    max_deviation_mm: float
    mass_left_g: float               # the surface's line of mass_gain_by_surface_g
    roundness_mm: dict[str, float] | None = None   # with [holding]: out of round after release, at the same places
    max_at_rz: tuple[float, float] | None = None   # where the surface leaves max_deviation_mm


@dataclass(frozen=True)
class SpreadValue:
    """A headline figure with its range for the stated spread of the force constants."""

    value: float
    low: float
    high: float


@dataclass(frozen=True, eq=False)
class Prediction:
    title: str
    material: str
    force_spread: float                       # relative spread of the Kienzle constants used for the ranges
    nominal_mass_g: float
    nominal_inertia_kg_mm2: float
    predicted_mass_g: SpreadValue
    predicted_inertia_kg_mm2: float
    mass_gain_g: SpreadValue
    max_deviation_mm: SpreadValue
    cycle_time_s: float
    machine_power_kw: float
    peak_power_kw: float
    passes: list[PassResult]
    deviation: SurfaceDeviation
    surfaces: list[SurfaceCheck]
    wall: list[dict]                          # wall thickness against nominal at the checked heights
    machined_rz: np.ndarray                   # the as-machined half-section (CCW polygon)
    nominal_rz: np.ndarray
    stock_rz: np.ndarray
    mass_gain_by_surface_g: dict[str, float]  # lines that add up to mass_gain_g (`gain_split`)
    warnings: list[str] = field(default_factory=list)
    lobes: int = 0                            # with [holding]: lobes the jaws leave (0: none modelled)
    max_deviation_at_rz: tuple[float, float] | None = None   # where max_deviation_mm is left
    most_cut_below_mm: float = 0.0            # the deepest a finished surface is cut below the drawing, a side
    most_cut_below_at_rz: tuple[float, float] | None = None  # where (None: nowhere below it)
