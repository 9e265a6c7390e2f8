"""The grip window: the least grip that holds the heaviest cut, the most that keeps the finished surfaces
within their tolerance once released, and what widens the window.

Takes a `Job` with a [holding] table (and, for the least grip, its stock, tools, passes and machine; for the
most, its [tolerance]); gives a `ClampStudy`: the holding as given evaluated (`Clamped`: the shape of every
surface finished in the chuck after release, the grip during each cut, the least and most grip), the
remedies each evaluated with the model (more jaws, wider jaws, a collet or mandrel, gripping on a thicker
section, a lighter grip for the finishing passes), and the cautions.

Holding the cut (jaw chuck practice after VDI 3106 (2004) "Ermittlung der zulaessigen Drehzahl von Drehfuttern
(Backenfutter)", as quoted in chuck makers' operating manuals: seen second-hand):
* the jaws' centrifugal force Fc = (sum m_B r_s) (pi n / 30)^2 (kg, m, 1/min -> N) takes grip away from an
  OD grip and adds to a bore grip: F_sp = F_sp0 -/+ Fc;
* the grip must carry the cut by friction: the cutting force F_c at the chip's radius r turns the part with
  the torque F_c r, which the grip holds with mu F_sp R at the gripped radius R (same source); the
  feed force (the passive force of a face pass) pushes it along the axis, held by the same friction. Coulomb
  friction bounds the friction force of a contact in any direction of its plane by mu times its normal force,
  so the two demands add as a vector: F_spz = sqrt((F_c r / R)^2 + F_axial^2) / mu. (The tilting moment of a
  long overhang needs a check of its own; it is not made here.)
* the least static grip: F_sp0 = S_z F_spz + Fc for an OD grip. For a bore grip F_sp0 = S_z F_spz - Fc, but
  never below F_spz: the gain from speed is counted for the safety margin only, never for the force itself
  (the spindle slows at the end of the cycle, and the grip must hold whenever the tool is in the cut). The
  second safety factor S_sp of VDI 3106 on the static force is not applied: `safety` is S_z.
Each station of every cut is checked at its own spindle speed (n = 1000 vc / (pi D), capped at the machine's
max_rpm, `cutting.spindle_speed_rpm`), with the depth it meets on the part cut exactly to the earlier
targets (`simulate.laid_out`, `simulate.met_depth`): the true nominal depth, not a cap.

Keeping the form: the release is linear in the grip during the cut, F_sp0 -/+ Fc at the speed of the pass
that finishes each point, so the most grip is the force at which the first point's form reaches its limit,
the size set at its best. The limits (`deflect.job.fits.Tolerances`):
* by default the diameter band read under the envelope requirement, as a GO ring or plug gauge at the
  maximum-material size and a two-point NO-GO measurement at the least-material size check it (Taylor's
  principle; ISO 14405-1 (E); ASME Y14.5-2018 Rule #1; `clamping.Squeeze.envelope_mm_per_n`): the form may take
  half the band, so for 3 lobes (odd: the two-point size stays constant) a radial peak to valley up to the
  whole band, for an even number of lobes up to half of it;
* with `envelope = false` (size independent of form, ISO 8015) the band limits the two-point sizes only: the
  spread of the two-point size the lobes make may take the whole band (odd lobes make almost none);
* a roundness limit of its own (`roundness`, radial peak to valley, ISO 1101 / ISO 12181) caps the peak to
  valley in either case.
With none of these on the finished surfaces there is no most grip (None).

Holding the part (`grip_check`, for `deflect predict` and `deflect tune` as for `deflect clamp`): the given
grip against the least that holds the heaviest cut, and the passes at whose speed the jaws' centrifugal force
takes the whole grip of an OD grip away (the jaws lift off).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from deflect.errors import InputError
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.calibration import grip_factor_of
from deflect.job.fits import tolerance_from_table
from deflect.job.holding import Contact, Holding, contact_of, holding_from_table, surface_points
from deflect.machining.simulate import CYLINDER_COS, laid_out, met_depth
from deflect.mechanics.chuck import centrifugal_force_n, friction_demand_n, grip_in_cut_n, least_static_grip_n
from deflect.mechanics.clamping import GripModel, Squeeze
from deflect.mechanics.cutting import cutting_forces, spindle_speed_rpm

HOLD_STATION_MM = 0.5        # station spacing along a cut for the grip it needs (the force changes slowly)
SURFACE_SPACING_SHARE = 1 / 200   # finished-surface points every perimeter / 200
EN1550_SHARE = 0.67          # EN 1550:1997+A1:2008 as quoted second-hand: Fc at top speed <= 67 % of the grip
PIE_SHARE = 0.8              # pie jaws: together covering this share of the gripped circumference
THICKER_BY = 1.2             # a stretch of the gripped side counts as thicker with 20 % more wall
GRIP_POSITIONS = 24          # positions of the grip zone tried along the gripped side
SIDE_NAMES = {"od": "OD", "id": "ID"}

CAUTIONS = (
    "A grip below the least needed can let the part turn in the jaws or be thrown from the chuck.",
    "The chuck maker's limits on speed and grip force, and the machine's guards and interlocks, come first; "
    "these figures do not replace them.",
    "These are estimates from a model of the wall and of the cutting forces: confirm them on the first part "
    "(measure its roundness off the machine, and the grip force with a gauge).",
)


# ---------------------------------------------------------------------------------------------------
# what the cuts pull

@dataclass(frozen=True)
class CutLoads:
    """Station by station along every cut of one pass: where the tool is and what it pulls on the part."""

    pass_name: str
    surface: str                 # "od" | "id" | "face"
    r_mm: np.ndarray             # (k,) radius of the middle of the chip [mm]
    z_mm: np.ndarray             # (k,) [mm]
    cutting_n: np.ndarray        # (k,) tangential (cutting) force [N]
    axial_n: np.ndarray          # (k,) axial force: feed (od, id) or passive (face) [N]
    rpm: np.ndarray              # (k,) spindle speed [1/min]


def cut_loads(job, process, spacing_mm: float = HOLD_STATION_MM, memo: dict | None = None) -> list[CutLoads]:
    """The loads of every pass at its nominal depths (the part cut exactly to the earlier targets; the depth
    met after a corner by the simulation's own rule, `simulate.met_depth`). memo: cut layouts kept between
    calls (`simulate.laid_out`)."""
    paths, parts = laid_out(process, job.section.polygon(POLYGON_CHORD_MM), spacing_mm, {} if memo is None else memo)
    loads = []
    for i, p in enumerate(process.passes):
        tool = process.tools[p.tool]
        into = {"od": 1.0, "id": -1.0, "face": 0.0}[p.surface]   # the chip lies outside the target along r
        pieces = []
        for path, current in zip(paths[i], parts[i]):
            depth = np.atleast_1d(met_depth(current, path, p))
            forces = cutting_forces(job.material, tool, depth, p.feed_mm, p.speed_m_min, force_scale=p.force_factor)
            r = path.points_rz[:, 0] + 0.5 * into * depth
            rpm = np.atleast_1d(spindle_speed_rpm(p.speed_m_min, 2.0 * np.maximum(r, 0.0), process.machine.max_rpm))
            axial = forces.passive_n if p.surface == "face" else forces.feed_n
            pieces.append((r, path.points_rz[:, 1], np.atleast_1d(forces.cutting_n), np.atleast_1d(axial), rpm))
        r, z, cutting, axial, rpm = (np.concatenate(column) for column in zip(*pieces))
        loads.append(CutLoads(p.name, p.surface, r, z, cutting, axial, rpm))
    return loads


@dataclass(frozen=True)
class HoldDemand:
    """The station that needs the most grip."""

    pass_name: str
    r_mm: float
    z_mm: float
    cutting_n: float             # tangential force there [N]
    torque_nm: float             # cutting torque [N m]
    axial_n: float               # axial force [N]
    rpm: float                   # spindle speed [1/min]
    centrifugal_n: float         # the jaws' centrifugal force at that speed [N]
    least_n: float               # least static grip that holds it [N]


def hold_demand(loads: list[CutLoads], holding: Holding, contact: Contact) -> HoldDemand | None:
    """The heaviest station of the given passes (None if there are none)."""
    best = None
    for cut in loads:
        torque = cut.cutting_n * cut.r_mm
        centrifugal = centrifugal_force_n(holding.centrifugal_moment_kg_m, cut.rpm)
        least = least_static_grip_n(friction_demand_n(torque, cut.axial_n, contact.radius_mm), holding.friction,
                                    holding.safety, centrifugal, holding.grip)
        k = int(np.argmax(least))
        if best is None or least[k] > best.least_n:
            best = HoldDemand(cut.pass_name, float(cut.r_mm[k]), float(cut.z_mm[k]), float(cut.cutting_n[k]),
                              float(torque[k]) / 1000.0, float(cut.axial_n[k]), float(cut.rpm[k]),
                              float(centrifugal[k]), float(least[k]))
    return best


@dataclass(frozen=True)
class GripCheck:
    """Whether the given grip holds every cut: against the least that holds the heaviest station, and the
    passes during which the jaws' centrifugal force takes an OD grip away altogether (they lift off)."""

    given_n: float                       # the grip at standstill [N]
    demand: HoldDemand | None            # the heaviest station (None: no passes)
    lift_off: tuple[tuple[str, float, float], ...]   # (pass, spindle speed 1/min, centrifugal force N)

    @property
    def least_n(self) -> float | None:
        return None if self.demand is None else self.demand.least_n

    @property
    def holds(self) -> bool:
        return (self.least_n is None or self.given_n >= self.least_n) and not self.lift_off

    def problems(self) -> list[str]:
        """What is wrong, in words (empty when the grip holds)."""
        lines = []
        d = self.demand
        if d is not None and self.given_n < d.least_n:
            lines.append(f"the grip {self.given_n:.0f} N is below the least {d.least_n:.0f} N needed to hold pass "
                         f"'{d.pass_name}' (r {d.r_mm:.3g}, z {d.z_mm:.3g} mm at {d.rpm:.0f} /min): the part can "
                         "turn in the jaws or be thrown out. Raise the grip or change the holding before cutting")
        for name, rpm, centrifugal in self.lift_off:
            lines.append(f"the jaws lift off the part during pass '{name}': at {rpm:.0f} /min their centrifugal "
                         f"force {centrifugal:.0f} N takes the whole grip of {self.given_n:.0f} N, so nothing holds "
                         "the part while it cuts. Lower the speed or raise the grip")
        return lines


def grip_check(job, process, memo: dict | None = None) -> GripCheck | None:
    """The given grip of the job's [holding] against its passes' cuts (None without [holding] or passes).
    memo: the cut layouts shared with the simulation's variants (`simulate.laid_out`)."""
    if "holding" not in job.tables or process is None or not process.passes:
        return None
    holding = holding_from_table(job.tables["holding"])
    loads = cut_loads(job, process, memo=memo)
    return grip_check_of(holding, contact_of(job.section, holding), loads)


def grip_check_of(holding: Holding, contact: Contact, loads: list[CutLoads]) -> GripCheck:
    lift_off = []
    for cut in loads:
        if holding.grip != "od" or not len(cut.rpm):
            continue
        top = float(cut.rpm.max())
        centrifugal = float(centrifugal_force_n(holding.centrifugal_moment_kg_m, top))
        if centrifugal >= holding.force_n:
            lift_off.append((cut.pass_name, top, centrifugal))
    return GripCheck(given_n=holding.force_n, demand=hold_demand(loads, holding, contact), lift_off=tuple(lift_off))


# ---------------------------------------------------------------------------------------------------
# the surfaces finished in the chuck

@dataclass(frozen=True)
class FinishedSurfaces:
    """Points of the OD and bore finished in this setup (not under the grip itself)."""

    surface: np.ndarray          # (k,) "od" | "id"
    points_rz: np.ndarray        # (k, 2) [mm]
    normals: np.ndarray          # (k, 2) unit outward normals
    finished_by: tuple           # (k,) the pass that finishes each point last; None: the job has no passes
    rpm: np.ndarray              # (k,) spindle speed of that pass there [1/min]; 0 without passes


def finished_surfaces(section, contact: Contact, process) -> FinishedSurfaces:
    """The OD and bore points the passes of `process` finish (all of them when process is None), outside the
    grip's own contact zone on the gripped side."""
    spacing = section.perimeter() * SURFACE_SPACING_SHARE
    parts = []
    for side in ("od", "id"):
        points = surface_points(section, side, spacing)
        z = points.points_rz[:, 1]
        keep = ~((side == contact.grip) & (z >= contact.z_mm[0] - 1e-9) & (z <= contact.z_mm[1] + 1e-9))
        finished = np.full(len(z), process is None)
        by = np.full(len(z), None, dtype=object)
        rpm = np.zeros(len(z))
        for p in process.passes if process is not None else []:
            if p.surface != side:
                continue
            covered = (z >= min(p.start_mm, p.end_mm) - 1e-9) & (z <= max(p.start_mm, p.end_mm) + 1e-9)
            finished |= covered
            by[covered] = p.name          # the last pass over a point finishes it
            rpm[covered] = spindle_speed_rpm(p.speed_m_min, 2.0 * points.points_rz[covered, 0],
                                             process.machine.max_rpm)
        keep &= finished
        parts.append((np.full(int(keep.sum()), side), points.points_rz[keep], points.normals[keep], by[keep],
                      rpm[keep]))
    surface, points_rz, normals, by, rpm = (np.concatenate(column) for column in zip(*parts))
    return FinishedSurfaces(surface=surface, points_rz=points_rz.reshape(-1, 2), normals=normals.reshape(-1, 2),
                            finished_by=tuple(by), rpm=rpm)


@dataclass(frozen=True)
class FormLimits:
    """The form the tolerance leaves each finished point (NaN where there is none, and off the cylinders: a fit
    applies to the diameter, not to the fillets at its ends, `simulate.CYLINDER_COS`)."""

    half_band_mm: np.ndarray     # (k,) half the diameter band [mm]
    roundness_mm: np.ndarray     # (k,) the roundness limit [mm, radial peak to valley]
    envelope: bool               # the band is read under the envelope requirement (module docstring)


def form_limits(tolerance_table: dict | None, surfaces: FinishedSurfaces) -> FormLimits:
    """The form limits of every finished point from the job's [tolerance] table (module docstring)."""
    half_band, roundness = np.full(len(surfaces.surface), np.nan), np.full(len(surfaces.surface), np.nan)
    if not tolerance_table:
        return FormLimits(half_band, roundness, True)
    tolerances = tolerance_from_table(tolerance_table)
    cylinder = np.abs(surfaces.normals[:, 0]) >= CYLINDER_COS
    for i in np.flatnonzero(cylinder):
        side = str(surfaces.surface[i])
        band = tolerances.diameter_limits(side, 2.0 * float(surfaces.points_rz[i, 0]))
        if band is not None:
            half_band[i] = 0.5 * (band[1] - band[0])
        limit = tolerances.roundness_limit_mm(side)
        if limit is not None:
            roundness[i] = limit
    return FormLimits(half_band, roundness, tolerances.envelope)


# ---------------------------------------------------------------------------------------------------
# one holding evaluated

@dataclass(frozen=True)
class Clamped:
    """A holding evaluated on the part: the released shape of the finished surfaces and the grip window."""

    holding: Holding
    contact: Contact
    surfaces: FinishedSurfaces
    squeeze: Squeeze             # per newton of grip, at the surfaces' points
    grip_in_cut_n: np.ndarray    # (k,) grip while the finishing pass cuts each point [N]
    size_change_mm: np.ndarray   # (k,) diameter after release minus the diameter cut in the chuck [mm]
    roundness_mm: np.ndarray     # (k,) radial peak to valley after release [mm]
    limits: FormLimits           # what the tolerance leaves the form at each point
    demand: HoldDemand | None    # the heaviest station (None: no passes)
    most_for_roundness_n: float | None
    limiting: int | None         # the point that sets the most grip
    limited_by: str | None       # what sets it there: "diameter band" | "roundness"

    @property
    def least_to_hold_n(self) -> float | None:
        return None if self.demand is None else self.demand.least_n

    @property
    def worst(self) -> int | None:
        """Index of the point with the largest roundness (None if no surface is finished in this setup)."""
        return int(np.argmax(self.roundness_mm)) if len(self.roundness_mm) else None

    @property
    def lobes(self) -> int:
        return 0 if self.worst is None else self.squeeze.lobes(self.worst)

    @property
    def window_open(self) -> bool | None:
        """Whether some grip both holds and keeps the form: None without passes or without a diameter tolerance
        on the finished surfaces; True when the grip leaves them round (no most grip)."""
        judged = np.isfinite(self.limits.half_band_mm) | np.isfinite(self.limits.roundness_mm)
        if self.least_to_hold_n is None or not judged.any():
            return None
        return self.most_for_roundness_n is None or self.least_to_hold_n <= self.most_for_roundness_n


class _Setup:
    """What the holdings of one job share: the job, its passes and their loads, and the shell models."""

    def __init__(self, job, process, loads):
        self.job, self.process, self.loads = job, process, loads
        self.tolerance = job.tables.get("tolerance")
        self._models: dict[tuple, GripModel] = {}

    def model(self, contact: Contact) -> GripModel:
        key = (contact.grip, contact.z_mm, contact.radius_mm)
        if key not in self._models:
            material = self.job.material
            self._models[key] = GripModel(self.job.section, material.E_mpa, material.nu, contact)
        return self._models[key]

    def evaluate(self, holding: Holding, loads: list[CutLoads] | None = None) -> Clamped:
        contact = contact_of(self.job.section, holding)
        surfaces = finished_surfaces(self.job.section, contact, self.process)
        squeeze = self.model(contact).squeeze(holding, surfaces.points_rz, surfaces.normals)
        calibrated = grip_factor_of(self.job)     # a first article's calibration of the squeeze (1 without one)
        squeeze = replace(squeeze, amplitudes_mm_per_n=calibrated * squeeze.amplitudes_mm_per_n)
        centrifugal = centrifugal_force_n(holding.centrifugal_moment_kg_m, surfaces.rpm)
        in_cut = grip_in_cut_n(holding.force_n, centrifugal, holding.grip)
        limits = form_limits(self.tolerance, surfaces)
        most, limiting, limited_by = _most_grip(squeeze, limits, centrifugal, holding.grip)
        demand = hold_demand(self.loads if loads is None else loads, holding, contact)
        return Clamped(holding=holding, contact=contact, surfaces=surfaces, squeeze=squeeze, grip_in_cut_n=in_cut,
                       size_change_mm=-2.0 * in_cut * squeeze.mean_mm_per_n * surfaces.normals[:, 0],
                       roundness_mm=in_cut * squeeze.roundness_mm_per_n, limits=limits, demand=demand,
                       most_for_roundness_n=most, limiting=limiting, limited_by=limited_by)


def _most_grip(squeeze: Squeeze, limits: FormLimits, centrifugal_n: np.ndarray,
               grip: str) -> tuple[float | None, int | None, str | None]:
    """The static grip at which the first point's form reaches a limit, that point and which limit (None: no
    limit): the share of the band the form takes (module docstring) against half the band, and the peak to
    valley against a roundness limit."""
    low, high = squeeze.two_point_mm_per_n
    band_share = squeeze.envelope_mm_per_n if limits.envelope else high - low
    criteria = {"diameter band": (band_share, limits.half_band_mm),
                "roundness": (squeeze.roundness_mm_per_n, limits.roundness_mm)}
    best = (math.inf, None, None)
    for name, (per_n, limit_mm) in criteria.items():
        judged = np.isfinite(limit_mm) & (per_n > 0.0)
        if not judged.any():
            continue   # a limit on a surface the grip leaves round sets no upper end
        in_cut = np.where(judged, limit_mm / np.where(judged, per_n, 1.0), np.inf)
        static = in_cut + centrifugal_n if grip == "od" else np.maximum(in_cut - centrifugal_n, 0.0)
        k = int(np.argmin(static))
        if static[k] < best[0]:
            best = (float(static[k]), k, name)
    return best if best[1] is not None else (None, None, None)


# ---------------------------------------------------------------------------------------------------
# remedies

@dataclass(frozen=True)
class Remedy:
    """A change of the holding, evaluated with the model (`clamped` None where it does not apply)."""

    change: str                  # what to do, in the trade's words
    clamped: Clamped | None
    note: str = ""


def _more_jaws(setup: _Setup, given: Clamped) -> Remedy:
    h, radius = given.holding, given.contact.radius_mm
    jaws = 2 * h.jaws
    width, note = h.width_mm, ""
    if jaws * width > 2.0 * math.pi * radius:
        width = PIE_SHARE * 2.0 * math.pi * radius / jaws
        note = f"{h.width_mm:g} mm jaws do not fit {jaws} round the part: {width:.3g} mm wide. "
    mass = None if h.jaw_mass_kg is None else h.jaw_mass_kg * h.jaws / jaws
    changed = replace(h, jaws=jaws, width_mm=width, jaw_mass_kg=mass, notes=())
    return Remedy(f"{jaws} jaws instead of {h.jaws}, same total force", setup.evaluate(changed),
                  note + "The jaw set's centrifugal moment is kept (each jaw half the mass); check the real jaws.")


def _pie_jaws(setup: _Setup, given: Clamped) -> Remedy:
    h, radius = given.holding, given.contact.radius_mm
    width = PIE_SHARE * 2.0 * math.pi * radius / h.jaws
    change = f"pie jaws ({h.jaws} wrapping {100 * PIE_SHARE:.0f} % of the circumference, {width:.3g} mm wide)"
    if width <= h.width_mm:
        return Remedy(change, None, f"the jaws already cover {100 * h.jaws * h.width_mm / (2 * math.pi * radius):.0f}"
                                    " % of the circumference")
    return Remedy(change, setup.evaluate(replace(h, width_mm=width, notes=())),
                  "same force and centrifugal moment (pie jaws are heavier: check their mass)")


def _all_round(setup: _Setup, given: Clamped) -> Remedy:
    h = given.holding
    kind = "collet" if h.grip == "od" else "mandrel"
    mass = None if h.jaw_mass_kg is None else h.jaw_mass_kg * h.jaws
    changed = replace(h, kind=kind, jaws=0, width_mm=None, jaw_mass_kg=mass, notes=())
    return Remedy(f"a {kind} gripping all round, same force", setup.evaluate(changed),
                  f"modelled as a uniform pressure, so it leaves no lobes; a real {kind}'s segments leave a "
                  "little. Centrifugal moment kept as the jaws'.")


def _thicker_section(setup: _Setup, given: Clamped) -> Remedy:
    h, contact = given.holding, given.contact
    side = surface_points(setup.job.section, h.grip)
    length = h.z_mm[1] - h.z_mm[0]
    z = side.points_rz[:, 1]
    best = None
    for low in np.linspace(z.min() - 0.5 * length, z.max() - 0.5 * length, GRIP_POSITIONS):
        try:
            candidate = contact_of(setup.job.section, replace(h, z_mm=(float(low), float(low) + length)))
        except InputError:
            continue   # no gripped side there, or the jaws do not fit round it
        if best is None or candidate.wall_mm > best[1].wall_mm:
            best = (float(low), candidate)
    change = f"grip on a thicker section of the {SIDE_NAMES[h.grip]}"
    if best is None or best[1].wall_mm < THICKER_BY * contact.wall_mm:
        return Remedy(change, None, f"the {SIDE_NAMES[h.grip]} has no stretch of {length:g} mm with a wall "
                                    f"{100 * (THICKER_BY - 1):.0f} % thicker than under the grip now "
                                    f"({contact.wall_mm:.3g} mm)")
    low, candidate = best
    clashes = [p.name for p in (setup.process.passes if setup.process else [])
               if p.surface == h.grip and min(p.start_mm, p.end_mm) < candidate.z_mm[1]
               and max(p.start_mm, p.end_mm) > candidate.z_mm[0]]
    note = f"wall {candidate.wall_mm:.3g} mm there against {contact.wall_mm:.3g} mm now"
    if clashes:
        note += f"; pass(es) {', '.join(clashes)} would run into the jaws there"
    moved = replace(h, z_mm=(low, low + length), notes=())
    return Remedy(f"{change}: z {candidate.z_mm[0]:.3g} to {candidate.z_mm[1]:.3g} mm", setup.evaluate(moved), note)


def _lighter_for_finish(setup: _Setup, given: Clamped) -> Remedy:
    change = "re-grip lighter for the finishing passes"
    if setup.process is None:
        return Remedy(change, None, "the job has no passes")
    first = next((i for i, p in enumerate(setup.process.passes) if p.allowance_mm == 0.0), None)
    if first is None or first == 0:
        why = "no pass finishes to size (allowance 0)" if first is None else "every pass is a finishing pass"
        return Remedy(change, None, why)
    finishing = setup.loads[first:]
    light = hold_demand(finishing, given.holding, given.contact).least_n
    lighter = setup.evaluate(replace(given.holding, force_n=light, notes=()), loads=finishing)
    names = ", ".join(p.name for p in setup.process.passes[first:])
    return Remedy(f"{change} ({names}): {light:.0f} N", lighter,
                  f"the passes before run at the given {given.holding.force_n:.0f} N, then the grip is eased "
                  "without opening the jaws")


# ---------------------------------------------------------------------------------------------------
# the study

@dataclass(frozen=True)
class ClampStudy:
    """The holding of a job as given, the remedies, and what to watch."""

    title: str
    given: Clamped
    remedies: tuple[Remedy, ...]
    cautions: tuple[str, ...]
    notes: tuple[str, ...]       # defaults assumed and what could not be computed


@dataclass(frozen=True)
class ReleasedProfile:
    """The released shape of one point of a finished surface around the circumference."""

    surface: str
    r_mm: float
    z_mm: float
    theta_deg: np.ndarray        # (M,) 0 at the middle of a jaw
    deviation_mm: np.ndarray     # (M,) along the outward normal, > 0 more material, n = 0 part included
    radial_mm: np.ndarray        # (M,) change of the radius after release against the radius cut in the chuck
    jaw_deg: np.ndarray          # angles of the jaws' middles (empty all round)
    jaw_width_deg: float         # each jaw's width around the circumference (0 all round)


def released_profile(clamped: Clamped, index: int, samples: int = 720) -> ReleasedProfile:
    """Released deviation around the circumference at one finished point (for the figure)."""
    theta = np.linspace(0.0, 2.0 * math.pi, samples + 1)
    deviation = -clamped.grip_in_cut_n[index] * clamped.squeeze.around(theta)[index]
    h = clamped.holding
    jaws = np.arange(h.jaws) * 360.0 / h.jaws if h.jaws else np.array([])
    width = 0.0 if h.all_round else math.degrees(h.width_mm / clamped.contact.radius_mm)
    r, z = clamped.surfaces.points_rz[index]
    radial = deviation * clamped.surfaces.normals[index, 0]
    return ReleasedProfile(str(clamped.surfaces.surface[index]), float(r), float(z), np.degrees(theta), deviation,
                           radial, jaws, width)


def nearest_point(clamped: Clamped, surface: str, z_mm: float) -> int:
    """Index of the finished point of `surface` nearest to z (InputError --plot-at if it has none)."""
    on = np.flatnonzero(clamped.surfaces.surface == surface)
    if not len(on):
        raise InputError("--plot-at", f"no {SIDE_NAMES.get(surface, surface)} is finished in this setup")
    return int(on[np.argmin(np.abs(clamped.surfaces.points_rz[on, 1] - z_mm))])


def _cautions(given: Clamped, loads: list[CutLoads]) -> tuple[str, ...]:
    h = given.holding
    lines = [line[0].upper() + line[1:] + "." for line in grip_check_of(h, given.contact, loads).problems()]
    top_rpm = max((float(c.rpm.max()) for c in loads if len(c.rpm)), default=0.0)
    top_fc = float(centrifugal_force_n(h.centrifugal_moment_kg_m, top_rpm))
    if h.grip == "od" and h.force_n > top_fc > EN1550_SHARE * h.force_n:
        lines.append(f"At {top_rpm:.0f} /min the jaws' centrifugal force ({top_fc:.0f} N) exceeds "
                     f"{100 * EN1550_SHARE:.0f} % of the grip ({h.force_n:.0f} N), the share EN 1550 allows as "
                     "quoted: lower the speed or raise the grip.")
    return tuple(lines) + CAUTIONS


def clamp_study(job) -> ClampStudy:
    """The holding of `job` (its [holding] table) evaluated, with the remedies; InputError for bad input."""
    from deflect.machining.targets import process_from_job

    if "holding" not in job.tables:
        raise InputError("holding", "missing; give [holding] with kind, jaws, grip, z, width, force, friction, "
                                    "jaw_mass, jaw_radius and safety")
    holding = holding_from_table(job.tables["holding"])
    notes = list(holding.notes)
    process = None
    if job.tables.get("pass"):
        process = process_from_job(job)
        notes += process.warnings
    else:
        notes.append("pass: the job has no passes: the least grip to hold is not computed, and every OD and ID "
                     "point is taken as finished in this setup")
    loads = cut_loads(job, process) if process is not None else []
    setup = _Setup(job, process, loads)
    given = setup.evaluate(holding)
    if given.most_for_roundness_n is None:
        notes.append("tolerance: no diameter tolerance on a surface finished here that the grip puts out of round: "
                     "the most grip for roundness is not given")
    changes = (_thicker_section, _lighter_for_finish)
    if not holding.all_round:
        changes = (_more_jaws, _pie_jaws, _all_round) + changes
    remedies = tuple(change(setup, given) for change in changes)
    return ClampStudy(title=job.title, given=given, remedies=remedies, cautions=_cautions(given, loads),
                      notes=tuple(notes))
