"""Terminal report and JSON of `deflect explain`, and the line a calibrated report states itself with.

Takes a `first_article.FirstArticle` (and the remedy search's `TuneResult` for the next part, if run); gives the
text and the dict of the first-article contract (factors, size_errors, mass, residual_rms_um) with the
readings, profiles, the mass split and the next part's options beside it. Lengths mm (readings), um (errors),
mass g, whatever the job's units; the next part's changes in the job's units (an inch job's report says so in its
first line). Formatting only: the figures come from `deflect.decisions.first_article`.
"""

from __future__ import annotations

import textwrap

import numpy as np

from deflect.decisions.first_article import Estimate, FirstArticle, usual_suspects
from deflect.job.calibration import Calibration
from deflect.output.tables import Grid, Text, blocks_text, column_grid, units_note
from deflect.output.tune_report import change_words, tune_payload

SURFACE_NAMES = {"od": "OD", "id": "ID", "face": "face", "wall": "wall"}
WHAT = {("diameter", "od"): "OD diameter", ("diameter", "id"): "ID diameter", ("wall", "wall"): "wall",
        ("face", "face"): "face height", ("roundness", "od"): "OD roundness", ("roundness", "id"): "ID roundness"}
CAUSES = {"push-off": "push-off", "size error": "size error",
          "unmachined": "unmachined (corners, stock no pass reached)", "density": "the batch's density (measured)",
          "layers": "(sum of the surfaces' layers against the section)"}
PROFILE_ROWS = 9                 # heights shown in the profile table
OPTIONS_SHOWN = 3                # options of the next part printed
WIDTH = 110                      # prose is wrapped to this many characters
EXPLAINS = (
    "A force factor scales its tool's kc1.1, kf1.1 and kp1.1 together; the readings see force times compliance, "
    "so it also carries any error of the wall's stiffness the model makes. A size error is uniform along its "
    "surface, a side (wear offset, tool setting, thermal growth): on the finishing pass it is the pass key "
    "`offset` (a wear offset of twice it in X on the diameter).")
CAUTION = ("Caution: a calibration holds for this material, these tools and this set-up; check it on the next "
           "part. A changed program must be proved out (dry run, single block); the machine's and the chuck "
           "maker's limits and your local safety rules come first.")


def wrapped(text: str, width: int, **indents) -> list[str]:
    """The text wrapped for the terminal as one entry (its line breaks inside): a report's paragraph, which the
    HTML report lays out as one paragraph."""
    return ["\n".join(textwrap.wrap(text, width, **indents))]


def estimate_text(e: Estimate) -> tuple[str, str]:
    """(value, interval) of an unknown in its unit: factors as x, size errors in um a side."""
    if e.unknown.kind == "size":
        return f"{1000 * e.value:+.1f} um", f"{1000 * e.low:+.1f} to {1000 * e.high:+.1f} um"
    return f"x{e.value:.3f}", f"{e.low:.3f} to {e.high:.3f}"


def fit_words(result: FirstArticle) -> str:
    used = sum(r.used for r in result.readings)
    fitted = sum(e.identified for e in result.estimates)
    head = (f"{used} readings, {fitted} unknowns fitted: chi-square {result.chi_square:.3g} for "
            f"{result.degrees_of_freedom} degrees of freedom")
    if result.degrees_of_freedom <= 0:
        return head + ": nothing is left to check the stated uncertainties; the intervals rest on them alone"
    if result.scaled:
        return (head + ": the readings scatter more than their stated uncertainties allow (95 %), so the "
                f"covariance is scaled by chi-square / dof and the intervals use Student's t ({result.quantile:.2f})")
    return head + f": within the stated uncertainties, which set the intervals (normal quantile {result.quantile:.2f})"


def estimates_table(result: FirstArticle) -> list[Grid | Text]:
    title = f"Calibration ({'per tool' if result.calibration.fitted_per == 'tool' else 'per pass'}, 95 % intervals)"
    rows = []
    for e in result.estimates:
        value, interval = estimate_text(e)
        rows.append([e.unknown.label, value if e.identified else ("x1" if e.unknown.kind != "size" else "0"),
                     interval if e.identified else "-", "yes" if e.identified else "NOT identified"])
    blocks = ([column_grid(title, ["unknown", "value", "95 % interval", "identified"], rows)] if rows
              else [Text(("no unknowns",), title=title)])
    lines = [f"not identified: {e.unknown.label}: {e.reason}" for e in result.estimates if not e.identified]
    lines += list(result.unseparated)
    if lines:
        blocks.append(Text(tuple(lines)))
    return blocks


def readings_table(result: FirstArticle) -> Grid | Text:
    rows = []
    for r in result.readings:
        x = r.reading
        where = f"r {x.at_mm:.2f}" if x.kind == "face" else f"z {x.at_mm:.2f}"
        if x.kind == "roundness":
            values = [f"{1000 * v:.1f} um" for v in (x.value_mm, r.uncalibrated_mm, r.calibrated_mm)]
            drawn = "-"
        else:
            values = [f"{v:.4f}" for v in (x.value_mm, r.uncalibrated_mm, r.calibrated_mm)]
            drawn = f"{x.nominal_mm:.4f}"
        rows.append([x.key.removeprefix("measured."), WHAT[(x.kind, x.surface)], where, drawn, *values,
                     f"{1000 * (x.value_mm - r.calibrated_mm):+.1f}", f"{1000 * r.uncertainty_mm:.1f}",
                     "" if r.used else "no", r.note])
    header = ["reading", "what", "where mm", "drawn mm", "measured", "uncalibrated", "calibrated", "residual um",
              "u um", "fitted", "note"]
    title = "Readings (mm; roundness um)"
    return column_grid(title, header, rows) if rows else Text(("no dimensional readings",), title=title)


def mass_lines(result: FirstArticle) -> list[Grid | Text]:
    m = result.mass
    if m is None:
        return [Text(("the part was not weighed",), title="Mass")]
    gain = m.measured_g - m.nominal_g
    title = (f"Mass: measured {m.measured_g:.3f} g (u {m.measured_uncertainty_g:.3g} g), drawn {m.nominal_g:.3f} g: "
             f"gain {gain:+.4f} g, split by cause:")
    rows = [[f"{CAUSES[s.cause]}" + (f", {s.where}" if s.where else ""), f"{s.mass_g:+.4f}"] for s in m.shares]
    rows.append(["calibrated prediction", f"{m.calibrated_g - m.nominal_g:+.4f}"])
    rows.append(["the rest (measured - explained)", f"{m.rest_g:+.4f}"])
    blocks = [column_grid(title, ["cause", "mass g"], rows)]
    words = [f"(predicted {m.uncalibrated_g:.3f} g uncalibrated, {m.calibrated_g:.3f} g calibrated; density "
             f"{m.density_g_cm3:.4g} g/cm3, u {m.density_uncertainty_g_cm3:.2g} ({m.density_from}))"]
    allowed = (f"the measurement allows +/-{m.rest_allowed_g:.3f} g at about 95 % (the scale, the density over the "
               "part's volume, the calibration)")
    if m.rest_explained:
        words.append(f"The rest, {m.rest_g:+.4f} g, is within what {allowed}.")
    else:
        words.append(f"The rest, {m.rest_g:+.4f} g, is MORE than {allowed}: something the model does not see. "
                     "The usual suspects:")
    lines = [wrapped(text, WIDTH)[0] for text in words]
    if not m.rest_explained:
        lines += [f"  - {s}" for s in usual_suspects(m)]
    return blocks + [Text(tuple(lines))]


def profile_lines(result: FirstArticle) -> list[Grid | Text]:
    if not result.profiles:
        return [Text(("no finished OD or ID to profile",), title="Profiles")]
    blocks = []
    for p in result.profiles:
        picks = np.unique(np.linspace(0, len(p.z_mm) - 1, PROFILE_ROWS).round().astype(int))
        measured = [r for r in result.readings
                    if (r.reading.kind == "diameter" and r.reading.surface == p.surface)
                    or (r.reading.kind == "wall" and p.surface == "wall")]
        rows = [[f"{p.z_mm[k]:.2f}", f"{1000 * p.uncalibrated_mm[k]:+.1f}", f"{1000 * p.calibrated_mm[k]:+.1f}", ""]
                for k in picks]
        rows += [[f"{r.reading.at_mm:.2f}", "", "", f"{1000 * (r.reading.value_mm - r.reading.nominal_mm):+.1f}"]
                 for r in measured]
        rows.sort(key=lambda row: float(row[0]))
        what = "diameter" if p.surface in ("od", "id") else "thickness"
        blocks.append(column_grid(f"Profile: {SURFACE_NAMES[p.surface]} {what} against the drawing, um",
                                  ["z mm", "uncalibrated", "calibrated", "measured"], rows))
    return blocks


AIMED_CHANGES = ("offset", "compensate")   # the changes that place a surface in its band, and so rest on its size


def unsized_passes(result: FirstArticle) -> list[str]:
    """The finishing passes whose size error the first article did not identify (their surface's size is not
    known from it: an offset aimed at its band rests on the surface as programmed)."""
    return [e.unknown.name for e in result.estimates if e.unknown.kind == "size" and not e.identified]


def aimed_words(outcome, surface_of: dict, units: str, unsized: list[str]) -> str:
    """An option's changes in words; an offset (or compensated contour) on a pass whose size error is not
    identified says that it aims by the predicted push-off alone."""
    words = []
    for c in outcome.changes:
        text = change_words(c, surface_of, units)
        if c.key in AIMED_CHANGES and c.pass_name in unsized:
            text += (" [NOT from a measured size: this surface's size error was not identified, so this aims by "
                     "the predicted push-off alone, the surface taken as programmed; measure its size on its straight "
                     "stretch before setting it]")
        words.append(text)
    return "; ".join(words) or "as programmed"


def next_part_lines(remedies, surface_of: dict, units: str, searched: bool, unsized: list[str] = ()) -> list[str]:
    if remedies is None:
        return ["no [tolerance] in the job: nothing to aim the next part at"]
    lines = wrapped(f"as programmed, with the calibration: cycle {remedies.current.cycle_time_s:.1f} s, most "
                    f"off the drawing {1000 * remedies.current.max_deviation_mm:.1f} um a side, "
                    f"{'meets' if remedies.current.meets else 'does NOT meet'} the drawing", WIDTH)
    if not searched:
        lines.append("the wear offsets that centre every finished surface in its band (no time lost):")
    for rank, o in enumerate(remedies.options[:OPTIONS_SHOWN], 1):
        verdict = "meets" if o.meets else "does not meet"
        words = aimed_words(o, surface_of, units, list(unsized))
        lines += wrapped(f"{rank}. ({verdict}, cycle {o.cycle_time_s:.1f} s) {words}", WIDTH,
                         subsequent_indent="   ")
        if o.broken:
            lines += wrapped(f"breaks: {'; '.join(o.broken)}", WIDTH, initial_indent="   ",
                             subsequent_indent="   ")
    if remedies.limiting:
        lines += wrapped(remedies.limiting, WIDTH)
    if not searched:
        lines += wrapped("(--search runs the whole remedy search of `deflect tune` with the calibrated "
                         "constants: feeds, spring cuts, allowance, tools, compensation, order; or run "
                         "`deflect tune JOB --calibration FILE`)", WIDTH)
    return lines


def explain_units_note(units: str) -> str:
    """The line an inch job's explain report opens with, as every report of an inch job does (`units_note`),
    true for what it prints: the readings, profiles and mass in mm, g and um, the next part's changes in inches
    (the job's own units, as they are written into the job and keyed into the control). "" for a mm job."""
    return units_note(units, "its readings and profiles are", "errors and residuals in um",
                      "the next part's changes are")


def explain_report(result: FirstArticle, remedies=None, surface_of: dict | None = None, units: str = "mm",
                   searched: bool = False) -> str:
    """The whole report as the terminal prints it."""
    return (explain_units_note(units) + f"First article: {result.title}\nmeasured part: {result.measured_path}\n\n"
            + blocks_text(explain_blocks(result, remedies, surface_of, units, searched)))


def explain_blocks(result: FirstArticle, remedies=None, surface_of: dict | None = None, units: str = "mm",
                   searched: bool = False) -> list[Grid | Text]:
    """The report's tables and paragraphs: the calibration and the fit, the readings, the mass by cause, the
    profiles, the next part, notes, caution."""
    blocks = [*estimates_table(result),
              Text((*wrapped(EXPLAINS, WIDTH), *wrapped(f"fit: {fit_words(result)}", WIDTH),
                    f"residual {result.residual_rms_um:.2f} um rms (measured - calibrated)")),
              readings_table(result), *mass_lines(result), *profile_lines(result),
              Text(tuple(next_part_lines(remedies, surface_of or {}, units, searched, unsized_passes(result))),
                   title="Next part (with the calibrated constants)")]
    if result.notes:
        blocks.append(Text(tuple(textwrap.fill(n, WIDTH, subsequent_indent="  ") for n in result.notes),
                           title="Notes:"))
    blocks.append(Text(wrapped(CAUTION, WIDTH), "caution"))
    return blocks


def estimate_record(e: Estimate) -> dict:
    record = {"value": e.value, "low": e.low, "high": e.high, "identified": e.identified, "reason": e.reason}
    if e.unknown.kind == "size":
        return {"surface": e.unknown.surface, "pass": e.unknown.name, "value_mm": e.value,
                "low": e.low, "high": e.high, "low_mm": e.low, "high_mm": e.high,
                "identified": e.identified, "reason": e.reason}
    return {"applies_to": e.unknown.name, "kind": e.unknown.kind, **record}


def mass_record(result: FirstArticle) -> dict:
    m = result.mass
    if m is None:
        return {"measured_g": None, "nominal_g": result.uncalibrated.nominal_mass_g,
                "uncalibrated_g": result.uncalibrated.predicted_mass_g.value,
                "calibrated_g": result.calibrated.predicted_mass_g.value}
    return {"measured_g": m.measured_g, "measured_uncertainty_g": m.measured_uncertainty_g, "nominal_g": m.nominal_g,
            "uncalibrated_g": m.uncalibrated_g, "calibrated_g": m.calibrated_g,
            "gain_g": m.measured_g - m.nominal_g,
            "by_cause": [{"cause": s.cause, "where": s.where, "mass_g": s.mass_g} for s in m.shares],
            "rest_g": m.rest_g, "rest_uncertainty_g": m.rest_uncertainty_g, "rest_allowed_g": m.rest_allowed_g,
            "rest_explained": m.rest_explained, "suspects": usual_suspects(m),
            "density_g_cm3": m.density_g_cm3, "density_uncertainty_g_cm3": m.density_uncertainty_g_cm3}


def explain_payload(result: FirstArticle, remedies=None, surface_of: dict | None = None, units: str = "mm",
                    searched: bool = False, saved: str | None = None) -> dict:
    readings = [{"key": r.reading.key, "kind": r.reading.kind, "surface": r.reading.surface,
                 ("r_mm" if r.reading.kind == "face" else "z_mm"): r.reading.at_mm,
                 "drawn_mm": r.reading.nominal_mm, "measured_mm": r.reading.value_mm,
                 "uncalibrated_mm": r.uncalibrated_mm, "calibrated_mm": r.calibrated_mm,
                 "residual_mm": r.residual_mm, "uncertainty_mm": r.uncertainty_mm,
                 "uncertainty_from": r.reading.uncertainty_from, "how": r.reading.how, "used": r.used,
                 "note": r.note} for r in result.readings]
    return {
        "factors": [estimate_record(e) for e in result.estimates if e.unknown.kind != "size"],
        "size_errors": [estimate_record(e) for e in result.estimates if e.unknown.kind == "size"],
        "mass": mass_record(result),
        "residual_rms_um": result.residual_rms_um,
        "fitted_per": result.calibration.fitted_per,
        "chi_square": result.chi_square, "degrees_of_freedom": result.degrees_of_freedom,
        "covariance_scaled": result.scaled, "quantile": result.quantile,
        "unseparated": list(result.unseparated),
        "readings": readings,
        "profiles": [{"surface": p.surface, "z_mm": p.z_mm.tolist(), "uncalibrated_mm": p.uncalibrated_mm.tolist(),
                      "calibrated_mm": p.calibrated_mm.tolist()} for p in result.profiles],
        "next_part": None if remedies is None else next_part_record(result, remedies, surface_of or {}, units,
                                                                    searched),
        "calibration_file": saved,
        "notes": list(result.notes),
    }


def next_part_record(result: FirstArticle, remedies, surface_of: dict, units: str, searched: bool) -> dict:
    """`deflect tune --json`'s keys for the next part; an option's words, and `aimed_without_size`, name the passes
    whose offset aims by the predicted push-off alone (their size error not identified)."""
    unsized = unsized_passes(result)
    record = {"searched": searched, **tune_payload(remedies, surface_of, units)}
    for option, outcome in zip(record["options"], remedies.options):
        option["in_words"] = aimed_words(outcome, surface_of, units, unsized)
        option["aimed_without_size"] = sorted({c.pass_name for c in outcome.changes
                                               if c.key in AIMED_CHANGES and c.pass_name in unsized})
    return record


# ---------------------------------------------------------------------------------------------------
# a calibrated report states itself

def calibration_note(calibration: Calibration) -> str:
    """One line for every report a calibration changes: what it is, where it came from."""
    source = calibration.path or "this run"
    return (f"calibrated ({source}: first article {calibration.measured or '?'}, {calibration.date or 'no date'}, "
            f"residual {calibration.residual_rms_um:.2g} um): " + calibration_changes(calibration))


def calibration_changes(calibration: Calibration) -> str:
    """What a calibration changes, in a few words: its identified factors, size errors and grip factor."""
    parts = [f"{f.applies_to} x{f.value:.3g}" for f in calibration.factors if f.identified and f.kind == "force"]
    parts += [f"{s.pass_name} {1000 * s.value_mm:+.1f} um a side" for s in calibration.size_errors if s.identified]
    if calibration.grip_factor != 1.0:
        parts.append(f"jaws' squeeze x{calibration.grip_factor:.3g}")
    return "; ".join(parts) or "nothing identified"


def calibration_record(calibration: Calibration) -> dict:
    return {"file": calibration.path, "job": calibration.job, "measured": calibration.measured,
            "date": calibration.date, "fitted_per": calibration.fitted_per,
            "residual_rms_um": calibration.residual_rms_um,
            "factors": [{"applies_to": f.applies_to, "kind": f.kind, "value": f.value, "low": f.low, "high": f.high,
                         "identified": f.identified} for f in calibration.factors],
            "size_errors": [{"surface": s.surface, "pass": s.pass_name, "value_mm": s.value_mm, "low_mm": s.low_mm,
                             "high_mm": s.high_mm, "identified": s.identified} for s in calibration.size_errors]}


def calibrated_report_note(calibration: Calibration, measured_name: str, uncalibrated) -> str:
    """The line at the top of a report calibrated on a first article (`deflect report --measured`): what its
    figures are, and the uncalibrated headline (`uncalibrated`, the job's prediction with its constants as given)
    beside them, to the headline's digits."""
    fitted = calibration_changes(calibration)
    return (f"Calibrated on the first article {measured_name}: the key figures, the prediction, the work holding, "
            f"the chatter check and the remedies use the calibration fitted on it ({fitted}), as deflect explain "
            f"--save writes it and deflect predict --calibration reads it. Uncalibrated, with the job's constants as "
            f"given: predicted mass {uncalibrated.predicted_mass_g.value:.3f} g, mass gain "
            f"{uncalibrated.mass_gain_g.value:+.3f} g, most material left "
            f"{1e3 * uncalibrated.max_deviation_mm.value:.1f} um a side.")
