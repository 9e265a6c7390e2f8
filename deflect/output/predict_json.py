"""JSON payload of `deflect predict --json`: a Prediction -> the dict of INTERFACE.md (plus extras).

Formatting only. The contract's keys and meanings are fixed; extra keys are added beside them.
"""

from __future__ import annotations

from deflect.machining.results import Prediction, SpreadValue, StationTable


def spread(value: SpreadValue) -> dict:
    return {"value": value.value, "low": value.low, "high": value.high}


def station_records(table: StationTable, feed_mm: float) -> list[dict]:
    records = []
    for k in range(len(table.r_mm)):
        records.append({
            "r": float(table.r_mm[k]), "z": float(table.z_mm[k]),
            "depth_mm": float(table.depth_mm[k]), "feed_mm": feed_mm,
            "chip_thickness_mm": float(table.chip_thickness_mm[k]),
            "force_N": {"cutting": float(table.cutting_n[k]), "feed": float(table.feed_n[k]),
                        "passive": float(table.passive_n[k])},
            "compliance_mm_per_N": float(table.compliance_mm_per_n[k]),
            "deflection_mm": float(table.deflection_mm[k]),
            "met_depth_mm": float(table.met_depth_mm[k]),
            "tool_compliance_mm_per_N": table.tool_compliance_mm_per_n,
            "power_kW": float(table.power_kw[k]),
            "rubbing": bool(table.rubbing[k]),
            "cut": table.cut,
        })
    return records


def deviation_records(deviation) -> list[dict]:
    records = []
    for k, (point, normal) in enumerate(zip(deviation.points_rz, deviation.normals)):
        record = {"r": float(point[0]), "z": float(point[1]), "nr": float(normal[0]), "nz": float(normal[1]),
                  "deviation_mm": float(deviation.deviation_mm[k]), "surface": deviation.surface[k],
                  "finished_by": deviation.finished_by[k]}
        if deviation.roundness_mm is not None:
            record["released_mm"] = float(deviation.released_mm[k])
            record["roundness_mm"] = float(deviation.roundness_mm[k])
        records.append(record)
    return records


def feature_record(c) -> dict:
    return {"feature": c.feature, "surface": c.surface, "unit": c.unit, "nominal": c.nominal, "lower": c.lower,
            "upper": c.upper, "low": c.low, "high": c.high, "margin": c.margin, "meets": c.meets,
            "z": c.worst_z_mm, "pass": c.pass_name}


def prediction_payload(pred: Prediction, features=()) -> dict:
    return {
        "title": pred.title,
        "nominal": {"mass_g": pred.nominal_mass_g, "inertia_axial_kg_mm2": pred.nominal_inertia_kg_mm2},
        "predicted": {"mass_g": pred.predicted_mass_g.value, "mass_gain_g": pred.mass_gain_g.value,
                      "inertia_axial_kg_mm2": pred.predicted_inertia_kg_mm2,
                      "max_deviation_mm": pred.max_deviation_mm.value},
        "cycle_time_s": pred.cycle_time_s,
        "passes": [{"name": p.name, "surface": p.surface, "tool": p.tool, "cycle_time_s": p.cycle_time_s,
                    "max_deflection_mm": p.max_deflection_mm, "peak_power_kW": p.peak_power_kw,
                    "mass_left_g": p.mass_left_g, "cuts": len(p.cuts),
                    "stations": [s for table in p.cuts for s in station_records(table, p.feed_mm)]}
                   for p in pred.passes],
        "deviation": deviation_records(pred.deviation),
        "tolerance": [feature_record(c) for c in features],
        "lobes": pred.lobes,
        "ranges": {"force_spread": pred.force_spread, "predicted_mass_g": spread(pred.predicted_mass_g),
                   "mass_gain_g": spread(pred.mass_gain_g), "max_deviation_mm": spread(pred.max_deviation_mm)},
        "mass_gain_by_surface_g": pred.mass_gain_by_surface_g,
        "surfaces": [{"surface": c.surface, "positions": c.positions, "deviation_mm": c.deviation_mm,
                      "nominal_diameter_mm": c.nominal_diameter_mm,
                      "predicted_diameter_mm": c.predicted_diameter_mm, "max_deviation_mm": c.max_deviation_mm,
                      "mass_left_g": c.mass_left_g, "roundness_mm": c.roundness_mm} for c in pred.surfaces],
        "wall": pred.wall,
        "peak_power_kW": pred.peak_power_kw,
        "machine_power_kW": pred.machine_power_kw,
        "warnings": pred.warnings,
    }
