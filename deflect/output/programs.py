"""The compensated finishing contour as files for the shop: CSV points and a block of ISO 6983 moves.

Takes the rows of `deflect.machining.toolpath.compensated_contour` (Z, X on diameter, the compensation a side
[mm]) and the pass; gives text. Formatting only. The ISO 6983-1 block: G0 to the start clear of the part, G1
along the contour with X as a diameter, G0 away. Fillets come out as short G1 moves through their points,
since a compensated fillet is no longer a circular arc. The points are the part's contour, not the tool
centre: run them with the control's tool nose radius compensation, as for the drawn contour.
"""

from __future__ import annotations

import numpy as np

from deflect.job.process import Pass

CLEARANCE_MM = 1.0                # the G0 start and end points stand this far off the surface

CAUTIONS = ("Prove the block out with a dry run and single block before cutting. Check the control's conventions: "
            "diameter or radius programming, feed per revolution, constant surface speed and its spindle limit, "
            "tool nose radius compensation. The machine's and chuck maker's limits come first. The offsets are "
            "predictions to be confirmed on the first part.")


def contour_csv(rows: np.ndarray) -> str:
    lines = ["z_mm,x_diameter_mm,compensation_a_side_mm"]
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
