"""Test-wide settings, and fixtures shared by test modules.

The shell models' matrices are small: BLAS threads cost more than they give there, and on a shared 2-core
machine they fight the other processes (one shell computation measured 0.5 s on one thread, 54 s with the
default threads under load). The command line sets one thread for the same reason (`deflect/cli.py`); tests
that call the library directly get the same here, before numpy is first imported.

The demo's full report is made once per test session: `deflect report` on the shipped housing with its first
article predicts it, explains the first article and searches its remedies (the slowest step of the report,
about 15 s of CPU); the browser checks, the `tune --apply` round trip and the comparison all start from this one
run: its HTML file and its JSON (each part under its command's name).
"""

import os

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

from threadpoolctl import threadpool_limits  # noqa: E402  (after the settings above)

threadpool_limits(limits=1)

import io  # noqa: E402
import json  # noqa: E402
from contextlib import redirect_stderr, redirect_stdout  # noqa: E402
from pathlib import Path  # noqa: E402

import pytest  # noqa: E402

from deflect.cli import main  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
DEMO_JOB = EXAMPLES / "housing.toml"
DEMO_MEASURED = EXAMPLES / "housing-first-article.toml"      # its shipped (invented) first article


def run_deflect(args: list[str]) -> tuple[int, str, str]:
    """deflect.cli.main with its exit code, stdout and stderr."""
    out, err = io.StringIO(), io.StringIO()
    code = 0
    with redirect_stdout(out), redirect_stderr(err):
        try:
            main([str(a) for a in args])
        except SystemExit as exc:
            code = exc.code
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="session")
def demo_report(tmp_path_factory) -> tuple[Path, dict]:
    """The demo's report: (the HTML file, the JSON printed with it)."""
    html = tmp_path_factory.mktemp("demo-report") / "housing-report.html"
    code, out, err = run_deflect(["report", DEMO_JOB, "--measured", DEMO_MEASURED, "--html", html, "--json"])
    assert code == 0, err
    return html, json.loads(out)


@pytest.fixture(scope="session")
def demo_calibration(tmp_path_factory) -> Path:
    """The calibration `deflect explain --save` fits on the demo's first article: the one its report
    (`deflect report --measured`) is calibrated with."""
    path = tmp_path_factory.mktemp("demo-calibration") / "housing-calibration.toml"
    code, _, err = run_deflect(["explain", DEMO_JOB, DEMO_MEASURED, "--save", path, "--json", "--quiet"])
    assert code == 0, err
    return path


def write_option(folder: Path, job: Path, tune_payload: dict, number: int, calibration: Path | None = None) -> Path:
    """The job with option `number` of its tune written in, as `deflect tune --apply` writes it (the same
    writer, from the same change records the tune's JSON gives); with `calibration`, the calibration the option
    was found with named in its [job] calibration, as `tune --calibration FILE --apply N` writes it."""
    from deflect.output.remedy_job import job_text_with, written_header

    label = f"deflect tune option {number}"
    option = tune_payload["options"][number - 1]
    text = job_text_with(job.read_text(encoding="utf-8"), option["changes"], label, tune_payload["units"],
                         job.parent, folder, calibration)
    path = folder / f"{job.stem}-option-{number}.toml"
    path.write_text(written_header(label, job.name, "test", "2026-01-01") + text, encoding="utf-8")
    return path


@pytest.fixture(scope="session")
def demo_option(demo_report, demo_calibration, tmp_path_factory):
    """A function: option N of the demo's tune (found with the first article's calibration) written into the job,
    naming that calibration -> (the job file, `deflect predict --json` of it). Each option is written and
    predicted once per session."""
    folder = tmp_path_factory.mktemp("demo-options")
    made = {}

    def option(number: int) -> tuple[Path, dict]:
        if number not in made:
            path = write_option(folder, DEMO_JOB, demo_report[1]["tune"], number, demo_calibration)
            code, out, err = run_deflect(["predict", path, "--json", "--quiet"])
            assert code == 0, err
            made[number] = (path, json.loads(out))
        return made[number]

    return option


@pytest.fixture(scope="session")
def demo_comparison(demo_option, demo_calibration, tmp_path_factory) -> tuple[Path, dict]:
    """`deflect compare` of the demo and its job with option 1 written in, both naming the first article's
    calibration in [job] calibration (the report's remedies are found with it): (the HTML file, the JSON)."""
    from deflect.output.remedy_job import job_text_with

    option_job, _ = demo_option(1)
    folder = tmp_path_factory.mktemp("demo-compare")
    calibrated_job = folder / DEMO_JOB.name
    calibrated_job.write_text(job_text_with(DEMO_JOB.read_text(encoding="utf-8"), [], "the first article", "mm",
                                            DEMO_JOB.parent, folder, demo_calibration), encoding="utf-8")
    html = folder / "housing-compare.html"
    code, out, err = run_deflect(["compare", calibrated_job, option_job, "--json", "--html", html])
    assert code == 0, err
    return html, json.loads(out)
