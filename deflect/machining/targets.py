"""Every pass's target checked against the finished part, and the checked `Process` of a job.

Takes a `Job`; gives its `Process` (`deflect.job.process.read_process`: stock, tools, passes, machine, each key
checked) after one more check that needs the in-process part: a pass's target (the finished contour offset
outward by allowance + offset, `deflect.machining.inprocess.target_surface`) must leave a wall, that is,
cutting the finished part to it must leave one piece that stays on the material side. A target that cuts
through the wall is an `InputError` on the pass's key.
"""

from __future__ import annotations

import functools

import numpy as np
import shapely
from shapely.geometry import Polygon

from deflect.errors import InputError, ModelError
from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.process import STOCK_FIT_TOL_MM, Pass, Process, read_process
from deflect.machining.inprocess import remove, target_surface


def process_from_job(job) -> Process:
    """The checked machining job of a `Job` (its `tables` in mm and its nominal `section`)."""
    process = read_process(job)
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    for p in process.passes:
        _check_wall(p, nominal_rz)
    return process


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
        # a target inside the part must stay inside it wherever the part has a wall at that height; one that
        # comes out on the far side has taken the whole wall there (the part may still hang together below)
        fine = target_surface(nominal_rz, surface, total, start, end, spacing_mm=min(0.5, size / 200))
        r, z = fine.points_rz.T
        z_lo, z_hi = nominal_rz[:, 1].min() - total, nominal_rz[:, 1].max() + total
        level = (z > z_lo) & (z < z_hi)
        outside = level & ~shapely.contains_xy(Polygon(nominal_rz).buffer(STOCK_FIT_TOL_MM), r, z)
        if outside.any():
            k = int(np.flatnonzero(outside)[0])
            return f"leaves the part at r = {r[k]:.4g}, z = {z[k]:.4g}, where the wall is thinner than {-total:g} mm"
    return ""
