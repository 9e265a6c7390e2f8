"""The machining keys of a job, checked: stock, tools, passes, machine and tolerances -> a `Process`.

Takes a `deflect.job.reader.Job` (its `tables`, lengths already in mm, and its nominal `section`) and gives a
`Process`: the blank as a counter-clockwise (r, z) polygon, the tools by name (`deflect.job.tooling.Tool`), the
passes in order, the machine's limits and the raw tolerance table. Key names and meanings are those of
the project's interface page (INTERFACE.md), "The machining job".

Every problem is an `InputError` naming the key and what to do: unknown or missing keys, wrong types,
zero feed or speed, an undefined tool, a pass that misses the stock or the part, a pass whose target
(the finished contour offset outward by allowance + offset, `deflect.machining.inprocess.target_surface`) would cut
through the wall of the finished part, a stock that does not hold the finished part. A missing [machine]
table is not an error: a small lathe's limits are assumed and a warning says so.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import Point, Polygon

from deflect.errors import InputError
from deflect.geometry.section import POLYGON_CHORD_MM, section_from_outline
from deflect.job.checks import check_keys, check_table, is_number, required_number
from deflect.job.tooling import Tool, tool_from_job

STOCK_KINDS = ("outline", "bar", "tube")
BAR_KEYS = ("diameter", "z")
TUBE_KEYS = ("od", "id", "z")
SURFACES = ("od", "id", "face")   # the side a pass cuts from: outside, bore, face
PASS_KEYS = ("name", "surface", "tool", "allowance", "feed", "speed", "z", "r", "depth", "spring", "offset",
             "compensate")
MOST_COMPENSATION_MM = 0.5      # a programmed correction of push-off is micrometres to tenths, never more
PASS_REQUIRED = ("name", "surface", "tool", "allowance", "feed", "speed")
MACHINE_KEYS = ("max_rpm", "power_kw")

# Assumed when [machine] (or one of its keys) is missing: a small CNC lathe. They cap the spindle speed
# and flag overloads, so the report warns that they were assumed.
DEFAULT_MACHINE = {"max_rpm": 4000.0, "power_kw": 10.0}
MACHINE_UNITS = {"max_rpm": "/min", "power_kw": "kW"}

# The part may touch the stock's boundary: a stock arc and a part arc on the same circle, split into
# chords of up to POLYGON_CHORD_MM sagitta at different places, differ by up to twice that.
STOCK_FIT_TOL_MM = 2.0 * POLYGON_CHORD_MM


@dataclass(frozen=True)
class Pass:
    """One [[pass]] of the job (mm, mm/rev, m/min)."""

    name: str
    surface: str                 # "od" | "id" | "face"
    tool: str                    # name of a [[tool]]
    allowance_mm: float          # what the pass leaves over the finished contour, along its normal
    feed_mm: float               # feed per revolution [mm/rev]
    speed_m_min: float           # cutting speed [m/min]
    start_mm: float              # z for od / id, r for face; start -> end is the feed direction
    end_mm: float
    depth_mm: float | None       # most depth per cut [mm]; None: the stock in one cut
    spring: int                  # extra cuts over the same target
    offset_mm: float             # wear offset along the outward normal [mm]; negative cuts deeper
    key: str                     # "pass[2]", for messages
    # the finishing target programmed off the contour by an amount that varies along the pass, to cancel
    # the push-off: (position, offset mm) pairs by position (z for od / id, r for face), the offset in X a
    # side for od / id (outwards from the material, like `offset` on a cylinder) and in Z for a face,
    # interpolated between and held beyond; () for none
    compensation: tuple[tuple[float, float], ...] = ()
    # from a first article's calibration (`deflect.job.calibration`; 1 and 0 without one): the factor on this
    # pass's forces (its tool's kc1.1, kf1.1 and kp1.1 together), and the size error of the surface it finishes
    # (wear, tool setting, thermal growth), which is already inside `compensation`: the target is where the
    # machine really cuts; the program's compensation is each pair's offset less size_error_mm
    force_factor: float = 1.0
    size_error_mm: float = 0.0


@dataclass(frozen=True)
class Machine:
    """The lathe's limits."""

    max_rpm: float               # spindle speed limit [1/min]
    power_kw: float              # spindle power [kW]


@dataclass(frozen=True, eq=False)
class Process:
    """The machining job: blank, tools, passes in order, machine, tolerances."""

    stock_rz: np.ndarray         # (N, 2) counter-clockwise polygon of the blank [mm]
    tools: dict[str, Tool]
    passes: list[Pass]
    machine: Machine
    tolerance: dict              # the [tolerance] table as read (lengths in mm); may be empty
    warnings: list[str] = field(default_factory=list)


# ---------------------------------------------------------------------------------------------------
# small checks

def _positive(table: dict, name: str, key: str, what: str) -> float:
    value = required_number(table, name, key, what)
    if value <= 0.0:
        raise InputError(f"{key}.{name}", f"must be more than 0, got {value:g}; give {what}")
    return value


def _z_span(table: dict, key: str) -> tuple[float, float]:
    """A stock's z = [z0, z1] with z0 < z1."""
    value = table.get("z")
    if value is None:
        raise InputError(f"{key}.z", "missing; give the blank's axial extent as z = [z0, z1]")
    if not (isinstance(value, list) and len(value) == 2 and all(is_number(v) for v in value)):
        raise InputError(f"{key}.z", "must be a range of two numbers, e.g. z = [-10.0, 35.0]")
    z0, z1 = float(value[0]), float(value[1])
    if not z0 < z1:
        raise InputError(f"{key}.z", f"[{z0:g}, {z1:g}] must run from the lower z to the higher; "
                                     "write the smaller number first")
    return z0, z1


# ---------------------------------------------------------------------------------------------------
# stock

def _stock_from_job(tables: dict) -> tuple[np.ndarray, str]:
    """The blank's counter-clockwise polygon and the key it was given under."""
    if "stock" not in tables:
        raise InputError("stock", "missing; give the blank as [stock] with outline = [[r, z], ...], "
                                  "bar = { diameter, z = [z0, z1] } or tube = { od, id, z = [z0, z1] }")
    stock = check_table(tables["stock"], "stock")
    check_keys(stock, STOCK_KINDS, "stock")
    given = [kind for kind in STOCK_KINDS if kind in stock]
    if len(given) != 1:
        found = f"got {' and '.join(given)}" if given else "got none"
        raise InputError("stock", f"give exactly one of outline, bar or tube ({found})")
    kind = given[0]
    key = f"stock.{kind}"
    if kind == "outline":
        return section_from_outline(stock["outline"], key=key).polygon(POLYGON_CHORD_MM), key
    table = check_table(stock[kind], key)
    if kind == "bar":
        check_keys(table, BAR_KEYS, key)
        radius = 0.5 * _positive(table, "diameter", key, "the bar's diameter in mm")
        z0, z1 = _z_span(table, key)
        return np.array([[0.0, z0], [radius, z0], [radius, z1], [0.0, z1]]), key
    check_keys(table, TUBE_KEYS, key)
    outer = 0.5 * _positive(table, "od", key, "the tube's outside diameter in mm")
    inner = 0.5 * _positive(table, "id", key, "the tube's bore diameter in mm (for a solid blank use bar)")
    if inner >= outer:
        raise InputError(f"{key}.id", f"the bore ({2 * inner:g} mm) must be smaller than od ({2 * outer:g} mm)")
    z0, z1 = _z_span(table, key)
    return np.array([[inner, z0], [outer, z0], [outer, z1], [inner, z1]]), key


def _check_stock_holds_part(stock_rz: np.ndarray, nominal_rz: np.ndarray, key: str) -> None:
    outside = Polygon(nominal_rz).difference(Polygon(stock_rz).buffer(STOCK_FIT_TOL_MM))
    if outside.is_empty or outside.area == 0.0:
        return
    stock = Polygon(stock_rz)
    corners = shapely.get_coordinates(outside)
    worst = corners[np.argmax(shapely.distance(shapely.points(corners), stock))]
    excess = stock.distance(Point(worst))
    raise InputError(key, f"the stock is smaller than the finished part at r = {worst[0]:.6g}, z = {worst[1]:.6g} "
                          f"(the part sticks out by {excess:.4g} mm); make the stock larger or move it along z")


# ---------------------------------------------------------------------------------------------------
# tools

def _tools_from_job(tables: dict) -> dict[str, Tool]:
    tools: dict[str, Tool] = {}
    first_key: dict[str, str] = {}
    for i, table in enumerate(tables.get("tool", [])):
        key = f"tool[{i}]"
        tool = tool_from_job(table, key)
        if tool.name in tools:
            raise InputError(f"{key}.name", f"a tool named {tool.name!r} is already defined at "
                                            f"{first_key[tool.name]}; give each tool its own name")
        tools[tool.name] = tool
        first_key[tool.name] = key
    return tools


# ---------------------------------------------------------------------------------------------------
# passes

def _extent_name(surface: str) -> str:
    """The key of a pass's extent: r for a face pass, z for od and id."""
    return "r" if surface == "face" else "z"


def _extent(table: dict, surface: str, key: str) -> tuple[float, float]:
    """(start, end) of the pass's extent [mm]."""
    name = _extent_name(surface)
    other = "z" if name == "r" else "r"
    if other in table:
        along = "a face pass runs along r" if surface == "face" else f"an {surface} pass runs along z"
        raise InputError(f"{key}.{other}", f"{along}; give {name} = [start, end] instead of {other}")
    if name not in table:
        raise InputError(f"{key}.{name}", f"missing; give the pass's extent as {name} = [start, end] "
                                          "(start -> end is the feed direction)")
    value = table[name]
    if not (isinstance(value, list) and len(value) == 2 and all(is_number(v) for v in value)):
        raise InputError(f"{key}.{name}", f"must be two numbers [start, end] in mm, got {value!r}")
    start, end = float(value[0]), float(value[1])
    if start == end:
        raise InputError(f"{key}.{name}", f"start and end are both {start:g}; a pass needs a length to feed along")
    return start, end


def _pass_from_job(table, index: int, tools: dict[str, Tool]) -> Pass:
    key = f"pass[{index}]"
    table = check_table(table, key)
    check_keys(table, PASS_KEYS, key)
    for name in PASS_REQUIRED:
        if name not in table:
            raise InputError(f"{key}.{name}", f"missing; a pass needs {', '.join(PASS_REQUIRED)} and its extent "
                                              "(z = [start, end] for od / id, r = [start, end] for face)")
    name = table["name"]
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{key}.name", "must be a non-empty text such as \"finish OD\"")
    surface = table["surface"]
    if surface not in SURFACES:
        raise InputError(f"{key}.surface", f'must be "od", "id" or "face", got {surface!r}')
    tool = table["tool"]
    if not isinstance(tool, str):
        raise InputError(f"{key}.tool", f"must be the name of a [[tool]] in quotes, got {tool!r}")
    if tool not in tools:
        defined = f"defined tools: {', '.join(tools)}" if tools else "no [[tool]] is defined"
        raise InputError(f"{key}.tool", f"no tool named {tool!r}; {defined}")
    allowance = required_number(table, "allowance", key, "the stock the pass leaves over the finished contour, mm")
    if allowance < 0.0:
        raise InputError(f"{key}.allowance", f"must not be negative, got {allowance:g}; "
                                             "to cut below the finished contour use offset")
    feed = required_number(table, "feed", key, "the feed per revolution, mm/rev")
    if feed <= 0.0:
        raise InputError(f"{key}.feed", f"must be more than 0 mm/rev, got {feed:g} (zero feed: the tool "
                                        "would never advance); give e.g. feed = 0.1")
    nose_mm = tools[tool].nose_radius_mm
    if feed >= 2.0 * nose_mm:
        # the nose-radius chip (and the cusp it leaves) needs the feed inside the nose: f < 2 r
        raise InputError(f"{key}.feed", f"{feed:g} mm/rev is not smaller than twice the nose radius of {tool!r} "
                                        f"({nose_mm:g} mm): the nose would not reach the last cut's surface; "
                                        f"give a feed below {2.0 * nose_mm:g}")
    speed = _positive(table, "speed", key, "the cutting speed in m/min, e.g. speed = 200.0")
    start, end = _extent(table, surface, key)
    depth = None
    if "depth" in table:
        depth = required_number(table, "depth", key, "the most depth per cut, mm")
        if depth <= 0.0:
            raise InputError(f"{key}.depth", f"must be more than 0 mm, got {depth:g}; "
                                             "leave depth out to take the stock in one cut")
    spring = table.get("spring", 0)
    if isinstance(spring, bool) or not isinstance(spring, int) or spring < 0:
        raise InputError(f"{key}.spring", f"must be a whole number 0 or more (extra cuts over the same target), "
                                          f"got {spring!r}")
    offset = required_number(table, "offset", key, "the wear offset along the outward normal, mm") \
        if "offset" in table else 0.0
    compensation = _compensation(table["compensate"], surface, f"{key}.compensate") if "compensate" in table else ()
    return Pass(name=name.strip(), surface=surface, tool=tool, allowance_mm=allowance, feed_mm=feed,
                speed_m_min=speed, start_mm=start, end_mm=end, depth_mm=depth, spring=spring, offset_mm=offset,
                key=key, compensation=compensation)


def _compensation(value, surface: str, key: str) -> tuple[tuple[float, float], ...]:
    """compensate = [[position, offset], ...]: at least two pairs of numbers, distinct positions."""
    axis = _extent_name(surface)
    if not (isinstance(value, list) and len(value) >= 2 and all(
            isinstance(pair, list) and len(pair) == 2 and all(is_number(v) for v in pair) for pair in value)):
        raise InputError(key, f"must list at least two [{axis}, offset] pairs in mm, e.g. "
                              f"[[40.0, -0.012], [6.0, 0.0]]")
    pairs = sorted((float(a), float(b)) for a, b in value)
    if any(b[0] - a[0] <= 0.0 for a, b in zip(pairs, pairs[1:])):
        raise InputError(key, f"gives the same {axis} twice; each pair needs its own {axis}")
    worst = max(abs(b) for _, b in pairs)
    if worst > MOST_COMPENSATION_MM:
        raise InputError(key, f"an offset of {worst:g} mm is not a push-off correction (most "
                              f"{MOST_COMPENSATION_MM:g} mm); use allowance or offset for that")
    return tuple(pairs)


def _span(rz: np.ndarray, surface: str) -> tuple[float, float]:
    """The polygon's extent along the pass direction: z for od / id, r for face."""
    column = 0 if surface == "face" else 1
    return float(rz[:, column].min()), float(rz[:, column].max())


def _check_extent(p: Pass, stock_rz: np.ndarray, nominal_rz: np.ndarray) -> None:
    """The pass must run over some of the stock and some of the finished part (which sets its target)."""
    axis = _extent_name(p.surface)
    low, high = min(p.start_mm, p.end_mm), max(p.start_mm, p.end_mm)
    for what, rz in (("the stock", stock_rz), ("the finished part", nominal_rz)):
        lo, hi = _span(rz, p.surface)
        if min(high, hi) - max(low, lo) <= 0.0:
            raise InputError(f"{p.key}.{axis}", f"the pass runs from {axis} = {p.start_mm:g} to {p.end_mm:g}, "
                                                f"outside {what} ({axis} = {lo:g} to {hi:g}); give an extent "
                                                f"over {what}")


# ---------------------------------------------------------------------------------------------------
# machine

def _machine_from_job(tables: dict, warnings: list[str]) -> Machine:
    if "machine" not in tables:
        warnings.append(f"machine: no [machine] given; assumed max_rpm = {DEFAULT_MACHINE['max_rpm']:g} /min and "
                        f"power_kw = {DEFAULT_MACHINE['power_kw']:g} kW - give your lathe's limits")
        return Machine(**DEFAULT_MACHINE)
    table = check_table(tables["machine"], "machine")
    check_keys(table, MACHINE_KEYS, "machine")
    values = {}
    for name in MACHINE_KEYS:
        if name in table:
            values[name] = _positive(table, name, "machine", f"the lathe's {name} in {MACHINE_UNITS[name]}")
        else:
            values[name] = DEFAULT_MACHINE[name]
            warnings.append(f"machine.{name}: not given; assumed {DEFAULT_MACHINE[name]:g} {MACHINE_UNITS[name]}")
    return Machine(**values)


# ---------------------------------------------------------------------------------------------------

def read_process(job) -> Process:
    """The machining keys of a `Job` (its `tables` in mm and its nominal `section`), each checked; whether
    each pass's target leaves a wall is checked above, with the in-process part
    (`deflect.machining.targets.process_from_job`)."""
    tables = job.tables
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    stock_rz, stock_key = _stock_from_job(tables)
    _check_stock_holds_part(stock_rz, nominal_rz, stock_key)
    tools = _tools_from_job(tables)
    if not tables.get("pass"):
        raise InputError("pass", "missing; a machining job needs at least one [[pass]] with name, surface, tool, "
                                 "allowance, feed, speed and its extent")
    passes: list[Pass] = []
    for i, table in enumerate(tables["pass"]):
        p = _pass_from_job(table, i, tools)
        clash = next((q for q in passes if q.name == p.name), None)
        if clash is not None:
            raise InputError(f"{p.key}.name", f"{p.name!r} already names {clash.key}; give each pass its own name "
                                              "(the report and the remedies refer to passes by name)")
        _check_extent(p, stock_rz, nominal_rz)
        passes.append(p)
    warnings: list[str] = []
    machine = _machine_from_job(tables, warnings)
    tolerance = dict(check_table(tables.get("tolerance", {}), "tolerance"))
    calibration = getattr(job, "calibration", None)     # a Job has one (None without); a bare section may not
    if calibration is not None:
        passes = calibration.applied_to(passes)
    return Process(stock_rz=stock_rz, tools=tools, passes=passes, machine=machine, tolerance=tolerance,
                   warnings=warnings)
