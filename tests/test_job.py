"""The job reader: inch jobs are converted to mm on read (1 inch = 25.4 mm exactly, by the international
yard and pound agreement of 1959), and the mm job and its inch twin describe the same part."""

import math

import pytest

from deflect.geometry.section import mass_properties
from deflect.job.reader import MM_PER_INCH, parse_job

MM_TUBE = {"material": {"E": 68900.0, "nu": 0.33, "density": 2.70},
           "part": {"outline": [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0, 0.3], [19.0, 40.0]]},
           "held": [{"r": [0.0, 100.0], "z": [0.0, 5.0]}]}


def in_inches(job: dict) -> dict:
    inch = {"job": {"units": "inch"}, "material": dict(job["material"])}
    inch["part"] = {"outline": [[v / MM_PER_INCH for v in node] for node in job["part"]["outline"]]}
    inch["held"] = [{k: [v / MM_PER_INCH for v in box[k]] for k in box} for box in job["held"]]
    return inch


def test_inch_job_is_the_same_part():
    mm_job = parse_job(MM_TUBE, "tube.toml")
    inch_job = parse_job(in_inches(MM_TUBE), "tube-inch.toml")
    mm_props = mass_properties(mm_job.section, 2.70)
    inch_props = mass_properties(inch_job.section, 2.70)
    assert inch_props.volume_mm3 == pytest.approx(mm_props.volume_mm3, rel=1e-12)
    assert inch_props.inertia_axial_kg_mm2 == pytest.approx(mm_props.inertia_axial_kg_mm2, rel=1e-12)
    assert inch_job.held[0].z_range == pytest.approx((0.0, 5.0), abs=1e-12)
    # the closed form of the tube without its fillet bounds the volume from above (Pappus)
    assert mm_props.volume_mm3 < math.pi * (20.0**2 - 19.0**2) * 40.0
    assert not inch_job.warnings   # 40 mm long: no suspicion of a wrong unit


def test_mm_job_drawn_in_inches_is_suspected():
    job = parse_job(in_inches(MM_TUBE) | {"job": {"units": "mm"}}, "tube-wrong.toml")
    assert job.warnings and "inch" in job.warnings[0]
