"""Synthetic first articles for the tests: a "measured" part made by predicting a job whose force constants
(or tool setting, or grip) differ from the recalled ones, read with gauges of our own, plus gauge noise.

The truth is the simulation of a different job (its Kienzle constants scaled inline in [material], or a
calibration file attached), so the constant the fit should find is known by construction. The gauges here
are independent of `deflect.geometry.gauging`: a horizontal (or axial) line intersected with the as-machined
section by shapely, the jaws' spring-back taken from the prediction's own deviation points.
"""

from __future__ import annotations

import tomllib

import numpy as np
from shapely.geometry import LineString, Polygon

from deflect.job.materials import library_path

KIENZLE_K11 = ("kc11", "kf11", "kp11")
INLINE_KEYS = ("E", "nu", "density", "kc11", "mc", "kf11", "mf", "kp11", "mp", "ref_rake", "ref_approach",
               "ref_speed")


def scaled_material(name: str, scale: float) -> dict:
    """A library material written out inline with its three k1.1 scaled (the truth's constants)."""
    record = tomllib.loads(library_path().read_text())[name]
    return {key: record[key] * (scale if key in KIENZLE_K11 else 1.0) for key in INLINE_KEYS}


def material_block(values: dict) -> str:
    return "[material]\n" + "\n".join(f"{k} = {v!r}" for k, v in values.items()) + "\n"


def crossings(polygon_rz: np.ndarray, z_mm: float) -> np.ndarray:
    """Radii where the line at height z crosses the section's boundary (shapely), sorted."""
    ring = Polygon(polygon_rz).exterior
    far = float(np.max(polygon_rz[:, 0])) + 10.0
    hit = ring.intersection(LineString([(-1.0, z_mm), (far, z_mm)]))
    points = [hit] if hit.geom_type == "Point" else list(getattr(hit, "geoms", []))
    return np.sort([p.x for p in points if p.geom_type == "Point"])


def face_heights(polygon_rz: np.ndarray, r_mm: float) -> np.ndarray:
    ring = Polygon(polygon_rz).exterior
    low, high = float(polygon_rz[:, 1].min()) - 10.0, float(polygon_rz[:, 1].max()) + 10.0
    hit = ring.intersection(LineString([(r_mm, low), (r_mm, high)]))
    points = [hit] if hit.geom_type == "Point" else list(getattr(hit, "geoms", []))
    return np.sort([p.y for p in points if p.geom_type == "Point"])


def released_near(pred, surface: str, r_mm: float, z_mm: float) -> tuple[float, float]:
    """The prediction's spring-back along the outward normal and roundness at the finished point nearest."""
    d = pred.deviation
    if d.released_mm is None:
        return 0.0, 0.0
    mine = np.array([s == surface for s in d.surface])
    if not mine.any():
        return 0.0, 0.0
    gaps = np.hypot(d.points_rz[mine, 0] - r_mm, d.points_rz[mine, 1] - z_mm)
    k = int(np.argmin(gaps))
    if gaps[k] > 0.5:
        return 0.0, 0.0
    return float(d.released_mm[mine][k]), float(d.roundness_mm[mine][k])


def measure(pred, diameters=(), walls=(), faces=(), roundness=()) -> dict:
    """Noise-free readings of a predicted part: diameters [(surface, z, u)], walls [(z, u)], face heights
    [(r, near_z, u)], roundness [(surface, z)] -> the [measured] table (mm, g)."""
    rz = pred.machined_rz
    table = {"mass": float(pred.predicted_mass_g.value), "diameter": [], "wall": [], "face": [], "roundness": []}
    for surface, z, u in diameters:
        radii = crossings(rz, z)
        r = float(radii[-1]) if surface == "od" else float(radii[-2])
        released, _ = released_near(pred, surface, r, z)
        r += released if surface == "od" else -released
        table["diameter"].append({"surface": surface, "z": z, "value": 2.0 * r, "uncertainty": u})
    for z, u in walls:
        radii = crossings(rz, z)
        table["wall"].append({"z": z, "value": float(radii[-1] - radii[-2]), "uncertainty": u})
    for r, near, u in faces:
        heights = face_heights(rz, r)
        table["face"].append({"r": r, "value": float(heights[np.argmin(np.abs(heights - near))]), "uncertainty": u})
    for surface, z in roundness:
        radii = crossings(rz, z)
        r = float(radii[-1]) if surface == "od" else float(radii[-2])
        _, out_of_round = released_near(pred, surface, r, z)
        table["roundness"].append({"surface": surface, "z": z, "value_um": 1000.0 * out_of_round,
                                   "uncertainty_um": 0.5})
    return {"measured": {k: v for k, v in table.items() if v != []}}


def with_noise(data: dict, rng: np.random.Generator, mass_uncertainty_g: float = 0.01) -> dict:
    """The readings with gauge noise of their stated (standard) uncertainty added."""
    measured = dict(data["measured"])
    for kind in ("diameter", "wall", "face"):
        measured[kind] = [{**e, "value": e["value"] + rng.normal(0.0, e["uncertainty"])}
                          for e in measured.get(kind, [])]
    if "roundness" in measured:
        measured["roundness"] = [{**e, "value_um": max(0.0, e["value_um"] + rng.normal(0.0, e["uncertainty_um"]))}
                                 for e in measured["roundness"]]
    measured["mass"] = measured["mass"] + rng.normal(0.0, mass_uncertainty_g)
    measured["mass_uncertainty"] = mass_uncertainty_g
    return {"measured": {k: v for k, v in measured.items() if v != []}}


def measured_toml(data: dict) -> str:
    """The [measured] table as a TOML file."""
    measured = data["measured"]
    lines = ["[measured]"]
    lines += [f"{k} = {v!r}" for k, v in measured.items() if not isinstance(v, list)]
    for kind in ("diameter", "wall", "face", "roundness"):
        for entry in measured.get(kind, []):
            lines.append(f"[[measured.{kind}]]")
            lines += [f"{k} = {v!r}" if not isinstance(v, str) else f'{k} = "{v}"' for k, v in entry.items()]
    return "\n".join(lines) + "\n"
