"""The HTML report: what the commands found, with their figures and the job's inputs -> one self-contained file.

Takes `Chapter`s, one per command that contributes (each built from that command's results by one function of
`deflect.output.html_chapters`), and the job files' text; gives the text of one HTML file that needs nothing
else to be read: the figures are SVG in data URIs, the stylesheet is inside, there is no script and nothing is
fetched. The page is laid out in sheets, each starting a new page when printed (A4 or Letter, as the browser's
print dialog chooses): first the key figures, then the cautions of every part, then the inputs, then each command's tables (the
same `Grid` and `Text` blocks its terminal report prints, so the same figures to the same digits) and figures,
and last the job files as written. Every string from the user (job titles, pass names, the job file itself) is
escaped by the template engine (Jinja2, autoescaping on). Formatting only; no physics is computed here.

A key figure carries the places of its numbers in the command's JSON (`keys`, dotted paths, one per number
shown, in order) and the factor from those values to the numbers shown (`scale`), so a reader of the page can
check it against `--json`.
"""

from __future__ import annotations

import base64
import datetime
import os
import re
import tomllib
from dataclasses import dataclass, field

from deflect.output.tables import Grid, Text, column_grid, pairs_grid

TEMPLATE = "report.html"
WIDE_TABLE_COLUMNS = 10         # a table of this many columns or more is set smaller, to fit the page
LIST_SHOWN = 4                  # a list of more numbers than this (an outline) is echoed by its length


@dataclass(frozen=True)
class KeyFigure:
    """A headline figure: label, the value as shown (with its unit), and where it stands in the command's JSON."""

    label: str
    value: str
    keys: tuple[str, ...] = ()   # dotted paths in the command's JSON (list items by index) of the numbers shown
    scale: float = 1.0           # shown = JSON value x scale (e.g. 1000 for um shown of a value in mm)
    note: str = ""
    verdict: str = ""            # "good" | "bad" | "": how the value reads against the drawing or the limits


@dataclass(frozen=True)
class Figure:
    """A figure as SVG text, with its caption."""

    caption: str
    svg: str

    def data_uri(self) -> str:
        return "data:image/svg+xml;base64," + base64.b64encode(self.svg.encode("utf-8")).decode("ascii")

    def size_px(self) -> tuple[int, int]:
        """The figure's drawn size in CSS pixels, from the SVG's own width and height in points."""
        found = re.search(r'<svg[^>]*\bwidth="([\d.]+)pt"[^>]*\bheight="([\d.]+)pt"', self.svg)
        if found is None:
            return 0, 0
        return round(float(found.group(1)) * 96 / 72), round(float(found.group(2)) * 96 / 72)


@dataclass(frozen=True)
class Sheet:
    """What goes on one printed page (or on as many as it needs): a title and blocks (Grid, Text, Figure), laid
    out one under the other or, `side_by_side`, in a row as wide as the page allows (narrow tables)."""

    title: str
    blocks: tuple
    side_by_side: bool = False


@dataclass(frozen=True)
class Chapter:
    """What one command contributes: its key figures, its sheets, and its cautions (gathered on the second page)."""

    command: str                 # "predict", "tune", "clamp", "compare", ...
    title: str
    key_figures: tuple[KeyFigure, ...]
    sheets: tuple[Sheet, ...]
    cautions: tuple[str, ...] = ()


@dataclass(frozen=True)
class JobSource:
    """A job file as given: its name and its text (echoed as tables of its inputs and in full)."""

    name: str
    text: str


@dataclass(frozen=True)
class Report:
    title: str
    what: str                    # what the report is, e.g. "machining prediction"
    jobs: tuple[JobSource, ...]
    chapters: tuple[Chapter, ...]
    version: str
    date: str
    notes: tuple[str, ...] = field(default_factory=tuple)    # said at the top, under the title
    remarks: tuple[str, ...] = field(default_factory=tuple)  # said at the foot of the first page


def split_cautions(blocks: list) -> tuple[list, tuple[str, ...]]:
    """A command's blocks without its cautions, and the cautions' text (one line each) for the cautions' page."""
    kept, cautions = [], []
    for block in blocks:
        if isinstance(block, Text) and block.kind == "caution":
            cautions += [sentence(" ".join(line.split()).removeprefix("Caution: ")) for line in block.lines]
        else:
            kept.append(block)
    return kept, tuple(cautions)


def sentence(text: str) -> str:
    """The text with a capital first letter."""
    return text[:1].upper() + text[1:]


def report_date() -> str:
    """Today (ISO 8601); SOURCE_DATE_EPOCH, when set, gives the date instead (reproducible builds)."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.isdigit():
        return datetime.datetime.fromtimestamp(int(epoch), datetime.timezone.utc).date().isoformat()
    return datetime.date.today().isoformat()


# ---------------------------------------------------------------------------------------------------
# the job's inputs, echoed from the file as written (the job's own units)

def value_text(value) -> str:
    """A TOML value as a short cell: numbers as written, long lists of numbers by their length."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, dict):
        return ", ".join(f"{k} = {value_text(v)}" for k, v in value.items())
    if isinstance(value, list):
        if len(value) > LIST_SHOWN and all(isinstance(v, list) for v in value):
            return f"{len(value)} points (in the job file below)"
        return "[" + ", ".join(value_text(v) for v in value) + "]"
    return str(value)


def input_tables(source: JobSource) -> list[Grid]:
    """The file's tables as written: a table per [table] (key and value), a table with a row per entry for each
    [[array of tables]] (a column per key), tables inside tables under their dotted names."""
    return _tables_of(tomllib.loads(source.text), "")        # a file deflect has read already


def _tables_of(data: dict, prefix: str) -> list[Grid]:
    grids, pairs = [], []
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            grids += _tables_of(value, f"{name}.")
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            keys = list(dict.fromkeys(k for entry in value for k in entry))
            rows = [[value_text(entry[k]) if k in entry else "" for k in keys] for entry in value]
            grids.append(column_grid(f"[[{name}]]", keys, rows))
        else:
            pairs.append((key, value_text(value)))
    if pairs:
        grids.insert(0, pairs_grid(pairs, f"[{prefix.rstrip('.')}]", sentences=True))
    return grids


# ---------------------------------------------------------------------------------------------------
# rendering

def block_kind(block) -> str:
    if isinstance(block, Figure):
        return "figure"
    if isinstance(block, Grid):
        return "pairs" if block.pairs else "grid"
    if isinstance(block, Text):
        return "text"
    raise TypeError(f"not a report block: {block!r}")


def number_text(value: float) -> str:
    """A scale factor as written in an attribute (1, 1000)."""
    return f"{value:g}"


def render(report: Report) -> str:
    """The report as the text of one HTML file."""
    import jinja2

    environment = jinja2.Environment(loader=jinja2.PackageLoader("deflect.output", "templates"),
                                     autoescape=True, undefined=jinja2.StrictUndefined,
                                     trim_blocks=True, lstrip_blocks=True)
    environment.globals.update(block_kind=block_kind, number_text=number_text, input_tables=input_tables,
                               wide_columns=WIDE_TABLE_COLUMNS)
    cautions = tuple(dict.fromkeys(c for chapter in report.chapters for c in chapter.cautions))
    key_figures = [(chapter, figure) for chapter in report.chapters for figure in chapter.key_figures]
    return environment.get_template(TEMPLATE).render(report=report, cautions=cautions, key_figures=key_figures)
