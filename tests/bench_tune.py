"""Benchmark: `deflect tune` on the demo's housing (data/examples/housing.toml); a plain script, not a test.

Times the whole command, `deflect tune JOB --json` (with `--design`, the wall revision too), start-up
included, in fresh child processes: CPU seconds of the command and of any process it starts. The same runs
are made in a temporary worktree of an earlier revision (`--against REV`, by default the commit the speed
work started from), alternating with this tree; the medians, their ratio and each tree's first option are
printed (bench_against.py). The target of issue 16: at least 3 times less CPU than the starting revision.

Run:  python tests/bench_tune.py [--design] [--against REV | --alone] [--runs N]
"""

import json
import os

import bench_against

DEMO = bench_against.EXAMPLES / "housing.toml"
TARGET_RATIO = 3.0


def first_option(stdout: str) -> str:
    """The first option's changes and cycle time, from the command's JSON."""
    payload = json.loads(stdout)
    first = payload["options"][0]
    return f"cycle {first['cycle_time_s']:.2f} s, {len(first['changes'])} changes, meets {first['meets']}"


def main() -> None:
    parser = bench_against.options(__doc__.splitlines()[0])
    parser.add_argument("--design", action="store_true", help="time `deflect tune --design` as well")
    args = parser.parse_args()
    workloads = {"tune (demo)": bench_against.deflect_command("tune", str(DEMO), "--json")}
    if args.design:
        workloads["tune --design (demo)"] = bench_against.deflect_command("tune", str(DEMO), "--json", "--design")
    with bench_against.trees(None if args.alone else args.against) as sources:
        print(f"{os.cpu_count()} cores; trees: " + ", ".join(f"{k} = {v}" for k, v in sources.items()))
        medians = bench_against.compare(workloads, sources, args.runs)
        bench_against.print_table("deflect tune", medians, args.runs)
        for name, per_tree in medians.items():
            for label, m in per_tree.items():
                print(f"  {name}, {label}: first option {first_option(m['stdout'])}")
        if len(sources) == 2:
            this, other = (m["cpu_s"] for m in medians["tune (demo)"].values())
            verdict = "meets" if other / this >= TARGET_RATIO else "misses"
            print(f"\ntune: {other / this:.2f}x less CPU: {verdict} the {TARGET_RATIO:g}x target")


if __name__ == "__main__":
    main()
