"""Terminal report and JSON of `deflect rules`, and the short summary at the top of `predict` and `tune`.

Formatting only; the findings come from `deflect.decisions.rules`. The JSON keys `rule`, `r`, `z`, `value`,
`limit`, `mass_left_g` and `message` are fixed; the same figures also appear with their units in the key
(`r_mm`, `value_mm` or `value_deg`, ...) beside them.
"""

from __future__ import annotations

from deflect.decisions.rules import Finding, Rules
from deflect.output.tables import Grid, Text, blocks_text, column_grid

SUMMARY_LINES = 4
RULE_NAMES = {"wall": "wall", "corner": "internal corner", "reach": "reach of the tool", "drawing": "drawing"}


def finding_record(f: Finding) -> dict:
    record = {"rule": f.rule, "r": f.r_mm, "z": f.z_mm, "value": f.value, "limit": f.limit,
              "mass_left_g": f.mass_left_g, "message": f.message,
              "r_mm": f.r_mm, "z_mm": f.z_mm, f"value_{f.unit}": f.value, f"limit_{f.unit}": f.limit,
              "unit": f.unit, "area_mm2": f.area_mm2, "volume_mm3": f.volume_mm3}
    if f.pass_name:
        record["pass"] = f.pass_name
        record["tool"] = f.tool
    return record


def rules_payload(rules: Rules) -> dict:
    return {"findings": [finding_record(f) for f in rules.findings],
            "mass_left_g": sum(f.mass_left_g for f in rules.findings),
            "thinnest_wall_mm": rules.thinnest_wall_mm, "least_wall_mm": rules.least_wall_mm,
            "notes": rules.notes}


def _value_text(f: Finding) -> str:
    if f.unit == "deg":
        return f"{f.value:.3g} deg (limit {f.limit:g})"
    return f"{f.value:.4g} mm (limit {f.limit:g})"


def rules_report(rules: Rules, title: str) -> str:
    """The whole report as the terminal prints it."""
    return f"Design rules: {title}\n" + blocks_text(rules_blocks(rules))


def rules_blocks(rules: Rules) -> list[Grid | Text]:
    """The report's tables and paragraphs: the thinnest wall, the findings and what to do, the notes."""
    wall = f"thinnest wall {rules.thinnest_wall_mm:.3f} mm"
    if rules.least_wall_mm is not None:
        wall += f" (the material's least: {rules.least_wall_mm:g} mm, common practice)"
    blocks = [Text((wall,))]
    if not rules.findings:
        blocks.append(Text(("No findings: the drawing meets every rule checked.",)))
    else:
        rows = [[RULE_NAMES[f.rule], f"{f.r_mm:.4g}", f"{f.z_mm:.4g}", _value_text(f),
                 f"{f.mass_left_g:.4f}" if f.mass_left_g else "-"] for f in rules.findings]
        blocks += [column_grid("Findings", ["rule", "r mm", "z mm", "drawn", "mass left g"], rows),
                   Text(tuple(f"{k + 1}. {f.message}" for k, f in enumerate(rules.findings)))]
    if rules.notes:
        blocks.append(Text(tuple(f"note: {n}" for n in rules.notes)))
    return blocks


def rules_summary(rules: Rules | None) -> str:
    """A few lines for the top of another report ('' without findings)."""
    if rules is None or not rules.findings:
        return ""
    left = sum(f.mass_left_g for f in rules.findings)
    head = (f"Design rules: {len(rules.findings)} finding(s)"
            + (f", {left:.4f} g left by the tools' shape" if left else "") + " (details: deflect rules JOB)")
    shown = [f"  {RULE_NAMES[f.rule]} at r = {f.r_mm:.4g}, z = {f.z_mm:.4g}: {_value_text(f)}"
             + (f", leaves {f.mass_left_g:.4f} g" if f.mass_left_g else "") for f in rules.findings[:SUMMARY_LINES]]
    if len(rules.findings) > SUMMARY_LINES:
        shown.append(f"  and {len(rules.findings) - SUMMARY_LINES} more")
    return "\n".join([head, *shown])
