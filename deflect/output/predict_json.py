"""JSON payload of `deflect predict --json`: a Prediction -> a dict (keys and meanings in INTERFACE.md).

Formatting only. The keys users' scripts rely on (the outside contract) are fixed; every other key carries
the one name of its quantity and its unit (INTERFACE.md, "Names"). Where a fixed key differs from that name,
or has no unit (`r`, `z`, `feed_mm` for a feed in mm/rev, `deflection_mm` for the push-off, `deviation_mm`
for the material left), the named key stands beside it with the same value.
"""

from __future__ import annotations

from deflect.machining.results import Prediction, SpreadValue, StationTable


def spread(value: SpreadValue) -> dict:
    return {"value": value.value, "low": value.low, "high": value.high}


def station_records(table: StationTable, feed_mm: float) -> list[dict]:
    records = []
    for k in range(len(table.r_mm)):
        r, z, push_off = float(table.r_mm[k]), float(table.z_mm[k]), float(table.deflection_mm[k])
        records.append({
            "r": r, "z": z,
            "depth_mm": float(table.depth_mm[k]), "feed_mm": feed_mm,
            "chip_thickness_mm": float(table.chip_thickness_mm[k]),
            "force_N": {"cutting": float(table.cutting_n[k]), "feed": float(table.feed_n[k]),
                        "passive": float(table.passive_n[k])},
            "compliance_mm_per_N": float(table.compliance_mm_per_n[k]),
            "deflection_mm": push_off,
            "r_mm": r, "z_mm": z, "feed_mm_per_rev": feed_mm, "push_off_mm": push_off,
            "met_depth_mm": float(table.met_depth_mm[k]),
            "tool_compliance_mm_per_N": table.tool_compliance_mm_per_n,
            "power_kW": float(table.power_kw[k]),
            "rubbing": bool(table.rubbing[k]),
            "cut": table.cut + 1,
        })
    return records


def deviation_records(deviation) -> list[dict]:
    records = []
    for k, (point, normal) in enumerate(zip(deviation.points_rz, deviation.normals)):
        r, z, left = float(point[0]), float(point[1]), float(deviation.deviation_mm[k])
        record = {"r": r, "z": z, "nr": float(normal[0]), "nz": float(normal[1]), "deviation_mm": left,
                  "r_mm": r, "z_mm": z, "material_left_mm": left, "surface": deviation.surface[k],
                  "finished_by": deviation.finished_by[k],
                  "corner": bool(deviation.corner is not None and deviation.corner[k])}
        if deviation.roundness_mm is not None:
            record["spring_back_mm"] = float(deviation.released_mm[k])
            record["roundness_mm"] = float(deviation.roundness_mm[k])
            record["lobe_peak_mm"] = float(deviation.lobe_peak_mm[k])
            record["two_point_low_mm"] = float(deviation.two_point_low_mm[k])
            record["two_point_high_mm"] = float(deviation.two_point_high_mm[k])
        records.append(record)
    return records


def um(value_mm: float | None) -> float | None:
    return None if value_mm is None else 1000.0 * value_mm


def feature_record(c) -> dict:
    """One toleranced feature: limits, predicted extremes and margin in um (a diameter's change from its
    nominal size, the wall's from nominal, a roundness or an Ra)."""
    scale = 1.0 if c.unit == "um" else 1000.0
    return {"feature": c.feature, "surface": c.surface, "pass": c.pass_name, "meets": c.meets,
            "nominal_diameter_mm": c.nominal if c.surface in ("od", "id") else None,
            "lower_um": scale * c.lower, "upper_um": scale * c.upper, "low_um": scale * c.low,
            "high_um": scale * c.high, "margin_um": scale * c.margin, "z_mm": c.worst_z_mm,
            "roundness_um": um(c.roundness_mm), "form_um": um(c.form_mm) if c.size_rule else None,
            "size_rule": c.size_rule or None}


def point_record(rz: tuple[float, float] | None) -> dict | None:
    """A point of the section, {r_mm, z_mm}; None for none."""
    return None if rz is None else {"r_mm": rz[0], "z_mm": rz[1]}


def surface_record(c) -> dict:
    return {"surface": c.surface, "position_rz_mm": c.positions, "material_left_mm": c.deviation_mm,
            "nominal_diameter_mm": c.nominal_diameter_mm, "predicted_diameter_mm": c.predicted_diameter_mm,
            "most_material_left_mm": c.max_deviation_mm, "most_material_left_at": point_record(c.max_at_rz),
            "mass_left_g": c.mass_left_g, "roundness_mm": c.roundness_mm}


def prediction_payload(pred: Prediction, features=(), warnings=()) -> dict:
    return {
        "title": pred.title,
        "nominal": {"mass_g": pred.nominal_mass_g, "inertia_axial_kg_mm2": pred.nominal_inertia_kg_mm2},
        "predicted": {"mass_g": pred.predicted_mass_g.value, "mass_gain_g": pred.mass_gain_g.value,
                      "inertia_axial_kg_mm2": pred.predicted_inertia_kg_mm2,
                      "most_material_left_mm": pred.max_deviation_mm.value,
                      "most_material_left_at": point_record(pred.max_deviation_at_rz),
                      "most_cut_below_mm": pred.most_cut_below_mm,
                      "most_cut_below_at": point_record(pred.most_cut_below_at_rz)},
        "cycle_time_s": pred.cycle_time_s,
        "passes": [{"name": p.name, "surface": p.surface, "tool": p.tool, "cycle_time_s": p.cycle_time_s,
                    "max_deflection_mm": p.max_deflection_mm, "max_push_off_mm": p.max_deflection_mm,
                    "feed_mm_per_rev": p.feed_mm, "speed_m_min": p.speed_m_min,
                    "peak_power_kW": p.peak_power_kw, "mass_left_g": p.mass_left_g, "cuts": len(p.cuts),
                    "stations": [s for table in p.cuts for s in station_records(table, p.feed_mm)]}
                   for p in pred.passes],
        "deviation": deviation_records(pred.deviation),
        "tolerance": [feature_record(c) for c in features],
        "lobes": pred.lobes,
        "ranges": {"force_spread": pred.force_spread, "predicted_mass_g": spread(pred.predicted_mass_g),
                   "mass_gain_g": spread(pred.mass_gain_g),
                   "most_material_left_mm": spread(pred.max_deviation_mm)},
        "mass_gain_by_surface_g": pred.mass_gain_by_surface_g,
        "surfaces": [surface_record(c) for c in pred.surfaces],
        "wall": pred.wall,
        "peak_power_kW": pred.peak_power_kw,
        "machine_power_kW": pred.machine_power_kw,
        "warnings": [*pred.warnings, *warnings],
    }
