"""Chatter of the finishing passes: the wall's modes as it is cut, each pass's stability, the speeds that cut clean.

Takes a checked `Job`, its `Process` and its `Dynamics` ([dynamics]: damping, tap test); gives a `ChatterStudy`:
the lowest modes of the finished part as held, and for every finishing pass (allowance 0; or the one pass
asked for) the regenerative stability of its cuts at key stations along them, its worst station, the largest
stable depth at its spindle speed and the spindle-speed windows, within the machine's range, where its depth
is stable.

At each key station (`simulate.key_indices`, clustered towards the ends of the cut, where the wall changes
fastest) the part is the in-process part with the tool there: cut up to the tool, still carrying its stock
ahead (`simulate.cut_to_target`), as in the static prediction. Its shell model (`compliance.WallModel`, the
contact patch and elements of `simulate`) gets its consistent mass, its modes and its frequency response
where the tool bears (`mechanics.modes`); the boring bar's bending mode is added in series along the normal
(`modes.bar_frf`), as the static model adds the bar's compliance. The cut at that station (its depth met on the
part cut to its targets, the pass's feed and cutting speed, the spindle speed at that diameter) gives the
modulation of the chip and the thrust's coefficient; the stability follows from `mechanics.stability`.

Damping: the job's ratio for every mode, the default from memory where the job gives none. A tap test's modes
replace the model's: each measured frequency is matched to the nearest mode of the finished part as held
(n, m), which takes the measured damping; its frequency is scaled by measured / modelled, and the mode of the
same (n, m) at every station of the in-process part takes the same scale and damping (its shape and modal mass
stay the model's, so its stiffness follows the frequency; the residual of the modes left out stays as modelled).

What is left out (said in the report): the static push-off's micrometres in the depth (the depth met is
used); Kienzle's speed factor away from the pass's cutting speed (the force constants are those of the pass's
cutting speed at every spindle speed scanned: at twice the speed they would be about 10 % lower); process
damping, which raises the limit at low cutting speeds; the spindle, the machine and the chuck's own modes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.errors import InputError, ModelError
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.dynamics import Dynamics
from deflect.machining.simulate import (
    CONTACT_PATCH,
    ELEMENT_MM,
    HARMONIC_TOLERANCE,
    STATION_SPACING_MM,
    SimulationSettings,
    behind_and_lead_in,
    contact_point,
    cut_to_target,
    key_indices,
    laid_out,
    met_depth,
    parallel_map,
    section_of_polygon,
)
from deflect.mechanics.compliance import WallModel
from deflect.mechanics.cutting import spindle_speed_rpm
from deflect.mechanics.modes import Mode, PointResponse, WallDynamics, bar_frf, bar_natural_hz
from deflect.mechanics.stability import (
    chip_modulation,
    complement,
    frequency_grid,
    limit_at_speeds,
    lobe_branches,
    merged,
    oriented,
    unstable_speeds,
)

KEY_STATIONS = 6                 # stations per cut where the modes are computed (clustered towards the ends),
                                 # and the deepest (`deepest_station`)
DEEPEST_SHARE = 0.01             # the deepest stretch: within 1 % of the cut's greatest depth
FULL_DEPTH_SHARE = 0.5           # stations checked: where the depth met is at least this share of the cut's median
SPEED_FLOOR_SHARE = 0.05         # speeds scanned from this share of the spindle limit (or half the pass's speed)
SHALLOWEST_MM = 0.005            # the depth scan for the limit starts here
DEPTH_SCAN_POINTS = 24           # depths scanned (geometric) before the limit is bisected
DEPTH_BISECTIONS = 30
FIGURE_SPEEDS = 800              # spindle speeds of the lobes drawn
FIGURE_DEPTHS = 40               # depths of the lobes drawn (geometric)
FIGURE_MARGIN = 2.0              # the lobe map looks for limits up to this times the cut's (the boundary is at 1)
ZOOM_SHARE = 0.04                # the figure's close-up: +/- this share of the speed at its centre
VERDICT_MARGIN = 1.01            # stable or not: limits just above the cut's are enough to tell
TAP_MATCH_BAND = (0.7, 1.4)      # a tap test's mode further than this from the model's nearest is warned about
SHAPES_DRAWN = 4                 # modes of the finished part kept for the figure


@dataclass(frozen=True)
class ModeRow:
    """A mode of the finished part as held, as used: measured where a tap test gave it."""

    n: int
    m: int
    frequency_hz: float          # as used (the tap test's where measured)
    model_hz: float              # as modelled
    damping: float
    measured: bool


@dataclass(frozen=True)
class StationChatter:
    """The stability of one key station of a cut."""

    cut: int                     # index of the cut within its pass
    r_mm: float                  # where the tool is (the target point of the cut; it bears half a patch behind)
    z_mm: float
    depth_mm: float              # depth of cut met there
    speed_rpm: float             # spindle speed there
    coefficient_n_per_mm2: float       # the thrust's dynamic coefficient dT/dA of the cut
    limit_coefficient_n_per_mm2: float  # the least limit of the lobes at this speed (inf: none)
    chatter_frequency_hz: float  # frequency of that limiting lobe (NaN: none)
    limit_depth_mm: float        # the largest stable depth at this speed: for a stable cut the deepest it stays
                                 # stable, for an unstable one the depth it must come down to (0: none)
    limit_depth_at_least: bool   # True: stable up to the deepest depth scanned, limit_depth_mm is that depth
    deeper_stable_mm: float | None  # an unstable cut: the least depth above it that is stable again (None: none
                                    # within the scan); stability need not fall with depth (`stability_change_mm`)
    lowest_limit_n_per_mm2: float  # the least limit at any spindle speed (the floor of the lobes)
    unstable_rpm: tuple[tuple[float, float], ...]  # spindle speeds where this station's depth is unstable

    @property
    def stable(self) -> bool:
        return self.coefficient_n_per_mm2 < self.limit_coefficient_n_per_mm2

    @property
    def margin_mm(self) -> float:
        """Limit depth less the depth: > 0 stable with room, < 0 by how much too deep."""
        return self.limit_depth_mm - self.depth_mm


@dataclass(frozen=True, eq=False)
class LobeMap:
    """Where a station's cut is stable, over spindle speed and depth (for the figure): the lobes."""

    speeds_rpm: np.ndarray       # (S,)
    depths_mm: np.ndarray        # (D,) geometric
    margin: np.ndarray           # (D, S) limit over the cut's coefficient: > 1 stable


@dataclass(frozen=True, eq=False)
class PassChatter:
    name: str
    surface: str
    tool: str
    feed_mm: float
    speed_m_min: float
    stations: list[StationChatter]
    worst: StationChatter        # the station whose limit lies closest above (or furthest below) its cut
    stable_speeds_rpm: list[tuple[float, float]]   # every station stable, within the scanned range
    lobes: LobeMap | None = None     # the worst station's, when asked for
    zoom: LobeMap | None = None      # the same around the widest window (or the pass's speed), finer

    @property
    def stable(self) -> bool:
        return all(s.stable for s in self.stations)


@dataclass(frozen=True, eq=False)
class ChatterStudy:
    title: str
    material: str
    damping: float
    damping_from_memory: bool
    measured: int                # modes a tap test gave
    modes: list[ModeRow]         # the finished part as held, lowest first
    shapes: list[Mode]           # the first modes' shapes (figure)
    mesh_nodes_rz: np.ndarray    # the finished part's mid-surface nodes (figure)
    mesh_elements: np.ndarray
    passes: list[PassChatter]
    speed_range_rpm: tuple[float, float]
    warnings: list[str]


# ---------------------------------------------------------------------------------------------------
# the tap test

@dataclass(frozen=True)
class Corrections:
    """The tap test's changes to the model's modes: {(n, m): (frequency scale, damping)}, and the default."""

    by_mode: dict
    damping: float

    def applied(self, response: PointResponse) -> tuple[np.ndarray, np.ndarray]:
        """(natural frequencies [Hz], damping ratios) of a station's modes."""
        natural = response.frequency_hz.copy()
        damping = np.full(len(natural), self.damping)
        for i, key in enumerate(zip(response.n.tolist(), response.m.tolist())):
            if key in self.by_mode:
                scale, ratio = self.by_mode[key]
                natural[i] *= scale
                damping[i] = ratio
        return natural, damping


def tap_corrections(finished: list[Mode], dynamics: Dynamics) -> tuple[Corrections, list[ModeRow], list[str]]:
    """Each measured mode matched to the finished part's nearest mode in frequency (module docstring)."""
    by_mode, warnings, owner = {}, [], {}
    for measured in dynamics.measured:
        if not finished:
            break
        distance = [abs(math.log(measured.frequency_hz / mode.frequency_hz)) for mode in finished]
        mode = finished[int(np.argmin(distance))]
        key = (mode.n, mode.m)
        if key in owner:
            raise InputError(measured.key, f"{measured.frequency_hz:g} Hz and {owner[key]} both lie nearest to the "
                                           f"model's mode n = {mode.n}, m = {mode.m} ({mode.frequency_hz:.0f} Hz); "
                                           "give each measured mode once")
        owner[key] = f"{measured.frequency_hz:g} Hz ({measured.key})"
        scale = measured.frequency_hz / mode.frequency_hz
        if not TAP_MATCH_BAND[0] <= scale <= TAP_MATCH_BAND[1]:
            warnings.append(f"{measured.key}: the measured {measured.frequency_hz:g} Hz lies "
                            f"{100 * (scale - 1):+.0f} % "
                            f"from the model's nearest mode (n = {mode.n}, m = {mode.m}, {mode.frequency_hz:.0f} Hz): "
                            "check the holding ([[held]] boxes) and the measurement")
        by_mode[key] = (scale, measured.damping)
    corrections = Corrections(by_mode=by_mode, damping=dynamics.damping)
    rows = []
    for mode in finished:
        scale, ratio = by_mode.get((mode.n, mode.m), (1.0, dynamics.damping))
        rows.append(ModeRow(n=mode.n, m=mode.m, frequency_hz=mode.frequency_hz * scale, model_hz=mode.frequency_hz,
                            damping=ratio, measured=(mode.n, mode.m) in by_mode))
    return corrections, sorted(rows, key=lambda row: row.frequency_hz), warnings


# ---------------------------------------------------------------------------------------------------
# one station

def wall_of(job, section) -> WallModel:
    return WallModel(section, job.held, job.material.E_mpa, job.material.nu, CONTACT_PATCH, HARMONIC_TOLERANCE,
                     strict_patch=False, element_mm=ELEMENT_MM)


def station_response(job, current_rz: np.ndarray, path, p, k: int) -> PointResponse:
    """The wall's modal data where the tool bears at station k, the part cut up to there (worker task)."""
    shape = cut_to_target(current_rz, path, p, upto=k)
    behind_mm, _ = behind_and_lead_in(SimulationSettings())
    r, z = contact_point(path, k, behind_mm)
    try:
        dynamics = WallDynamics(wall_of(job, section_of_polygon(shape)), job.material.density_g_cm3)
        return dynamics.response_at([(r, z)], [path.normals[k]])[0]
    except (InputError, ModelError) as exc:
        raise ModelError(f"with the tool of pass '{p.name}' at r = {r:.3f}, z = {z:.3f} mm the part as cut so "
                         f"far cannot be modelled: {exc.message}", key=p.key) from None


@dataclass(frozen=True, eq=False)
class CutResponse:
    """The relative frequency response (wall plus tool) at a station and what the cut needs with it."""

    frequency_hz: np.ndarray
    response: np.ndarray         # (F, 2, 2) [mm/N] in (normal into the material, along the boundary)
    feed_sign: float             # +1: the feed runs along the boundary's counter-clockwise tangent
    material: object
    tool: object
    feed_mm: float
    speed_m_min: float
    force_factor: float = 1.0    # a first article's calibration of the pass's forces (all three Kienzle constants)

    def branches(self, depth_mm: float):
        """The cut's thrust coefficient and the lobes' branches at this depth. A calibrated force factor scales
        the three force constants together, so the thrust and its coefficient, not their direction."""
        modulation = chip_modulation(self.material, self.tool, depth_mm, self.feed_mm, self.speed_m_min)
        phi_in, phi_out = oriented(self.response, modulation, self.feed_sign)
        return (self.force_factor * modulation.coefficient_n_per_mm2,
                lobe_branches(self.frequency_hz, phi_in, phi_out))

    def margin(self, depth_mm: float, rpm, most: float = math.inf) -> np.ndarray:
        """Limit over the cut's coefficient at the speeds (> 1 stable); where it exceeds `most`, inf."""
        coefficient, branches = self.branches(depth_mm)
        return limit_at_speeds(branches, rpm, cap=most * coefficient)[0] / coefficient


def cut_response(job, process, p, response: PointResponse, corrections: Corrections, feed_sign: float) -> CutResponse:
    natural, damping = corrections.applied(response)
    tool = process.tools[p.tool]
    modal = [natural]
    if tool.bar is not None:
        modal.append([bar_natural_hz(tool.bar)])
    grid = frequency_grid(np.concatenate(modal), np.r_[damping, corrections.damping])
    frf = response.frf(grid, damping, natural)
    if tool.bar is not None:
        frf[:, 0, 0] += bar_frf(tool.bar, grid, corrections.damping)
    return CutResponse(frequency_hz=grid, response=frf, feed_sign=feed_sign, material=job.material, tool=tool,
                       feed_mm=p.feed_mm, speed_m_min=p.speed_m_min, force_factor=p.force_factor)


def deepest_scanned_mm(depth_mm: float) -> float:
    return max(4.0 * depth_mm, 2.0)


def stability_change_mm(cut: CutResponse, rpm: float, depth_mm: float, going_up: bool) -> float | None:
    """The nearest depth above (going_up) or below the cut's depth where its stability at this spindle speed
    changes, found on a geometric scan of depths and bisected (log scale); None if it does not change within
    the scan (SHALLOWEST_MM to `deepest_scanned_mm`).

    Stability need not fall with depth: as the depth grows past the nose, Colwell's chord turns towards the
    feed and the thrust with it, away from a wall that gives radially, so a light cut can chatter where a
    deeper one does not."""
    depths = np.geomspace(SHALLOWEST_MM, deepest_scanned_mm(depth_mm), DEPTH_SCAN_POINTS)
    verdict = cut.margin(depth_mm, [rpm], VERDICT_MARGIN)[0] > 1.0
    side = depths[depths > depth_mm] if going_up else depths[depths < depth_mm][::-1]
    inside = depth_mm
    for d in side:
        if (cut.margin(d, [rpm], VERDICT_MARGIN)[0] > 1.0) != verdict:
            same, other = math.log(inside), math.log(d)
            for _ in range(DEPTH_BISECTIONS):
                mid = 0.5 * (same + other)
                if (cut.margin(math.exp(mid), [rpm], VERDICT_MARGIN)[0] > 1.0) == verdict:
                    same = mid
                else:
                    other = mid
            # the depth on the stable side of the change
            return math.exp(same if verdict else other)
        inside = d
    return None


def evaluate_station(cut: CutResponse, cut_index: int, r_mm: float, z_mm: float, depth_mm: float, rpm: float,
                     speed_range: tuple[float, float]) -> StationChatter:
    coefficient, branches = cut.branches(depth_mm)
    limit, frequency = limit_at_speeds(branches, [rpm])
    lowest = min((float(np.nanmin(branch.coefficient)) for branch in branches), default=math.inf)
    stable = limit[0] > coefficient
    if stable:
        deeper = stability_change_mm(cut, rpm, depth_mm, going_up=True)
        limit_depth, at_least, deeper_stable = (deeper, False, None) if deeper else (deepest_scanned_mm(depth_mm),
                                                                                      True, None)
    else:
        limit_depth = stability_change_mm(cut, rpm, depth_mm, going_up=False) or 0.0
        at_least, deeper_stable = False, stability_change_mm(cut, rpm, depth_mm, going_up=True)
    unstable = unstable_speeds(branches, coefficient, *speed_range)
    return StationChatter(cut=cut_index, r_mm=r_mm, z_mm=z_mm, depth_mm=depth_mm, speed_rpm=rpm,
                          coefficient_n_per_mm2=coefficient, limit_coefficient_n_per_mm2=float(limit[0]),
                          chatter_frequency_hz=float(frequency[0]), limit_depth_mm=limit_depth,
                          limit_depth_at_least=at_least, deeper_stable_mm=deeper_stable,
                          lowest_limit_n_per_mm2=lowest,
                          unstable_rpm=tuple(unstable))


def zoom_range(windows, speed_rpm: float, speed_range: tuple[float, float]) -> tuple[float, float]:
    """Speeds around the widest stable window, or around the pass's speed if none: ZOOM_SHARE either way."""
    centre = 0.5 * sum(max(windows, key=lambda w: w[1] - w[0])) if windows else speed_rpm
    return max(speed_range[0], (1.0 - ZOOM_SHARE) * centre), min(speed_range[1], (1.0 + ZOOM_SHARE) * centre)


def lobe_map(cut: CutResponse, depth_mm: float, speed_range: tuple[float, float]) -> LobeMap:
    """The margin (limit over the cut's coefficient) on a grid of spindle speeds and depths (geometric), the
    station's in-process part and feed as they are."""
    speeds = np.linspace(*speed_range, FIGURE_SPEEDS)
    depths = np.geomspace(SHALLOWEST_MM, deepest_scanned_mm(depth_mm), FIGURE_DEPTHS)
    margin = np.stack([cut.margin(d, speeds, FIGURE_MARGIN) for d in depths])
    return LobeMap(speeds_rpm=speeds, depths_mm=depths, margin=margin)


# ---------------------------------------------------------------------------------------------------
# the passes

def finishing_passes(process) -> list:
    """The passes that cut to the drawn contour (allowance 0), in order."""
    return [p for p in process.passes if p.allowance_mm == 0.0]


def chosen_passes(process, pass_name: str | None) -> list:
    if pass_name is None:
        return finishing_passes(process)
    chosen = [p for p in process.passes if p.name == pass_name]
    if not chosen:
        names = ", ".join(repr(p.name) for p in process.passes)
        raise InputError("--pass", f"no pass is named {pass_name!r}; the job's passes are {names}")
    return chosen


def speed_range_rpm(process, passes) -> tuple[float, float]:
    """The spindle speeds scanned: up to the machine's limit, from SPEED_FLOOR_SHARE of it (lower if a pass runs
    slower than twice that)."""
    top = process.machine.max_rpm
    slowest = min((float(spindle_speed_rpm(p.speed_m_min, 2.0 * max(abs(r), 1e-3), top))
                   for p in passes for r in (p.start_mm, p.end_mm)), default=top)
    return min(SPEED_FLOOR_SHARE * top, 0.5 * slowest), top


def cut_stations(process, nominal_rz: np.ndarray, passes, count: int):
    """For every pass asked: its cuts that meet material (not its spring cuts) and their key stations:
    [(pass, cut index, path, part before the cut, depth met, key stations)]."""
    memo: dict = {}
    paths, parts = laid_out(process, nominal_rz, STATION_SPACING_MM, memo)
    _, lead_in = behind_and_lead_in(SimulationSettings())
    index_of = {p.name: i for i, p in enumerate(process.passes)}
    out = []
    for p in passes:
        i = index_of[p.name]
        cuts = paths[i][: len(paths[i]) - p.spring]
        for j, path in enumerate(cuts):
            met = met_depth(parts[i][j], path, p)
            keys = key_indices(path, met, count, lead_in)
            keys = np.union1d(keys[full_depth(met)[keys]], [deepest_station(met)]) if len(keys) else keys
            if len(keys):
                out.append((p, j, path, parts[i][j], met, keys))
    return out


def full_depth(met_mm: np.ndarray) -> np.ndarray:
    """Stations where the cut takes its full stock (at least FULL_DEPTH_SHARE of its median depth): where the tool
    runs into or out of the stock the chip thins to nothing by geometry and rubs rather than cuts; the chatter
    of a chip of a few micrometres, below the cusp the feed leaves, is not what this model describes."""
    cutting = met_mm > 0.0
    if not cutting.any():
        return cutting
    return met_mm >= FULL_DEPTH_SHARE * np.median(met_mm[cutting])


def deepest_station(met_mm: np.ndarray) -> int:
    """The middle of the first stretch where the cut meets (within 1 %) its greatest depth: the widest chip, which
    the key stations, placed for the static compliance, can miss on a short stretch (a face's outer corner)."""
    deep = met_mm >= (1.0 - DEEPEST_SHARE) * met_mm.max()
    first = int(np.argmax(deep))
    last = first + int(np.argmin(deep[first:])) - 1 if not deep[first:].all() else len(deep) - 1
    return (first + last) // 2


def feed_sign_at(path, k: int) -> float:
    tangent = np.array([-path.normals[k, 1], path.normals[k, 0]])
    return 1.0 if float(np.dot(path.feed_dir[k], tangent)) >= 0.0 else -1.0


def pass_study(job, process, stations, responses, corrections: Corrections, speed_range, with_lobes: bool
               ) -> list[PassChatter]:
    """Every pass's stations evaluated; the worst, the windows where all are stable, the lobes if asked."""
    by_pass: dict[str, list] = {}
    for (p, j, path, _, met, k), response in zip(stations, responses):
        cut = cut_response(job, process, p, response, corrections, feed_sign_at(path, k))
        r, z = map(float, path.points_rz[k])   # the tool's position (its contact lies half a patch behind)
        rpm = float(spindle_speed_rpm(p.speed_m_min, 2.0 * r, process.machine.max_rpm))
        station = evaluate_station(cut, j, r, z, float(met[k]), rpm, speed_range)
        by_pass.setdefault(p.name, []).append((p, station, cut))
    out = []
    for name, rows in by_pass.items():
        p = rows[0][0]
        worst_row = min(rows, key=lambda row: row[1].limit_coefficient_n_per_mm2 / row[1].coefficient_n_per_mm2)
        worst = worst_row[1]
        unstable = merged([span for _, station, _ in rows for span in station.unstable_rpm])
        windows = complement(unstable, *speed_range)
        lobes = zoom = None
        if with_lobes:
            lobes = lobe_map(worst_row[2], worst.depth_mm, speed_range)
            zoom = lobe_map(worst_row[2], worst.depth_mm, zoom_range(windows, worst.speed_rpm, speed_range))
        out.append(PassChatter(name=name, surface=p.surface, tool=p.tool, feed_mm=p.feed_mm, speed_m_min=p.speed_m_min,
                               stations=[station for _, station, _ in rows], worst=worst,
                               stable_speeds_rpm=windows, lobes=lobes, zoom=zoom))
    return out


def chatter_study(job, process, dynamics: Dynamics, pass_name: str | None = None, with_lobes: bool = False,
                  key_stations: int = KEY_STATIONS) -> ChatterStudy:
    """The modes of the finished part and the stability of the passes asked for (module docstring)."""
    passes = chosen_passes(process, pass_name)
    try:
        finished = WallDynamics(wall_of(job, job.section), job.material.density_g_cm3)
    except InputError as exc:
        raise ModelError(f"the finished part cannot be modelled: {exc.message}") from None
    corrections, rows, warnings = tap_corrections(finished.modes, dynamics)
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    stations = cut_stations(process, nominal_rz, passes, key_stations)
    tasks = [(job, part, path, p, int(k)) for p, _, path, part, _, keys in stations for k in keys]
    responses = parallel_map(station_response, tasks)
    flat = [(p, j, path, part, met, int(k)) for p, j, path, part, met, keys in stations for k in keys]
    speed_range = speed_range_rpm(process, passes)
    studied = pass_study(job, process, flat, responses, corrections, speed_range, with_lobes)
    checked = {p.name for p in studied}
    warnings += [f"pass '{p.name}' meets no stock to cut on its own (a spring pass of micrometres): not checked"
                 for p in passes if p.name not in checked]
    mesh = finished.wall.geometry.mesh
    return ChatterStudy(title=job.title, material=job.material.name, damping=dynamics.damping,
                        damping_from_memory=dynamics.damping_from_memory, measured=len(dynamics.measured),
                        modes=rows, shapes=finished.modes[:SHAPES_DRAWN], mesh_nodes_rz=mesh.nodes_rz,
                        mesh_elements=mesh.elements, passes=studied, speed_range_rpm=speed_range,
                        warnings=list(dynamics.warnings) + warnings)


# ---------------------------------------------------------------------------------------------------
# the check inside `deflect predict` and `deflect tune`

def prediction_warnings(job, process, prediction, dynamics: Dynamics, memo: dict | None = None) -> list[str]:
    """A warning for each finishing pass predicted to chatter at one of the two stations of its finishing cut
    where chatter is likeliest: where the wall gives most (the largest static compliance in the prediction) and
    where the chip is widest (`deepest_station`: a face's outer corner, which the first can miss; `deflect
    chatter` adds it to its key stations for the same reason). `chatter_study` checks key stations all along.
    memo: the cut paths and {(in-process shape, station): PointResponse}, shared by the variants of one job
    (tune), whose parts are often the same while feed, tool or speed change; it may be the simulation's."""
    memo = {} if memo is None else memo
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    paths, parts = laid_out(process, nominal_rz, STATION_SPACING_MM, memo)
    results = {result.name: result for result in prediction.passes}
    tasks, wanted = {}, []                 # tasks: {name: station_response's arguments}, each station once
    for i, p in enumerate(process.passes):
        if p.allowance_mm != 0.0 or p.name not in results:
            continue
        j = len(paths[i]) - 1 - p.spring
        table = results[p.name].cuts[j] if 0 <= j < len(results[p.name].cuts) else None
        if table is None or not (table.met_depth_mm > 0.0).any():
            continue
        met = table.met_depth_mm
        softest = int(np.argmax(np.where(full_depth(met), table.compliance_mm_per_n, -np.inf)))
        stations = [(softest, "where the wall gives most")]
        deepest = planned_deepest(parts[i][j], paths[i][j], p, memo)
        if deepest != softest:
            stations.append((deepest, "where the chip is widest"))
        checked = []
        for k, where in stations:
            name = (parts[i][j].tobytes(), paths[i][j].points_rz.tobytes(), k, job.material.density_g_cm3)
            checked.append((k, where, float(met[k]), name))
            if name not in memo:
                tasks[name] = (job, parts[i][j], paths[i][j], p, k)
        wanted.append((p, paths[i][j], checked))
    for name, response in zip(tasks, parallel_map(station_response, list(tasks.values()))):
        memo[name] = response
    if not wanted:
        return []
    finished = WallDynamics(wall_of(job, job.section), job.material.density_g_cm3) if dynamics.measured else None
    corrections = tap_corrections(finished.modes if finished else [], dynamics)[0]
    warnings = []
    for p, path, checked in wanted:
        verdicts = [(station_verdict(job, process, p, path, k, depth, memo[name], corrections), k, depth, where)
                    for k, where, depth, name in checked]
        (margin, rpm, limit_depth), k, depth, where = min(verdicts, key=lambda verdict: verdict[0][0])
        if not margin > 1.0:
            r, z = map(float, path.points_rz[k])
            warnings.append(chatter_warning(p.name, where, r, z, depth, rpm, limit_depth, margin))
    return warnings


def planned_deepest(part_rz: np.ndarray, path, p, memo: dict) -> int:
    """`deepest_station` of a cut on the part cut to its targets, as `deflect chatter` places it; the variants of
    one job that `tune` checks then share it (and its modal data) while their push-offs differ by micrometres."""
    name = ("deepest", part_rz.tobytes(), path.points_rz.tobytes(), p.surface)
    if name not in memo:
        memo[name] = deepest_station(met_depth(part_rz, path, p))
    return memo[name]


def station_verdict(job, process, p, path, k: int, depth_mm: float, response: PointResponse,
                    corrections: Corrections) -> tuple[float, float, float]:
    """(margin, spindle speed [1/min], largest stable depth [mm] or 0 when stable) of the cut at station k at the
    pass's own speed. Only a station that chatters needs its limit depth (the lobes over the speed range and the
    depths above, which `evaluate_station` adds, are not warned about)."""
    cut = cut_response(job, process, p, response, corrections, feed_sign_at(path, k))
    rpm = float(spindle_speed_rpm(p.speed_m_min, 2.0 * path.points_rz[k, 0], process.machine.max_rpm))
    coefficient, branches = cut.branches(depth_mm)
    margin = float(limit_at_speeds(branches, [rpm])[0][0]) / coefficient
    limit_depth = 0.0 if margin > 1.0 else (stability_change_mm(cut, rpm, depth_mm, going_up=False) or 0.0)
    return margin, rpm, limit_depth


def chatter_warning(pass_name: str, where: str, r_mm: float, z_mm: float, depth_mm: float, rpm: float,
                    limit_depth_mm: float, margin: float) -> str:
    return (f"pass '{pass_name}' is predicted to chatter {where} (r {r_mm:.1f}, "
            f"z {z_mm:.1f} mm): {depth_mm:.3g} mm deep at {rpm:.0f} /min, stable only "
            f"below {limit_depth_mm:.3g} mm there (margin {margin:.2f}), `deflect chatter` gives its stable "
            "speeds")
