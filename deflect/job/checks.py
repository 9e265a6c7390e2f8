"""Small checks of job-file values shared by the readers (job, materials, tools, process).

Each takes a parsed TOML value and the dotted key it came from, and returns the checked value or raises
`InputError(key, message)`. A TOML integer has no size limit: one too large for a float (more than about
1.8e308) is refused like infinity, never turned into an `OverflowError`.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

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


# A job nests arrays and tables at most 4 deep ([stock] outline = [{ to = [r, z] }]); deeper nesting is a
# mistake, and nesting thousands deep would exhaust the stack of any recursive reader.
MAX_NESTING = 8
# A job file larger than this is not a drawing of a turned part: 200,000 outline nodes take about 6 MB.
MAX_FILE_CHARS = 20_000_000


def read_toml(path: str, what: str = "file") -> dict:
    """A TOML file parsed; an InputError naming the file (key `file`) when it is a folder, missing, not UTF-8
    text, too long, not TOML or nested too deeply. `what` names the kind of file in the messages."""
    if Path(path).is_dir():
        raise InputError("file", f"is a folder, not a {what}; give the path of a .toml file", file=path)
    try:
        text = Path(path).read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise InputError("file", f"no such {what}", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError("file", f"cannot be read as UTF-8 text ({exc})", file=path) from None
    if len(text) > MAX_FILE_CHARS:
        raise InputError("file", f"is {len(text) / 1e6:.1f} million characters long; deflect reads files of at "
                                 f"most {MAX_FILE_CHARS / 1e6:g} million (see the README, limits)", file=path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError("file", f"not valid TOML: {exc}", file=path) from None
    except RecursionError:
        # the TOML reader descends once per level of nesting: thousands of levels exhaust Python's stack
        raise InputError("file", "the file nests arrays or tables too deeply to be read; a job nests them at "
                                 f"most {MAX_NESTING} deep", file=path) from None
    if nesting_depth(data) > MAX_NESTING:
        raise InputError("file", f"the file nests arrays or tables {nesting_depth(data)} deep; a job nests them at "
                                 f"most {MAX_NESTING} deep (an outline node inside a stock outline is 4)", file=path)
    return data


def required_number(table: dict, name: str, key: str, what: str) -> float:
    """table[name] as a float; an InputError on `key.name` saying what to give when it is missing or not a
    finite number."""
    if name not in table:
        raise InputError(f"{key}.{name}", f"missing; give {what}")
    value = table[name]
    if not is_number(value):
        raise InputError(f"{key}.{name}", f"must be a number ({what}), got {shown(value)}")
    return float(value)


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
