"""deflect: push-off of thin turned walls, and what it leaves on the part.

The package is a pipeline; each module takes the output of the one before:

    job.py            job file (TOML)        -> Job (plain data, mm / N / MPa)
    section.py        outline                -> Section (lines and arcs), mass properties
    materials.py      material name / values -> Material (elastic and Kienzle constants)
    tooling.py        tool keys, ISO 1832    -> Tool (nose radius, angles, bar compliance)
    cutting.py        depth, feed, speed     -> cutting forces, power, roughness, cutting time
    shell/            section + held boxes   -> shell model -> compliance of the wall
    compliance.py     boundary points        -> 3x3 compliance under a contact patch
    cli.py            the `deflect` command (a thin layer over the above)
"""

__version__ = "0.1.0"
