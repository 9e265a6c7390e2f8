"""Errors that reach the user as one `error:` line, never as a traceback.

`InputError` is bad input: the command line prints
``error: FILE: KEY: message`` and exits with code 2.
`ModelError` is numerical trouble the user must hear about in the trade's
terms (an unheld part, a wall consumed by a pass); also exit code 2.
"""


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
