"""Small checks of job-file values shared by the readers (job, materials, tools, process).

Each takes a parsed TOML value and the dotted key it came from, and returns the checked value or raises
`InputError(key, message)`.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

from deflect.errors import InputError


def is_number(value) -> bool:
    """True for a finite int or float (TOML booleans are not numbers)."""
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def number(value, key: str) -> float:
    """A finite number as float; `true` where a number is due is a mistake (bool is an int in Python)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(key, f"must be a number, got {value!r}")
    if not math.isfinite(value):
        raise InputError(key, f"must be a finite number, got {value!r}")
    return float(value)


def check_table(value, key: str) -> dict:
    if not isinstance(value, dict):
        raise InputError(key, f"must be a table, got {type(value).__name__}")
    return value


def check_keys(table: dict, allowed: tuple[str, ...], key: str) -> None:
    """Every key of the table is one of `allowed` (a misspelt key is an error, not silently ignored)."""
    for name in table:
        if name not in allowed:
            raise InputError(f"{key}.{name}", f"unknown key; allowed keys: {', '.join(allowed)}")


def check_range(value, key: str) -> tuple[float, float]:
    """A two-number [low, high] range with low <= high."""
    if not (isinstance(value, list) and len(value) == 2 and all(is_number(v) for v in value)):
        raise InputError(key, "must be a range of two numbers, e.g. [0.0, 5.0]")
    low, high = float(value[0]), float(value[1])
    if low > high:
        raise InputError(key, f"range [{low:g}, {high:g}] runs backwards; write the smaller number first")
    return low, high


def read_toml(path: str, what: str = "file") -> dict:
    """A TOML file parsed; an InputError naming the file (key `file`) when it is missing, not UTF-8 text or not
    TOML. `what` names the kind of file in the "no such" message."""
    try:
        text = Path(path).read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise InputError("file", f"no such {what}", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError("file", f"cannot be read as UTF-8 text ({exc})", file=path) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError("file", f"not valid TOML: {exc}", file=path) from None


def required_number(table: dict, name: str, key: str, what: str) -> float:
    """table[name] as a float; an InputError on `key.name` saying what to give when it is missing or not a
    finite number."""
    if name not in table:
        raise InputError(f"{key}.{name}", f"missing; give {what}")
    value = table[name]
    if not is_number(value):
        raise InputError(f"{key}.{name}", f"must be a number ({what}), got {value!r}")
    return float(value)
