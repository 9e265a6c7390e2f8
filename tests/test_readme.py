"""What the README tells a new user agrees with the project (issue 10.9): the shipped examples it counts and
names are the ones in data/examples/, and the install steps say which Python, how to make and enter a virtual
environment, and how long the tests take. The interface page it points to exists."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
COUNTS = {"one": 1, "two": 2, "three": 3, "four": 4, "five": 5, "six": 6, "seven": 7, "eight": 8}


def test_the_shipped_examples_are_counted_and_named():
    shipped = sorted(path.name for path in (ROOT / "data" / "examples").glob("*.toml"))
    said = re.search(r"The (\w+) shipped examples in `data/examples/` show every key:(.*?)\n\n", README, re.S)
    assert said, "the README no longer introduces the shipped examples"
    assert COUNTS[said.group(1)] == len(shipped)
    assert sorted(set(re.findall(r"`([\w-]+\.toml)`", said.group(2)))) == shipped


def test_install_steps_name_python_the_environment_and_the_test_time():
    assert "Python 3.11 or newer" in README
    assert "python3 -m venv .venv" in README and ". .venv/bin/activate" in README
    assert re.search(r"the default run takes about \d+ minutes", README)


def test_the_interface_page_is_linked():
    assert "(INTERFACE.md)" in README and (ROOT / "INTERFACE.md").is_file()
