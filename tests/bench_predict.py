"""Benchmark: `deflect predict` on the shipped examples and two heavier variants; a plain script, not a test.

For every job (the four examples in data/examples/, the demo housing with its wall raised to z = 70 mm, and
the demo with its roughing passes at 0.3 mm depth per cut) it times the whole command,
`deflect predict JOB --json`, start-up included, in fresh child processes: CPU seconds of the command and
of any process it starts. The same runs are made in a temporary worktree of an earlier revision
(`--against REV`, by default the commit the speed work started from), alternating with this tree, and the
medians and their ratio printed (bench_against.py). Then the prediction alone (`simulate`, in-process,
reading the job not counted) on the demo, in both trees, with its headline figures, which must agree.
The target of issue 16: the demo's `predict` at least 3 times less CPU than the starting revision.

Run:  python tests/bench_predict.py [--against REV | --alone] [--runs N]
"""

import json
import os
import sys
import tempfile
import time
from pathlib import Path

import bench_against

DEMO = bench_against.EXAMPLES / "housing.toml"
TARGET_RATIO = 3.0


def child(payload: dict) -> None:
    """In the child: the demo's simulation timed in-process (CPU of this process and its workers)."""
    from deflect.job.reader import read_job
    from deflect.machining.simulate import simulate
    from deflect.machining.targets import process_from_job

    job = read_job(payload["job"])
    process = process_from_job(job)
    before = os.times()
    start = time.perf_counter()
    pred = simulate(job, process)
    wall = time.perf_counter() - start
    after = os.times()
    cpu = sum(after[:4]) - sum(before[:4])
    print(json.dumps({"cpu_s": cpu, "wall_s": wall, "mass_gain_g": pred.mass_gain_g.value,
                      "max_deviation_mm": pred.max_deviation_mm.value}))


def most_left_mm(predicted: dict) -> float:
    """The largest material left from a `predict --json` "predicted" block (named max_deviation_mm before the
    interface page of issue 10 renamed it)."""
    return predicted["most_material_left_mm"] if "most_material_left_mm" in predicted else predicted["max_deviation_mm"]


def main() -> None:
    args = bench_against.options(__doc__.splitlines()[0]).parse_args()
    with tempfile.TemporaryDirectory() as folder, bench_against.trees(None if args.alone else args.against) as sources:
        jobs = bench_against.benchmark_jobs(Path(folder))
        print(f"{os.cpu_count()} cores; trees: " + ", ".join(f"{k} = {v}" for k, v in sources.items()))
        workloads = {name: bench_against.deflect_command("predict", str(path), "--json") for name, path in jobs.items()}
        medians = bench_against.compare(workloads, sources, args.runs)
        bench_against.print_table("deflect predict JOB --json", medians, args.runs)
        for name, per_tree in medians.items():
            figures = {label: json.loads(m["stdout"])["predicted"] for label, m in per_tree.items() if m["stdout"]}
            print(f"  {name}: mass gain " + ", ".join(f"{label} {f['mass_gain_g']:.5f} g" for label, f in figures.items())
                  + "; largest material left " + ", ".join(f"{label} {1000 * most_left_mm(f):.3f} um"
                                                         for label, f in figures.items()))
        demo_cli = medians["housing"]
        inner = {"simulate (demo)": bench_against.script_command(Path(__file__), {"job": str(DEMO)})}
        medians = bench_against.compare(inner, sources, args.runs, reported=True)
        bench_against.print_table("\nthe demo's prediction alone (simulate, in-process)", medians, args.runs)
        if len(sources) == 2:
            this, other = (m["cpu_s"] for m in demo_cli.values())
            verdict = "meets" if other / this >= TARGET_RATIO else "misses"
            print(f"\ndemo predict: {other / this:.2f}x less CPU: {verdict} the {TARGET_RATIO:g}x target")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        child(json.loads(sys.argv[2]))
    else:
        main()
