"""Small checks of job-file values shared by the readers (job, materials, tools, process).

Each takes a parsed TOML value and the dotted key it came from, and returns the checked value or raises
`InputError(key, message)`.
"""

from __future__ import annotations

import math

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
