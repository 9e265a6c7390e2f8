"""A plain (non-editable) install ships the material library and the example jobs (issue 10, item 7).

`pip install .` (and so pipx) installs the package without the repository around it: before the fix `data/`
was not in the package, and an installed `deflect` could read neither its material library nor the demo's
job. The package is installed here with pip into a folder of its own, from a copy of the sources, and run from
another folder with only that install on its path; `.ci/run` does the same in a fresh virtual environment.
"""

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
RUN = "import sys; from deflect.cli import main; main(sys.argv[1:])"


@pytest.fixture(scope="module")
def installed(tmp_path_factory) -> Path:
    """A plain install of a copy of the sources (the build writes into the tree it builds)."""
    work = tmp_path_factory.mktemp("install")
    source = work / "source"
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy(ROOT / name, source / name)
    for name in ("deflect", "data"):
        shutil.copytree(ROOT / name, source / name, ignore=shutil.ignore_patterns("__pycache__"))
    target = work / "site"
    result = subprocess.run([sys.executable, "-m", "pip", "install", "--quiet", "--no-deps", "--target",
                             str(target), str(source)], capture_output=True, text=True)
    if result.returncode != 0 and "No matching distribution found for setuptools" in result.stderr:
        pytest.skip("no build backend can be fetched here (offline)")
    assert result.returncode == 0, result.stderr
    return target


def run_installed(installed: Path, folder: Path, *args: str) -> subprocess.CompletedProcess:
    """deflect from the install alone: the source tree is neither on the path nor the working folder."""
    return subprocess.run([sys.executable, "-c", RUN, *args], cwd=folder, capture_output=True, text=True,
                          env={"PYTHONPATH": str(installed), "PATH": "/usr/bin:/bin"})


def test_the_install_carries_the_library_and_the_examples(installed):
    assert (installed / "deflect" / "data" / "materials.toml").is_file()
    assert sorted(p.name for p in (installed / "deflect" / "data" / "examples").glob("*.toml")) == \
        sorted(p.name for p in (ROOT / "data" / "examples").glob("*.toml"))


def test_the_installed_command_reads_its_library_outside_the_sources(installed, tmp_path):
    job = installed / "deflect" / "data" / "examples" / "ring.toml"
    result = run_installed(installed, tmp_path, "section", str(job), "--json")
    assert result.returncode == 0, result.stderr
    assert '"material": "al-6061-t6"' in result.stdout
    where = run_installed(installed, tmp_path, "--version")
    assert where.returncode == 0 and "0.1.0" in where.stdout
