"""The compensated finishing contour: the points a corrected finishing program follows.

Takes the job, its checked `Process` and a pass that carries a programmed compensation (`compensate`, as
`deflect.decisions.tune` proposes it); gives the contour the tool should follow - the pass's target (the drawn
contour plus allowance and wear offset) moved along its outward normal by the compensation - as rows of
(Z, X on diameter, the compensation a side). `deflect.output.programs` writes them as CSV text and as ISO 6983
moves.

The points are the part's contour, not the tool centre: run them with the control's tool nose radius
compensation, as for the drawn contour.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from deflect.geometry.section import POLYGON_CHORD_MM
from deflect.job.process import Pass, Process
from deflect.machining.inprocess import compensation_mm, cuts_for_pass

CONTOUR_SPACING_MM = 0.5          # points along the contour
KEEP_STRAIGHT_MM = 0.0005         # a point within this of the line through its neighbours is left out


def compensated_contour(job, process: Process, p: Pass) -> np.ndarray:
    """(K, 3): Z, X (diameter) and the compensation a side [mm] along the pass's final target, in feed order."""
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    # the program's contour: a calibrated size error is where the machine cuts of itself, not programmed
    programmed = replace(p, compensation=tuple((at, c - p.size_error_mm) for at, c in p.compensation))
    final = cuts_for_pass(nominal_rz, nominal_rz, programmed, CONTOUR_SPACING_MM)[-1]
    shift = compensation_mm(final.points_rz, programmed)
    keep = _corners(final.points_rz)
    r, z = final.points_rz[keep].T
    return np.column_stack([z, 2.0 * r, shift[keep]])


def _corners(points_rz: np.ndarray) -> np.ndarray:
    """Indices of the points to keep: the ends, and as few between as keep every point within
    KEEP_STRAIGHT_MM of the chord it is left out of (each chord is run as far as it can go)."""
    keep = [0]
    last = len(points_rz) - 1
    while keep[-1] < last:
        start, end = keep[-1], keep[-1] + 1
        while end < last and _within_chord(points_rz, start, end + 1):
            end += 1
        keep.append(end)
    return np.array(keep)


def _within_chord(points_rz: np.ndarray, start: int, end: int) -> bool:
    """Whether every point between start and end lies within KEEP_STRAIGHT_MM of the chord joining them."""
    a, chord = points_rz[start], points_rz[end] - points_rz[start]
    between = points_rz[start + 1:end] - a
    off = np.abs(chord[0] * between[:, 1] - chord[1] * between[:, 0]) / max(float(np.hypot(*chord)), 1e-12)
    return bool(np.all(off <= KEEP_STRAIGHT_MM))
