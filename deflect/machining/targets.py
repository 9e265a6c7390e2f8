"""Every pass's target checked against the finished part, and the checked `Process` of a job.

Takes a `Job`; gives its `Process` (`deflect.job.process.read_process`: stock, tools, passes, machine, each key
checked) after two more checks that need the in-process part, each an `InputError` on the key that breaks it:
a pass's target (the finished contour offset outward by allowance + offset, with its compensation,
`deflect.machining.inprocess.final_target`) must stay on the part's side of the spin axis (it may run into the
axis at an end, where it stops), and it must leave a wall: cutting the finished part to it must leave one piece,
and no target point may lie in the air behind a wall the pass would have cut away.
"""

from __future__ import annotations

import functools
from dataclasses import replace

import numpy as np
import shapely
from shapely.geometry import Polygon

from deflect.errors import InputError, ModelError
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.process import STOCK_FIT_TOL_MM, Pass, Process, read_process
from deflect.machining.inprocess import BeyondAxis, final_target, remove, target_surface

SIDE_NAMES = {"od": "OD", "id": "bore", "face": "face"}
# what each key that moves a target means, for a refusal that names it
KEY_ADVICE = {
    "allowance": "the allowance is the stock the pass leaves on the finished contour",
    "offset": "an offset is the tool's wear, hundredths to tenths of a mm along the outward normal (a "
              "machinist's X offset on diameter is twice this)",
    "compensate": "compensation corrects the push-off, micrometres to tenths of a mm",
}


def process_from_job(job) -> Process:
    """The checked machining job of a `Job` (its `tables` in mm and its nominal `section`)."""
    process = read_process(job)
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    for p in process.passes:
        _check_axis(p, nominal_rz)
        _check_wall(p, nominal_rz)
    return process


def _check_axis(p: Pass, nominal_rz: np.ndarray) -> None:
    """The pass's target must stay on the part's side of the spin axis; it may run into the axis at an end (a
    face or a bore floor taken to the centre), where it stops. The key named is the first of allowance,
    offset and compensate that takes the target across."""
    for name, q in (("allowance", replace(p, offset_mm=0.0, compensation=())),
                    ("offset", replace(p, compensation=())), ("compensate", p)):
        if name == "offset" and p.offset_mm == 0.0 or name == "compensate" and not p.compensation:
            continue
        # the cache is keyed on the target's geometry only (the remedy search varies feeds, tools, names)
        geometry = replace(q, name="", tool="", feed_mm=0.0, speed_m_min=0.0, depth_mm=None, spring=0, key="")
        problem = _axis_problem(nominal_rz.tobytes(), nominal_rz.shape, geometry)
        if problem:
            what = "allowance + offset" if name != "allowance" and p.allowance_mm else name
            amount = f"{q.allowance_mm + q.offset_mm:g} mm" + (" with the compensation" if name == "compensate" else "")
            raise InputError(f"{p.key}.{name}", f"{what} = {amount} moves the {SIDE_NAMES[p.surface]}'s target off the "
                             f"drawn surface and past the spin axis, which is no surface: the target {problem}; "
                             f"{KEY_ADVICE[name]}")


@functools.lru_cache(maxsize=256)
def _axis_problem(nominal_bytes: bytes, shape: tuple, p: Pass) -> str:
    """Where the pass's target (as `cuts_for_pass` makes it) passes the spin axis, '' if it does not."""
    nominal_rz = np.frombuffer(nominal_bytes).reshape(shape)
    size = float(np.ptp(nominal_rz, axis=0).max())
    try:
        final_target(nominal_rz, p, spacing_mm=min(0.5, size / 200))
    except BeyondAxis as exc:
        return exc.message
    return ""


def _check_wall(p: Pass, nominal_rz: np.ndarray) -> None:
    """The pass's target must leave a wall: cutting the finished part to it must leave one piece."""
    total = p.allowance_mm + p.offset_mm + min([0.0] + [b for _, b in p.compensation])
    problem = _wall_problem(nominal_rz.tobytes(), nominal_rz.shape, p.surface, total, p.start_mm, p.end_mm)
    if problem:
        raise InputError(f"{p.key}.offset" if p.offset_mm < 0.0 else p.key,
                         f"would cut through the wall: its target (the finished contour offset by allowance + offset "
                         f"= {total:g} mm) {problem}")


@functools.lru_cache(maxsize=256)   # the remedy search checks the same targets again and again
def _wall_problem(nominal_bytes: bytes, shape: tuple, surface: str, total: float, start: float,
                  end: float) -> str:
    """What is wrong with a target (the finished contour offset by `total`) for the wall, '' if nothing."""
    nominal_rz = np.frombuffer(nominal_bytes).reshape(shape)
    size = float(np.ptp(nominal_rz, axis=0).max())
    try:
        target = target_surface(nominal_rz, surface, total, start, end, spacing_mm=size)
        remove(nominal_rz, target, np.zeros(len(target.points_rz)), surface, name="the pass")
    except ModelError as exc:
        return f"leaves a wall of 0 or less ({exc.message})"
    if total < 0.0 and surface in ("od", "id"):
        # a target inside the part must not come out on the far side of a wall: a target point in the air
        # with material between it and the tool (along the in-feed) has taken the whole wall there, though
        # the part may still hang together below (a target point in the air beyond the part's ends, where
        # the path carries on, has no material towards the tool)
        fine = target_surface(nominal_rz, surface, total, start, end, spacing_mm=min(0.5, size / 200))
        part = Polygon(nominal_rz)
        r, z = fine.points_rz.T
        outside = np.flatnonzero(~shapely.contains_xy(part.buffer(STOCK_FIT_TOL_MM), r, z))
        towards_tool = np.array([1.0 if surface == "od" else -1.0, 0.0])
        ends = fine.points_rz[outside] + (2.0 * size + 1.0) * towards_tool
        rays = shapely.linestrings(np.stack([fine.points_rz[outside], ends], axis=1))
        behind = outside[shapely.intersects(rays, part)]
        if behind.size:
            k = int(behind[0])
            return f"leaves the part at r = {r[k]:.4g}, z = {z[k]:.4g}, where the wall is thinner than {-total:g} mm"
    return ""
