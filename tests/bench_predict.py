"""Benchmark: the prediction of `deflect demo` (simulate on data/examples/housing.toml); a plain script, not a test.

Runs the simulation in fresh child processes, so that the thread limits are set before numpy is imported:
  * one core:      BLAS/OpenMP threads limited to 1 and the key stations' shell models computed one after
                   another (deflect.machining.simulate.MAX_WORKERS = 1);
  * 1 thread:      BLAS/OpenMP threads limited to 1, the key stations spread over processes as shipped;
                   this is how `deflect demo` runs (deflect.cli sets the BLAS threads to 1 unless the user
                   has set them);
  * default:       nothing limited (simulate called from a user's own script).
For each it prints the wall-clock and CPU seconds of `simulate` (reading and checking the job are timed
apart), the passes, cuts, stations and key-station compliance evaluations, and how the time splits: the
in-process compliance (the shell models at the key stations, with their interpolation along the cut), the
force-deflection equilibrium, and the rest (cut paths, depth of material, removal of the cut material,
deviation, masses). Then how the time grows with the stations: station spacing 0.2, 0.1 and 0.05 mm.
The issue's target: <= 3 s for the demo's prediction.

Run:  python tests/bench_predict.py
"""

import json
import os
import subprocess
import sys
import time
from pathlib import Path

HOUSING = Path(__file__).resolve().parents[1] / "data" / "examples" / "housing.toml"
TARGET_S = 3.0
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def measure(spacing_mm: float | None, one_core: bool) -> dict:
    """One timed simulation of the housing (runs in the child process)."""
    import deflect.machining.simulate as simulate_module
    from deflect.job.reader import read_job
    from deflect.machining.targets import process_from_job

    if one_core:
        simulate_module.MAX_WORKERS = 1
    spent = {"compliance": 0.0, "equilibrium": 0.0}
    counts = {"keys": 0, "compliance_calls": 0}

    def timed(name, function):
        def wrapper(*args, **kwargs):
            start = time.perf_counter()
            try:
                return function(*args, **kwargs)
            finally:
                spent[name] += time.perf_counter() - start
        return wrapper

    original_keys = simulate_module.key_indices

    def counted_keys(*args, **kwargs):
        keys = original_keys(*args, **kwargs)
        counts["keys"] += len(keys)
        counts["compliance_calls"] += 1
        return keys

    simulate_module.key_indices = counted_keys
    simulate_module.plan_compliance = timed("compliance", simulate_module.plan_compliance)
    simulate_module.equilibrium = timed("equilibrium", simulate_module.equilibrium)

    start = time.perf_counter()
    job = read_job(HOUSING)
    process = process_from_job(job)
    read_s = time.perf_counter() - start
    settings = simulate_module.SimulationSettings()
    if spacing_mm is not None:
        settings = simulate_module.SimulationSettings(station_spacing_mm=spacing_mm)
    before = os.times()
    wall = time.perf_counter()
    pred = simulate_module.simulate(job, process, settings)
    wall = time.perf_counter() - wall
    after = os.times()
    cpu = (after.user + after.system) - (before.user + before.system)
    workers_cpu = (after.children_user + after.children_system) - (before.children_user + before.children_system)
    return {"read_s": read_s, "wall_s": wall, "cpu_s": cpu, "workers_cpu_s": workers_cpu, "passes": len(pred.passes),
            "cuts": sum(len(p.cuts) for p in pred.passes),
            "stations": sum(len(t.r_mm) for p in pred.passes for t in p.cuts),
            "keys": counts["keys"], "cuts_with_keys": counts["compliance_calls"],
            "compliance_s": spent["compliance"], "equilibrium_s": spent["equilibrium"],
            "spacing_mm": settings.station_spacing_mm, "key_stations": settings.key_stations,
            "mass_gain_g": pred.mass_gain_g.value, "max_deviation_um": 1000.0 * pred.max_deviation_mm.value}


def child(spacing_mm: float | None, one_core: bool, threads_one: bool) -> dict:
    env = dict(os.environ)
    for name in THREAD_VARIABLES:
        env.pop(name, None)
        if threads_one:
            env[name] = "1"
    args = [sys.executable, __file__, "--child", json.dumps({"spacing_mm": spacing_mm, "one_core": one_core})]
    done = subprocess.run(args, env=env, capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def report(label: str, m: dict) -> None:
    rest = m["wall_s"] - m["compliance_s"] - m["equilibrium_s"]
    print(f"{label:<10} simulate {m['wall_s']:6.2f} s wall, cpu {m['cpu_s']:.2f} s in the process + "
          f"{m['workers_cpu_s']:.2f} s in its key-station workers (read + check {m['read_s']:.2f} s)")
    print(f"{'':<10} {m['passes']} passes, {m['cuts']} cuts, {m['stations']} stations (nominal run), "
          f"{m['keys']} key-station compliance evaluations in {m['cuts_with_keys']} cuts (all runs)")
    print(f"{'':<10} split: compliance {m['compliance_s']:.2f} s ({m['compliance_s'] / m['wall_s']:.0%}), "
          f"equilibrium {m['equilibrium_s']:.2f} s ({m['equilibrium_s'] / m['wall_s']:.0%}), "
          f"rest {rest:.2f} s ({rest / m['wall_s']:.0%}); "
          f"{m['compliance_s'] / max(m['keys'], 1) * 1000:.0f} ms per key station")


def main() -> None:
    print(f"deflect demo's prediction: {HOUSING.name}, {os.cpu_count()} cores; target <= {TARGET_S:g} s")
    runs = {"one core": child(None, one_core=True, threads_one=True),
            "1 thread": child(None, one_core=False, threads_one=True),
            "default": child(None, one_core=False, threads_one=False)}
    for label, m in runs.items():
        report(label, m)
    best = min(m["wall_s"] for m in runs.values())
    verdict = "meets" if best <= TARGET_S else "misses"
    print(f"fastest {best:.2f} s: {verdict} the {TARGET_S:g} s target "
          f"(mass gain {runs['default']['mass_gain_g']:.4f} g, largest deviation "
          f"{runs['default']['max_deviation_um']:.2f} um)")
    print("\ngrowth with the stations (1 thread, as `deflect demo` runs):")
    print(f"{'spacing mm':>10} {'stations':>8} {'keys':>5} {'wall s':>7} {'compliance s':>12} {'equilibrium s':>13} "
          f"{'rest s':>7} {'ms/station':>10}")
    for spacing in (0.2, 0.1, 0.05):
        m = child(spacing, one_core=False, threads_one=True)
        rest = m["wall_s"] - m["compliance_s"] - m["equilibrium_s"]
        print(f"{spacing:>10g} {m['stations']:>8d} {m['keys']:>5d} {m['wall_s']:>7.2f} {m['compliance_s']:>12.2f} "
              f"{m['equilibrium_s']:>13.2f} {rest:>7.2f} {1000 * rest / m['stations']:>10.2f}")
    print("(ms/station: the time outside the compliance per station of the nominal run)")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        options = json.loads(sys.argv[2])
        print(json.dumps(measure(options["spacing_mm"], options["one_core"])))
    else:
        main()
