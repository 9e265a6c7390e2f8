"""Terminal report and JSON of `deflect compare`: a `compare.Comparison` -> text and a dict. Formatting only.

Side by side, A then B and the change from A to B: the masses, the most material left, the cycle time and the
peak power; the OD and ID diameters and the wall at the held end, middle and free end; each toleranced
feature in or out. Material left is "a side" (on the radius); diameter changes in um on the diameter. Two
different parts are said to be so at the top.
"""

from __future__ import annotations

from deflect.decisions.compare import Compared, Comparison
from deflect.output.explain_report import calibration_note, calibration_record
from deflect.output.predict_report import CAUTION, CHECK_ORDER, SURFACE_NAMES
from deflect.output.tables import Grid, Text, blocks_text, column_grid


def part_words(c: Comparison) -> str:
    if c.same_part and (c.a.calibration is not None or c.b.calibration is not None):
        return ("The same part (the same drawn section and material), predicted with and without a first "
                "article's calibration: the differences are what the calibration changes, and the machining's.")
    if c.same_part:
        return ("The same part (the same drawn section and material), made two ways: the differences are the "
                "machining's.")
    return "TWO DIFFERENT PARTS: " + "; ".join(c.part_differences) + ". The figures compare the parts as made."


def headline_rows(c: Comparison) -> list[list[str]]:
    a, b = c.a.prediction, c.b.prediction
    rows = [("nominal mass", "g", a.nominal_mass_g, b.nominal_mass_g, "{:.3f}", "{:+.3f}"),
            ("predicted mass", "g", a.predicted_mass_g.value, b.predicted_mass_g.value, "{:.3f}", "{:+.3f}"),
            ("mass gain", "g", a.mass_gain_g.value, b.mass_gain_g.value, "{:+.3f}", "{:+.3f}"),
            ("most material left, a side", "um", 1e3 * a.max_deviation_mm.value, 1e3 * b.max_deviation_mm.value,
             "{:.1f}", "{:+.1f}"),
            ("cycle time (cutting)", "s", a.cycle_time_s, b.cycle_time_s, "{:.1f}", "{:+.1f}"),
            ("peak cutting power", "kW", a.peak_power_kw, b.peak_power_kw, "{:.2f}", "{:+.2f}")]
    return [[f"{what} {unit}", shown.format(x), shown.format(y), change.format(y - x)]
            for what, unit, x, y, shown, change in rows]


def _surface(pred, kind: str):
    return next((s for s in pred.surfaces if s.surface == kind), None)


def _pair(x: str, y: str) -> str:
    return x if x == y else f"{x} / {y}"


def surface_grid(c: Comparison, kind: str) -> Grid | None:
    """A finished OD or ID: the predicted diameter of A and B at the held end, middle and free end."""
    sa, sb = _surface(c.a.prediction, kind), _surface(c.b.prediction, kind)
    if sa is None and sb is None:
        return None
    rows = []
    for where in CHECK_ORDER:
        at_a = sa is not None and where in sa.positions
        at_b = sb is not None and where in sb.positions
        if not (at_a or at_b):
            continue
        z_a = f"{sa.positions[where][1]:.2f}" if at_a else "-"
        z_b = f"{sb.positions[where][1]:.2f}" if at_b else "-"
        nominal_a = f"{sa.nominal_diameter_mm[where]:.3f}" if at_a else "-"
        nominal_b = f"{sb.nominal_diameter_mm[where]:.3f}" if at_b else "-"
        dia_a = sa.predicted_diameter_mm[where] if at_a else None
        dia_b = sb.predicted_diameter_mm[where] if at_b else None
        change = f"{1e3 * (dia_b - dia_a):+.1f}" if at_a and at_b else "-"
        rows.append([where, _pair(z_a, z_b), _pair(nominal_a, nominal_b), "-" if dia_a is None else f"{dia_a:.3f}",
                     "-" if dia_b is None else f"{dia_b:.3f}", change])
    header = ["where", "z mm", "nominal dia. mm", "A: predicted dia. mm", "B: predicted dia. mm", "B - A um"]
    notes = ("where A and B differ, z and the nominal size are given as A / B",) if not c.same_part else ()
    return column_grid(f"Finished {SURFACE_NAMES[kind]}", header, rows, notes)


def _wall_rows(pred) -> dict:
    return {row["where"]: row for row in pred.wall}


def wall_grid(c: Comparison) -> Grid | None:
    wa, wb = _wall_rows(c.a.prediction), _wall_rows(c.b.prediction)
    if not wa and not wb:
        return None
    rows = []
    for where in (w for w in CHECK_ORDER if w in wa or w in wb):
        ra, rb = wa.get(where), wb.get(where)
        rows.append([where, _pair(f"{ra['z_mm']:.2f}" if ra else "-", f"{rb['z_mm']:.2f}" if rb else "-"),
                     _pair(f"{ra['nominal_mm']:.3f}" if ra else "-", f"{rb['nominal_mm']:.3f}" if rb else "-"),
                     f"{ra['predicted_mm']:.3f}" if ra else "-", f"{rb['predicted_mm']:.3f}" if rb else "-",
                     f"{1e3 * (rb['predicted_mm'] - ra['predicted_mm']):+.1f}" if ra and rb else "-"])
    header = ["where", "z mm", "nominal wall mm", "A: predicted wall mm", "B: predicted wall mm", "B - A um"]
    return column_grid("Wall thickness (OD against ID)", header, rows)


def _verdict(check) -> str:
    if check is None:
        return "-"
    # Ra (in um) to the hundredth, as its limits are written; diameters and walls (in mm) to 0.1 um
    margin = f"{check.margin:+.2f}" if check.unit == "um" else f"{1e3 * check.margin:+.1f}"
    return f"{'in' if check.meets else 'OUT'} ({margin} um)"


def feature_grid(c: Comparison) -> Grid | None:
    """Each toleranced feature of either side, in or out with its margin to the nearer limit."""
    by_a = {f.feature: f for f in c.a.features}
    by_b = {f.feature: f for f in c.b.features}
    names = list(dict.fromkeys([*by_a, *by_b]))
    if not names:
        return None
    rows = [[name, _verdict(by_a.get(name)), _verdict(by_b.get(name))] for name in names]
    return column_grid("Against the drawing", ["feature", "A", "B"], rows,
                       ("in or OUT, with the margin to the nearer limit; < 0 outside",))


def side_words(label: str, side: Compared) -> str:
    calibrated = "" if side.calibration is None else f"; {calibration_note(side.calibration)}"
    return f"{label}: {side.name} ({side.prediction.title}){calibrated}"


def sides_text(c: Comparison) -> Text:
    return Text((side_words("A", c.a), side_words("B", c.b), part_words(c)))


def compare_blocks(c: Comparison) -> list[Grid | Text]:
    """The report's tables and paragraphs: which jobs, the same part or not, the headline, the surfaces and
    the wall, the drawing, caution."""
    blocks = [sides_text(c),
              column_grid("Side by side", ["", "A", "B", "B - A"], headline_rows(c))]
    blocks += [g for g in (surface_grid(c, "od"), surface_grid(c, "id"), wall_grid(c), feature_grid(c)) if g]
    blocks.append(Text((CAUTION,), "caution"))
    return blocks


def compare_report(c: Comparison) -> str:
    return "Two jobs side by side\n\n" + blocks_text(compare_blocks(c))


# ---------------------------------------------------------------------------------------------------
# JSON

def side_record(side: Compared) -> dict:
    pred = side.prediction
    surfaces = {s.surface: {where: {"z_mm": s.positions[where][1],
                                    "nominal_diameter_mm": s.nominal_diameter_mm[where],
                                    "predicted_diameter_mm": s.predicted_diameter_mm[where],
                                    "material_left_mm": s.deviation_mm[where]} for where in s.positions}
                for s in pred.surfaces if s.surface in ("od", "id")}
    return {"job": side.name, "title": pred.title, "material": pred.material,
            "nominal_mass_g": pred.nominal_mass_g, "mass_g": pred.predicted_mass_g.value,
            "mass_gain_g": pred.mass_gain_g.value, "most_material_left_mm": pred.max_deviation_mm.value,
            "cycle_time_s": pred.cycle_time_s, "peak_power_kW": pred.peak_power_kw,
            "surfaces": surfaces,
            "wall": {row["where"]: {"z_mm": row["z_mm"], "nominal_mm": row["nominal_mm"],
                                    "predicted_mm": row["predicted_mm"]} for row in pred.wall},
            "features": [{"feature": f.feature, "meets": f.meets,
                          "margin_um": f.margin if f.unit == "um" else 1e3 * f.margin} for f in side.features],
            "meets": all(f.meets for f in side.features) if side.features else None,
            "calibration": None if side.calibration is None else calibration_record(side.calibration)}


def change_record(a: dict, b: dict) -> dict:
    """B - A of every figure both sides have, under the same keys as theirs."""
    change = {key: b[key] - a[key] for key in ("nominal_mass_g", "mass_g", "mass_gain_g", "most_material_left_mm",
                                               "cycle_time_s", "peak_power_kW")}
    change["surfaces"] = {kind: {where: {"predicted_diameter_mm": b["surfaces"][kind][where]["predicted_diameter_mm"]
                                         - a["surfaces"][kind][where]["predicted_diameter_mm"]}
                                 for where in a["surfaces"][kind] if where in b["surfaces"].get(kind, {})}
                          for kind in a["surfaces"] if kind in b["surfaces"]}
    change["wall"] = {where: {"predicted_mm": b["wall"][where]["predicted_mm"] - a["wall"][where]["predicted_mm"]}
                      for where in a["wall"] if where in b["wall"]}
    return change


def compare_payload(c: Comparison) -> dict:
    a, b = side_record(c.a), side_record(c.b)
    return {"a": a, "b": b, "same_part": c.same_part, "part_differences": list(c.part_differences),
            "change": change_record(a, b)}
