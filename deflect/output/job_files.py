"""A job file (TOML) written from a drawing: `deflect import`'s output. Formatting only.

Takes a `deflect.job.drawing.Drawing` and gives the text of a job whose `[part] outline` reproduces the
drawing: nodes `[r, z]` and arcs `{ to = [r, z], radius = R }`, every number to 12 significant digits (1e-12
of the part's size: the drawing is kept far below any tolerance, and the last-bit rounding of a radius
recomputed from a bulge does not show as 0.20000000000000284). An inch drawing gives an inch job
(`units = "inch"`, the numbers as drawn).
"""

from __future__ import annotations

from pathlib import Path

SIGNIFICANT_DIGITS = 12          # a part of 1 m to 1 nm; hides the last-bit rounding of bulges and angles


def _number(value: float) -> str:
    return repr(float(f"{float(value):.{SIGNIFICANT_DIGITS}g}"))


def outline_lines(outline: list) -> list[str]:
    lines = []
    for item in outline:
        if isinstance(item, dict):
            r, z = item["to"]
            lines.append(f"  {{ to = [{_number(r)}, {_number(z)}], radius = {_number(item['radius'])} }},")
        else:
            lines.append(f"  [{', '.join(_number(v) for v in item)}],")
    return lines


def job_text(drawing, notes: list[str], material: str | None) -> str:
    """The job's text: [job], [material] (a named library material, or a line to fill in) and [part]."""
    name = Path(drawing.path).name
    header = [f"# Job written by `deflect import` from the drawing {name}",
              f"# axis: {drawing.axis.how}; drawing unit: {drawing.drawing_unit}; layer(s): "
              f"{', '.join(drawing.layers) or '-'}"]
    header += [f"# note: {note}" for note in notes]
    title = Path(drawing.path).stem.replace('"', "'")
    lines = [*header, "", "[job]", f'title = "{title}"', f'units = "{drawing.unit}"', "", "[material]"]
    if material:
        lines.append(f'name = "{material}"')
    else:
        lines.append('# name = "al-6061-t6"              # choose a library material, or give E, nu, density')
    lines += ["", "[part]", "outline = [", *outline_lines(drawing.outline), "]", ""]
    return "\n".join(lines)
