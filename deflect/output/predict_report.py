"""Terminal report of a machining prediction: a `results.Prediction` -> text, in the trade's words.

Formatting only; no physics is computed here (the figures come from `deflect.machining.simulate`). Material left is
given "a side", i.e. on the radius (half the change of the measured diameter); push-off in um.
"""

from __future__ import annotations

from deflect.machining.results import PassResult, Prediction, SpreadValue, SurfaceCheck
from deflect.output.tables import Grid, Text, blocks_text, column_grid, pairs_grid

CHECK_ORDER = ("held end", "middle", "free end")
SURFACE_NAMES = {"od": "OD", "id": "ID", "face": "face", "unmachined": "unmachined",
                 "corners": "nose in corners", "reach": "out of reach"}
CAUTION = (
    "Caution: these are estimates from a model of the wall and of the cutting forces;\n"
    "confirm them on a first article before running the batch. The force constants should be calibrated\n"
    "on your material and tools (test cuts with a force measurement, or a first article measured and fed\n"
    "back). The machine's and the chuck maker's limits and your local safety rules come first."
)


def spread_text(spread: SpreadValue, unit: str, digits: int, sign: str = "") -> str:
    """'(low to high unit)': the range of a headline figure."""
    return f"({spread.low:{sign}.{digits}f} to {spread.high:{sign}.{digits}f} {unit})"


def duration_text(seconds: float) -> str:
    """Seconds, and minutes with seconds once it runs past a minute."""
    if seconds < 60.0:
        return f"{seconds:.1f} s"
    minutes, rest = divmod(round(seconds), 60)
    return f"{seconds:.1f} s ({minutes} min {rest:02d} s)"


def where_text(rz: tuple[float, float] | None) -> str:
    """', at r .., z .. mm' for a point of the section, '' for none."""
    return "" if rz is None else f", at r {rz[0]:.2f}, z {rz[1]:.2f} mm"


CUT_BELOW_SHOWN_MM = 0.0005   # a finished surface cut below the drawing by this much shows in the headline (0.001 mm
                              # as printed)


def headline(pred: Prediction) -> Grid:
    """Masses, most material left, cycle time and power; each uncertain figure with its range."""
    gain = pred.mass_gain_g
    gain_pct = 100.0 * gain.value / pred.nominal_mass_g
    power_pct = 100.0 * pred.peak_power_kw / pred.machine_power_kw if pred.machine_power_kw > 0 else float("nan")
    rows = [
        ("material", pred.material),
        ("nominal mass (as drawn)", f"{pred.nominal_mass_g:.3f} g"),
        ("predicted mass", f"{pred.predicted_mass_g.value:.3f} g {spread_text(pred.predicted_mass_g, 'g', 3)}"),
        ("mass gain", f"{gain.value:+.3f} g, {gain_pct:+.2f} % {spread_text(gain, 'g', 3, '+')}"),
        ("most material left", f"{pred.max_deviation_mm.value:.3f} mm a side "
                               f"{spread_text(pred.max_deviation_mm, 'mm', 3)}{where_text(pred.max_deviation_at_rz)}"),
        *([("most cut below the drawing", f"{pred.most_cut_below_mm:.3f} mm a side"
                                         f"{where_text(pred.most_cut_below_at_rz)}")]
          if pred.most_cut_below_mm >= CUT_BELOW_SHOWN_MM else []),
        ("axial inertia", f"{pred.nominal_inertia_kg_mm2:.4g} kg mm2 nominal, "
                          f"{pred.predicted_inertia_kg_mm2:.4g} kg mm2 predicted"),
        ("cycle time (cutting)", duration_text(pred.cycle_time_s)),
        ("peak cutting power", f"{pred.peak_power_kw:.2f} kW of the machine's {pred.machine_power_kw:g} kW "
                               f"({power_pct:.1f} %)"),
    ]
    note = f"in brackets: the range for force constants +/- {100.0 * pred.force_spread:.0f} %"
    return pairs_grid(rows, f"Machining prediction: {pred.title}", (note,))


def pass_row(p: PassResult) -> list[str]:
    peak_passive = max((float(c.passive_n.max(initial=0.0)) for c in p.cuts), default=0.0)
    rubbing = sum(int(c.rubbing.sum()) for c in p.cuts)
    # the push-off of largest size with its sign: a face cut below its target shows as such, not as the
    # largest positive push-off elsewhere on it
    largest = max((float(v) for c in p.cuts for v in c.deflection_mm), key=abs, default=0.0)
    return [p.name, SURFACE_NAMES.get(p.surface, p.surface), p.tool, str(len(p.cuts)), f"{p.feed_mm:.3f}",
            f"{p.speed_m_min:.0f}", f"{1e3 * largest:.1f}", f"{peak_passive:.1f}",
            f"{p.peak_power_kw:.2f}", f"{p.cycle_time_s:.1f}", f"{p.mass_left_g:.3f}", str(rubbing)]


PASSES_TITLE = "Passes, in order"


def pass_table(passes: list[PassResult]) -> Grid:
    header = ["pass", "surface", "tool", "cuts", "feed mm/rev", "speed m/min", "largest push-off um",
              "peak passive force N", "peak power kW", "time s", "mass left g", "rubbing"]
    note = ("largest push-off: of largest size along the pass, negative where the surface came towards the tool "
            "and was cut below its target; rubbing: stations where the wall gives way so far that the tool barely "
            "cuts")
    return column_grid(PASSES_TITLE, header, [pass_row(p) for p in passes], (note,))


def surface_table(check: SurfaceCheck) -> Grid:
    """The finished surface as a machinist checks it: diameter at the held end, middle and free end."""
    header = ["where", "z mm", "nominal dia. mm", "predicted dia. mm", "material left"]
    if check.roundness_mm is not None:
        header.append("roundness um")
    rows = []
    for where in (w for w in CHECK_ORDER if w in check.positions):
        rows.append([where, f"{check.positions[where][1]:.2f}", f"{check.nominal_diameter_mm[where]:.3f}",
                     f"{check.predicted_diameter_mm[where]:.3f}",
                     f"leaves {1e3 * check.deviation_mm[where]:.1f} um a side"])
        if check.roundness_mm is not None:
            rows[-1].append(f"{1e3 * check.roundness_mm[where]:.1f}")
    title = (f"Finished {SURFACE_NAMES.get(check.surface, check.surface)}: most material left "
             f"{1e3 * check.max_deviation_mm:.1f} um a side{where_text(check.max_at_rz)}, "
             f"{check.mass_left_g:.3f} g left on it")
    return column_grid(title, header, rows)


def wall_table(wall: list[dict]) -> Grid:
    header = ["where", "z mm", "nominal wall mm", "predicted wall mm", "thicker by um"]
    rows = [[row["where"], f"{row['z_mm']:.2f}", f"{row['nominal_mm']:.3f}", f"{row['predicted_mm']:.3f}",
             f"{1e3 * (row['predicted_mm'] - row['nominal_mm']):.1f}"] for row in wall]
    return column_grid("Wall thickness (OD against ID)", header, rows)


def shown(value: float, digits: int) -> float:
    """The value as printed to `digits` decimals, a negative that rounds to zero printed as 0 (not -0)."""
    return round(value, digits) or 0.0


def gain_table(pred: Prediction) -> Grid:
    """The gain by surface, each with its share of the whole; a share only where both print as non-zero."""
    total = pred.mass_gain_g.value
    rows = []
    for surface, grams in pred.mass_gain_by_surface_g.items():
        share = ""
        if shown(total, 3) > 0.0 and shown(grams, 3) != 0.0:
            share = f" ({shown(100.0 * grams / total, 0):.0f} % of the gain)"
        rows.append((SURFACE_NAMES.get(surface, surface), f"{shown(grams, 3):.3f} g{share}"))
    notes = tuple(note for key, note in GAIN_NOTES.items() if key in pred.mass_gain_by_surface_g)
    return pairs_grid(rows, "Mass gain by surface", notes)


# the causes that are no surface, said once under the gain table
GAIN_NOTES = {"unmachined": "unmachined: stock no pass removed, counted as material left",
              "corners": "nose in corners: the radius a nose leaves in internal corners drawn sharper (the layer "
                         "over it is its surface's)",
              "reach": "out of reach: where the finishing insert's edges cannot follow the contour"}


GRIP_CAUTION = (
    "Work holding: the diameters include the spring-back of the jaws' squeeze once they let go, and the\n"
    "roundness column is what the jaws leave ({lobes} lobes). A grip below the least needed can let the\n"
    "part turn in the jaws or be thrown from the chuck: see `deflect clamp` for the grip window, and keep\n"
    "to the chuck maker's speed and force limits and the machine's interlocks."
)


SIZE_RULE_NOTES = {
    "envelope": "diameters judged with the envelope requirement (ISO 14405-1 (E)): a GO gauge at the "
                "maximum-material size and two-point sizes within the other limit, so the jaws' lobes count "
                "against the band",
    "two-point": "diameters judged by two-point sizes, independent of form (envelope = false, ISO 8015); the "
                 "roundness beside them",
}


def feature_table(features) -> Grid:
    """Each toleranced feature in or out, with its margin to the nearer limit (and the roundness the jaws
    leave beside each diameter, with [holding])."""
    with_roundness = any(c.roundness_mm is not None for c in features)
    rows = []
    for c in features:
        if c.unit == "um":
            row = [c.feature, f"<= {c.upper:g} um", f"{c.low:.2f} um", f"{c.margin:+.2f} um"]
        elif c.surface == "roundness":
            row = [c.feature, f"<= {1000 * c.upper:g} um", f"{1000 * c.low:.1f} to {1000 * c.high:.1f} um",
                   f"{1000 * c.margin:+.1f} um"]
        else:
            row = [c.feature, f"{1000 * c.lower:+.0f} / {1000 * c.upper:+.0f} um",
                   f"{1000 * c.low:+.1f} to {1000 * c.high:+.1f} um", f"{1000 * c.margin:+.1f} um"]
        row.append("in" if c.meets else "OUT")
        if with_roundness:
            row.append("-" if c.roundness_mm is None else f"{1000 * c.roundness_mm:.1f}")
        rows.append(row)
    header = ["feature", "limits", "predicted", "margin", "verdict"] + (["roundness um"] if with_roundness else [])
    notes = ["diameters and wall: deviation from the drawn size; margin to the nearer limit, < 0 outside"]
    notes += [SIZE_RULE_NOTES[rule] for rule in dict.fromkeys(c.size_rule for c in features if c.size_rule)
              if with_roundness]
    return column_grid("Against the drawing", header, rows, tuple(notes))


def predict_report(pred: Prediction, features=(), warnings=(), rules_summary: str = "") -> str:
    """The whole report as the terminal prints it."""
    return blocks_text(predict_blocks(pred, features, warnings, rules_summary))


def predict_blocks(pred: Prediction, features=(), warnings=(), rules_summary: str = "") -> list[Grid | Text]:
    """The report's tables and paragraphs: headline, the design rules' findings in brief, passes, finished
    surfaces, wall, the toleranced features, mass gain by surface, warnings (the simulation's, then the
    verdict's: grip and form), caution."""
    blocks = [headline(pred), *([Text(tuple(rules_summary.splitlines()))] if rules_summary else [])]
    if pred.passes:
        blocks.append(pass_table(pred.passes))
    checks = [c for c in pred.surfaces if c.surface in ("od", "id")]
    blocks += [surface_table(c) for c in checks]
    if not checks:
        blocks.append(Text(("No finished OD or ID long enough to check at the held end, middle and free end.",)))
    if pred.wall:
        blocks.append(wall_table(pred.wall))
    if features:
        blocks.append(feature_table(features))
    if pred.lobes:
        blocks.append(Text((GRIP_CAUTION.format(lobes=pred.lobes),), "caution"))
    if pred.mass_gain_by_surface_g:
        blocks.append(gain_table(pred))
    if pred.warnings or warnings:
        blocks.append(Text(tuple(f"warning: {w}" for w in [*pred.warnings, *warnings]), "warning"))
    blocks.append(Text((CAUTION,), "caution"))
    return blocks
