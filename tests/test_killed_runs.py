"""A prediction killed while it runs leaves no process behind (issue 17, item 3).

`deflect predict` computes the key stations' shell models in worker processes. A run ended by SIGTERM or
SIGKILL cannot shut its pool down; its workers used to stay alive under init. Here the command is started
on a job that keeps its workers busy for a while (the demo housing with its roughing passes at 0.3 mm a
cut: eleven cuts), its worker processes are found while they run, the command is killed, and none of them may be
left a few seconds later (a zombie, dead but not yet reaped by init, counts as gone).

The processes are listed through Linux's process file system (proc(5), the Linux man-pages project: each
process's `stat` file gives its state, 3rd field, and its parent, 4th), which the standard library has no
portable way to read; elsewhere the test is skipped.
"""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

HOUSING = Path(__file__).resolve().parents[1] / "data" / "examples" / "housing.toml"
FIND_WORKERS_S = 60.0     # the workers start after the cut paths are laid out (about a second here)
WORKING_S = 0.3           # let them take up their first key stations before the kill
GONE_WITHIN_S = 10.0      # a worker checks for its parent every 0.5 s; on Linux the kernel ends it at once
PROCESSES = Path("/proc")  # Linux's process file system, proc(5): one folder per process, named by its id


def children_of(pid: int) -> set[int]:
    """Processes whose parent is pid, from each process's `stat` file in PROCESSES (the parent is the 4th field,
    after the name in brackets, which may itself hold spaces)."""
    found = set()
    for entry in PROCESSES.iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:
            continue
        fields = stat[stat.rindex(")") + 2:].split()
        if int(fields[1]) == pid:
            found.add(int(entry.name))
    return found


def running(pid: int) -> bool:
    """The process exists and is not a zombie."""
    try:
        stat = (PROCESSES / str(pid) / "stat").read_text()
    except OSError:
        return False
    return stat[stat.rindex(")") + 2:].split()[0] != "Z"


def long_job(folder: Path) -> Path:
    text = HOUSING.read_text()
    assert text.count("depth = 1.5") == 2  # the two roughing passes
    job = folder / "housing-many-cuts.toml"
    job.write_text(text.replace("depth = 1.5", "depth = 0.3"))
    return job


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="lists the workers through Linux's proc(5)")
@pytest.mark.skipif((os.cpu_count() or 1) < 2, reason="one core: the prediction starts no workers")
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGKILL], ids=["SIGTERM", "SIGKILL"])
def test_killed_prediction_leaves_no_worker(sig, tmp_path):
    # workers are started only on idle cores (simulate.free_cores); this machine may be busy, so count them all
    start = "import deflect.machining.simulate as s; s.IDLE_CORES_ONLY = False; from deflect.cli import main; main()"
    command = [sys.executable, "-c", start, "predict", str(long_job(tmp_path)), "--json"]
    run = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        workers: set[int] = set()
        deadline = time.monotonic() + FIND_WORKERS_S
        while not workers and run.poll() is None and time.monotonic() < deadline:
            time.sleep(0.01)
            workers = children_of(run.pid)
        assert workers, "the prediction ended or stalled before it started its workers"
        time.sleep(WORKING_S)
        workers |= children_of(run.pid)
        assert any(running(pid) for pid in workers)
        run.send_signal(sig)
        run.wait(timeout=30)
    finally:
        if run.poll() is None:
            run.kill()
            run.wait()
    deadline = time.monotonic() + GONE_WITHIN_S
    while any(running(pid) for pid in workers) and time.monotonic() < deadline:
        time.sleep(0.05)
    left = sorted(pid for pid in workers if running(pid))
    print(f"{signal.Signals(sig).name}: {len(workers)} worker(s) seen, {len(left)} left")
    for pid in left:  # a failing run must not leave them behind either
        os.kill(pid, signal.SIGKILL)
    assert not left, f"worker processes {left} outlived the killed prediction"
