"""Writes data/examples/housing.dxf, the drawing of the demo housing's half-section (a plain script, not a test).

    python tests/make_example_drawing.py

The drawing is the section of data/examples/housing.toml as `deflect predict --dxf` and `deflect import` read
and write drawings: drawing x along the spin axis (z), y the radius, millimetres, the section one closed
polyline of lines and bulged arcs on layer SECTION, the axis a centre line on layer AXIS. tests/test_drawing.py
checks that the shipped file still reproduces the job's section.
"""

from pathlib import Path

from deflect.job.reader import read_job
from deflect.output.dxf_files import section_dxf

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"


def write_example() -> Path:
    job = read_job(EXAMPLES / "housing.toml")
    return section_dxf(job.section, EXAMPLES / "housing.dxf", job.title, key="housing.dxf")


if __name__ == "__main__":
    print(f"wrote {write_example()}")
