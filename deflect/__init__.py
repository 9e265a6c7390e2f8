"""deflect: push-off of thin turned walls, and what it leaves on the part.

The package is a pipeline. Its rooms, read top to bottom, are the flow of data from the job file to the
report; a room imports only from the rooms above it in this list (`tests/test_layout.py` checks it):

    errors.py     the two errors that reach the user as one `error:` line
    geometry/     the drawn half-section and the held boxes
    job/          the job file read and checked: material, tools, passes, fits, holding (mm, N, MPa)
    mechanics/    cutting forces, the shell of revolution, compliance and modes of the held wall, the jaws'
                  squeeze, regenerative chatter
    machining/    the in-process part, pass by pass, the simulation and its results, the grip window
    decisions/    the drawing checked, the remedies searched, the wall revised
    output/       terminal tables, JSON, CSV, figures, programs (formatting only)
    cli.py        the `deflect` command (a thin layer over the above)
"""

__version__ = "0.1.0"
