"""Benchmark: `deflect tune` on the demo's housing (data/examples/housing.toml); a plain script, not a test.

Runs the remedy search as `deflect tune` does (BLAS on one thread, the key stations over the cores) in a
fresh child process and prints the wall-clock time, the plans predicted, how many key-station shell models
were computed, and the first option. The issue's target: <= 20 s on a 2-core laptop-class machine.
The design revision (`--design`) is timed apart: it is asked for on purpose and costs a few predictions
of a redrawn part per wall.

Run:  python tests/bench_tune.py
"""

import os
import subprocess
import sys
import time
from pathlib import Path

HOUSING = Path(__file__).resolve().parents[1] / "data" / "examples" / "housing.toml"
TARGET_S = 20.0


def child() -> None:
    import deflect.machining.simulate as simulate_module
    from deflect.decisions.tune import tune
    from deflect.job.reader import read_job

    computed = [0]
    original = simulate_module.parallel_map

    def counted(function, tasks):
        computed[0] += len(tasks)
        return original(function, tasks)

    simulate_module.parallel_map = counted
    job = read_job(HOUSING)
    start = time.perf_counter()
    result = tune(job)
    wall = time.perf_counter() - start
    first = result.options[0]
    print(f"tune       {wall:6.2f} s wall: {result.evaluations} plans predicted, {computed[0]} key-station shell "
          f"models computed")
    print(f"           first option meets: {first.meets}, cycle {first.cycle_time_s:.2f} s "
          f"(now {result.current.cycle_time_s:.2f} s), {len(first.changes)} changes")
    verdict = "meets" if wall <= TARGET_S else "misses"
    print(f"{verdict} the {TARGET_S:g} s target")
    if "--design" in sys.argv:
        import tomllib

        from deflect.decisions.design import revise_walls
        from deflect.job.fits import tolerance_from_table
        start = time.perf_counter()
        walls = revise_walls(tomllib.loads(HOUSING.read_text()), str(HOUSING), job, first.changes,
                             tolerance_from_table(job.tables["tolerance"]))
        print(f"design     {time.perf_counter() - start:6.2f} s wall for {len(walls)} wall(s)")


def main() -> None:
    if "--child" in sys.argv:
        child()
        return
    env = dict(os.environ)
    for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        env.setdefault(name, "1")
    print(f"{os.cpu_count()} cores; {HOUSING.name}")
    subprocess.run([sys.executable, __file__, "--child", *sys.argv[1:]], env=env, check=True)


if __name__ == "__main__":
    main()
