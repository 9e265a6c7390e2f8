"""Design revision (`deflect.decisions.design`): the walls it finds, the redrawn part, and the thinnest wall that holds.

Checks:
* the housing has one thin wall, between the OD 50 and the bore 47.6, 1.2 mm (the drawing's numbers);
* moving its bore changes the part's mass by the ring between the two bores over the moved length:
  Pappus, V = 2 pi r_c A with A = delta x length and r_c the strip's centroid radius (the fillets at the two
  ends move with the bore, so the strip is exact up to their centroid shift);
* monotone physics behind the bisection: a thicker wall pushes off less (the material left falls), and the
  thinnest wall the search reports holds while the next thinner on its ladder does not (slow: each wall
  tried is a new shell model of the whole part).
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import pytest

from deflect.decisions.design import STEP_MM, predict_wall, revise_walls, revised_data, walls_of
from deflect.decisions.tune import tune
from deflect.geometry.section import mass_properties
from deflect.job.fits import tolerance_from_table
from deflect.job.reader import parse_job, read_job

HOUSING = Path(__file__).resolve().parents[1] / "data" / "examples" / "housing.toml"
DATA = tomllib.loads(HOUSING.read_text())
PAPPUS = 2e-3                    # the fillets' centroid shift against the strip's


def test_the_housing_has_one_thin_wall():
    walls = walls_of(read_job(HOUSING).section)
    assert len(walls) == 1
    wall = walls[0]
    assert (2 * wall.od_radius_mm, 2 * wall.bore_radius_mm) == pytest.approx((50.0, 47.6), abs=1e-9)
    assert wall.thickness_mm == pytest.approx(1.2, abs=1e-9)


@pytest.mark.parametrize("thickness_mm", [0.8, 1.5])
def test_moving_the_bore_changes_the_mass_by_the_strip(thickness_mm):
    job = read_job(HOUSING)
    wall = walls_of(job.section)[0]
    revised = parse_job(revised_data(DATA, wall, thickness_mm), str(HOUSING))
    density = job.material.density_g_cm3
    change_g = mass_properties(revised.section, density).mass_g - mass_properties(job.section, density).mass_g
    # the bore line runs from the bottom corner node (z 6) to the rim corner node (z 45) of the outline
    length_mm, delta_mm = 45.0 - 6.0, thickness_mm - 1.2
    centre_r = wall.bore_radius_mm - 0.5 * delta_mm
    expected_g = density * 1e-3 * 2.0 * math.pi * centre_r * delta_mm * length_mm
    assert change_g == pytest.approx(expected_g, rel=PAPPUS)


@pytest.fixture(scope="module")
def recommended():
    job = read_job(HOUSING)
    return job, tune(job).options[0].changes, tolerance_from_table(job.tables["tolerance"])


@pytest.mark.slow
def test_thicker_wall_pushes_off_less(recommended):
    job, changes, tolerances = recommended
    wall = walls_of(job.section)[0]
    thin, thick = (predict_wall(DATA, str(HOUSING), wall, t, changes, tolerances, {}) for t in (1.0, 1.35))
    spread = [max(c.high - c.low for c in o.checks if c.surface in ("od", "id")) for o in (thin, thick)]
    assert spread[1] < spread[0]


@pytest.mark.slow
def test_thinnest_wall_that_holds_is_the_edge(recommended):
    job, changes, tolerances = recommended
    revision = revise_walls(DATA, str(HOUSING), job, changes, tolerances)[0]
    assert revision.thinnest_mm is not None and revision.outcome.meets
    thinner = predict_wall(DATA, str(HOUSING), revision.wall, revision.thinnest_mm - STEP_MM, changes, tolerances, {})
    assert thinner is None or not thinner.meets
    # thinner than drawn costs mass and inertia accordingly: less of both
    assert (revision.mass_g < revision.drawn_mass_g) == (revision.thinnest_mm < revision.wall.thickness_mm)
