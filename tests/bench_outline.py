"""Speed and memory of the outline checks against the number of outline nodes (not run by the test command).

A drawing exported with fine splines gives outlines of thousands of nodes. This script writes a sleeve whose OD
is a smooth bulge of N nodes (the bore and the ends straight), held either by a [[held]] box or by a [holding]
table (three jaws: the grip's contact is sampled too), and runs `deflect section` and `deflect compliance --at`
on it, each in a fresh process. It prints, per node count, the wall time, the CPU time (user + system, less
disturbed by a busy machine) and the peak resident memory of that process (`resource.getrusage`).

    python tests/bench_outline.py                     # 5,000 / 10,000 / 20,000 / 40,000 nodes
    python tests/bench_outline.py 5000 20000          # chosen counts
    DEFLECT_SOURCE=/path/to/other/checkout python tests/bench_outline.py 5000   # another version's figures

Careful with an older version: before the R-trees, 20,000 nodes with [holding] took 18.8 GB.

The work should grow about linearly with the nodes: every pairwise test of the outline (segments that may
touch, rays across the wall, the grip's levels) goes through an R-tree of the segments' boxes.
"""

from __future__ import annotations

import json
import math
import os
import resource
import subprocess
import sys
import sysconfig
import tempfile
import time
from pathlib import Path

COUNTS = (5_000, 10_000, 20_000, 40_000)
RUN = "import sys; from deflect.cli import main; main(sys.argv[1:])"


def dense_sleeve(nodes: int, holding: bool) -> str:
    """A 40 mm sleeve, bore r 19, OD r 20 + 0.3 sin^2(pi z / 40) drawn with nodes - 2 points."""
    count = nodes - 2
    points = [(19.0, 0.0)]
    for i in range(count):
        z = 40.0 * i / (count - 1)
        points.append((20.0 + 0.3 * math.sin(math.pi * z / 40.0) ** 2, z))
    points.append((19.0, 40.0))
    outline = ",\n".join(f"[{r:.9f}, {z:.9f}]" for r, z in points)
    held = ('[holding]\nkind = "jaws"\njaws = 3\nz = [0.0, 5.0]\nwidth = 10.0\nforce = 2000.0' if holding
            else "[[held]]\nr = [0.0, 100.0]\nz = [0.0, 5.0]")
    return (f'[job]\ntitle = "dense outline, {nodes} nodes"\n[material]\nname = "al-6061-t6"\n'
            f"[part]\noutline = [\n{outline}]\n{held}\n")


def measured(args: list[str]) -> tuple[float, float, float, int]:
    """(wall s, CPU s, peak memory MB, exit code) of `deflect ARGS` in a fresh process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    source = os.environ.get("DEFLECT_SOURCE")
    if source:
        # another version: without site's start-up (which would put this tree's editable install first), with the
        # installed libraries on the path after that version's sources
        env = {**os.environ, "PYTHONPATH": os.pathsep.join([source, sysconfig.get_paths()["purelib"]])}
        command = [sys.executable, "-S", "-c", RUN, *args]
    else:
        env, command = None, [sys.executable, "-c", RUN, *args]
    # run outside any source tree: `python -c` looks in the working folder first
    code = subprocess.run(command, stdout=subprocess.DEVNULL, env=env, cwd=tempfile.gettempdir()).returncode
    wall = time.perf_counter() - start
    # ru_maxrss of RUSAGE_CHILDREN is the largest child so far: run each case in its own measuring process
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, after.ru_maxrss / 1024.0, code


def measure_in_child(args: list[str]) -> tuple[float, float, float, int]:
    """`measured` in a process of its own, so that its peak memory is that case's alone."""
    script = ("import sys, json; sys.path.insert(0, %r); from bench_outline import measured; "
              "print(json.dumps(measured(sys.argv[1:])))" % str(Path(__file__).resolve().parent))
    out = subprocess.run([sys.executable, "-c", script, *args], capture_output=True, text=True, check=True).stdout
    return tuple(json.loads(out.strip().splitlines()[-1]))


def main(counts: tuple[int, ...]) -> None:
    folder = Path(tempfile.mkdtemp(prefix="deflect-bench-outline-"))
    print(f"{'nodes':>7}  {'case':<28} {'wall s':>7} {'CPU s':>7} {'peak MB':>8}  exit")
    for nodes in counts:
        for holding in (False, True):
            job = folder / f"sleeve-{nodes}{'-holding' if holding else ''}.toml"
            job.write_text(dense_sleeve(nodes, holding))
            cases = [("section", ["section", str(job)])]
            if not holding:
                cases.append(("compliance --at 20,38", ["compliance", str(job), "--at", "20,38"]))
            for name, args in cases:
                label = f"{name}{' [holding]' if holding else ''}"
                wall, cpu, peak, code = measure_in_child(args)
                print(f"{nodes:>7}  {label:<28} {wall:>7.2f} {cpu:>7.2f} {peak:>8.0f}  {code}")


if __name__ == "__main__":
    main(tuple(int(a) for a in sys.argv[1:]) or COUNTS)
