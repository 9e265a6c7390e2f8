"""The job's [dynamics] table: the damping of the part's modes, and what a tap test measured.

Takes the [dynamics] table as read (it holds no lengths, so an inch job needs no conversion); gives `Dynamics`:
the modal damping ratio to use where nothing was measured, whether that ratio is the default recalled from
memory, and the modes a tap test measured (frequency [Hz] and damping ratio), which then replace the model's
nearest mode (`deflect.machining.chatter`).

    [dynamics]
    damping = 0.02                                            # modal damping ratio (optional)
    measured = [{ frequency_hz = 1850.0, damping = 0.015 }]  # from a tap test (optional)

Bad input is an `InputError` naming the key.
"""

from __future__ import annotations

from dataclasses import dataclass

from deflect.errors import InputError
from deflect.job.checks import check_keys, check_table, number

DYNAMICS_KEYS = ("damping", "measured")
MEASURED_KEYS = ("frequency_hz", "damping")
# Modal damping of a thin turned part held in a chuck or collet, in the cut: 1-3 % of critical (from memory,
# not confirmed against a printed source; a tap test measures it). The default is the low end of that band: a
# chatter check should err towards warning, and the ring modes of a thin wall, which hardly move the held end
# where most of the damping is, are often damped less still.
DEFAULT_DAMPING = 0.01
LARGEST_DAMPING = 0.5            # a ratio above this is no light damping: the modal model does not apply
UNUSUAL_DAMPING = (0.002, 0.1)   # outside this band a ratio for a metal part is unusual: warned about


@dataclass(frozen=True)
class MeasuredMode:
    """One mode from a tap test."""

    frequency_hz: float
    damping: float               # ratio of critical damping
    key: str                     # "dynamics.measured[0]", for messages


@dataclass(frozen=True)
class Dynamics:
    damping: float                        # modal damping ratio where nothing was measured
    damping_from_memory: bool             # True: the default DEFAULT_DAMPING, not the job's
    measured: tuple[MeasuredMode, ...] = ()
    warnings: tuple[str, ...] = ()


def _ratio(value, key: str) -> float:
    ratio = number(value, key)
    if not 0.0 < ratio < LARGEST_DAMPING:
        raise InputError(key, f"a damping ratio (share of critical damping) between 0 and {LARGEST_DAMPING:g} is "
                              f"expected, e.g. 0.02 for 2 %; got {ratio:g}")
    return ratio


def _unusual(ratio: float, key: str) -> list[str]:
    low, high = UNUSUAL_DAMPING
    if low <= ratio <= high:
        return []
    return [f"{key}: a damping ratio of {ratio:g} is unusual for a metal part ({low:g} to {high:g} is the common "
            "range); check that it is a ratio and not a percentage"]


def dynamics_from_job(tables: dict) -> Dynamics:
    """The [dynamics] table of a job (`Job.tables`), or the defaults when it has none."""
    if "dynamics" not in tables:
        return Dynamics(damping=DEFAULT_DAMPING, damping_from_memory=True)
    table = check_table(tables["dynamics"], "dynamics")
    check_keys(table, DYNAMICS_KEYS, "dynamics")
    warnings: list[str] = []
    if "damping" in table:
        damping = _ratio(table["damping"], "dynamics.damping")
        warnings += _unusual(damping, "dynamics.damping")
    else:
        damping = DEFAULT_DAMPING
    measured = []
    entries = table.get("measured", [])
    if not isinstance(entries, list):
        raise InputError("dynamics.measured", "must be a list of tables: measured = [{ frequency_hz = 1850.0, "
                                              "damping = 0.015 }]")
    for i, entry in enumerate(entries):
        key = f"dynamics.measured[{i}]"
        check_table(entry, key)
        check_keys(entry, MEASURED_KEYS, key)
        for name in MEASURED_KEYS:
            if name not in entry:
                raise InputError(f"{key}.{name}", "missing: a measured mode needs frequency_hz and damping")
        frequency = number(entry["frequency_hz"], f"{key}.frequency_hz")
        if frequency <= 0.0:
            raise InputError(f"{key}.frequency_hz", f"must be > 0 Hz, got {frequency:g}")
        ratio = _ratio(entry["damping"], f"{key}.damping")
        warnings += _unusual(ratio, f"{key}.damping")
        measured.append(MeasuredMode(frequency_hz=frequency, damping=ratio, key=key))
    return Dynamics(damping=damping, damping_from_memory="damping" not in table, measured=tuple(measured),
                    warnings=tuple(warnings))
