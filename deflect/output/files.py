"""Output files of a command: written to a temporary place, moved into place only when all are written, and
never over a file that deflect did not write.

Takes the files and folders a command is to write (`Outputs.file`, `Outputs.folder`, each with the option that
named it, for messages); gives temporary paths to write to, and on `Outputs.commit` moves every file into
place. Nothing is moved before every file of the command has been written, so a command that fails part-way
(a figure that cannot be drawn, a disk that fills up) leaves no output at all, old or new, changed.

Every folder deflect writes into keeps a small list of the files it wrote there (`MANIFEST`, a text file, one
name a line). An existing file is overwritten only when that list names it: a file of the user's that happens
to have the name of an output is refused with an error naming the option, never replaced. To write there,
move the file away or give another folder or name.

The temporary files live in a hidden folder (`.deflect-staging-...`) beside the outputs, on the same disk, so
each move is one rename; it is removed when the command ends, whether it succeeded or not.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

from deflect.errors import InputError

MANIFEST = ".deflect-outputs"
MANIFEST_HEADER = ("# Files that deflect wrote in this folder. deflect overwrites a file here only when this list "
                   "names it.\n")


@dataclass(frozen=True)
class _Staged:
    final: Path        # the file, or the folder of files, the command writes
    temp: Path         # where it is written meanwhile
    key: str           # the option that named it
    is_folder: bool


def written_here(folder: Path) -> set[str]:
    """The names of the files deflect wrote in a folder (empty when it has none, or no list)."""
    try:
        lines = (folder / MANIFEST).read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError):
        return set()
    return {line for line in lines if line and not line.startswith("#")}


def check_target(final: Path, key: str) -> None:
    """InputError(key) when the file `final` cannot be written without harm: it is a folder, one of the folders
    above it is a file, or it is a file that deflect did not write."""
    for parent in final.parents:
        if parent.exists():
            if not parent.is_dir():
                raise InputError(key, f"cannot write {str(final)!r}: {str(parent)!r} is a file, not a folder")
            break
    if final.is_dir():
        raise InputError(key, f"{str(final)!r} is a folder; give the name of a file to write")
    if (final.exists() or final.is_symlink()) and final.name not in written_here(final.parent):
        raise InputError(key, f"{str(final)!r} is there already and deflect did not write it; deflect overwrites "
                              f"only the files it wrote itself (listed in {MANIFEST} in that folder): move the file "
                              "away or give another name")


def check_folder(folder: Path, key: str) -> None:
    """InputError(key) when `folder` cannot be an output folder: it, or one above it, is a file."""
    for candidate in (folder, *folder.parents):
        if candidate.exists():
            if not candidate.is_dir():
                raise InputError(key, f"cannot use {str(folder)!r} as an output folder: {str(candidate)!r} is a "
                                      "file; give a folder")
            return


def _anchor(path: Path) -> Path:
    """The nearest folder that exists at or above `path` (where the temporary folder goes)."""
    for candidate in (path, *path.parents):
        if candidate.is_dir():
            return candidate
    return Path.cwd()


class Outputs:
    """The files one command writes, staged and then moved into place together. Use as a context manager: on
    an error inside it, every staged file is thrown away; `commit` moves them into place."""

    def __init__(self):
        self._staged: list[_Staged] = []

    def __enter__(self) -> Outputs:
        return self

    def __exit__(self, *exc_info) -> None:
        self.discard()

    def _stage_in(self, near: Path, key: str) -> Path:
        anchor = _anchor(near)
        try:
            return Path(tempfile.mkdtemp(prefix=".deflect-staging-", dir=anchor))
        except OSError as exc:
            raise InputError(key, f"cannot write into {str(anchor)!r} ({exc.strerror or exc}); give a folder you "
                                  "may write to") from None

    def folder(self, final, key: str, names: tuple[str, ...] = ()) -> Path:
        """A temporary folder whose files go into the folder `final` on commit. `names`: the files the command
        will write there, checked now (before any work) against what is there already."""
        final = Path(final)
        check_folder(final, key)
        for name in names:
            check_target(final / name, key)
        temp = self._stage_in(final, key)
        self._staged.append(_Staged(final, temp, key, True))
        return temp

    def file(self, final, key: str) -> Path:
        """A temporary path, with the same name, whose file goes to `final` on commit (checked now)."""
        final = Path(final)
        check_target(final, key)
        temp = self._stage_in(final.parent, key)
        self._staged.append(_Staged(final, temp, key, False))
        return temp / final.name

    def _moves(self) -> list[tuple[Path, Path, str]]:
        """(written file, its place, option) for every file written, folders walked."""
        moves = []
        for staged in self._staged:
            if staged.is_folder:
                for written in sorted(p for p in staged.temp.rglob("*") if p.is_file()):
                    moves.append((written, staged.final / written.relative_to(staged.temp), staged.key))
            else:
                written = staged.temp / staged.final.name
                if written.is_file():
                    moves.append((written, staged.final, staged.key))
        return moves

    def commit(self) -> list[Path]:
        """Move every written file into place (each checked again first) and add it to its folder's list; the
        files in place, in the order written."""
        moves = self._moves()
        for _, final, key in moves:
            check_target(final, key)
        for _, final, key in moves:
            try:
                final.parent.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise InputError(key, f"cannot make the folder {str(final.parent)!r} ({exc.strerror or exc})") from None
        by_folder: dict[Path, list[str]] = {}
        for written, final, key in moves:
            try:
                os.replace(written, final)
            except OSError as exc:
                raise InputError(key, f"cannot write {str(final)!r} ({exc.strerror or exc})") from None
            by_folder.setdefault(final.parent, []).append(final.name)
        for folder, names in by_folder.items():
            try:
                _add_to_manifest(folder, names)
            except OSError as exc:
                raise InputError(moves[0][2], f"wrote the files but cannot list them in {str(folder / MANIFEST)!r} "
                                              f"({exc.strerror or exc}); deflect will not overwrite them "
                                              "next time") from None
        self.discard()
        return [final for _, final, _ in moves]

    def discard(self) -> None:
        """Remove the temporary folders and whatever is still in them."""
        for staged in self._staged:
            shutil.rmtree(staged.temp, ignore_errors=True)
        self._staged = []


def _add_to_manifest(folder: Path, names: list[str]) -> None:
    """Add names to the folder's list of files deflect wrote (itself written whole, then renamed)."""
    listed = sorted(written_here(folder) | set(names))
    handle, temp = tempfile.mkstemp(prefix=".deflect-outputs-", dir=folder)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as stream:
            stream.write(MANIFEST_HEADER + "".join(f"{name}\n" for name in listed))
        os.replace(temp, folder / MANIFEST)
    except OSError:
        Path(temp).unlink(missing_ok=True)
        raise
