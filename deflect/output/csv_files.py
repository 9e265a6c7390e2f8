"""CSV files of a machining prediction: a `results.Prediction` -> four comma-separated tables in a folder.

Formatting only; no physics is computed here. Files (one header row, then data; each column's quantity by its
one name and its unit, as in INTERFACE.md; cuts numbered from 1 within their pass, as on the screen):
- `stations.csv`: every tool position of every cut of every pass, in machining order;
- `deviation.csv`: the material left along the finished boundary (outward normal, > 0 thicker than drawn);
- `passes.csv`: one summary row per pass;
- `machined_section.csv`: the as-machined half-section polygon (counter-clockwise).
Numbers carry 9 significant digits (sub-nanometre on parts up to a metre); booleans are written 1 / 0.
"""

from __future__ import annotations

import csv
from pathlib import Path

from deflect.errors import InputError
from deflect.machining.results import PassResult, Prediction

DIGITS = 9

STATION_COLUMNS = ["pass", "cut", "r_mm", "z_mm", "met_depth_mm", "depth_mm", "chip_thickness_mm",
                   "cutting_force_N", "feed_force_N", "passive_force_N", "compliance_mm_per_N",
                   "tool_compliance_mm_per_N", "push_off_mm", "power_kW", "rubbing"]
DEVIATION_COLUMNS = ["r_mm", "z_mm", "nr", "nz", "material_left_mm", "surface", "finished_by"]
PASS_COLUMNS = ["pass", "surface", "tool", "cuts", "feed_mm_per_rev", "speed_m_min", "max_push_off_mm",
                "peak_passive_force_N", "peak_power_kW", "cycle_time_s", "mass_left_g", "rubbing_stations"]
SECTION_COLUMNS = ["r_mm", "z_mm"]


def number(value) -> str:
    return f"{float(value):.{DIGITS}g}"


def output_folder(folder, key: str) -> Path:
    """The folder to write into, created if needed; an InputError naming `key` when that is impossible."""
    path = Path(folder)
    try:
        path.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(key, f"cannot use {str(path)!r} as an output folder ({exc.strerror or exc}); "
                              "give a folder you may write to") from None
    return path


def station_rows(passes: list[PassResult]):
    for p in passes:
        for t in p.cuts:
            for k in range(len(t.r_mm)):
                yield [p.name, t.cut + 1, number(t.r_mm[k]), number(t.z_mm[k]), number(t.met_depth_mm[k]),
                       number(t.depth_mm[k]), number(t.chip_thickness_mm[k]), number(t.cutting_n[k]),
                       number(t.feed_n[k]), number(t.passive_n[k]), number(t.compliance_mm_per_n[k]),
                       number(t.tool_compliance_mm_per_n), number(t.deflection_mm[k]), number(t.power_kw[k]),
                       int(bool(t.rubbing[k]))]


def deviation_rows(pred: Prediction):
    d = pred.deviation
    for k in range(len(d.deviation_mm)):
        yield [number(d.points_rz[k, 0]), number(d.points_rz[k, 1]), number(d.normals[k, 0]),
               number(d.normals[k, 1]), number(d.deviation_mm[k]), d.surface[k], d.finished_by[k]]


def pass_rows(passes: list[PassResult]):
    for p in passes:
        peak_passive = max((float(c.passive_n.max(initial=0.0)) for c in p.cuts), default=0.0)
        yield [p.name, p.surface, p.tool, len(p.cuts), number(p.feed_mm), number(p.speed_m_min),
               number(p.max_deflection_mm), number(peak_passive), number(p.peak_power_kw), number(p.cycle_time_s),
               number(p.mass_left_g), sum(int(c.rubbing.sum()) for c in p.cuts)]


def write_table(path: Path, header: list[str], rows) -> Path:
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(rows)
    return path


def write_csv(pred: Prediction, folder, key: str = "--csv") -> list[Path]:
    """Write stations.csv, deviation.csv, passes.csv and machined_section.csv into `folder`.

    Parameters
    ----------
    pred : the prediction to write
    folder : output folder (str or Path), created with its parents if missing
    key : the option that named the folder, for the error message when it cannot be written

    Returns the paths written, in the order above.
    """
    out = output_folder(folder, key)
    section = ([number(r), number(z)] for r, z in pred.machined_rz)
    try:
        return [write_table(out / "stations.csv", STATION_COLUMNS, station_rows(pred.passes)),
                write_table(out / "deviation.csv", DEVIATION_COLUMNS, deviation_rows(pred)),
                write_table(out / "passes.csv", PASS_COLUMNS, pass_rows(pred.passes)),
                write_table(out / "machined_section.csv", SECTION_COLUMNS, section)]
    except OSError as exc:
        raise InputError(key, f"cannot write into {str(out)!r} ({exc.strerror or exc}); "
                              "give a folder you may write to") from None
