"""Terminal report and JSON of `deflect tune`: a `tune.TuneResult` -> text and the dict described in INTERFACE.md.

Formatting only; the figures come from `deflect.decisions.tune`. Changes are said the way a machinist says them
(leave 0.1 mm a side for the finish pass; one spring cut; wear offset X -0.026 mm on the diameter, with the
job key it means beside it). Values in the JSON and in the words are in the job's own units (mm or inch), so
that they can be written back into the job file.
"""

from __future__ import annotations

from deflect.decisions.tune import Change, Outcome, TuneResult
from deflect.job.reader import MM_PER_INCH
from deflect.output.predict_json import feature_record
from deflect.output.predict_report import duration_text, feature_table
from deflect.output.tables import Grid, Text, blocks_text, column_grid, units_note

LENGTH_KEYS = ("feed", "allowance", "offset", "depth")
CAUTION = ("Caution: the options are predictions; prove a changed program out (dry run, single block) and measure "
           "the first part. The machine's and chuck maker's limits and your local safety rules come first.")


INCH_DECIMALS = 4    # a machinist writes inches to the ten-thousandth (0.0031 in/rev, X -0.0012)


def number_text(value: float, units: str, sign: bool = False) -> str:
    """A length or feed as a machinist writes it: inches to four decimals without trailing zeros (0.0031, not
    0.00314961), millimetres as given (an offset to four significant digits)."""
    if units == "inch":
        text = f"{value:+.{INCH_DECIMALS}f}" if sign else f"{value:.{INCH_DECIMALS}f}"
        text = text.rstrip("0").rstrip(".") if "." in text else text
        return "0" if text in ("+0", "-0", "") else text
    return f"{value:+.4g}" if sign else f"{value:g}"


def in_job_units(change: Change, units: str):
    """(from, to) of a change in the job's units."""
    factor = MM_PER_INCH if units == "inch" else 1.0
    if change.key in LENGTH_KEYS:
        return (None if change.before is None else change.before / factor), change.after / factor
    if change.key == "compensate":
        return None, [[z / factor, c / factor] for z, c in change.after]
    if change.key == "order":
        return list(change.before), list(change.after)
    return change.before, change.after


def change_words(change: Change, surface_of: dict, units: str) -> str:
    """One change in a machinist's words."""
    unit = "in" if units == "inch" else "mm"
    before, after = in_job_units(change, units)
    name = change.pass_name
    if change.key == "feed":
        return f"{name}: feed {number_text(before, units)} -> {number_text(after, units)} {unit}/rev"
    if change.key == "allowance":
        return (f"{name}: leave {number_text(after, units)} {unit} a side for the finish pass "
                f"(was {number_text(before, units)})")
    if change.key == "depth":
        was = "in one cut" if before is None else f"up to {number_text(before, units)} {unit}"
        return f"{name}: take the stock in cuts of at most {number_text(after, units)} {unit} (was {was})"
    if change.key == "spring":
        count = {0: "no spring cut", 1: "one spring cut", 2: "two spring cuts"}.get(after, f"{after} spring cuts")
        return f"{name}: {count}"
    if change.key == "speed":
        return f"{name}: cutting speed {before:g} -> {after:g} m/min (within the machine's power)"
    if change.key == "tool":
        return f"{name}: finish with {after} instead of {before}"
    if change.key == "offset":
        return f"{name}: {offset_words(after, surface_of.get(name, 'od'), units)}"
    if change.key == "compensate":
        most = max((c for _, c in after), key=abs)
        return (f"{name}: program the compensated contour (push-off taken out and the surface centred in its band, "
                f"up to {number_text(most, units, sign=True)} {unit} a side)")
    if change.key == "order":
        swapped = [n for n, m in zip(after, before) if n != m]
        if len(swapped) == 2 and {surface_of.get(n) for n in swapped} == {"od", "id"}:
            first, second = ("the ID" if surface_of[n] == "id" else "the OD" for n in swapped)
            return f"finish {first} before {second} ({swapped[0]} before {swapped[1]})"
        return f"passes in the order {', '.join(after)}"
    return f"{name}: {change.key} {before} -> {after}"


def job_number(value: float, units: str) -> str:
    """A length as it is written into the job file: mm to the micrometre (offsets are found in 1 um steps),
    inches to six significant digits."""
    return f"{value:.3f}" if units == "mm" else f"{value:.6g}"


def offset_words(offset: float, surface: str, units: str) -> str:
    """A wear offset in both conventions on one line: the machinist's, as keyed into the control (X on the
    diameter, + moves the tool away from the axis, so + makes an OD larger and a bore larger; Z along the
    axis for a face, + away from the chuck), and the job's `offset` key, a side along the surface's outward
    normal (+ leaves material), as it must be written into the [[pass]] table. On an OD the outward normal
    is +r, so X = 2 offset; in a bore it points at the axis, so X = -2 offset: the two differ in sign there.
    A face is taken to look away from the chuck (+z), as a face turned from the tailstock side does."""
    unit = "in" if units == "inch" else "mm"
    job_key = f"(job key offset = {job_number(offset, units)}, a side along the outward normal)"
    if surface == "face":
        return f"wear offset Z {signed(offset, units)} {unit} {job_key}"
    x = 2.0 * offset if surface == "od" else -2.0 * offset
    return f"wear offset X {signed(x, units)} {unit} on the diameter {job_key}"


def signed(value: float, units: str) -> str:
    """The value keyed into the control: inches as a machinist writes them (`number_text`), mm to the um."""
    if units == "inch":
        return number_text(value, units, sign=True)
    return ("+" if value >= 0.0 else "") + job_number(value, units)


def option_words(outcome: Outcome, surface_of: dict, units: str) -> str:
    return "; ".join(change_words(c, surface_of, units) for c in outcome.changes) or "as programmed"


def wall_lines(walls, units: str) -> list[str]:
    """The design revision: per wall, the thinnest that holds and what the change costs."""
    factor = MM_PER_INCH if units == "inch" else 1.0
    unit = "in" if units == "inch" else "mm"
    lines = ["Design revision (the recommended finishing, offsets centred again for each wall):"]
    for w in walls:
        wall = w.wall
        where = (f"wall between OD {2 * wall.od_radius_mm / factor:g} and ID {2 * wall.bore_radius_mm / factor:g} "
                 f"{unit}, z {wall.z_low_mm / factor:g} to {wall.z_high_mm / factor:g}")
        if w.thinnest_mm is None:
            lines.append(f"  {where}: nominal {wall.thickness_mm / factor:.3f} {unit}; {w.note}")
            continue
        change = w.thinnest_mm - wall.thickness_mm
        lines.append(f"  {where}: nominal {wall.thickness_mm / factor:.3f} {unit}, thinnest that holds "
                     f"{w.thinnest_mm / factor:.3f} {unit} ({change / factor:+.3f}): mass "
                     f"{w.mass_g - w.drawn_mass_g:+.3f} g, axial inertia "
                     f"{w.inertia_kg_mm2 - w.drawn_inertia_kg_mm2:+.4g} kg mm2 against the nominal"
                     + (f"; {w.note}" if w.note else ""))
    return lines


def wall_records(walls) -> list[dict]:
    """The design revision's walls, in mm whatever the job's units (the keys say so)."""
    return [{"od_diameter_mm": 2 * w.wall.od_radius_mm, "id_diameter_mm": 2 * w.wall.bore_radius_mm,
             "z_mm": [w.wall.z_low_mm, w.wall.z_high_mm], "nominal_wall_mm": w.wall.thickness_mm,
             "thinnest_wall_that_holds_mm": w.thinnest_mm,
             "mass_change_g": None if w.mass_g is None else w.mass_g - w.drawn_mass_g,
             "inertia_axial_change_kg_mm2": None if w.inertia_kg_mm2 is None
             else w.inertia_kg_mm2 - w.drawn_inertia_kg_mm2,
             "note": w.note} for w in walls]


def tune_units_note(units: str) -> str:
    """The line an inch job's remedies open with, as every report of an inch job does (`tables.units_note`), true
    for what they print: the drawing's sizes, margins and positions in mm and um, the changes to the program in
    inches (the job's own units, as they are written into the job and keyed into the control). "" for a mm job."""
    return units_note(units, "the drawing's sizes and positions are", "deviations and margins in um",
                      "the changes to the program are")


def tune_report(result: TuneResult, surface_of: dict, units: str, title: str, walls=None,
                rules_summary: str = "") -> str:
    """The whole report as the terminal prints it."""
    return (tune_units_note(units) + f"Remedies: {title}\n\n"
            + blocks_text(tune_blocks(result, surface_of, units, walls, rules_summary)))


OPTIONS_TITLE = "Options, ranked"


def options_table(result: TuneResult) -> Grid:
    current = result.current
    rows = []
    for rank, o in enumerate(result.options, 1):
        delta = o.cycle_time_s - current.cycle_time_s
        margin = "-" if o.least_margin_mm is None else f"{1000 * o.least_margin_mm:+.1f}"
        rows.append([str(rank), "yes" if o.meets else "no", f"{o.cycle_time_s:.1f}", f"{delta:+.1f}",
                     f"{1000 * o.max_deviation_mm:.1f}", margin, f"{o.ra_um:.2f}", f"{o.mass_g:.3f}"])
    header = ["rank", "meets", "cycle time s", "vs now s", "most off drawing um", "least margin um", "Ra um",
              "mass g"]
    note = ("most off drawing: the largest distance of a finished surface from the drawn one, a side, material "
            "left or cut below, wear offsets included; least margin: the nearest a diameter or the wall comes "
            "to a limit")
    return column_grid(OPTIONS_TITLE, header, rows, (note,))


def option_lines(result: TuneResult, surface_of: dict, units: str) -> tuple[str, ...]:
    """Each option's changes in words, with the limits it breaks and its notes."""
    lines = []
    for rank, o in enumerate(result.options, 1):
        lines.append(f"{rank}. {option_words(o, surface_of, units)}")
        if o.broken:
            lines.append(f"   breaks: {'; '.join(o.broken)}")
        lines += [f"   note: {note}" for note in o.notes]
    return tuple(lines)


def tune_blocks(result: TuneResult, surface_of: dict, units: str, walls=None,
                rules_summary: str = "") -> list[Grid | Text]:
    """The report's tables and paragraphs: the design rules' findings in brief, the plan as programmed against
    the drawing, the options ranked and in words, what limits, the design revision, caution."""
    current = result.current
    blocks = [*([Text(tuple(rules_summary.splitlines()))] if rules_summary else []),
              Text((f"as programmed: cycle time {duration_text(current.cycle_time_s)}, most off the drawing "
                    f"{1000 * current.max_deviation_mm:.1f} um a side, "
                    f"{'meets' if current.meets else 'does NOT meet'} the drawing",)),
              feature_table(current.checks) if current.checks else Text(("nothing toleranced",))]
    if result.options:
        blocks += [options_table(result), Text(option_lines(result, surface_of, units))]
    else:
        blocks.append(Text(("no option could be predicted",)))
    if result.limiting:
        blocks.append(Text((result.limiting,)))
    if result.offset_note:
        blocks.append(Text((f"wear offset only: {result.offset_note}",)))
    if walls is not None:
        blocks.append(Text(tuple(wall_lines(walls, units))))
    blocks += [Text((f"({result.evaluations} plans predicted)",)), Text((CAUTION,), "caution")]
    return blocks


def change_unit(key: str, units: str) -> str | None:
    """The unit `from` and `to` of a change are in (None: a count, a name, an order)."""
    length = "in" if units == "inch" else "mm"
    return {"feed": f"{length}/rev", "allowance": length, "offset": length, "compensate": length, "depth": length,
            "speed": "m/min"}.get(key)


def change_record(change: Change, units: str) -> dict:
    before, after = in_job_units(change, units)
    return {"pass": change.pass_name, "key": change.key, "from": before, "to": after,
            "unit": change_unit(change.key, units)}


def outcome_record(outcome: Outcome, units: str) -> dict:
    return {"meets": outcome.meets, "cycle_time_s": outcome.cycle_time_s,
            "max_deviation_mm": outcome.max_deviation_mm, "most_off_drawing_mm": outcome.max_deviation_mm,
            "least_margin_mm": outcome.least_margin_mm,
            "ra_um": outcome.ra_um, "mass_g": outcome.mass_g,
            "breaks": outcome.broken, "notes": list(outcome.notes),
            "features": [feature_record(c) for c in outcome.checks],
            "predicted": {"mass_g": outcome.prediction.predicted_mass_g.value,
                          "mass_gain_g": outcome.prediction.mass_gain_g.value,
                          "most_material_left_mm": outcome.prediction.max_deviation_mm.value}}


def tune_payload(result: TuneResult, surface_of: dict, units: str, walls=None) -> dict:
    current = outcome_record(result.current, units)
    options = []
    for rank, o in enumerate(result.options, 1):
        record = {"rank": rank, **outcome_record(o, units),
                  "changes": [change_record(c, units) for c in o.changes],
                  "in_words": option_words(o, surface_of, units)}
        options.append(record)
    payload = {"current": current, "options": options, "limiting": result.limiting,
               "offset_note": result.offset_note, "plans_predicted": result.evaluations, "units": units}
    if walls is not None:
        payload["walls"] = wall_records(walls)
    return payload
