"""Errors that reach the user as one `error:` line, never as a traceback.

`InputError` is bad input: the command line prints
``error: FILE: KEY: message`` and exits with code 2.
`ModelError` is numerical trouble the user must hear about in the trade's
terms (an unheld part, a wall consumed by a pass); also exit code 2.
"""

from contextlib import contextmanager


class InputError(Exception):
    """A problem in the user's input, tied to one key of the job file.

    Parameters
    ----------
    key : dotted job-file key, e.g. ``part.outline[3]`` or ``material.name``
    message : what is wrong and, where it helps, what to do
    file : the job file's path; the job reader fills it in when it is not known
        where the error is raised
    """

    def __init__(self, key: str, message: str, file: str | None = None):
        super().__init__(message)
        self.key = key
        self.message = message
        self.file = file

    def __reduce__(self):  # so that the error survives the trip back from a worker process
        return (type(self), (self.key, self.message, self.file))

    def line(self) -> str:
        where = f"{self.file}: " if self.file else ""
        return f"error: {where}{self.key}: {self.message}"


class ModelError(Exception):
    """The model cannot give an answer for a physical reason (e.g. the part is not held)."""

    def __init__(self, message: str, key: str = "", file: str | None = None):
        super().__init__(message)
        self.key = key
        self.message = message
        self.file = file

    def __reduce__(self):
        return (type(self), (self.message, self.key, self.file))

    def line(self) -> str:
        where = f"{self.file}: " if self.file else ""
        key = f"{self.key}: " if self.key else ""
        return f"error: {where}{key}{self.message}"


@contextmanager
def keyed(key: str):
    """Inside it, an InputError or ModelError raised without a key gets this one: the key of what was being
    worked on (a pass, the holding), so that its line reads `error: FILE: KEY: ...` like every other."""
    try:
        yield
    except (InputError, ModelError) as exc:
        if not exc.key:
            exc.key = key
        raise


SHOWN_CHARS = 40     # a value quoted in a message is cut to about this many characters


def shown(value) -> str:
    """A value from the job as a message quotes it: its repr, but a 400-digit integer or a long list cut short
    (the line must stay one readable line)."""
    try:
        text = repr(value)
    except RecursionError:          # a list nested deeper than Python's repr goes
        return "a value nested too deeply to show"
    if len(text) <= SHOWN_CHARS:
        return text
    if isinstance(value, int) and not isinstance(value, bool):
        return f"an integer of {len(str(abs(value)))} digits"
    return text[:SHOWN_CHARS - 5] + " ..." + text[-1]
