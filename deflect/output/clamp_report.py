"""Terminal report and JSON object of a work-holding study: a `grip.ClampStudy` -> text, dict.

Formatting only; no physics is computed here (the figures come from `deflect.machining.grip` and `deflect.mechanics.clamping`).
Roundness is the radial peak to valley around the circumference after release, in um; size changes are on
the diameter.
"""

from __future__ import annotations

import numpy as np

from deflect.machining.grip import Clamped, ClampStudy
from deflect.output.tables import Grid, Text, blocks_text, column_grid, pairs_grid

SURFACE_NAMES = {"od": "OD", "id": "ID"}
TABLE_ROWS_PER_SURFACE = 6     # rows of the roundness table per surface (evenly spread, the worst kept)


def _um(value_mm) -> float:
    return 1000.0 * float(value_mm)


def _force(value) -> str:
    return "-" if value is None else f"{value:.0f}"


def _newtons(value) -> str:
    return "-" if value is None else f"{value:.0f} N"


def _left(cells: list[str]) -> list[str]:
    """Pad a column's cells to one width, so the right-aligning grid shows them left-aligned."""
    width = max(len(cell) for cell in cells)
    return [cell.ljust(width) for cell in cells]


def _window_text(clamped: Clamped) -> str:
    least, most, is_open = clamped.least_to_hold_n, clamped.most_for_roundness_n, clamped.window_open
    if is_open is None:
        return "not known (no passes, or no diameter tolerance on a surface finished here)"
    if most is None:
        return f"open: any grip from {least:.0f} N (the grip leaves the finished surfaces round)"
    if is_open:
        return f"open: {least:.0f} to {most:.0f} N"
    return f"EMPTY: the least grip that holds ({least:.0f} N) is more than the most that keeps the form ({most:.0f} N)"


def holding_text(clamped: Clamped) -> str:
    """The holding in one line, in the trade's words."""
    h = clamped.holding
    side = "the OD" if h.grip == "od" else "the ID"
    where = f"z {h.z_mm[0]:g} to {h.z_mm[1]:g} mm"
    if h.all_round:
        return f"{h.kind} gripping {side} all round at {where}"
    return f"{h.jaws} jaws, {h.width_mm:g} mm wide, gripping {side} at {where}"


def holding_record(clamped: Clamped) -> dict:
    h, c = clamped.holding, clamped.contact
    return {"kind": h.kind, "jaws": h.jaws, "grip": h.grip, "z_mm": list(h.z_mm), "width_mm": h.width_mm,
            "force_N": h.force_n, "friction": h.friction, "jaw_mass_kg": h.jaw_mass_kg,
            "jaw_radius_mm": h.jaw_radius_mm, "safety": h.safety, "gripped_diameter_mm": 2.0 * c.radius_mm,
            "contact_z_mm": list(c.z_mm), "wall_under_grip_mm": c.wall_mm}


def point_records(clamped: Clamped) -> list[dict]:
    s = clamped.surfaces
    return [{"surface": str(s.surface[i]), "z": float(s.points_rz[i, 1]), "value": _um(clamped.roundness_mm[i]),
             "z_mm": float(s.points_rz[i, 1]), "roundness_um": _um(clamped.roundness_mm[i]),
             "r_mm": float(s.points_rz[i, 0]), "diameter_change_um": _um(clamped.size_change_mm[i]),
             "grip_in_cut_N": float(clamped.grip_in_cut_n[i]), "finished_by": s.finished_by[i],
             "tolerance_band_um": _band_um(clamped, i), "roundness_limit_um": _roundness_limit_um(clamped, i)}
            for i in range(len(s.surface))]


def _band_um(clamped: Clamped, i: int) -> float | None:
    """The diameter band at point i [um] (None: not toleranced)."""
    half = clamped.limits.half_band_mm[i]
    return None if not np.isfinite(half) else 2.0 * _um(half)


def _roundness_limit_um(clamped: Clamped, i: int) -> float | None:
    limit = clamped.limits.roundness_mm[i]
    return None if not np.isfinite(limit) else _um(limit)


def _limit_words(clamped: Clamped, i: int) -> str:
    """What sets the most grip at point i, with its value."""
    if clamped.limited_by == "roundness":
        return f"roundness limit {_roundness_limit_um(clamped, i):.0f} um"
    rule = "envelope requirement" if clamped.limits.envelope else "two-point size, independent of form"
    return f"diameter band {_band_um(clamped, i):.0f} um, {rule}"


def demand_record(clamped: Clamped) -> dict | None:
    d = clamped.demand
    if d is None:
        return None
    return {"pass": d.pass_name, "r_mm": d.r_mm, "z_mm": d.z_mm, "cutting_force_N": d.cutting_n,
            "torque_Nm": d.torque_nm, "axial_force_N": d.axial_n, "spindle_speed_rpm": d.rpm,
            "centrifugal_force_N": d.centrifugal_n}


def _worst_um(clamped: Clamped) -> float:
    return _um(clamped.roundness_mm.max()) if len(clamped.roundness_mm) else 0.0


def grip_forces(clamped: Clamped) -> dict:
    """The grip window of a holding [N]: as given (at standstill), the least that holds, the most for the form."""
    return {"given": clamped.holding.force_n, "least_to_hold": clamped.least_to_hold_n,
            "most_for_roundness": clamped.most_for_roundness_n}


def clamp_payload(study: ClampStudy) -> dict:
    """The JSON object of `deflect clamp --json` (the interface's fixed keys first)."""
    g = study.given
    limiting = None
    if g.limiting is not None:
        limiting = {"surface": str(g.surfaces.surface[g.limiting]), "z_mm": float(g.surfaces.points_rz[g.limiting, 1]),
                    "tolerance_band_um": _band_um(g, g.limiting), "limited_by": g.limited_by,
                    "roundness_limit_um": _roundness_limit_um(g, g.limiting)}
    return {
        "grip_force_N": grip_forces(g),
        "lobes": g.lobes,
        "roundness_um": point_records(g),
        "window_open": g.window_open,
        "max_roundness_um": _worst_um(g),
        "holding": holding_record(g),
        "heaviest_cut": demand_record(g),
        "limiting_point": limiting,
        "highest_harmonic": int(g.squeeze.harmonics[-1]),
        "remedies": [{"change": r.change, "applies": r.clamped is not None, "note": r.note,
                      **({} if r.clamped is None else {
                          "grip_force_N": grip_forces(r.clamped), "max_roundness_um": _worst_um(r.clamped),
                          "lobes": r.clamped.lobes, "window_open": r.clamped.window_open})}
                     for r in study.remedies],
        "cautions": list(study.cautions),
        "notes": list(study.notes),
    }


def _shown_rows(clamped: Clamped, side: str) -> np.ndarray:
    """Indices of the rows shown for one surface: evenly spread along it, its worst point kept."""
    on = np.flatnonzero(clamped.surfaces.surface == side)
    if len(on) <= TABLE_ROWS_PER_SURFACE:
        return on
    chosen = set(on[np.linspace(0, len(on) - 1, TABLE_ROWS_PER_SURFACE - 1).round().astype(int)])
    chosen.add(int(on[np.argmax(clamped.roundness_mm[on])]))
    return np.array(sorted(chosen, key=lambda i: clamped.surfaces.points_rz[i, 1]))


SURFACES_TITLE = "Surfaces finished in the chuck, after release (roundness: radial peak to valley around the part):"


def surfaces_table(clamped: Clamped) -> Grid | Text:
    s = clamped.surfaces
    header = ["surface", "z mm", "dia. mm", "cut by", "grip in cut N", "dia. change um", "roundness um",
              "band um"]
    rows = []
    for side in ("od", "id"):
        for i in _shown_rows(clamped, side):
            band = _band_um(clamped, i)
            rows.append([SURFACE_NAMES[side], f"{s.points_rz[i, 1]:.2f}", f"{2 * s.points_rz[i, 0]:.3f}",
                         s.finished_by[i] or "-", f"{clamped.grip_in_cut_n[i]:.0f}",
                         f"{_um(clamped.size_change_mm[i]):+.1f}", f"{_um(clamped.roundness_mm[i]):.1f}",
                         "-" if band is None else f"{band:.0f}"])
    if not rows:
        return Text(("No OD or ID is finished in this setup outside the grip.",))
    return column_grid(SURFACES_TITLE, header, rows)


def remedies_table(study: ClampStudy) -> tuple[Grid, Text]:
    """The remedies, and the notes of those that have one (numbered as in the table)."""
    header = ["change", "grip N", "roundness um", "lobes", "least N", "most N", "window"]
    rows, notes = [], []
    for k, r in enumerate(study.remedies, start=1):
        c = r.clamped
        if c is None:
            rows.append([f"{k}. {r.change}", "-", "-", "-", "-", "-", "n/a"])
        else:
            window = {None: "?", True: "open", False: "empty"}[c.window_open]
            rows.append([f"{k}. {r.change}", f"{c.holding.force_n:.0f}", f"{_worst_um(c):.1f}", str(c.lobes),
                         _force(c.least_to_hold_n), _force(c.most_for_roundness_n), window])
        if r.note:
            notes.append(f"{k}. {r.note}")
    names = _left([header[0]] + [row[0] for row in rows])
    header[0] = names[0]
    for row, name in zip(rows, names[1:]):
        row[0] = name
    return Grid("What widens the window (each computed with the model; grip at standstill):", tuple(header),
                tuple(tuple(row) for row in rows)), Text(tuple(notes))


def clamp_report(study: ClampStudy) -> str:
    """The terminal report of `deflect clamp`."""
    return blocks_text(clamp_blocks(study))


def clamp_blocks(study: ClampStudy) -> list[Grid | Text]:
    """The report's tables and paragraphs: the holding and its window, the surfaces after release, what widens
    the window, notes, cautions."""
    g = study.given
    h, d = g.holding, g.demand
    rows = [
        ("holding", holding_text(g)),
        ("gripped diameter", f"{2 * g.contact.radius_mm:.3f} mm, wall under the grip {g.contact.wall_mm:.3g} mm"),
        ("friction, safety factor", f"{h.friction:g}, {h.safety:g}"),
        ("grip given (standstill)", f"{h.force_n:.0f} N"),
        ("least grip to hold", _newtons(g.least_to_hold_n)),
    ]
    if d is not None:
        rows.append(("  heaviest cut", f"'{d.pass_name}' at r {d.r_mm:.3g}, z {d.z_mm:.3g} mm: cutting force "
                                       f"{d.cutting_n:.0f} N (torque {d.torque_nm:.2f} N m), axial {d.axial_n:.0f} N, "
                                       f"{d.rpm:.0f} /min, jaws' centrifugal force {d.centrifugal_n:.0f} N"))
    rows.append(("most grip for roundness", _newtons(g.most_for_roundness_n)))
    if g.limiting is not None:
        i = g.limiting
        where = f"{SURFACE_NAMES[str(g.surfaces.surface[i])]} at z {g.surfaces.points_rz[i, 1]:.2f} mm"
        rows.append(("  set by", f"{where} ({_limit_words(g, i)})"))
    rows += [("window", _window_text(g)),
             ("after release", f"{g.lobes} lobes, roundness up to {_worst_um(g):.1f} um"),
             ("harmonics summed", f"n = 0 to {int(g.squeeze.harmonics[-1])}")]
    remedies, remedy_notes = remedies_table(study)
    blocks = [pairs_grid(rows, f"Work holding: {study.title}", sentences=True), surfaces_table(g), remedies]
    if remedy_notes.lines:
        blocks.append(remedy_notes)
    if study.notes:
        blocks.append(Text(tuple(study.notes), title="Notes:"))
    blocks.append(Text(tuple(study.cautions), "caution", title="Cautions:", bullet="- "))
    return blocks
