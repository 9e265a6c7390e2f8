"""Output files written whole or not at all, and never over a file deflect did not write.

`check_target` is called before any work: an `InputError` naming the option when the file cannot be written
(its folder is missing or is a file, it is a folder, the folder is not writable) or when a file is there that
does not carry deflect's mark for that kind of output (a text it always writes near its start), so a user's
file is never replaced. `write_whole` writes to a temporary file in the same folder and renames it into place
(one rename on the same disk: a reader never sees half a file, and a failure leaves what was there as it was).
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from deflect.errors import InputError

MARK_WITHIN = 4096          # characters at the start of a file searched for deflect's mark


def check_target(path, key: str, mark: str) -> Path:
    """The output path, checked (module docstring)."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if target.is_dir():
        raise InputError(key, f"{str(target)!r} is a folder; give the name of a file to write")
    if not folder.is_dir():
        raise InputError(key, f"cannot write {str(target)!r}: the folder {str(folder)!r} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(key, f"cannot write {str(target)!r}: the folder {str(folder)!r} is not writable")
    if target.exists() or target.is_symlink():
        try:
            start = target.read_text(encoding="utf-8", errors="replace")[:MARK_WITHIN]
        except OSError as exc:
            raise InputError(key, f"cannot read {str(target)!r} to see what it is ({exc.strerror or exc})") from None
        if mark not in start:
            raise InputError(key, f"{str(target)!r} is there already and deflect did not write it; move it away "
                                  "or give another name")
    return target


def write_whole(path, text: str, key: str) -> Path:
    """Write the text to a temporary file beside `path` and rename it into place."""
    target = Path(path)
    handle, temporary = None, None
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
        with os.fdopen(handle, "w", encoding="utf-8") as stream:
            stream.write(text)
        os.chmod(temporary, 0o666 & ~_umask())      # as an ordinary new file (mkstemp makes it private)
        os.replace(temporary, target)
    except OSError as exc:
        if temporary is not None and os.path.exists(temporary):
            os.remove(temporary)
        raise InputError(key, f"cannot write {str(target)!r} ({exc.strerror or exc})") from None
    return target


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask
