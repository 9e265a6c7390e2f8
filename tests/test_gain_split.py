"""The mass gain by surface and by the tools' shape: its lines add up to the gain, each holding its own share.

The gain is the machined section's mass less the drawn section's (`inprocess.polygon_mass`,
`geometry.section.mass_properties`; Pappus-Guldinus); the lines (`machining.gain_split`) cut that material into
regions, so their sum is the machined polygon's mass less the drawn polygon's, computed here by the shoelace
sums of `polygon_mass` (no region cut), which differs from the gain over the drawn arcs by the polygon's chords
only. The stock no pass
removes on a face is a solid of revolution in closed form, rho 2 pi r_mean A (Pappus-Guldinus); the nose's
material in a sharp corner (1 - pi / 4) r^2 at its centroid (tests/test_toolshape.py).
"""

from __future__ import annotations

import math
import sys
import tomllib
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_toolshape import DENSITY, SHOULDER, SHOULDER_STOCK, grooved, write_job  # noqa: E402

from deflect.geometry.section import mass_properties  # noqa: E402
from deflect.job.reader import read_job  # noqa: E402
from deflect.machining.inprocess import polygon_mass  # noqa: E402
from deflect.machining.simulate import simulate  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
JOBS = sorted(p.name for p in EXAMPLES.glob("*.toml") if "part" in tomllib.loads(p.read_text()))
PRINTED_G = 1e-3              # the gain table prints grams to three decimals
OVERLAY_G = 1e-8              # the regions cut and summed in floating point: far below a printed digit


def predicted(path):
    job = read_job(path)
    return job, simulate(job, process_from_job(job))


def check_adds_up(job, pred) -> None:
    density = job.material.density_g_cm3
    lines = pred.mass_gain_by_surface_g
    machined, drawn = polygon_mass(pred.machined_rz, density)[0], polygon_mass(pred.nominal_rz, density)[0]
    assert sum(lines.values()) == pytest.approx(machined - drawn, abs=OVERLAY_G)
    # the gain is over the drawn section's arcs: the polygon's chords are all that differs
    assert pred.mass_gain_g.value == pytest.approx(machined - mass_properties(job.section, density).mass_g,
                                                   rel=1e-12)
    assert abs(drawn - mass_properties(job.section, density).mass_g) < 0.1 * PRINTED_G
    # as printed: the lines' grams sum to the gain's within the rounding of each
    printed = sum(round(g, 3) for g in lines.values())
    assert abs(printed - round(pred.mass_gain_g.value, 3)) <= 0.5 * PRINTED_G * len(lines) + 1e-12
    # the mass left on a finished OD or ID is that surface's line, nothing of the tools' shape in it
    for check in pred.surfaces:
        assert check.mass_left_g == lines[check.surface]


@pytest.mark.parametrize("name", JOBS)
def test_the_lines_add_up_on_the_shipped_examples(name):
    check_adds_up(*predicted(EXAMPLES / name))


def test_a_sharp_corners_nose_material_is_counted_once(tmp_path):
    """The shoulder drawn sharp: the 0.4 mm nose leaves its spandrel there, on the corners' line only."""
    job, pred = predicted(write_job(tmp_path, SHOULDER, "DCMT11T304", SHOULDER_STOCK))
    check_adds_up(job, pred)
    nose = 0.4
    area, centroid = (1.0 - math.pi / 4.0) * nose ** 2, (10.0 - 3.0 * math.pi) / (12.0 - 3.0 * math.pi) * nose
    spandrel = DENSITY * 1e-3 * 2.0 * math.pi * (20.0 + centroid) * area
    assert pred.mass_gain_by_surface_g["corners"] == pytest.approx(spandrel, rel=1e-3)
    od = next(c for c in pred.surfaces if c.surface == "od")
    assert od.mass_left_g < 0.1 * spandrel          # the push-off's layer, not the spandrel again


def test_stock_left_on_a_face_is_counted_whole(tmp_path):
    """A sleeve r 10..20 with a groove whose ramp the insert's edges cannot follow (a corner of the nose and a
    piece out of reach) and 1 mm of stock left on its top face (z 40..41, r 10..20), which no pass turns: the
    unmachined line is that ring, rho 2 pi x 15 mm x (10 x 1) mm2, the OD's push-off on the ring's rim within
    1e-3 of it; the layer point by point lost 1 % of it where the ring wraps the face's corners."""
    job, pred = predicted(write_job(tmp_path, grooved(45.0), "DCMT11T302"))
    check_adds_up(job, pred)
    lines = pred.mass_gain_by_surface_g
    assert {"corners", "reach", "unmachined"} <= set(lines)
    ring = DENSITY * 1e-3 * 2.0 * math.pi * 15.0 * (10.0 * 1.0)
    assert lines["unmachined"] == pytest.approx(ring, rel=1e-3)
