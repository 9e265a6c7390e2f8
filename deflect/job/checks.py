"""Small checks of job-file values shared by the readers (job, materials, tools, process).

Each takes a parsed TOML value and the dotted key it came from, and returns the checked value or raises
`InputError(key, message)`. A TOML integer has no size limit: one too large for a float (more than about
1.8e308) is refused like infinity, never turned into an `OverflowError`.
"""

from __future__ import annotations

import math

from deflect.errors import InputError, shown


def finite_float(value) -> float | None:
    """float(value) for a finite int or float (TOML booleans are not numbers); None for anything else,
    including an integer too large for a float."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        number = float(value)
    except OverflowError:
        return None
    return number if math.isfinite(number) else None


def is_number(value) -> bool:
    """True for a finite int or float that fits a float (TOML booleans are not numbers)."""
    return finite_float(value) is not None


def number(value, key: str) -> float:
    """A finite number as float; `true` where a number is due is a mistake (bool is an int in Python)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(key, f"must be a number, got {shown(value)}")
    checked = finite_float(value)
    if checked is None:
        raise InputError(key, f"must be a finite number of sensible size, got {shown(value)}")
    return checked


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


def nesting_depth(value) -> int:
    """How deep arrays and tables nest in a parsed TOML value (a number is 0, [1, 2] is 1, [[1]] is 2),
    counted without recursion so that any depth can be measured."""
    deepest, stack = 0, [(value, 0)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if isinstance(item, dict):
            stack.extend((v, depth + 1) for v in item.values())
        elif isinstance(item, list):
            stack.extend((v, depth + 1) for v in item)
    return deepest
