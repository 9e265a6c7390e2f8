"""A remedy written into a job: the job file's text and an option's changes -> the text of the changed job.

Takes the TOML text of a job as the user wrote it and the changes of one `deflect tune` option as its JSON
gives them (`{"pass", "key", "from", "to"}`, values in the job's own units, as `tune_report.change_record`
writes them); gives the text of the same job with the changes written into its [[pass]] tables. Every comment
and the layout are kept (tomlkit keeps a TOML document's comments, spacing and order when it is edited), and
each changed value carries a comment saying what it was. Keys:
* feed, allowance, spring, speed, tool, offset: the value set on the named pass (`offset` in the job's own
  convention: a side, along the surface's outward normal);
* compensate: the pairs `[[z, offset], ...]` set on the pass, as an array written one pair a line;
* order: the [[pass]] tables put in the new order, each moved table's name marked with where it was.
A file the job names relative to its own folder (`[part] drawing`, `[job] calibration`) is named again from the
new job's folder; a calibration the option was found with on the command line is named in `[job] calibration`.
Formatting only; no physics is computed here.
"""

from __future__ import annotations

import os
from pathlib import Path

import tomlkit

from deflect.errors import InputError
from deflect.output.tune_report import offset_words

PASS_KEYS = ("feed", "allowance", "spring", "speed", "tool", "offset", "compensate")


def _was(item) -> str:
    """What a value was, as the file wrote it, on one line (a list of pairs by its length)."""
    if item is None:
        return "not set"
    value = item.unwrap()
    if isinstance(value, list) and value and all(isinstance(v, list) for v in value):
        return f"{len(value)} pairs"
    return " ".join(item.as_string().split())


def _name(table) -> str:
    """A pass's name as the reader takes it (spaces around it dropped)."""
    return str(table.get("name", "")).strip()


def _pass_table(passes, name: str):
    for table in passes:
        if _name(table) == name.strip():
            return table
    raise InputError("pass", f"the job has no pass named {name!r} (the option was found for another job?)")


def _set(table, key: str, value, label: str) -> None:
    old = table.get(key)
    table[key] = tomlkit.item(value)
    if isinstance(value, list) and value and isinstance(value[0], list):
        table[key].multiline(True)
    if old is not None and old.trivia.comment:
        table[key].comment(old.trivia.comment.lstrip("#").strip())
    _note(table, key, f"was {_was(old)} ({label})")


def _reorder(passes, names: list[str], label: str) -> None:
    tables = list(passes)
    by_name = {_name(table): (k, table) for k, table in enumerate(tables)}
    missing = [n for n in names if n.strip() not in by_name]
    if missing or len(names) != len(tables):
        raise InputError("pass", f"the option's order {names} does not name the job's passes {list(by_name)}")
    for position, name in enumerate(names):
        was, table = by_name[name.strip()]
        if was != position:
            _note(table, "name", f"was pass {was + 1} of {len(tables)}, now pass {position + 1} ({label})")
        passes[position] = table


def _note(table, key: str, text: str) -> None:
    """A comment on a value left as it is (after the user's own comment, if any)."""
    item = table[key]
    own = item.trivia.comment.lstrip("#").strip() if item.trivia.comment else ""
    item.comment(f"{own}; {text}" if own else text)


# keys that name a file, as (table, key), read relative to the job file's folder
FILE_KEYS = (("part", "drawing"), ("job", "calibration"))


def _relocate(document, source_folder: Path, target_folder: Path, label: str) -> None:
    """Every file a key names relative to the job's folder, named again relative to the written job's folder."""
    for table_name, key in FILE_KEYS:
        table = document.get(table_name)
        if table is None or key not in table or Path(str(table[key])).is_absolute():
            continue
        target = os.path.relpath(source_folder / str(table[key]), target_folder)
        if target != str(table[key]):
            _set(table, key, Path(target).as_posix(), f"{label}: the same file, seen from this job's folder")


def job_text_with(text: str, changes: list[dict], label: str, units: str, source_folder: Path | None = None,
                  target_folder: Path | None = None, calibration: Path | None = None) -> str:
    """The job's text with the changes written in (values in the job's `units`, "mm" or "inch"); `label` names
    where they come from in each comment (e.g. "deflect tune option 1"). Written into another folder than the
    job's (`target_folder`, the job's being `source_folder`), a file the job names relative to its folder (a
    `[part] drawing`, a `[job] calibration`) is named again relative to the new one. `calibration`: the file of
    a calibration the option was found with (`--calibration`), named in the new job's `[job] calibration` so that
    it predicts the option's figures."""
    document = tomlkit.parse(text)
    if source_folder is not None and target_folder is not None:
        _relocate(document, Path(source_folder).resolve(), Path(target_folder).resolve(), label)
    if calibration is not None:
        if "job" not in document:
            document["job"] = tomlkit.table()
        folder = Path(target_folder if target_folder is not None else ".").resolve()
        named = Path(os.path.relpath(Path(calibration).resolve(), folder)).as_posix()
        _set(document["job"], "calibration", named, f"{label}: the calibration it was found with")
    passes = document.get("pass")
    if passes is None:
        raise InputError("pass", "the job has no [[pass]] tables to change")
    for change in changes:
        key = change["key"]
        if key == "order":
            _reorder(passes, list(change["to"]), label)
        elif key in PASS_KEYS:
            table = _pass_table(passes, change["pass"])
            said = label
            if key == "offset":       # both conventions beside the job's own (the machinist's X on the diameter)
                said = f"{label}: {offset_words(change['to'], str(table.get('surface', 'od')), units)}"
            _set(table, key, change["to"], said)
        else:
            raise InputError("pass", f"cannot write a change of {key!r} into a job")
    return tomlkit.dumps(document)


def written_header(label: str, source: str, version: str, date: str) -> str:
    """The comment lines that open a written job: what it is and where it came from."""
    return (f"# {source} with {label} written in by deflect {version} on {date}; each changed value says what it\n"
            "# was. Prove the changed program out before cutting (dry run, single block).\n")
