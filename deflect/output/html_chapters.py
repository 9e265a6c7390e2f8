"""What each command puts into the HTML report: its results -> a `html_report.Chapter`. Formatting only.

One function per command. Each takes the same results the command prints (and the same blocks its terminal
report is made of: `predict_blocks`, `rules_blocks`, `clamp_blocks`, `tune_blocks`, `compare_blocks`), adds its figures as SVG and its key figures
with their place in the command's JSON, and lays them out in sheets (one printed page each, for the shipped
jobs). A new command adds one function here and passes its chapter to `html_report.render`.
"""

from __future__ import annotations

from deflect.output.html_report import Chapter, Figure, KeyFigure, Sheet, split_cautions
from deflect.output.tables import Grid


def _spread(value, unit: str, digits: int, scale: float = 1.0, sign: str = "") -> str:
    return (f"{scale * value.low:{sign}.{digits}f} to {scale * value.high:{sign}.{digits}f} {unit} for the force "
            "constants' spread")


def drawing_figure(features) -> KeyFigure:
    """The toleranced features in one figure: all in, or which are out."""
    out = [c.feature for c in features if not c.meets]
    if not out:
        return KeyFigure("against the drawing", f"all {len(features)} in", verdict="good",
                         note="every toleranced feature within its limits")
    return KeyFigure("against the drawing", f"{len(out)} of {len(features)} OUT", verdict="bad",
                     note="out: " + ", ".join(out))


def predict_key_figures(pred, features) -> tuple[KeyFigure, ...]:
    gain_pct = 100.0 * pred.mass_gain_g.value / pred.nominal_mass_g
    figures = [
        KeyFigure("predicted mass", f"{pred.predicted_mass_g.value:.3f} g", ("predicted.mass_g",),
                  note=f"nominal {pred.nominal_mass_g:.3f} g; {_spread(pred.predicted_mass_g, 'g', 3)}"),
        KeyFigure("mass gain over the drawing", f"{pred.mass_gain_g.value:+.3f} g", ("predicted.mass_gain_g",),
                  note=f"{gain_pct:+.2f} %; {_spread(pred.mass_gain_g, 'g', 3, sign='+')}"),
        KeyFigure("most material left", f"{1e3 * pred.max_deviation_mm.value:.1f} um a side",
                  ("predicted.most_material_left_mm",), 1000.0, note=_spread(pred.max_deviation_mm, "um", 1, 1000.0)),
        KeyFigure("cycle time (cutting)", f"{pred.cycle_time_s:.1f} s", ("cycle_time_s",),
                  note=f"{len(pred.passes)} passes"),
        KeyFigure("peak cutting power", f"{pred.peak_power_kw:.2f} kW", ("peak_power_kW",),
                  note=f"of the machine's {pred.machine_power_kw:g} kW",
                  verdict="bad" if pred.peak_power_kw > pred.machine_power_kw else ""),
    ]
    if features:
        figures.append(drawing_figure(features))
    return tuple(figures)


def predict_chapter(pred, features=(), warnings=(), rules=None) -> Chapter:
    """`deflect predict`: the headline (and the design rules' findings in brief) and the passes on one sheet,
    the finished surfaces against the drawing on the next, then the section and the profiles."""
    from deflect.output.figures import deviation_figure, passes_figure, section_figure, svg_text
    from deflect.output.predict_report import PASSES_TITLE, predict_blocks
    from deflect.output.rules_report import rules_summary

    blocks, cautions = split_cautions(predict_blocks(pred, features, warnings, rules_summary(rules)))
    # the first sheet: the headline (and the rules in brief) down to the passes
    first = next((k + 1 for k, b in enumerate(blocks) if isinstance(b, Grid) and b.title == PASSES_TITLE), 1)
    section = Figure("The drawn section (black), as machined at true scale (blue, dashed) and the material left "
                     "drawn magnified along the normals (red); the stock in grey.", svg_text(section_figure(pred)))
    deviation = Figure("Material left beyond the drawn surface, a side, along the finished OD and ID and across "
                       "the faces (> 0: thicker than drawn).", svg_text(deviation_figure(pred)))
    passes = Figure("Passive force and push-off (part and tool together) at every station of every pass.",
                    svg_text(passes_figure(pred)))
    sheets = (Sheet("Machining prediction", tuple(blocks[:first])),
              Sheet("Finished surfaces against the drawing", tuple(blocks[first:])),
              Sheet("The section as machined", (section,)),
              Sheet("Material left and push-off along the passes", (deviation, passes)))
    return Chapter("predict", "Prediction", predict_key_figures(pred, features), sheets, cautions)


def tune_key_figures(result) -> tuple[KeyFigure, ...]:
    current = result.current
    figures = [KeyFigure("as programmed: cycle time", f"{current.cycle_time_s:.1f} s", ("current.cycle_time_s",),
                         note="meets the drawing" if current.meets else "does NOT meet the drawing",
                         verdict="good" if current.meets else "bad")]
    if result.options:
        best = result.options[0]
        figures += [
            KeyFigure("option 1: cycle time", f"{best.cycle_time_s:.1f} s", ("options.0.cycle_time_s",),
                      note=f"{best.cycle_time_s - current.cycle_time_s:+.1f} s against now; "
                           + ("meets the drawing" if best.meets else "does NOT meet the drawing"),
                      verdict="good" if best.meets else "bad"),
            *least_margin_figure(best, current),
            KeyFigure("options that meet the drawing", f"{sum(o.meets for o in result.options)} of "
                                                       f"{len(result.options)}", note="ranked by cycle time")]
    return tuple(figures)


def least_margin_figure(best, current) -> tuple[KeyFigure, ...]:
    """Option 1's least margin: the nearest a diameter or the wall comes to a limit (none when nothing is
    toleranced that way)."""
    if best.least_margin_mm is None:
        return ()
    now = "" if current.least_margin_mm is None else f"; now {1e3 * current.least_margin_mm:+.1f} um"
    return (KeyFigure("option 1: least margin", f"{1e3 * best.least_margin_mm:+.1f} um", ("options.0.least_margin_mm",),
                      1000.0, note=f"the nearest a diameter or the wall comes to a limit{now}",
                      verdict="good" if best.least_margin_mm >= 0 else "bad"),)


def tune_chapter(result, surface_of: dict, units: str, walls=None, rules=None) -> Chapter:
    """`deflect tune`: the plan as programmed and the options ranked on one sheet, the options in words on the
    next, the material left as programmed and with option 1 on the last. With `rules`, the design rules'
    findings in brief at the top (as the terminal report has them)."""
    from deflect.output.figures import plain, profiles_figure, svg_text
    from deflect.output.rules_report import rules_summary
    from deflect.output.tune_report import OPTIONS_TITLE, tune_blocks

    blocks, cautions = split_cautions(tune_blocks(result, surface_of, units, walls, rules_summary(rules)))
    ranked = next((k + 1 for k, b in enumerate(blocks) if isinstance(b, Grid) and b.title == OPTIONS_TITLE),
                  len(blocks))
    sheets = [Sheet("Remedies that hold the drawing", tuple(blocks[:ranked]))]
    if blocks[ranked:]:
        sheets.append(Sheet("The options in words", tuple(blocks[ranked:])))
    if result.options:
        named = [("as programmed", result.current.prediction), ("option 1", result.options[0].prediction)]
        title = f"Material left, as programmed and with option 1: {plain(result.current.prediction.title)}"
        sheets.append(Sheet("Option 1 against the plan as programmed", (
            Figure("Material left beyond the drawn surface, a side, as programmed (solid) and with option 1's "
                   "changes (dashed).", svg_text(profiles_figure(named, title))),)))
    return Chapter("tune", "Remedies", tune_key_figures(result), tuple(sheets), cautions)


def clamp_key_figures(study) -> tuple[KeyFigure, ...]:
    g = study.given
    window = {None: ("not known", ""), True: ("open", "good"), False: ("EMPTY", "bad")}[g.window_open]
    figures = [KeyFigure("grip given (standstill)", f"{g.holding.force_n:.0f} N", ("grip_force_N.given",))]
    if g.least_to_hold_n is not None:
        figures.append(KeyFigure("least grip to hold", f"{g.least_to_hold_n:.0f} N", ("grip_force_N.least_to_hold",),
                                 note="the heaviest cut, with the safety factor and the loss at speed"))
    if g.most_for_roundness_n is not None:
        figures.append(KeyFigure("most grip for roundness", f"{g.most_for_roundness_n:.0f} N",
                                 ("grip_force_N.most_for_roundness",),
                                 note="keeps the finished diameters in tolerance"))
    figures += [KeyFigure("grip window", window[0], verdict=window[1]),
                KeyFigure("roundness after release", f"{1e3 * g.roundness_mm.max(initial=0.0):.1f} um",
                          ("max_roundness_um",), note=f"{g.lobes} lobes, radial peak to valley")]
    return tuple(figures)


def clamp_chapter(study, profile=None) -> Chapter:
    """`deflect clamp`: the holding, its window and the remedies on one sheet; the released shape of the least
    round section (`profile`, when there is one) on the next."""
    from deflect.output.clamp_report import clamp_blocks
    from deflect.output.figures import released_shape_figure, svg_text

    blocks, cautions = split_cautions(clamp_blocks(study))
    sheets = [Sheet("Work holding", tuple(blocks))]
    if profile is not None:
        sheets.append(Sheet("The shape the jaws leave", (
            Figure("A section finished in the chuck, as cut (round) and after the jaws let go (the deviation "
                   "magnified), with the jaws.", svg_text(released_shape_figure(profile, study.title))),)))
    return Chapter("clamp", "Work holding", clamp_key_figures(study), tuple(sheets), cautions)



def compare_key_figures(c) -> tuple[KeyFigure, ...]:
    a, b = c.a.prediction, c.b.prediction
    figures = [
        KeyFigure("mass gain, A -> B", f"{a.mass_gain_g.value:+.3f} g -> {b.mass_gain_g.value:+.3f} g",
                  ("a.mass_gain_g", "b.mass_gain_g")),
        KeyFigure("most material left, A -> B", f"{1e3 * a.max_deviation_mm.value:.1f} -> "
                                                f"{1e3 * b.max_deviation_mm.value:.1f} um a side",
                  ("a.most_material_left_mm", "b.most_material_left_mm"), 1000.0),
        KeyFigure("cycle time, A -> B", f"{a.cycle_time_s:.1f} s -> {b.cycle_time_s:.1f} s",
                  ("a.cycle_time_s", "b.cycle_time_s"))]
    for side, label in ((c.a, "A"), (c.b, "B")):
        if side.features:
            figure = drawing_figure(side.features)
            figures.append(KeyFigure(f"{label} against the drawing", figure.value, note=figure.note,
                                     verdict=figure.verdict))
    return tuple(figures)


def compare_chapter(c) -> Chapter:
    """`deflect compare`: the two jobs side by side on one sheet, their material left overlaid on the next."""
    from deflect.output.compare_report import compare_blocks
    from deflect.output.figures import plain, profiles_figure, svg_text

    blocks, cautions = split_cautions(compare_blocks(c))
    named = [(f"A ({c.a.name})", c.a.prediction), (f"B ({c.b.name})", c.b.prediction)]
    overlay = Figure("Material left beyond the drawn surface, a side: A solid, B dashed.",
                     svg_text(profiles_figure(named, f"Material left: A {plain(c.a.name)} and B {plain(c.b.name)}")))
    sheets = (Sheet("Two jobs side by side", tuple(blocks)), Sheet("Material left, A and B", (overlay,)))
    return Chapter("compare", "Comparison", compare_key_figures(c), sheets, cautions)


def rules_chapter(rules, always_a_sheet: bool = True) -> Chapter:
    """`deflect rules`: the thinnest wall, the findings and what to do about them, on one sheet (left out, when
    not `always_a_sheet`, if there is nothing but the thinnest wall to say: the key figures say it)."""
    from deflect.output.rules_report import rules_blocks

    figures = [KeyFigure("thinnest wall", f"{rules.thinnest_wall_mm:.3f} mm", ("thinnest_wall_mm",),
                         note="" if rules.least_wall_mm is None else f"the material's least: {rules.least_wall_mm:g} mm"),
               KeyFigure("design rules", f"{len(rules.findings)} finding(s)" if rules.findings else "no findings",
                         verdict="bad" if rules.findings else "good")]
    left = sum(f.mass_left_g for f in rules.findings)
    if left:
        figures.append(KeyFigure("left by the tools' shape", f"{left:.4f} g", ("mass_left_g",)))
    said = always_a_sheet or rules.findings or rules.notes
    sheets = (Sheet("Design rules", tuple(rules_blocks(rules))),) if said else ()
    return Chapter("rules", "Design rules", tuple(figures), sheets)


def chatter_key_figures(study) -> tuple[KeyFigure, ...]:
    chattering = [p.name for p in study.passes if not p.stable]
    figures = []
    if study.modes:
        lowest = study.modes[0]
        figures.append(KeyFigure("lowest mode", f"{lowest.frequency_hz:.0f} Hz", ("modes.0.frequency_hz",),
                                 note=f"n = {lowest.n} waves around, m = {lowest.m}"))
    figures += [KeyFigure("passes that chatter", f"{len(chattering)} of {len(study.passes)}",
                          note=", ".join(chattering) if chattering else "every pass checked is stable",
                          verdict="bad" if chattering else "good"),
                KeyFigure("modal damping", f"{100 * study.damping:.2g} %", ("damping",), 100.0,
                          note="recalled, not measured" if study.damping_from_memory else "from [dynamics]")]
    return tuple(figures)


def chatter_chapter(study) -> Chapter:
    """`deflect chatter`: the modes and each pass's stability on one sheet, each pass's lobes (when the study
    drew them) on a sheet of its own, the mode shapes on the last."""
    from deflect.output.chatter_figures import lobes_figure, mode_shapes_figure
    from deflect.output.chatter_report import chatter_blocks
    from deflect.output.figures import svg_text

    blocks, cautions = split_cautions(chatter_blocks(study))
    sheets = [Sheet("Chatter: the wall's modes and the passes' stability", tuple(blocks))]
    for p in study.passes:
        if p.lobes is not None:
            sheets.append(Sheet(f"Stability lobes: {p.name}", (Figure(
                "Where the pass chatters (red) over spindle speed and depth of cut at its worst station, the speeds "
                "where all its stations are stable at its depth (green), and the pass itself.",
                svg_text(lobes_figure(p, study.title))),)))
    if study.shapes:
        sheets.append(Sheet("The first modes of the finished part", (Figure(
            "The first modes as held: the mid-surface at rest (grey) and deflected (blue, exaggerated), and the "
            "waves around the part.", svg_text(mode_shapes_figure(study))),)))
    return Chapter("chatter", "Chatter", chatter_key_figures(study), tuple(sheets), cautions)


def sheets_at(blocks: list, starts: dict[str, str], side_by_side: tuple[str, ...] = ()) -> list[Sheet]:
    """The blocks in sheets: a new sheet begins at each block whose title begins with one of `starts`' keys,
    named by its value (blocks that would begin a sheet of the same name as the one before join it); the sheets
    named in `side_by_side` lay their blocks out in a row."""
    sheets: list[tuple[str, list]] = []
    for block in blocks:
        title = getattr(block, "title", "")
        start = next((prefix for prefix in starts if title.startswith(prefix)), None)
        name = starts[start] if start is not None else None
        if not sheets or (name is not None and name != sheets[-1][0]):
            sheets.append((name or title, []))
        sheets[-1][1].append(block)
    return [Sheet(name, tuple(group), side_by_side=name in side_by_side) for name, group in sheets]


def explain_key_figures(result) -> tuple[KeyFigure, ...]:
    figures = [KeyFigure("residual after the calibration", f"{result.residual_rms_um:.2f} um rms",
                         ("residual_rms_um",), note="measured - calibrated")]
    force = [(k, e) for k, e in enumerate(e for e in result.estimates if e.unknown.kind != "size")]
    for k, e in force:
        if e.identified:
            figures.append(KeyFigure(f"factor on {e.unknown.name}'s forces", f"x{e.value:.3f}",
                                     (f"factors.{k}.value",), note=f"95 %: {e.low:.3f} to {e.high:.3f}"))
    if result.mass is not None:
        m = result.mass
        figures.append(KeyFigure("measured mass gain", f"{m.measured_g - m.nominal_g:+.3f} g", ("mass.gain_g",),
                                 note=f"rest after the causes {m.rest_g:+.4f} g",
                                 verdict="" if m.rest_explained else "bad"))
    return tuple(figures)


def explain_chapter(result, remedies=None, surface_of: dict | None = None, units: str = "mm",
                    searched: bool = False) -> Chapter:
    """`deflect explain`: the calibration and the fit, the readings, the mass by cause, each profile and the next
    part, each on a sheet of its own, and the figure of the profiles and the mass split."""
    from deflect.output.explain_report import explain_blocks
    from deflect.output.figures import first_article_figure, svg_text

    blocks, cautions = split_cautions(explain_blocks(result, remedies, surface_of, units, searched))
    profiles = "The profiles against the drawing"
    sheets = sheets_at(blocks, {"Calibration": "First article: the calibration", "Readings": "The readings",
                                "Mass": "The mass by cause", "Profile": profiles, "Next part": "The next part"},
                       side_by_side=(profiles,))
    sheets.append(Sheet("The first article against the model", (Figure(
        "Measured (with 95 % bars), uncalibrated and calibrated diameters and wall against the drawing along z, and "
        "the measured mass gain split by cause.", svg_text(first_article_figure(result))),)))
    return Chapter("explain", "First article", explain_key_figures(result), tuple(sheets), cautions)
