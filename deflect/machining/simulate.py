"""Machining simulation: every pass over the in-process part, with the wall giving way under the tool.

Takes a checked `Job` and its `Process` (stock, tools, passes, machine); gives a `results.Prediction`.

For each pass, cut by cut (roughing steps, the finishing cut, spring cuts), station by station along the
tool path:
1. the depth of material the tool meets beyond its target, on the part as it is when the tool arrives
   (`met_depth`); earlier push-off is already in it, so leftover becomes extra depth;
2. the 3x3 compliance of the part as it is while the tool stands there: material this cut has removed up
   to the tool is gone, material ahead is still there (`inprocess.remove(..., upto=k)`, then a new shell
   model of that shape, `compliance.WallModel`). It is computed at key stations of each cut, all of them
   planned before any equilibrium is solved (`plan_compliance`, on the part cut to its targets), and
   interpolated along the path between them (`KEY_STATIONS`; the convergence test doubles them);
3. the cutting, feed and passive forces of the chip actually taken (`cutting.cutting_forces`: Kienzle on
   Colwell's equivalent edge) and the force-deflection equilibrium
       a = a_met - delta(a),   delta = (C_nn + c_tool) F_p + C_na s F_f,
   (C_na the normal response to a force along the boundary, s the sign of the feed along it), solved by
   bisection on [0, 2 a_met] (delta grows with a unless the feed force pulls the wall into the tool; a station
   left unbalanced is reported as a cut that digs in);
4. the surface the cut leaves is the target pushed out by delta (`inprocess.remove`).

The force constants are uncertain (batch, wear): the whole chain is run again with every force scaled by
1 - spread and 1 + spread, reusing the compliances (they do not depend on the force constants), to give the
range of every headline figure.
"""

from __future__ import annotations

import ctypes
import math
import multiprocessing
import os
import signal
import sys
import threading
import time
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, replace

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.geometry import Polygon
from shapely.geometry.polygon import orient
from threadpoolctl import threadpool_limits

from deflect.errors import InputError, ModelError, keyed
from deflect.geometry.section import POLYGON_CHORD_MM, Line, Section, mass_properties
from deflect.job.calibration import grip_factor_of
from deflect.job.holding import contact_of, holding_from_table
from deflect.job.process import Pass, Process
from deflect.machining.gain_split import gain_by_surface_g
from deflect.machining.inprocess import (
    CutPath,
    Deviation,
    cuts_for_pass,
    depth_of_material,
    deviation_along,
    polygon_mass,
    remove,
)
from deflect.machining.insert_edge import edge_problems, edge_warnings
from deflect.machining.leftover import corners_left, covered, finishing_targets, reach_left
from deflect.machining.results import PassResult, Prediction, SpreadValue, StationTable, SurfaceCheck, SurfaceDeviation
from deflect.machining.toolshape import tool_shape
from deflect.mechanics.chuck import centrifugal_force_n, grip_in_cut_n
from deflect.mechanics.clamping import check_squeeze_is_elastic, grip_strength_warning, released_deviation
from deflect.mechanics.compliance import Patch, WallModel
from deflect.mechanics.cutting import cutting_forces, cutting_time_s, spindle_speed_rpm

STATION_SPACING_MM = 0.1        # tool positions along a path; fine enough for the chords of 1 mm fillets
KEY_STATIONS = 8                # compliance evaluations per cut, interpolated between; doubling them (and halving
                                # the station spacing) moves the housing's mass gain 0.12 %, the test sleeve's
                                # largest deviation 0.00 % (6 keys: 1.3 % and 0.1 %; tests/test_simulate.py)
# The tool's contact: 1 mm along the meridian (of the order of the chip width), 2 mm around. A 1 x 1 mm
# patch reads about 2 % more compliant on a 1.2 mm aluminium wall, well inside the force constants' spread.
CONTACT_PATCH = Patch(length_mm=1.0, width_mm=2.0)
ELEMENT_MM = 0.5                # meridian elements: within 0.3 % of a 4x finer mesh on thin walls, 2 % at junctions
HARMONIC_TOLERANCE = 1e-2       # the harmonic sum's estimated error; measured, at most a third of it
RUN_TURN_DEG = 10.0             # a path's stretch of constant normal ends where the normal has turned this much
MET_TURN_DEG = 30.0             # where the path turns this much, the depth met is measured on the part as cut so far
SHORTEST_RUN_SHARE = 0.1        # stretches shorter than this share of a cut get no key station of their own
MAX_WORKERS = 4                 # processes for the key stations' shell models
PR_SET_PDEATHSIG = 1            # prctl(2) option: the signal a Linux process gets when its parent dies
PARENT_WATCH_S = 0.5            # how often a worker checks that the process that started it is still there
KEEP_MM = 1e-6                  # the in-process part keeps its shape to this (far below any push-off)
SLIVER_MM = 0.005               # half the thickness of the thinnest sliver the shell model is given
SIMPLIFY_MM = 1e-4              # collinear station points dropped before the shell is derived
DEVIATION_SPACING_MM = 0.1
MIN_CHIP_MM = 0.005             # stock thinner than this is not judged for rubbing (common practice: a honed
                                # carbide edge needs a chip of a few um to cut at all)
RUBBING_SHARE = 0.25            # rubbing: the wall gives way so far that the tool cuts less than this share
ROOT_STEPS = 60                 # most steps of the bracketed root search (it takes about 10)
ROOT_TOLERANCE = 1e-13          # relative residual the root search stops at
FACING_DEG = 30.0               # a finished point faces the cut surface within this angle of its station's normal
CYLINDER_COS = 0.999            # a finished od or bore point counts as cylindrical within 2.6 degrees of radial
EQUILIBRIUM_TOLERANCE = 1e-9    # relative residual a + delta - a_met a balanced station must meet
MAX_CUTS_PER_JOB = 200          # cuts of all passes together (README, limits): each costs shell models (150 cuts
                                # of the demo housing took 70 s of CPU here); a real job has a few dozen
MAX_STATIONS_PER_JOB = 2_000_000   # tool positions of all cuts together (one every 0.1 mm; README, limits): the
                                   # station tables of 2 million take about 1 GB


@dataclass(frozen=True)
class SimulationSettings:
    station_spacing_mm: float = STATION_SPACING_MM
    key_stations: int = KEY_STATIONS
    patch: Patch = CONTACT_PATCH
    element_mm: float = ELEMENT_MM
    harmonic_tolerance: float = HARMONIC_TOLERANCE


def simplified(rz: np.ndarray, tolerance_mm: float) -> np.ndarray:
    """The counter-clockwise polygon with the points that lie within tolerance_mm of a straight line dropped
    (the station points of a straight cut, for instance)."""
    simple = shapely.simplify(Polygon(rz), tolerance_mm, preserve_topology=True)
    return np.asarray(orient(simple, 1.0).exterior.coords)[:-1]


def without_slivers(rz: np.ndarray) -> np.ndarray:
    """The polygon without slivers thinner than 2 SLIVER_MM (a morphological opening with square corners):
    a pass that stops exactly at the radius an earlier pass left leaves a skin of the earlier push-off,
    micrometres thick, that carries no load and that no shell model should resolve."""
    opened = Polygon(rz).buffer(-SLIVER_MM, join_style="mitre").buffer(SLIVER_MM, join_style="mitre")
    pieces = sorted(shapely.get_parts(opened), key=lambda piece: piece.area)
    return np.asarray(orient(pieces[-1], 1.0).exterior.coords)[:-1] if pieces else rz


def section_of_polygon(rz: np.ndarray) -> Section:
    """A Section made of the straight edges of a counter-clockwise polygon (already valid), without slivers
    and simplified to SIMPLIFY_MM, for the shell model."""
    points = [tuple(map(float, p)) for p in simplified(without_slivers(rz), SIMPLIFY_MM)]
    return Section(tuple(Line(points[i], points[(i + 1) % len(points)]) for i in range(len(points))))


def straight_runs(normals: np.ndarray, turn_deg: float = RUN_TURN_DEG) -> list[tuple[int, int]]:
    """Stretches of a path whose normal stays within turn_deg of its first station's (od, bore, face, and
    short pieces of a fillet): (first, last) station indices."""
    runs, first = [], 0
    cos_turn = math.cos(math.radians(turn_deg))
    for k in range(1, len(normals)):
        if np.dot(normals[k], normals[first]) < cos_turn:
            runs.append((first, k - 1))
            first = k
    runs.append((first, len(normals) - 1))
    return runs


def key_indices(path: CutPath, met_depth_mm: np.ndarray, count: int, lead_in: int) -> np.ndarray:
    """Stations where the compliance is computed. Interpolating across a corner of the path would mix
    compliances along different normals, so keys are placed on each stretch of constant normal where the
    tool cuts, from `lead_in` stations after its start (once the whole patch bears on the surface this cut
    has left; `behind_and_lead_in`) to its end, about `count` in all; stretches shorter than
    SHORTEST_RUN_SHARE of the cut (fillets, a short shoulder) take their neighbours' values. A path with no
    such stretch gets one key in the middle of its cut."""
    cutting = np.flatnonzero(met_depth_mm > 0.0)
    if len(cutting) == 0:
        return cutting
    runs = []
    shortest = max(2 * lead_in, round(SHORTEST_RUN_SHARE * len(cutting)))
    for first, last in straight_runs(path.normals):
        inside = cutting[(cutting >= first) & (cutting <= last)]
        if len(inside) > shortest:
            runs.append((inside[0] + lead_in, inside[-1]))
    if not runs:
        return np.array([cutting[len(cutting) // 2]])
    total = sum(last - first for first, last in runs)
    keys = [first + (last - first) * clustered(max(2, round(count * (last - first) / total)))
            for first, last in runs]
    return np.unique(np.concatenate(keys).round().astype(int))


def clustered(m: int) -> np.ndarray:
    """m points on [0, 1], closer together at the ends (Chebyshev-Lobatto), where the compliance of a wall
    changes fastest: at its free end and where it is held."""
    return 0.5 * (1.0 - np.cos(np.pi * np.arange(m) / (m - 1)))


def met_depth(current_rz: np.ndarray, path: CutPath, p: Pass) -> np.ndarray:
    """Depth of material the tool meets at each station, on the part as it is when the tool arrives there.

    Along the first stretch of the path this is the stock beyond the target on the part before the cut. Once
    the path turns a corner (down a shoulder after the longitudinal cut, say), the material beyond the target
    along the new normal was partly taken by this very cut on the earlier stretches: the depth there is
    measured on the part with the earlier stretches already cut."""
    met = depth_of_material(current_rz, path)
    runs = straight_runs(path.normals, MET_TURN_DEG)
    for first, last in runs[1:]:
        if not (met[first:last + 1] > 0.0).any():
            continue
        arrived = remove(current_rz, path, np.zeros(len(path.points_rz)), p.surface, upto=first - 1,
                         name=f"'{p.name}'")
        stretch = CutPath(points_rz=path.points_rz[first:last + 1], normals=path.normals[first:last + 1],
                          feed_dir=path.feed_dir[first:last + 1])
        met[first:last + 1] = depth_of_material(arrived, stretch)
    return met


def contact_point(path: CutPath, k: int, behind_mm: float) -> np.ndarray:
    """Where the tool bears on the part: on the freshly cut surface just behind the tool tip."""
    shift = min(behind_mm, 0.5 * travelled_mm(path)[k])   # near the start: midway between the part's end and the tool
    return path.points_rz[k] - shift * path.feed_dir[k]


def behind_and_lead_in(settings: SimulationSettings) -> tuple[float, int]:
    """How far behind the tool it bears on the cut surface [mm], and the stations from the start of a
    stretch to its first key station: one patch length, so that every key station's patch lies whole on
    the surface this cut has left. Closer to the start the patch is clipped by the part's end and by the
    tool, and its compliance jumps by 5-10 % from one station to the next with how the clipped patch meets
    the tool mark; those first stations take the first key's value."""
    behind_mm = 0.5 * settings.patch.length_mm
    return behind_mm, math.ceil(settings.patch.length_mm / settings.station_spacing_mm)


def interpolated(count: int, keys: np.ndarray, at_keys: np.ndarray) -> np.ndarray:
    """(count, 3, 3) compliance at every station from its values at the key stations. Compliance changes by
    orders of magnitude from the held end to a free rim: the normal compliance is interpolated in log scale,
    the other entries in proportion to it. Between keys, a monotone cubic (Fritsch & Carlson, "Monotone
    piecewise cubic interpolation", SIAM J. Numer. Anal. 17, 1980; scipy's PCHIP) follows the curvature of
    the compliance along a wall without overshooting it; straight lines through the same keys were up to
    2 % off between keys 2-3 mm apart. Beyond the first and last key the values are held."""
    matrices = np.zeros((count, 3, 3))
    if len(keys) == 0:
        return matrices
    stations = np.clip(np.arange(count), keys[0], keys[-1])
    normal = np.maximum(at_keys[:, 0, 0], 1e-15)
    if len(keys) == 1:
        return np.broadcast_to(at_keys[0], (count, 3, 3)).copy()
    ratios = at_keys / normal[:, None, None]
    ratios[:, 0, 0] = np.log(normal)
    values = monotone_cubic(keys, ratios.reshape(len(keys), 9), stations).reshape(count, 3, 3)
    normal_at = np.exp(values[:, 0, 0])
    values[:, 0, 0] = 1.0
    return normal_at[:, None, None] * values


def monotone_cubic(x: np.ndarray, y: np.ndarray, at: np.ndarray) -> np.ndarray:
    """(len(at), m) piecewise cubic Hermite interpolant of the columns of y (K, m) at x (K,, increasing),
    with the slopes that keep it monotone where the data are (F. N. Fritsch, J. Butland, "A method for
    constructing local monotone piecewise cubic interpolants", SIAM J. Sci. Stat. Comput. 5, 1984: at an
    interior point the weighted harmonic mean of the neighbouring secants, 0 at a local extremum; at the ends
    the three-point one-sided slope, limited to keep its sign and at most three secants (C. B. Moler,
    "Numerical Computing with MATLAB", 2004, sec. 3.4). The same interpolant as scipy's PchipInterpolator,
    whose import costs a tenth of a second of every run's start-up."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    h = np.diff(x)
    secant = np.diff(y, axis=0) / h[:, None]
    slope = np.zeros_like(y)
    if len(x) == 2:
        slope[:] = secant
    else:
        w1, w2 = (2.0 * h[1:] + h[:-1])[:, None], (h[1:] + 2.0 * h[:-1])[:, None]
        flat = (np.sign(secant[1:]) != np.sign(secant[:-1])) | (secant[1:] == 0.0) | (secant[:-1] == 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            harmonic = (w1 + w2) / (w1 / secant[:-1] + w2 / secant[1:])
        slope[1:-1] = np.where(flat, 0.0, harmonic)
        slope[0] = _end_slope(h[0], h[1], secant[0], secant[1])
        slope[-1] = _end_slope(h[-1], h[-2], secant[-1], secant[-2])
    i = np.clip(np.searchsorted(x, at, side="right") - 1, 0, len(x) - 2)
    t = ((at - x[i]) / h[i])[:, None]
    step = h[i][:, None]
    # cubic Hermite basis on [x_i, x_i+1]
    return (y[i] * (1.0 + 2.0 * t) * (1.0 - t) ** 2 + y[i + 1] * t * t * (3.0 - 2.0 * t)
            + step * (slope[i] * t * (1.0 - t) ** 2 - slope[i + 1] * t * t * (1.0 - t)))


def _end_slope(h0: float, h1: float, m0: np.ndarray, m1: np.ndarray) -> np.ndarray:
    """One-sided three-point slope at an end of the data, kept monotone (see `monotone_cubic`)."""
    d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1)
    d = np.where(np.sign(d) != np.sign(m0), 0.0, d)
    return np.where((np.sign(m0) != np.sign(m1)) & (np.abs(d) > 3.0 * np.abs(m0)), 3.0 * m0, d)


def plan_compliance(job, process: Process, settings: SimulationSettings, nominal_rz: np.ndarray,
                    memo: dict | None = None) -> dict:
    """Cut paths and in-process compliance of every cut, computed once for all runs.

    The key stations' shapes are those of a part cut exactly to its targets: the push-off changes a wall by
    micrometres, its compliance by far less than the force constants' spread. So every key station of every
    cut is known before any equilibrium is solved, and all of them go to the cores at once. For the same
    reason the shapes leave out the passes' wear offsets and programmed compensation (micrometres, too):
    the compliance along a cut with an offset is that of the same cut without it, taken at the nearest
    point of that cut's path (`resampled`). (Only where an offset changes the number of cuts of a pass is
    the plan made on the offset targets themselves.)
    memo: {key station: 3x3} shared between calls on variants of one job (`deflect.decisions.tune`); a key station is
    looked up by the exact shape, path and station, so the results do not depend on what it holds.
    Returns {i: cut paths of pass i, (i, j): (K, 3, 3) compliance along cut j of pass i}.
    """
    memo = {} if memo is None else memo
    actual, actual_parts = laid_out(process, nominal_rz, settings.station_spacing_mm, memo)
    bare = without_corrections(process)
    geometry, parts = (laid_out(bare, nominal_rz, settings.station_spacing_mm, memo) if bare is not process
                       else (actual, actual_parts))
    if any(len(geometry[i]) != len(actual[i]) for i in actual):
        bare, geometry, parts = process, actual, actual_parts
    compliance = compliance_along_cuts(job, bare, geometry, parts, settings, memo)
    plan = dict(actual)
    for (i, j), values in compliance.items():
        plan[(i, j)] = resampled(values, geometry[i][j], actual[i][j])
    return plan


def laid_out(process: Process, nominal_rz: np.ndarray, spacing_mm: float, memo: dict, tool_shapes: bool = True):
    """({i: the cuts of pass i}, {i: the part before each of them}): each pass's cuts laid out on the part
    cut exactly to the earlier targets, each target swept by its tool's nose and edges (tool_shapes False: a
    point tool, the drawn contour itself). Kept in memo by the part before the pass, the pass's geometry and
    its tool's shape (feed and speed do not change where a pass cuts)."""
    paths, parts, current = {}, {}, process.stock_rz
    cuts_so_far = stations_so_far = 0
    for i, p in enumerate(process.passes):
        tool = process.tools[p.tool] if tool_shapes else None
        shape = tool_shape(tool, p.surface) if tool is not None else None
        name = ("cuts", current.tobytes(), nominal_rz.tobytes(), spacing_mm, p.surface, p.allowance_mm, p.offset_mm,
                p.compensation, p.start_mm, p.end_mm, p.depth_mm, p.spring, shape)
        if name not in memo:
            with keyed(p.key):
                cuts, befores = cuts_for_pass(current, nominal_rz, p, spacing_mm, tool), []
                after = current
                for path in cuts:
                    befores.append(after)
                    after = cut_to_target(after, path, p)
            memo[name] = (cuts, befores, after)
        paths[i], parts[i], current = memo[name]
        cuts_so_far += len(paths[i])
        stations_so_far += sum(len(path.points_rz) for path in paths[i])
        if cuts_so_far > MAX_CUTS_PER_JOB:
            raise InputError(f"{p.key}.depth", f"with this pass the job makes {cuts_so_far} cuts; deflect simulates at "
                                               f"most {MAX_CUTS_PER_JOB} a job: take the stock in fewer, deeper cuts")
        if stations_so_far > MAX_STATIONS_PER_JOB:
            raise InputError(f"{p.key}.{'r' if p.surface == 'face' else 'z'}",
                             f"with this pass the job's cuts add up to {stations_so_far:,} tool positions (one every "
                             f"{spacing_mm:g} mm); deflect simulates at most {MAX_STATIONS_PER_JOB:,}: use fewer cuts "
                             "or shorter extents")
    return paths, parts


def cut_to_targets(process: Process, nominal_rz: np.ndarray, spacing_mm: float, memo: dict,
                   tool_shapes: bool = True) -> np.ndarray:
    """The part every pass leaves when each cut goes exactly to its target (no push-off): what the tools'
    shape alone leaves (tool_shapes False: the drawn contour wherever a pass runs)."""
    paths, parts = laid_out(process, nominal_rz, spacing_mm, memo, tool_shapes)
    last = len(process.passes) - 1
    return cut_to_target(parts[last][-1], paths[last][-1], process.passes[last])


def cut_to_target(current_rz: np.ndarray, path: CutPath, p: Pass, upto: int | None = None) -> np.ndarray:
    """The part with the cut taken exactly to its target (no push-off), up to station `upto` or all of it."""
    cut = remove(current_rz, path, np.zeros(len(path.points_rz)), p.surface, upto=upto, name=f"'{p.name}'")
    return cut if upto is not None else simplified(cut, KEEP_MM)


def without_corrections(process: Process) -> Process:
    """The process with no wear offsets and no compensation (the process itself if it has none)."""
    if not any(p.offset_mm or p.compensation for p in process.passes):
        return process
    return replace(process, passes=[replace(p, offset_mm=0.0, compensation=()) for p in process.passes])


def compliance_along_cuts(job, process: Process, paths: dict, parts: dict, settings: SimulationSettings,
                          memo: dict) -> dict[tuple[int, int], np.ndarray]:
    """{(i, j): (K, 3, 3)} compliance along every cut (paths and the parts before them from `laid_out`), from
    its key stations (the ones not in memo are computed, on the cores at once, and added to it)."""
    behind_mm, lead_in = behind_and_lead_in(settings)
    material = (job.material.E_mpa, job.material.nu, tuple((b.r_range, b.z_range) for b in job.held), settings)
    owners, tasks, wanted = [], [], {}
    for i, p in enumerate(process.passes):
        cut_before = None                    # depth met by the pass's previous cut on the same path
        for j, path in enumerate(paths[i]):
            current = parts[i][j]
            placed = ("keys", current.tobytes(), path.points_rz.tobytes(), p.surface, settings)
            if placed not in memo:
                with keyed(p.key):
                    met = met_depth(current, path, p)
                if not (met > 0.0).any() and cut_before is not None and cut_before[0] is path:
                    # a spring cut meets only the micrometres the cut before left, not there on the part cut
                    # exactly to the target: its keys go where that cut cut (its compliance is the finished
                    # part's)
                    met = cut_before[1]
                memo[placed] = (key_indices(path, met, settings.key_stations, lead_in), met)
            keys, met = memo[placed]
            cut_before = (path, met)
            names = [(current.tobytes(), path.points_rz.tobytes(), int(k), p.surface, material) for k in keys]
            owners.append((i, j, len(path.points_rz), keys, names))
            for k, name in zip(keys, names):
                if name not in memo and name not in wanted:
                    wanted[name] = len(tasks)
                    tasks.append((job, current, path, p, int(k), behind_mm, settings))
    for name, value in zip(wanted, parallel_map(key_compliance, tasks)):
        memo[name] = value
    return {(i, j): interpolated(count, keys, np.array([memo[n] for n in names]).reshape(-1, 3, 3))
            for i, j, count, keys, names in owners}


def resampled(values: np.ndarray, planned: CutPath, actual: CutPath) -> np.ndarray:
    """Compliance along `actual` from its values along `planned` (the same cut without offsets): each station of
    `actual` takes the value at the nearest point of `planned`, the normal entry in log scale, as in
    `interpolated`.

    An offset or a compensation moves the path by micrometres along its normal, so the nearest point of the
    planned path is the same place on the part. The share of the path's length travelled is not: an offset
    target can run on along a face the planned path stops at (the demo's bore path, given a positive offset,
    follows the cup's floor for another 15 mm), and the share then puts the compliance of the wall's top
    where the tool is at its foot. Stations beyond the planned path's ends take the value at its end."""
    if planned is actual or (len(planned.points_rz) == len(actual.points_rz)
                             and np.array_equal(planned.points_rz, actual.points_rz)):
        return values
    along_planned = travelled_mm(planned)
    along_actual = shapely.line_locate_point(shapely.LineString(planned.points_rz),
                                             shapely.points(actual.points_rz))
    normal = np.maximum(values[:, 0, 0], 1e-15)
    ratios = (values / normal[:, None, None]).reshape(len(values), 9)
    out = np.stack([np.interp(along_actual, along_planned, column) for column in ratios.T], axis=1)
    out = out.reshape(-1, 3, 3)
    out[:, 0, 0] = 1.0
    return np.exp(np.interp(along_actual, along_planned, np.log(normal)))[:, None, None] * out


def travelled_mm(path: CutPath) -> np.ndarray:
    """The distance along the path from its start to each station [mm]."""
    steps = np.linalg.norm(np.diff(path.points_rz, axis=0), axis=1)
    return np.concatenate([[0.0], np.cumsum(steps)])


def parallel_map(function, tasks: list[tuple]):
    """function(*task) for every task, on the machine's cores (each key station is its own shell model, so
    they are independent; the results come back in order, so the answer does not depend on the core count).
    Inside `kept_workers` the same worker processes serve every call."""
    workers = min(len(tasks), free_cores(), MAX_WORKERS)
    if workers < 2:
        return [function(*task) for task in tasks]
    if _KEPT_POOL:
        return list(_KEPT_POOL[-1].map(function, *zip(*tasks)))
    with new_pool(workers) as pool:
        return list(pool.map(function, *zip(*tasks)))


_KEPT_POOL: list = []


def free_cores() -> int:
    """Cores free for worker processes: the machine's, less the busy ones (the 1-minute load average).

    Workers only pay on idle cores. On this project's shared 2-core machine (load 8 to 12) a pool of 2 gave
    the demo no gain in wall-clock time and cost 10 to 20 % more CPU (forking, pickling each key station's
    part); on idle cores the key stations, about three quarters of the demo's simulation, run side by side.
    Results do not depend on it (they come back in order). IDLE_CORES_ONLY = False counts every core."""
    cores = os.cpu_count() or 1
    if not IDLE_CORES_ONLY:
        return cores
    try:
        busy = os.getloadavg()[0]
    except (OSError, AttributeError):   # no load average on this system: take the cores as free
        busy = 0.0
    return max(1, int(cores - busy))


IDLE_CORES_ONLY = True


def new_pool(workers: int) -> ProcessPoolExecutor:
    return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("fork"),
                               initializer=start_worker, initargs=(os.getpid(),))


@contextmanager
def kept_workers():
    """One set of worker processes for many predictions (the remedy search predicts dozens of plans, most
    with a few new key stations each; starting workers for each costs more than the stations)."""
    workers = min(free_cores(), MAX_WORKERS)
    if workers < 2 or _KEPT_POOL:
        yield
        return
    pool = new_pool(workers)
    _KEPT_POOL.append(pool)
    try:
        yield
    finally:
        _KEPT_POOL.pop()
        pool.shutdown()


def start_worker(parent_pid: int) -> None:
    """In each worker: BLAS on one thread, and the worker ends with the process that started it.

    BLAS: the shell models' matrices are small, and workers that each start a BLAS thread per core fight over
    the cores (15 s instead of 2.2 s for the demo on 2 cores when simulate was called from a script that left
    the BLAS threads unlimited). Ending with the parent: a prediction killed by SIGTERM or SIGKILL has no
    chance to shut its pool down, and its idle workers, blocked on a queue whose other end they hold
    themselves, were left running under init (issue 17, item 3)."""
    threadpool_limits(limits=1)
    if sys.platform.startswith("linux"):
        # the kernel kills this process the moment its parent dies (prctl(2), PR_SET_PDEATHSIG)
        try:
            ctypes.CDLL(None, use_errno=True).prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):
            pass
    if os.getppid() != parent_pid:  # the parent died before the signal was asked for
        os._exit(1)
    # everywhere (and as a second guard on Linux): a thread that ends the worker once it is orphaned
    threading.Thread(target=watch_parent, args=(parent_pid,), daemon=True).start()


def watch_parent(parent_pid: int) -> None:
    while os.getppid() == parent_pid:
        time.sleep(PARENT_WATCH_S)
    os._exit(1)


def key_compliance(job, current_rz: np.ndarray, path: CutPath, p: Pass, k: int, behind_mm: float,
                   settings: SimulationSettings) -> np.ndarray:
    """3x3 compliance with the tool at station k, the part cut up to there."""
    shape = cut_to_target(current_rz, path, p, upto=k)
    r, z = contact_point(path, k, behind_mm)
    try:
        model = WallModel(section_of_polygon(shape), job.held, job.material.E_mpa, job.material.nu,
                          settings.patch, settings.harmonic_tolerance, strict_patch=False,
                          element_mm=settings.element_mm)
        return model.at_contacts([(r, z)], [path.normals[k]])[0].matrix_mm_per_n
    except (InputError, ModelError) as exc:
        # the shape is the simulation's, not the user's: say where the tool was and what the part was like
        raise ModelError(f"with the tool of pass '{p.name}' at r = {r:.3f}, z = {z:.3f} mm the part as cut so "
                         f"far cannot be modelled: {exc.message}", key=p.key) from None


def equilibrium(met_depth_mm: np.ndarray, compliance: np.ndarray, feed_sign: np.ndarray, tool_c: float,
                job, tool, p: Pass, force_scale: float):
    """Depth actually cut and the forces there, where the push-off and the chip agree.

    delta(a) = C_nn F_p + C_na s F_f + c_tool F_p along the inward normal (away from the tool), with s the sign
    of the feed direction along the boundary tangent; the cutting force is circumferential and, at the load
    point, does not move the surface along the normal (C_nt = 0 by symmetry). The root of
    g(a) = a + delta(a) - a_met on [0, 2 a_met], g(0) = -a_met <= 0 (`bracketed_root`).
    """
    c_nn = compliance[:, 0, 0]
    c_na = compliance[:, 0, 2]

    def push_off(depth):
        forces = cutting_forces(job.material, tool, depth, p.feed_mm, p.speed_m_min,
                                force_scale=force_scale * p.force_factor)
        passive, feed = np.asarray(forces.passive_n), np.asarray(forces.feed_n)
        return (c_nn + tool_c) * passive + c_na * feed_sign * feed, forces

    depth = bracketed_root(lambda a: a + push_off(a)[0] - met_depth_mm, np.zeros_like(met_depth_mm),
                           2.0 * met_depth_mm, ROOT_TOLERANCE * np.maximum(met_depth_mm, 1e-3))
    delta, forces = push_off(depth)
    if not (np.isfinite(depth).all() and np.isfinite(delta).all()):
        raise ModelError(f"pass '{p.name}': the push-off cannot be balanced with the chip (the set-up gives way "
                         "without bound); check the tool's bar and the material's modulus", key=p.key)
    unbalanced = np.abs(depth + delta - met_depth_mm) > EQUILIBRIUM_TOLERANCE * np.maximum(met_depth_mm, 1e-3)
    if unbalanced.any():
        # delta fell with depth so fast that no depth in [0, 2 a_met] balances: the feed force pulls the wall
        # into the tool by more than the chip it meets, and the cut would dig in
        raise ModelError(f"pass '{p.name}' digs in: at {int(unbalanced.sum())} station(s) the feed force draws the "
                         "wall into the tool further than the depth it meets, so no steady cut exists; use a "
                         "smaller feed, a tool with a smaller approach angle, or a stiffer set-up", key=p.key)
    return depth, delta, forces


def bracketed_root(g, low: np.ndarray, high: np.ndarray, tolerance: np.ndarray) -> np.ndarray:
    """Roots of g (elementwise, vectorised) with g(low) <= 0 <= g(high), by regula falsi with the Illinois
    modification (Dowell & Jarratt, "A modified regula falsi method for computing the root of an equation",
    BIT 11, 1971): superlinear, and it never leaves the bracket. Elements whose g(high) < 0 have no root in
    the bracket; they are returned at `high` for the caller to judge. Stops where |g| <= tolerance."""
    g_low, g_high = g(low), g(high)
    x = np.where(g_high <= 0.0, high, low)
    g_x = np.where(g_high <= 0.0, g_high, g_low)
    side = np.zeros(low.shape, int)                 # which end moved last: -1 low, +1 high
    for _ in range(ROOT_STEPS):
        open_ = (np.abs(g_x) > tolerance) & (g_high > 0.0) & (g_low < 0.0)
        if not open_.any():
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            x_new = np.where(open_, high - g_high * (high - low) / (g_high - g_low), x)
        g_new = g(x_new)
        up = open_ & (g_new > 0.0)
        down = open_ & (g_new <= 0.0)
        # Illinois: when the same end moves twice running, halve the kept end's value
        g_low = np.where(up & (side == 1), 0.5 * g_low, g_low)
        g_high = np.where(down & (side == -1), 0.5 * g_high, g_high)
        high, g_high = np.where(up, x_new, high), np.where(up, g_new, g_high)
        low, g_low = np.where(down, x_new, low), np.where(down, g_new, g_low)
        side = np.where(up, 1, np.where(down, -1, side))
        x, g_x = np.where(open_, x_new, x), np.where(open_, g_new, g_x)
    return x


def run_cut(job, process: Process, p: Pass, path: CutPath, current_rz: np.ndarray, compliance: np.ndarray,
            met: np.ndarray, force_scale: float, cut_index: int) -> tuple[StationTable, np.ndarray]:
    """One cut: equilibrium at every station and the part it leaves (met: depth of material the tool meets)."""
    tool = process.tools[p.tool]
    tangent = np.column_stack([-path.normals[:, 1], path.normals[:, 0]])   # CCW tangent of the boundary
    feed_sign = np.sign(np.einsum("ij,ij->i", path.feed_dir, tangent))
    tool_c = tool.compliance_mm_per_n()
    depth, delta, forces = equilibrium(met, compliance, feed_sign, tool_c, job, tool, p, force_scale)
    left = np.where(met > 0.0, delta, 0.0)
    after = simplified(remove(current_rz, path, left, p.surface, name=f"'{p.name}'"), KEEP_MM)
    chip = np.asarray(forces.chip.chip_thickness_mm) * np.ones_like(depth)
    rubbing = (met > MIN_CHIP_MM) & (depth < RUBBING_SHARE * met)
    table = StationTable(
        r_mm=path.points_rz[:, 0].copy(), z_mm=path.points_rz[:, 1].copy(), normal_rz=path.normals.copy(),
        met_depth_mm=met, depth_mm=np.where(met > 0.0, depth, 0.0),
        chip_thickness_mm=np.where(met > 0.0, chip, 0.0),
        cutting_n=np.where(met > 0.0, forces.cutting_n, 0.0), feed_n=np.where(met > 0.0, forces.feed_n, 0.0),
        passive_n=np.where(met > 0.0, forces.passive_n, 0.0), compliance_mm_per_n=compliance[:, 0, 0].copy(),
        tool_compliance_mm_per_n=tool_c, deflection_mm=left,
        power_kw=np.where(met > 0.0, forces.power_kw, 0.0), rubbing=rubbing, cut=cut_index,
        feed_push_mm=np.where(met > 0.0, compliance[:, 0, 2] * feed_sign * forces.feed_n, 0.0))
    return table, after


def run_passes(job, process: Process, force_scale: float, plan: dict, progress=None, memo: dict | None = None):
    """All passes in order on the planned cuts (`plan_compliance`); returns the per-pass station tables and
    the as-machined polygon. memo (shared by variants of one job, `deflect.decisions.tune`) keeps each cut's result by
    everything it depends on: the part it meets, its path, its pass (with its calibrated force factor), its
    compliance, the force scale and the material's constants, so a
    variant that changes a late pass does not machine the earlier ones again."""
    memo = {} if memo is None else memo
    current = process.stock_rz
    per_pass = []
    for i, p in enumerate(process.passes):
        tables = []
        for j, path in enumerate(plan[i]):
            # the spread runs reuse the nominal run's met depth: the part differs only by the earlier passes'
            # push-off (micrometres on tenths), which moves this cut's push-off far less than the spread does
            with keyed(p.key):
                if ("met", i, j) not in plan:
                    met_name = ("met", current.tobytes(), path.points_rz.tobytes(), p.surface)
                    if met_name not in memo:
                        memo[met_name] = met_depth(current, path, p)
                    plan[("met", i, j)] = memo[met_name]
                met = plan[("met", i, j)]
                name = ("cut", current.tobytes(), path.points_rz.tobytes(), replace(p, key=""), j, force_scale,
                        plan[(i, j)].tobytes(), met.tobytes(), job.material)
                if name not in memo:
                    memo[name] = run_cut(job, process, p, path, current, plan[(i, j)], met, force_scale, j)
            table, current = memo[name]
            tables.append(table)
            if progress:
                progress(p.name, j)
        per_pass.append(tables)
    return per_pass, current


# the lobes' form on a SurfaceDeviation, from the released shape per newton (`clamping.ReleasedDeviation`)
FORM_FIELDS = {"roundness_mm": "roundness_mm", "lobe_peak_mm": "peak_mm", "two_point_low_mm": "two_point_low_mm",
               "two_point_high_mm": "two_point_high_mm"}


def released_by_the_jaws(job, process: Process, raw, surfaces: list[str], names: list[str], memo: dict):
    """With [holding]: what the jaws' squeeze does to the surfaces finished in the chuck once they let go.

    A surface cut round while squeezed springs back by minus the squeeze (`deflect.mechanics.clamping`); the squeeze
    is proportional to the grip, which during each pass is the grip at standstill less (od grip) or plus
    (id grip) the jaws' centrifugal force at that pass's spindle speed there (`deflect.machining.grip.grip_in_cut_n`,
    VDI 3106 (2004) as quoted second-hand). Returns (uniform spring-back along the outward normal [mm],
    {roundness_mm, lobe_peak_mm, two_point_low_mm, two_point_high_mm: the lobes' form [mm]}, lobes) for every
    deviation point (0 where no od or bore pass finished it), or (None, {}, 0) without [holding]. The squeeze
    per newton is kept in memo (it depends on the drawn part, the holding and the points only, not on the
    passes)."""
    if "holding" not in job.tables:
        return None, {}, 0
    holding = holding_from_table(job.tables["holding"])
    machined = np.array([s in ("od", "id") for s in surfaces])
    released = np.zeros(len(surfaces))
    form = {name: np.zeros(len(surfaces)) for name in FORM_FIELDS}
    if not machined.any():
        return released, form, 0
    points, normals = raw.points_rz[machined], raw.normals[machined]
    name = ("released", job.section, holding, job.material.E_mpa, job.material.nu, points.tobytes(),
            normals.tobytes())
    if name not in memo:
        memo[name] = released_deviation(job, holding, points, normals, force_n=1.0)
    per_newton = memo[name]
    by_name = {p.name: p for p in process.passes}
    passes = [by_name[n] for n, m in zip(names, machined) if m]
    rpm = np.array([float(spindle_speed_rpm(p.speed_m_min, 2.0 * r, process.machine.max_rpm))
                    for p, r in zip(passes, raw.points_rz[machined, 0])])
    grip_n = grip_in_cut_n(holding.force_n, centrifugal_force_n(holding.centrifugal_moment_kg_m, rpm), holding.grip)
    squeeze = grip_factor_of(job) * grip_n       # a first article's calibration of the squeeze (1 without one)
    released[machined] = squeeze * per_newton.mean_mm
    for name, field_name in FORM_FIELDS.items():
        form[name][machined] = squeeze * getattr(per_newton, field_name)
    check_squeeze_is_elastic(holding, contact_of(job.section, holding),
                             float(np.max(np.abs(released) + form["roundness_mm"])))
    return released, form, per_newton.lobes


def faces_cut_below(process: Process, per_pass: list[list[StationTable]], raw: Deviation,
                    finished_by_pass: list[str]) -> list[str]:
    """A note for each face pass cut to the drawing (no allowance, offset or compensation) that leaves the face
    it finished below the drawing by the mechanism this names: the feed force along the face draws a free rim
    in, and the rim drawn in rises at the tool (it bends round the circumference without stretching;
    tests/validation/test_against_3d_solid.py) by more than the passive force presses it down, so the face
    springs back below its target when the tool has passed. raw: the deviation the cuts left (before any
    spring-back of the jaws); finished_by_pass: the pass that finished each of its points."""
    notes = []
    for p, tables in zip(process.passes, per_pass):
        final = tables[-1]
        to_drawing = p.allowance_mm == 0.0 and p.offset_mm == 0.0 and not p.compensation
        mine = np.flatnonzero(np.array([name == p.name for name in finished_by_pass], bool) & ~raw.corner)
        if p.surface != "face" or not to_drawing or final.feed_push_mm is None or not mine.size:
            continue
        point = mine[np.argmin(raw.deviation_mm[mine])]
        if raw.deviation_mm[point] >= 0.0:
            continue
        k = int(np.argmin(np.linalg.norm(np.column_stack([final.r_mm, final.z_mm]) - raw.points_rz[point], axis=1)))
        lift, press = final.feed_push_mm[k], final.deflection_mm[k] - final.feed_push_mm[k]
        if lift >= 0.0 or final.deflection_mm[k] >= 0.0:
            continue   # below the drawing, but not by the feed force's lift
        notes.append(f"'{p.name}' leaves its face up to {-1e3 * raw.deviation_mm[point]:.1f} um below the drawing "
                     f"(at r {raw.points_rz[point, 0]:.2f} mm): its feed force along the face ({final.feed_n[k]:.0f} "
                     f"N) moves the face {-1e3 * lift:.1f} um towards the tool (a free rim drawn in rises at the "
                     f"tool), more than the passive force ({final.passive_n[k]:.0f} N) pushes it away "
                     f"({1e3 * press:.1f} um); facing the other way round turns the feed force, and the lift, round")
    return notes


def pass_time_s(tables: list[StationTable], p: Pass, max_rpm: float) -> float:
    with keyed(p.key):
        return float(sum(cutting_time_s(t.r_mm, t.z_mm, p.feed_mm, p.speed_m_min, max_rpm) for t in tables))


def finished_by(deviation, process: Process, per_pass: list[list[StationTable]]) -> tuple[list[str], list[str]]:
    """For each deviation point: the kind of surface and the name of the last pass that cut there."""
    surfaces = ["unmachined"] * len(deviation.points_rz)
    names = [""] * len(deviation.points_rz)
    cos_facing = math.cos(math.radians(FACING_DEG))
    for p, tables in zip(process.passes, per_pass):
        final = tables[-1]
        path = np.column_stack([final.r_mm, final.z_mm])
        reach = abs(p.allowance_mm + p.offset_mm) + max((abs(b) for _, b in p.compensation), default=0.0) \
            + 0.05 + STATION_SPACING_MM
        gap, nearest = cKDTree(path).query(deviation.points_rz)
        # a point this pass finished lies at its final target, across from a station between the path's
        # ends (at or beyond an end a surface an earlier pass finished may carry on, and the point where the
        # two meet is their corner), and faces the way the cut surface faces there, within FACING_DEG (at a
        # corner of the path, where the station's normal is the mean of the two sides', a point on the
        # surface beyond the corner faces elsewhere)
        facing = np.einsum("ij,ij->i", deviation.normals, final.normal_rz[nearest]) > cos_facing
        offset = deviation.points_rz - path[nearest]
        tangent = np.column_stack([-final.normal_rz[nearest, 1], final.normal_rz[nearest, 0]])
        across = np.abs(np.einsum("ij,ij->i", offset, tangent)) <= STATION_SPACING_MM
        inside = (nearest > 0) & (nearest < len(path) - 1)
        for k in np.flatnonzero(facing & across & inside & (gap <= reach)):
            surfaces[k], names[k] = p.surface, p.name
    return surfaces, names


def ring_mass_g(points_rz, normals, deviation_mm, density_g_cm3) -> np.ndarray:
    """Mass of the layer each deviation point stands for: rho 2 pi (r + d n_r / 2) d ds (Pappus)."""
    spacing = np.linalg.norm(np.diff(np.vstack([points_rz, points_rz[:1]]), axis=0), axis=1)
    ds = 0.5 * (spacing + np.roll(spacing, 1))
    mid_r = points_rz[:, 0] + 0.5 * deviation_mm * normals[:, 0]
    return density_g_cm3 * 1e-3 * 2.0 * math.pi * mid_r * deviation_mm * ds


def surface_checks(deviation: SurfaceDeviation, mass_by_surface_g: dict[str, float]) -> list[SurfaceCheck]:
    """Push-off at the held end (low z), the middle and the free end of each finished od and id, on the
    surface's own cylindrical stretch (`straight_points`); its most material left and where it is, over the
    points it finished, the points `set_apart` names left out; the mass left on it, its line of the gain by
    surface (`gain_split`: the tools' shape counted on its own lines)."""
    checks = []
    apart = set_apart(deviation)
    for surface in ("od", "id"):
        order = straight_points(deviation, surface)
        if len(order) < 3:
            continue
        picks = {"held end": order[0], "middle": order[len(order) // 2], "free end": order[-1]}
        positions = {name: tuple(map(float, deviation.points_rz[k])) for name, k in picks.items()}
        left = {name: float(deviation.deviation_mm[k]) for name, k in picks.items()}
        nominal = {name: 2.0 * deviation.points_rz[k][0] for name, k in picks.items()}
        predicted = {name: 2.0 * (deviation.points_rz[k][0] + deviation.deviation_mm[k] * deviation.normals[k][0])
                     for name, k in picks.items()}
        own = np.flatnonzero(np.array([s == surface for s in deviation.surface], bool) & ~apart)
        most = int(own[np.argmax(deviation.deviation_mm[own])])
        checks.append(SurfaceCheck(surface=surface, positions=positions, deviation_mm=left,
                                   nominal_diameter_mm={k: float(v) for k, v in nominal.items()},
                                   predicted_diameter_mm={k: float(v) for k, v in predicted.items()},
                                   max_deviation_mm=float(deviation.deviation_mm[most]),
                                   mass_left_g=mass_by_surface_g.get(surface, 0.0),
                                   roundness_mm=None if deviation.roundness_mm is None else
                                   {name: float(deviation.roundness_mm[k]) for name, k in picks.items()},
                                   max_at_rz=tuple(map(float, deviation.points_rz[most]))))
    return checks


def straight_points(deviation: SurfaceDeviation, surface: str) -> np.ndarray:
    """Deviation points on the cylindrical stretches of a finished od or bore (not on its fillets, not on
    the corners where it meets another surface, not in a corner's nose material), by z."""
    apart = set_apart(deviation)
    chosen = np.array([k for k, s in enumerate(deviation.surface)
                       if s == surface and abs(deviation.normals[k][0]) > CYLINDER_COS and not apart[k]], int)
    return chosen[np.argsort(deviation.points_rz[chosen, 1])] if len(chosen) else chosen


def set_apart(deviation: SurfaceDeviation) -> np.ndarray:
    """(P,) True for the points that are no reading of their surface: the drawing's corners (a corner belongs
    to two surfaces) and the points in a corner's nose material or a piece the edges leave (their own causes,
    `SurfaceDeviation.apart`)."""
    out = np.zeros(len(deviation.points_rz), bool)
    for mask in (deviation.corner, deviation.apart):
        if mask is not None:
            out |= mask
    return out


def wall_checks(deviation: SurfaceDeviation) -> list[dict]:
    """Wall thickness against nominal at the held end, middle and free end of the height over which a
    cylindrical od and a cylindrical bore face each other (fillets left out, as a machinist measures)."""
    od, bore = straight_points(deviation, "od"), straight_points(deviation, "id")
    if len(od) < 3 or len(bore) < 3:
        return []
    z_od, z_bore = deviation.points_rz[od, 1], deviation.points_rz[bore, 1]
    low, high = max(z_od[0], z_bore[0]), min(z_od[-1], z_bore[-1])
    if high <= low:
        return []
    rows = []
    for name, z in (("held end", low), ("middle", 0.5 * (low + high)), ("free end", high)):
        r_od = float(np.interp(z, z_od, deviation.points_rz[od, 0]))
        r_id = float(np.interp(z, z_bore, deviation.points_rz[bore, 0]))
        left = float(np.interp(z, z_od, deviation.deviation_mm[od])
                     + np.interp(z, z_bore, deviation.deviation_mm[bore]))
        rows.append({"where": name, "z_mm": float(z), "nominal_mm": r_od - r_id, "predicted_mm": r_od - r_id + left})
    return rows


def shape_left(job, process: Process, nominal_rz: np.ndarray, settings: SimulationSettings, memo: dict,
               with_reach: bool = True):
    """(corners, reach): what the finishing tools' nose and edges leave beyond the drawing
    (`deflect.machining.leftover`), on the part cut exactly to the targets (reach empty without with_reach).
    The targets are taken without wear offsets, compensation and a calibration's size errors: those move a
    whole surface (the layer on it), not what the tool's shape can reach, and a positive one would otherwise
    leave a layer the length of the surface that reads as a piece the edges cannot reach."""
    process = without_corrections(process)
    targets = finishing_targets(job, process, memo)
    corners = corners_left(job, process, targets)
    if not with_reach:
        return corners, []
    shaped = cut_to_targets(process, nominal_rz, settings.station_spacing_mm, memo)
    return corners, reach_left(job, process, shaped, corners, targets)


def simulate(job, process: Process, settings: SimulationSettings = SimulationSettings(), progress=None,
             memo: dict | None = None, with_ranges: bool = True) -> Prediction:
    """Machine the part pass by pass; the nominal constants and their +/- spread.

    memo: key-station compliances shared between variants of one job (see `plan_compliance`).
    with_ranges: False skips the runs at 1 -/+ spread (every range then equals its value), for searches."""
    material = job.material
    # a grip that would crush the part is refused before any work; one that may mark it is a warning
    grip_warning = grip_strength_warning(job, holding_from_table(job.tables["holding"])) \
        if "holding" in job.tables else None
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    memo = {} if memo is None else memo
    plan = plan_compliance(job, process, settings, nominal_rz, memo)
    per_pass, machined = run_passes(job, process, 1.0, plan, progress, memo)
    spread = material.force_spread
    scales = (1.0 - spread, 1.0 + spread) if with_ranges else ()
    ranges = [run_passes(job, process, scale, plan, memo=memo)[1] for scale in scales]

    nominal = mass_properties(job.section, material.density_g_cm3)
    mass, inertia, _ = polygon_mass(machined, material.density_g_cm3)
    range_masses = [polygon_mass(rz, material.density_g_cm3)[0] for rz in ranges] or [mass]

    raw = deviation_along(job.section, machined, DEVIATION_SPACING_MM)
    surfaces, names = finished_by(raw, process, per_pass)
    released, form, lobes = released_by_the_jaws(job, process, raw, surfaces, names, memo)
    # the tools' shape: the nose's material in internal corners (exact) and what the edges cannot reach are
    # causes of their own; the layer on the surface is counted, and the surface's size read, where they are not
    # (what the edges leave needs the part cut to the targets: left to the runs with ranges)
    corners, reach = shape_left(job, process, nominal_rz, settings, memo, with_reach=with_ranges)
    apart = covered(raw.points_rz, corners, reach)
    deviation = SurfaceDeviation(points_rz=raw.points_rz, normals=raw.normals,
                                 deviation_mm=raw.deviation_mm + (0.0 if released is None else released),
                                 surface=surfaces, finished_by=names, released_mm=released, corner=raw.corner,
                                 apart=apart, **form)
    spring_back = 0.0 if released is None else released
    range_max = [float(np.max(deviation_along(job.section, rz, DEVIATION_SPACING_MM).deviation_mm + spring_back))
                 for rz in ranges] or [float(np.max(deviation.deviation_mm))]
    # the mass is the material the cuts left; the spring-back on release moves the surface, not material
    layer = ring_mass_g(deviation.points_rz, deviation.normals, raw.deviation_mm, material.density_g_cm3)

    passes = []
    for p, tables in zip(process.passes, per_pass):
        mine = np.array([n == p.name for n in names], bool)
        passes.append(PassResult(
            name=p.name, surface=p.surface, tool=p.tool, feed_mm=p.feed_mm, speed_m_min=p.speed_m_min,
            cuts=tables, cycle_time_s=pass_time_s(tables, p, process.machine.max_rpm),
            max_deflection_mm=float(max(t.deflection_mm.max(initial=0.0) for t in tables)),
            peak_power_kw=float(max(t.power_kw.max(initial=0.0) for t in tables)),
            mass_left_g=float(layer[mine].sum()) if mine.any() else 0.0))

    # the gain in lines that add up to it: the regions cut, not the layer point by point (`gain_split`)
    by_surface = gain_by_surface_g(machined, nominal_rz, deviation.points_rz, deviation.normals, surfaces, apart,
                                   corners, reach, material.density_g_cm3)
    checks = surface_checks(deviation, by_surface)
    peak_power = max((p.peak_power_kw for p in passes), default=0.0)
    warnings = list(process.warnings) + ([grip_warning] if grip_warning else [])
    if peak_power > process.machine.power_kw:
        warnings.append(f"peak cutting power {peak_power:.2f} kW exceeds the machine's {process.machine.power_kw:g} kW")
    warnings += edge_warnings(edge_problems(process, passes))
    warnings += faces_cut_below(process, per_pass, raw, names)
    rubbing = sum(int(t.rubbing.sum()) for tables in per_pass for t in tables)
    if rubbing:
        warnings.append(f"{rubbing} station(s) rub rather than cut: the wall gives way so far that the tool "
                        "barely takes a chip (see the 'rubbing' column)")
    most = int(np.argmax(deviation.deviation_mm))
    max_dev = float(deviation.deviation_mm[most])
    below_mm, below_at = cut_below(deviation)
    gains = [m - nominal.mass_g for m in range_masses]
    return Prediction(
        title=job.title, material=material.name, force_spread=spread,
        nominal_mass_g=nominal.mass_g, nominal_inertia_kg_mm2=nominal.inertia_axial_kg_mm2,
        predicted_mass_g=SpreadValue(mass, min(range_masses), max(range_masses)),
        predicted_inertia_kg_mm2=inertia,
        mass_gain_g=SpreadValue(mass - nominal.mass_g, min(gains), max(gains)),
        max_deviation_mm=SpreadValue(max_dev, min(range_max), max(range_max)),
        cycle_time_s=float(sum(p.cycle_time_s for p in passes)),
        machine_power_kw=process.machine.power_kw, peak_power_kw=peak_power,
        passes=passes, deviation=deviation, surfaces=checks, wall=wall_checks(deviation),
        machined_rz=machined, nominal_rz=nominal_rz, stock_rz=process.stock_rz,
        mass_gain_by_surface_g=by_surface, warnings=warnings, lobes=lobes,
        max_deviation_at_rz=tuple(map(float, deviation.points_rz[most])),
        most_cut_below_mm=below_mm, most_cut_below_at_rz=below_at)


def cut_below(deviation: SurfaceDeviation) -> tuple[float, tuple[float, float] | None]:
    """How deep a finished surface is cut below the drawing at most, a side [mm] (0 where none is), and where:
    over the points a pass finished, the points `set_apart` names left out. The most material left is the
    other end of the same readings, but a part cut under everywhere shows there only as the 0 of a face no pass
    touched, so the headline says this one too."""
    finished = np.array([s != "unmachined" for s in deviation.surface], bool) & ~set_apart(deviation)
    if not finished.any():
        return 0.0, None
    own = np.flatnonzero(finished)
    k = int(own[np.argmin(deviation.deviation_mm[own])])
    if deviation.deviation_mm[k] >= 0.0:
        return 0.0, None
    return float(-deviation.deviation_mm[k]), tuple(map(float, deviation.points_rz[k]))
