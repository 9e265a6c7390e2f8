"""`deflect predict` with work holding and tolerances: the jaws' spring-back in the deviation, roundness beside
the diameter, and each toleranced feature in or out.

Checks, each against something computed here rather than read back from the product:
* the roundness predict reports on the bore of the shipped ring equals what `deflect clamp` reports for the
  same points (two commands, the grip during the cut found by each on its own);
* cut round while squeezed by jaws on the OD, the bore springs out when they let go (ring theory, e.g.
  Timoshenko, Strength of Materials II, the ring under radial loads: an inward squeeze of the rim recovers
  outwards), most next to the jaws;
* the spring-back moves the surface but adds no material: the mass gain equals a Pappus integration of the
  deviation less the spring-back;
* six jaws at the same total grip leave the bore far rounder than three (inextensional ring theory, derived: a factor of
  about 19 on a thin ring; here a short tube, so only the direction and a lower bound of 5 are asserted);
* the features against the drawing: the OD and bore limits from ISO 286-1 (`deflect.job.fits`, validated on its
  own) and the predicted extremes recomputed from the JSON deviation points.
"""

from __future__ import annotations

import json
import math
import re
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import run_cli  # noqa: E402

from deflect.job.fits import limits_of_fit  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
RING = EXAMPLES / "ring.toml"
HOUSING = EXAMPLES / "housing.toml"
CYLINDER_COS = 0.999
SAME_ROUNDNESS = 0.02          # the two commands sample the bore at different z; the roundness varies slowly
PAPPUS = 0.01                  # midpoint rule on 0.1 mm spacing against the polygon mass


def predict_json(path: Path) -> dict:
    code, out, err = run_cli(["predict", str(path), "--json"])
    assert code == 0, err
    return json.loads(out)


@pytest.fixture(scope="module")
def ring():
    return predict_json(RING)


def bore_points(data: dict) -> list[dict]:
    return [p for p in data["deviation"] if p["surface"] == "id" and abs(p["nr"]) > CYLINDER_COS]


def test_roundness_in_predict_matches_clamp(ring):
    code, out, err = run_cli(["clamp", str(RING), "--json"])
    assert code == 0, err
    clamp = json.loads(out)
    points = bore_points(ring)
    z = np.array([p["z"] for p in points])
    for record in clamp["roundness_um"]:
        if record["surface"] != "id":
            continue
        nearest = points[int(np.argmin(np.abs(z - record["z"])))]
        if abs(nearest["z"] - record["z"]) > 0.1:
            continue
        assert 1000.0 * nearest["roundness_mm"] == pytest.approx(record["value"], rel=SAME_ROUNDNESS)
    assert ring["lobes"] == clamp["lobes"] == 3


def test_bore_springs_out_most_next_to_the_jaws(ring):
    points = sorted(bore_points(ring), key=lambda p: p["z"])
    # the bore's outward normal points at the axis: springing out (larger bore) is negative along it. Beyond
    # the jaws' reach the uniform squeeze dies out as a decaying bending wave (Timoshenko & Woinowsky-Krieger,
    # Theory of Plates and Shells, ch. 15) that may cross zero, so only the gripped length is judged.
    under_jaws = np.array([p["spring_back_mm"] for p in points if p["z"] <= 8.0])   # the job's holding.z
    assert np.all(under_jaws < 0.0)
    free_end = [p for p in points if p["z"] >= 12.0]
    assert abs(under_jaws[0]) == max(abs(p["spring_back_mm"]) for p in points)
    assert abs(under_jaws[0]) > 3.0 * max(abs(p["spring_back_mm"]) for p in free_end)


def test_spring_back_adds_no_material(ring):
    points = ring["deviation"]
    total = 0.0
    rz = np.array([[p["r"], p["z"]] for p in points])
    spacing = np.linalg.norm(np.diff(np.vstack([rz, rz[:1]]), axis=0), axis=1)
    ds = 0.5 * (spacing + np.roll(spacing, 1))
    for p, step in zip(points, ds):
        cut = p["deviation_mm"] - p.get("spring_back_mm", 0.0)
        mid_r = p["r"] + 0.5 * cut * p["nr"]
        total += 2.0 * math.pi * mid_r * cut * step
    density = 2.70   # g/cm3, 6061-T6 as the job's library material (data/materials.toml)
    gain = ring["predicted"]["mass_gain_g"]
    assert total * density * 1e-3 == pytest.approx(gain, rel=PAPPUS, abs=2e-4)


def test_six_jaws_leave_a_rounder_bore(ring, tmp_path):
    six = tmp_path / "six.toml"
    six.write_text(re.sub(r"^jaws = 3", "jaws = 6", RING.read_text(), flags=re.M))
    data = predict_json(six)
    worst_three = max(p["roundness_mm"] for p in bore_points(ring))
    worst_six = max(p["roundness_mm"] for p in bore_points(data))
    assert data["lobes"] == 6
    assert worst_six < worst_three / 5.0


def test_toleranced_features_against_the_drawing():
    data = predict_json(HOUSING)
    features = {f["feature"]: f for f in data["tolerance"]}
    for surface, code in (("od", "h8"), ("id", "H8")):
        points = [p for p in data["deviation"] if p["surface"] == surface and abs(p["nr"]) > CYLINDER_COS]
        diameters = {round(2.0 * p["r"], 3) for p in points}
        for diameter in diameters:
            mine = [p for p in points if abs(2.0 * p["r"] - diameter) < 2e-3]
            # material left makes an OD larger (nr = +1) and a bore smaller (nr = -1)
            change = np.array([2.0 * p["deviation_mm"] * p["nr"] for p in mine])
            lower, upper = limits_of_fit(code, diameter, "test")
            name = f"{'OD' if surface == 'od' else 'ID'} {diameter:g}"
            feature = features[name]
            # the JSON gives the feature's limits and extremes in um
            assert feature["low_um"] == pytest.approx(1000.0 * change.min(), abs=1e-9)
            assert feature["high_um"] == pytest.approx(1000.0 * change.max(), abs=1e-9)
            assert (feature["lower_um"], feature["upper_um"]) == pytest.approx((1000.0 * lower, 1000.0 * upper),
                                                                                abs=1e-9)
            inside = change.min() >= lower and change.max() <= upper
            assert feature["meets"] == inside
    assert any(not f["meets"] for f in features.values())     # the housing as programmed is out
