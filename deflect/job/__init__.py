"""The job and its inputs: every table of a job file read and checked, lengths turned into mm.

    reader.py     the job file (TOML) -> `Job`: title, units, section, material, held boxes, the other tables
    checks.py     small checks of values shared by the readers
    materials.py  [material] and the shipped library -> `Material` (elastic and Kienzle constants, sources)
    tooling.py    [[tool]], ISO 1832 insert codes -> `Tool` (nose radius, angles, boring bar)
    process.py    [stock], [[pass]], [machine] -> `Process` (each key checked on its own)
    fits.py       [tolerance], ISO 286-1 fit codes -> `Tolerances`
    holding.py    [holding] -> `Holding`, and where the grip bears on the section
    dynamics.py   [dynamics] -> `Dynamics`: modal damping, a tap test's modes
    drawing.py    a DXF half-section ([part] drawing, `deflect import`) -> outline nodes, lines and arcs
    measured.py   a first article's measurement file -> `Measured` (mass, diameters, wall, faces, roundness)
    calibration.py  a first article's calibration file -> `Calibration` (force factors, size errors, grip)

Bad input is an `InputError` naming the key. May import: `deflect.errors`, `deflect.geometry`.
"""
