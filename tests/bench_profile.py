"""Benchmark: where the CPU of `deflect predict JOB --json` goes, stage by stage; a plain script, not a test.

The profile that bounds the speed of `predict` (issue 16): for the demo (or the job given), CPU seconds of
  * start-up: importing what `predict` imports, in fresh child processes, less a bare interpreter's start;
  * each stage of the command in one process, as `cli.run_prediction` and `predict --json` run them: reading the
    job and its process, the simulation, the chatter check of the finishing passes, the drawing check,
    the design rules, the JSON;
  * inside the simulation: the key stations' wall models (their count, and per model the mid-surface, the
    harmonic sum and the rest: element matrices, cutting the part to the tool, placing the load).
Everything runs on one core with BLAS on one thread, as `deflect` runs on a busy machine (no worker processes),
with the package's bytecode written first (as an installed `deflect` has it). Medians of --runs runs.

Run:  python tests/bench_profile.py [JOB] [--runs N]
"""

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_variable] = "1"

HERE = Path(__file__).resolve().parents[1]
DEMO = HERE / "data" / "examples" / "housing.toml"
IMPORTS = ("import deflect.cli, deflect.machining.simulate, deflect.machining.chatter, deflect.job.reader, "
           "deflect.decisions.conformance, deflect.decisions.rules, deflect.output.predict_report, "
           "deflect.output.predict_json")


def child_cpu_s(code: str) -> float:
    """CPU seconds of a fresh interpreter running `code` (user + system, as it reports them at its end)."""
    report = "import os; t = os.times(); print(t[0] + t[1])"
    done = subprocess.run([sys.executable, "-c", f"{code}\n{report}"], capture_output=True, text=True, check=True,
                          env={**os.environ, "PYTHONPATH": str(HERE)})
    return float(done.stdout.strip().splitlines()[-1])


class Stopwatch:
    """CPU seconds spent inside wrapped functions, by label (the outermost call of each label counts)."""

    def __init__(self):
        self.seconds: dict[str, float] = {}
        self.calls: dict[str, int] = {}
        self._depth: dict[str, int] = {}

    def wrap(self, owner, name: str, label: str, inside: str | None = None) -> None:
        """Time owner.name under `label`; with `inside`, only the calls made within a call timed as `inside`."""
        function = getattr(owner, name)

        def timed(*args, **kwargs):
            if inside is not None and self._depth.get(inside, 0) == 0:
                return function(*args, **kwargs)
            outer = self._depth.get(label, 0) == 0
            self._depth[label] = self._depth.get(label, 0) + 1
            start = time.process_time()
            try:
                return function(*args, **kwargs)
            finally:
                self._depth[label] -= 1
                if outer:
                    self.seconds[label] = self.seconds.get(label, 0.0) + time.process_time() - start
                    self.calls[label] = self.calls.get(label, 0) + 1

        setattr(owner, name, timed)


def stages(job_file: Path) -> dict[str, float]:
    """One `predict --json` run, stage by stage, in this process: {label: CPU s} and the key stations' count."""
    from deflect.decisions.conformance import verdict
    from deflect.decisions.rules import check_rules
    from deflect.job.dynamics import dynamics_from_job
    from deflect.job.fits import tolerance_from_table
    from deflect.job.reader import read_job
    from deflect.machining import chatter, simulate
    from deflect.machining.targets import process_from_job
    from deflect.mechanics import compliance
    from deflect.mechanics.shell import midsurface
    from deflect.output.predict_json import prediction_payload

    simulate.free_cores = lambda: 1            # one core: every key station in this process, timed
    watch = Stopwatch()
    watch.wrap(simulate, "key_compliance", "key stations")
    watch.wrap(midsurface, "derive_shell", "mid-surface", inside="key stations")
    watch.wrap(compliance, "harmonic_compliance", "harmonic sum", inside="key stations")
    watch.wrap(chatter, "station_response", "chatter stations")
    out, clock = {}, time.process_time

    def step(label, function, *args):
        start = clock()
        value = function(*args)
        out[label] = clock() - start
        return value

    job = step("read the job", read_job, str(job_file))
    process = step("read the process (passes, targets)", process_from_job, job)
    memo: dict = {}                            # shared by the three as `cli.run_prediction` shares it
    pred = step("simulation", lambda: simulate.simulate(job, process, memo=memo))
    dynamics = dynamics_from_job(job.tables)
    warnings = step("chatter check", chatter.prediction_warnings, job, process, pred, dynamics, memo)
    tolerances = tolerance_from_table(job.tables["tolerance"]) if "tolerance" in job.tables else None
    judged = step("drawing check", verdict, job, process, pred, tolerances, memo)
    step("design rules", check_rules, job, process)
    step("JSON", lambda: json.dumps(prediction_payload(pred, judged.checks, judged.warnings + warnings), indent=2))
    out["  the key stations' wall models"] = watch.seconds.get("key stations", 0.0)
    out["    their mid-surfaces"] = watch.seconds.get("mid-surface", 0.0)
    out["    their harmonic sums"] = watch.seconds.get("harmonic sum", 0.0)
    out["  the chatter stations"] = watch.seconds.get("chatter stations", 0.0)
    out["key station count"] = watch.calls.get("key stations", 0)
    out["chatter station count"] = watch.calls.get("chatter stations", 0)
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("job", nargs="?", default=str(DEMO))
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(HERE / "deflect")], check=True)
    bare = statistics.median(child_cpu_s("pass") for _ in range(args.runs))
    imports = statistics.median(child_cpu_s(IMPORTS) for _ in range(args.runs))
    runs = [json.loads(subprocess.run([sys.executable, __file__, "--child", args.job], capture_output=True, text=True,
                                      check=True, env={**os.environ, "PYTHONPATH": str(HERE)}).stdout)
            for _ in range(args.runs)]
    print(f"deflect predict {Path(args.job).name} --json, CPU seconds, median of {args.runs} runs, one core")
    print(f"{'interpreter start':<36}{bare:>8.2f}")
    print(f"{'start-up (imports)':<36}{imports - bare:>8.2f}")
    total = imports
    for label in runs[0]:
        value = statistics.median(run[label] for run in runs)
        if label.endswith("count"):
            print(f"{label:<36}{value:>8.0f}")
            continue
        print(f"{label:<36}{value:>8.2f}")
        if not label.startswith(" "):
            total += value
    print(f"{'sum of the stages and start-up':<36}{total:>8.2f}")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        print(json.dumps(stages(Path(sys.argv[2]))))
    else:
        main()
