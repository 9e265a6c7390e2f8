"""Terminal report and JSON of `deflect chatter`: a `chatter.ChatterStudy` -> text and the dict of the contract.

Formatting only; the figures come from `deflect.machining.chatter`. Depths in mm (a side), spindle speeds in
1/min, frequencies in Hz, damping in % of critical on the screen and as a ratio in the JSON. The keys are
listed with their meanings on the interface page (INTERFACE.md).
"""

from __future__ import annotations

import math

from deflect.machining.chatter import ChatterStudy, PassChatter, StationChatter
from deflect.output.tables import Grid, Text, blocks_text, column_grid

MODES_SHOWN = 12
WINDOWS_SHOWN = 8
CAUTION = (
    "Caution: chatter predictions are sensitive to the damping and to how the part is held, which a model\n"
    "knows least; the default damping is recalled, not measured. Confirm with a tap test (give its modes in\n"
    "[dynamics] measured) and a trial cut before production. The machine's and the chuck maker's speed limits\n"
    "and your local safety rules come first: a speed window is no reason to run faster than they allow."
)
LEFT_OUT = (
    "Not modelled: the static push-off in the depth, Kienzle's speed factor away from each pass's cutting\n"
    "speed, process damping (which steadies slow cuts), and the spindle's, machine's and chuck's own modes."
)


def speed_text(rpm: float) -> str:
    return f"{rpm:.0f}"


def windows_text(windows: list[tuple[float, float]]) -> str:
    if not windows:
        return "none within the speeds scanned"
    shown = sorted(windows, key=lambda w: w[1] - w[0], reverse=True)[:WINDOWS_SHOWN]
    text = ", ".join(f"{speed_text(lo)}-{speed_text(hi)}" for lo, hi in sorted(shown))
    more = f" (the {len(shown)} widest of {len(windows)})" if len(windows) > len(shown) else ""
    return text + " /min" + more


def limit_text(station: StationChatter) -> str:
    if station.limit_depth_at_least:
        return f">= {station.limit_depth_mm:.3g}"
    return f"{station.limit_depth_mm:.3g}"


def verdict(p: PassChatter) -> str:
    return "stable" if p.stable else "CHATTERS"


def damping_line(study: ChatterStudy) -> str:
    source = ("default, from memory: give [dynamics] damping, or better a tap test" if study.damping_from_memory
              else "from [dynamics]")
    measured = f"; {study.measured} mode(s) from a tap test replace the model's" if study.measured else ""
    return f"Modal damping: {100 * study.damping:.2g} % of critical ({source}){measured}"


def modes_table(study: ChatterStudy) -> Grid:
    rows = [[str(m.n), str(m.m), f"{m.frequency_hz:.0f}", f"{m.model_hz:.0f}", f"{100 * m.damping:.2g}",
             "tap test" if m.measured else "model"] for m in study.modes[:MODES_SHOWN]]
    header = ["n", "m", "frequency Hz", "model Hz", "damping %", "from"]
    more = ((f"{len(study.modes) - MODES_SHOWN} more up to {study.modes[-1].frequency_hz:.0f} Hz",)
            if len(study.modes) > MODES_SHOWN else ())
    return column_grid("Modes of the finished part as held (n waves around, m order along the wall):", header, rows,
                       more)


def passes_table(study: ChatterStudy) -> Grid:
    header = ["pass", "verdict", "depth mm", "spindle speed 1/min", "limit depth mm", "margin", "worst at r, z mm",
              "chatter Hz"]
    rows = []
    for p in study.passes:
        w = p.worst
        margin = w.limit_coefficient_n_per_mm2 / w.coefficient_n_per_mm2
        frequency = f"{w.chatter_frequency_hz:.0f}" if math.isfinite(w.chatter_frequency_hz) else "-"
        rows.append([p.name, verdict(p), f"{w.depth_mm:.3g}", speed_text(w.speed_rpm), limit_text(w),
                     f"{margin:.2f}" if math.isfinite(margin) else "-", f"{w.r_mm:.2f}, {w.z_mm:.2f}", frequency])
    return column_grid("Stability of each pass at its worst station (margin: limit over the cut, below 1 chatters):",
                       header, rows)


def pass_notes(p: PassChatter) -> list[str]:
    w = p.worst
    lines = [f"{p.name}: {len(p.stations)} station(s) checked; stable at a constant spindle speed (G97) of "
             f"{windows_text(p.stable_speeds_rpm)}"]
    if not p.stable:
        deeper = (f", or stable again from {w.deeper_stable_mm:.3g} mm (past the nose the thrust turns towards the "
                  "feed)" if w.deeper_stable_mm else "")
        lines.append(f"  at {speed_text(w.speed_rpm)} /min its depth must come down to {w.limit_depth_mm:.3g} mm"
                     f"{deeper}; other remedies: a speed in a stable window, a stiffer set-up (support or fill the "
                     "wall), and a tap test in place of the recalled damping")
    return lines


def chatter_report(study: ChatterStudy) -> str:
    """The whole report as the terminal prints it."""
    return f"Chatter check: {study.title} ({study.material})\n\n" + blocks_text(chatter_blocks(study))


def chatter_blocks(study: ChatterStudy) -> list[Grid | Text]:
    """The report's tables and paragraphs: damping and speeds scanned, the modes, each pass's stability and
    what to do, warnings, what is not modelled, caution."""
    blocks = [Text((damping_line(study), f"Spindle speeds scanned: {speed_text(study.speed_range_rpm[0])} to "
                    f"{speed_text(study.speed_range_rpm[1])} /min (the machine's limit)")),
              modes_table(study), passes_table(study),
              Text(tuple(line for p in study.passes for line in pass_notes(p)))]
    if study.warnings:
        blocks.append(Text(tuple(f"warning: {w}" for w in study.warnings), "warning"))
    blocks += [Text((LEFT_OUT,)), Text((CAUTION,), "caution")]
    return blocks


def station_record(s: StationChatter) -> dict:
    return {"r_mm": s.r_mm, "z_mm": s.z_mm, "depth_mm": s.depth_mm, "spindle_speed_rpm": s.speed_rpm,
            "stable": s.stable, "limit_depth_mm": s.limit_depth_mm, "limit_depth_at_least": s.limit_depth_at_least,
            "deeper_stable_mm": s.deeper_stable_mm,
            "margin": _finite(s.limit_coefficient_n_per_mm2 / s.coefficient_n_per_mm2),
            "chatter_frequency_hz": _finite(s.chatter_frequency_hz),
            "dynamic_coefficient_N_per_mm2": s.coefficient_n_per_mm2,
            "limit_coefficient_N_per_mm2": _finite(s.limit_coefficient_n_per_mm2)}


def pass_record(p: PassChatter) -> dict:
    """A pass at its worst station: the keys of the contract first (`speed_rpm` kept beside the one name)."""
    w = p.worst
    return {"name": p.name, "stable": p.stable, "depth_mm": w.depth_mm, "limit_depth_mm": w.limit_depth_mm,
            "speed_rpm": w.speed_rpm, "stable_speeds_rpm": [[lo, hi] for lo, hi in p.stable_speeds_rpm],
            "spindle_speed_rpm": w.speed_rpm, "surface": p.surface, "tool": p.tool, "feed_mm_per_rev": p.feed_mm,
            "speed_m_min": p.speed_m_min, "limit_depth_at_least": w.limit_depth_at_least,
            "deeper_stable_mm": w.deeper_stable_mm, "worst_station": station_record(w),
            "stations": [station_record(s) for s in p.stations]}


def chatter_payload(study: ChatterStudy) -> dict:
    return {"title": study.title,
            "modes": [{"n": m.n, "m": m.m, "frequency_hz": m.frequency_hz, "model_hz": m.model_hz,
                       "damping": m.damping, "measured": m.measured} for m in study.modes],
            "passes": [pass_record(p) for p in study.passes],
            "damping": study.damping, "damping_from_memory": study.damping_from_memory,
            "speed_range_rpm": list(study.speed_range_rpm), "warnings": study.warnings}


def _finite(value: float) -> float | None:
    """JSON has no infinity: None where a value is unbounded or undefined."""
    return float(value) if math.isfinite(value) else None
