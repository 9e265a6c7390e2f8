"""The compensated finishing contour, as points and as ISO 6983 moves to paste into a lathe program.

Takes the job, its checked `Process` and a pass that carries a programmed compensation (`compensate`, as
`deflect.tune` proposes it); gives the contour the tool should follow - the pass's target (the drawn
contour plus allowance and wear offset) moved along its outward normal by the compensation - as rows of
(Z, X on diameter, the compensation a side), as CSV text, and as a block of ISO 6983-1 moves: G0 to the
start clear of the part, G1 along the contour with X as a diameter, G0 away. Fillets come out as short G1
moves through their points, since a compensated fillet is no longer a circular arc.

The points are the part's contour, not the tool centre: run them with the control's tool nose radius
compensation, as for the drawn contour.
"""

from __future__ import annotations

import numpy as np

from deflect.inprocess import POLYGON_CHORD_MM, compensation_mm, cuts_for_pass
from deflect.process import Pass, Process

CONTOUR_SPACING_MM = 0.5          # points along the contour
KEEP_STRAIGHT_MM = 0.0005         # a point within this of the line through its neighbours is left out
CLEARANCE_MM = 1.0                # the G0 start and end points stand this far off the surface

CAUTIONS = ("Prove the block out with a dry run and single block before cutting. Check the control's conventions: "
            "diameter or radius programming, feed per revolution, constant surface speed and its spindle limit, "
            "tool nose radius compensation. The machine's and chuck maker's limits come first. The offsets are "
            "predictions to be confirmed on the first part.")


def compensated_contour(job, process: Process, p: Pass) -> np.ndarray:
    """(K, 3): Z, X (diameter) and the compensation a side [mm] along the pass's final target, in feed order."""
    nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
    final = cuts_for_pass(nominal_rz, nominal_rz, p, CONTOUR_SPACING_MM)[-1]
    shift = compensation_mm(final.points_rz, p)
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


def contour_csv(rows: np.ndarray) -> str:
    lines = ["z_mm,x_diameter_mm,compensation_mm_a_side"]
    lines += [f"{z:.4f},{x:.4f},{c:+.4f}" for z, x, c in rows]
    return "\n".join(lines) + "\n"


def iso6983_block(rows: np.ndarray, p: Pass) -> str:
    """G0 to a point clear of the start, G1 along the contour (X diameter, Z), G0 clear of the end."""
    away = {"od": (2.0 * CLEARANCE_MM, 0.0), "id": (-2.0 * CLEARANCE_MM, 0.0), "face": (0.0, CLEARANCE_MM)}[p.surface]
    z0, x0, _ = rows[0]
    z1, x1, _ = rows[-1]
    lines = [f"( {p.name}: compensated finishing contour from deflect; X on diameter )",
             f"( {CAUTIONS} )",
             f"G96 S{p.speed_m_min:g} M03", f"G95 F{p.feed_mm:g}",
             f"G00 X{x0 + away[0]:.4f} Z{z0 + away[1]:.4f}",
             f"G01 X{x0:.4f} Z{z0:.4f}"]
    lines += [f"X{x:.4f} Z{z:.4f}" for z, x, _ in rows[1:]]
    lines.append(f"G00 X{x1 + away[0]:.4f} Z{z1 + away[1]:.4f}")
    return "\n".join(lines) + "\n"
