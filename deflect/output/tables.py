"""Tables and paragraphs of a report as data, and their terminal layout. Formatting only; no physics here.

A report is a list of blocks: `Grid` (a table whose cells are already formatted, with its title and notes) and
`Text` (a note, a warning or a caution). The terminal prints them with `blocks_text`; the HTML report
(`deflect.output.html_report`) lays the same blocks out as tables and paragraphs, so both show the same
figures to the same digits.
"""

from __future__ import annotations

from dataclasses import dataclass

from deflect.job.reader import MM_PER_INCH


def units_note(units: str, in_mm: str = "its lengths are", also: str = "feeds in mm/rev",
               in_inches: str = "") -> str:
    """The line an inch job's report opens with, true for what that report prints ("" for a mm job): what is
    printed in mm (`in_mm`, with `also` beside it), and what in inches, as the job and the control take them
    (`in_inches`: the changes a report writes into the job; none by default)."""
    if units != "inch":
        return ""
    inches = f"; {in_inches} in inches, as the job and the control take them" if in_inches else ""
    return (f"(an inch job: {in_mm} printed in mm below, 1 in = 25.4 mm, {also}{inches}; cutting speeds are m/min in "
            "either unit)\n")


def table(rows: list[tuple[str, str]], title: str = "") -> str:
    """Two-column table: label left, value right-aligned."""
    width_label = max(len(label) for label, _ in rows)
    width_value = max(len(value) for _, value in rows)
    lines = [title, "-" * max(len(title), width_label + width_value + 3)] if title else []
    lines += [f"{label:<{width_label}}   {value:>{width_value}}" for label, value in rows]
    return "\n".join(lines)


def sentence_table(rows: list[tuple[str, str]], title: str) -> str:
    """Label and value, both left-aligned (for values that are sentences, not numbers)."""
    width = max(len(label) for label, _ in rows)
    lines = [f"{label:<{width}}   {value}" for label, value in rows]
    return "\n".join([title, "-" * max(len(title), max(len(line) for line in lines)), *lines])


def grid(header: list[str], rows: list[list[str]]) -> str:
    """Column table with right-aligned cells and a rule under the header."""
    widths = [max(len(header[i]), *(len(row[i]) for row in rows)) for i in range(len(header))]

    def line(cells: list[str]) -> str:
        return "  ".join(f"{cell:>{width}}" for cell, width in zip(cells, widths))

    return "\n".join([line(header), line(["-" * w for w in widths]), *(line(row) for row in rows)])


@dataclass(frozen=True)
class Grid:
    """A table: `header` and `rows` of formatted cells (a `pairs` table has no header: label and value), the
    title above it and the notes under it (printed in brackets)."""

    title: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    notes: tuple[str, ...] = ()
    pairs: bool = False
    sentences: bool = False      # a pairs table whose values are sentences: left-aligned on the terminal

    def text(self) -> str:
        if self.pairs:
            layout = sentence_table if self.sentences else table
            body = layout([(label, value) for label, value in self.rows], title=self.title)
        else:
            table_text = grid(list(self.header), [list(row) for row in self.rows])
            body = f"{self.title}\n{table_text}" if self.title else table_text
        return "\n".join([body, *(f"({note})" for note in self.notes)])


def pairs_grid(rows: list[tuple[str, str]], title: str, notes: tuple[str, ...] = (), sentences: bool = False) -> Grid:
    return Grid(title, (), tuple(tuple(row) for row in rows), tuple(notes), pairs=True, sentences=sentences)


def column_grid(title: str, header: list[str], rows: list[list[str]], notes: tuple[str, ...] = ()) -> Grid:
    return Grid(title, tuple(header), tuple(tuple(row) for row in rows), tuple(notes))


@dataclass(frozen=True)
class Text:
    """Paragraphs of a report, one a line (a line may carry the terminal's own line breaks); `kind` says what
    they are: "note", "warning" or "caution". With a `title`, the terminal prints the lines under it, indented,
    each after the `bullet`."""

    lines: tuple[str, ...]
    kind: str = "note"
    title: str = ""
    bullet: str = ""

    def text(self) -> str:
        if not self.title:
            return "\n".join(self.lines)
        return "\n".join([self.title, *(f"  {self.bullet}{line}" for line in self.lines)])


def blocks_text(blocks: list) -> str:
    """The terminal's layout of a report's blocks: one blank line between blocks."""
    return "\n\n".join(block.text() for block in blocks)


def section_table(title: str, props: dict) -> str:
    rows = [
        ("material", f"{props['material']} ({props['density_g_cm3']:.3f} g/cm3)"),
        ("section area", f"{props['area_mm2']:.4f} mm2"),
        ("volume", f"{props['volume_mm3']:.3f} mm3"),
        ("mass", f"{props['mass_g']:.4f} g"),
        ("centroid of section, r", f"{props['centroid_r_mm']:.4f} mm"),
        ("centroid of section, z", f"{props['centroid_z_mm']:.4f} mm"),
        ("axial inertia (about the spin axis)", f"{props['inertia_axial_kg_mm2']:.5g} kg mm2"),
        ("thinnest wall", f"{props['min_wall_mm']:.4f} mm"),
    ]
    return table(rows, title=f"Section of the finished part: {title}")


def compliance_table(title: str, points: list, mapped: bool, units: str = "mm") -> str:
    """Compliance per point: normal, circumferential and along-boundary diagonal, and the stiffness. The points
    are given in the job's units (as `--at` takes them); everything else is per newton in um."""
    inch = units == "inch"
    unit, factor, digits = ("in", MM_PER_INCH, 4) if inch else ("mm", 1.0, 3)
    header = [f"r {unit}", f"z {unit}", "nr", "nz", "normal um/N", "circ. um/N", "along um/N", "stiffness N/um"]
    rows = []
    for p in points:
        c = p.matrix_mm_per_n
        stiffness = f"{1e-3 / c[0, 0]:.3g}" if c[0, 0] > 0 else "held"
        rows.append([f"{p.r_mm / factor:.{digits}f}", f"{p.z_mm / factor:.{digits}f}", f"{p.nr:+.2f}", f"{p.nz:+.2f}",
                     f"{1e3 * c[0, 0]:.4g}", f"{1e3 * c[1, 1]:.4g}", f"{1e3 * c[2, 2]:.4g}", stiffness])
    what = "along the whole boundary" if mapped else "at the asked points"
    summed = f"(Fourier harmonics 0..{max(p.harmonics for p in points)} summed)" if points else ""
    where = "(an inch job: the points in inches, as --at takes them)\n" if inch else ""
    return f"Compliance of the held part {what}: {title} {summed}\n" + where + grid(header, rows)
