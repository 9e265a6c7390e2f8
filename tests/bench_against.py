"""Helpers of the benchmark scripts: CPU time of a workload, here and in an earlier revision, in one run.

This machine is shared and noisy, so a speed figure means little on its own. Each benchmark therefore times
the same workload in this tree and in a temporary `git worktree` of an earlier revision (`--against REV`,
by default the commit the speed work started from), in fresh child processes with PYTHONPATH pointing at
the tree, alternating between the two, and reports the median CPU seconds of each and their ratio.
CPU time is that of the child and of every process it started and waited for (`RUSAGE_CHILDREN`), so
worker processes count too.

Not a test (pytest collects only test_*.py); imported by the tests/bench_*.py scripts.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parents[1]
# The commit the speed work (issue 16) started from: the "previous code" of the ratios.
DEFAULT_AGAINST = "238e70c"
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def options(description: str, runs: int = 3) -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--against", default=DEFAULT_AGAINST, metavar="REV",
                        help=f"earlier revision to time the same workload in (default {DEFAULT_AGAINST})")
    parser.add_argument("--alone", action="store_true", help="time this tree only, no earlier revision")
    parser.add_argument("--runs", type=int, default=runs, help=f"runs of each workload in each tree ({runs})")
    return parser


def compiled(tree: Path) -> Path:
    """The tree with its package's bytecode written, as `pip install` writes it: a user's `deflect` does not
    compile its ~50 modules from source at every start (0.1 s of the demo's CPU here), but a machine that sets
    PYTHONDONTWRITEBYTECODE, as this one does, would make every child of the benchmark do so."""
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(tree / "deflect")], check=True,
                   capture_output=True, text=True)
    return tree


@contextlib.contextmanager
def trees(against: str | None):
    """{label: source tree}: this one, and a temporary worktree of `against` (removed afterwards), both with
    their bytecode written (`compiled`)."""
    if against is None:
        yield {"this": compiled(HERE)}
        return
    folder = Path(tempfile.mkdtemp(prefix="deflect-bench-"))
    worktree = folder / "tree"
    subprocess.run(["git", "-C", str(HERE), "worktree", "add", "--detach", str(worktree), against],
                   check=True, capture_output=True, text=True)
    try:
        yield {"this": compiled(HERE), against: compiled(worktree)}
    finally:
        subprocess.run(["git", "-C", str(HERE), "worktree", "remove", "--force", str(worktree)],
                       capture_output=True, text=True)
        shutil.rmtree(folder, ignore_errors=True)


def environment(tree: Path) -> dict:
    """The child's environment: this tree's package first on the path, BLAS on one thread (as `deflect`
    runs), nothing else changed."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(tree), *filter(None, [os.environ.get("PYTHONPATH")])])
    for name in THREAD_VARIABLES:
        env[name] = "1"
    return env


def timed(args: list[str], tree: Path, cwd: Path | None = None) -> tuple[float, float, str]:
    """(CPU seconds of the child and all it waited for, wall seconds, stdout) of one run of a command."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(args, env=environment(tree), cwd=cwd or tree, capture_output=True, text=True)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode != 0:
        raise RuntimeError(f"{' '.join(args)} failed in {tree}:\n{done.stderr[-2000:]}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return cpu, wall, done.stdout


def deflect_command(*arguments: str) -> list[str]:
    """The `deflect` command line run by the interpreter of this venv on whatever tree is first on the path."""
    return [sys.executable, "-c", "import sys; from deflect.cli import main; main(sys.argv[1:])", *arguments]


def script_command(script: Path, payload: dict) -> list[str]:
    """A child that runs `script --child PAYLOAD` (a benchmark's in-process measurement)."""
    return [sys.executable, str(script), "--child", json.dumps(payload)]


def compare(workloads: dict[str, list[str]], sources: dict[str, Path], runs: int, reported: bool = False) -> dict:
    """Median CPU and wall seconds of each workload in each tree, the trees alternating run by run.

    reported: take the seconds the child prints as JSON ({"cpu_s": .., "wall_s": ..} on its last line: a
    part of its work timed in-process) instead of the whole child's.
    Returns {workload: {tree label: {"cpu_s": median, "wall_s": median, "stdout": last stdout}}}.
    """
    results = {name: {label: {"cpu": [], "wall": [], "stdout": "", "failed": ""} for label in sources}
               for name in workloads}
    for _ in range(runs):
        for name, args in workloads.items():
            for label, tree in sources.items():
                entry = results[name][label]
                if entry["failed"]:
                    continue
                try:
                    cpu, wall, out = timed(args, tree)
                except RuntimeError as exc:  # a job the earlier code cannot run (it says why)
                    entry["failed"] = str(exc).strip().splitlines()[-1]
                    continue
                if reported:
                    inner = json.loads(out.strip().splitlines()[-1])
                    cpu, wall = inner["cpu_s"], inner["wall_s"]
                entry["cpu"].append(cpu)
                entry["wall"].append(wall)
                entry["stdout"] = out
    return {name: {label: {"cpu_s": statistics.median(e["cpu"]) if e["cpu"] else None,
                           "wall_s": statistics.median(e["wall"]) if e["wall"] else None,
                           "stdout": e["stdout"], "failed": e["failed"]} for label, e in per_tree.items()}
            for name, per_tree in results.items()}


def print_table(title: str, medians: dict, runs: int) -> None:
    """One line per workload: CPU seconds here and in the earlier tree, and how many times less here."""
    labels = list(next(iter(medians.values())))
    print(f"{title} (median of {runs} runs, CPU seconds incl. child processes; wall in brackets)")
    head = f"{'workload':<28}" + "".join(f"{label:>22}" for label in labels)
    if len(labels) == 2:
        head += f"{'CPU ratio':>11}"
    print(head)
    for name, per_tree in medians.items():
        line = f"{name:<28}" + "".join(f"{m['cpu_s']:>10.2f} s ({m['wall_s']:6.2f} s)" if m["cpu_s"] is not None
                                       else f"{'fails':>22}" for m in per_tree.values())
        this, other = (per_tree[label]["cpu_s"] for label in labels) if len(labels) == 2 else (None, None)
        if this is not None and other is not None:
            line += f"{other / this:>10.2f}x"
        print(line)
        for label, m in per_tree.items():
            if m["failed"]:
                print(f"{'':<28}{label}: {m['failed']}")


# ---------------------------------------------------------------------------------------------------
# the jobs timed: the shipped examples and two heavier variants of the demo

EXAMPLES = HERE / "data" / "examples"
TALL_WALL_MM = 85.0   # the tall-wall variant: the demo wall's free end at z = 85 mm instead of 45
MANY_CUT_DEPTH_MM = 0.3


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(v)}" for k, v in value.items()) + " }"
    return "[" + ", ".join(_toml_value(v) for v in value) + "]"


def toml_text(data: dict) -> str:
    """A job dict (tables of scalars, lists and inline tables; arrays of tables) as TOML text."""
    lines = []
    for name, value in data.items():
        for table in (value if isinstance(value, list) else [value]):
            lines.append(f"[[{name}]]" if isinstance(value, list) else f"[{name}]")
            lines.extend(f"{k} = {_toml_value(v)}" for k, v in table.items())
            lines.append("")
    return "\n".join(lines)


def tall_wall(data: dict, top_mm: float) -> dict:
    """The demo housing with its wall's free end (drawn at z = 45, stock at 46) raised to top_mm: every
    z of 45 or 46 in the outline, the stock and the passes' extents moves up by top_mm - 45."""
    lift = top_mm - 45.0

    def moved(point):
        return [point[0], point[1] + lift, *point[2:]] if point[1] in (45.0, 46.0) else point

    data = json.loads(json.dumps(data))
    data["part"]["outline"] = [moved(p) for p in data["part"]["outline"]]
    data["stock"]["outline"] = [moved(p) for p in data["stock"]["outline"]]
    for p in data["pass"]:
        if "z" in p:
            p["z"] = [z + lift if z in (45.0, 46.0) else z for z in p["z"]]
    return data


def many_cuts(data: dict, depth_mm: float) -> dict:
    """The demo housing with its roughing passes' depth per cut set to depth_mm (more roughing cuts)."""
    data = json.loads(json.dumps(data))
    for p in data["pass"]:
        if "depth" in p:
            p["depth"] = depth_mm
    return data


def benchmark_jobs(folder: Path) -> dict[str, Path]:
    """{name: job file}: the four shipped examples, and the tall-wall and many-cut variants of the demo
    written to folder."""
    import tomllib

    # the example jobs (a file with a [job] table: the shipped first article beside them is a measurement)
    jobs = {path.stem: path for path in sorted(EXAMPLES.glob("*.toml"))
            if "job" in tomllib.loads(path.read_text())}
    housing = tomllib.loads((EXAMPLES / "housing.toml").read_text())
    for name, data in ((f"housing, wall to z {TALL_WALL_MM:g}", tall_wall(housing, TALL_WALL_MM)),
                       (f"housing, depth {MANY_CUT_DEPTH_MM:g}", many_cuts(housing, MANY_CUT_DEPTH_MM))):
        path = folder / (name.replace(", ", "-").replace(" ", "-") + ".toml")
        path.write_text(toml_text(data))
        jobs[name] = path
    return jobs
