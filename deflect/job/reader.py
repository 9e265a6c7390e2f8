"""Job file: TOML on disk -> a checked `Job` in mm, N, MPa.

Takes the path of a job file (keys in INTERFACE.md) and gives a `Job`: the title, the nominal
section (`deflect.geometry.section.Section`, from `[part] outline` or from a DXF half-section named by
`[part] drawing`, `deflect.job.drawing`), the material (`deflect.job.materials.Material`), the held boxes (the
[[held]] boxes or, when there are none, the material under the [holding] contact,
`deflect.job.holding.held_from_holding`), and the machining tables as read (checked by the modules that use
them). An inch job (`units = "inch"`) has every length converted to mm here, so nothing downstream ever
sees inches; speeds stay in m/min, moduli in MPa and densities in g/cm3 in either unit system.

Every problem is raised as `InputError` carrying the file name, the dotted key and what is wrong.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from deflect.errors import InputError, shown
from deflect.geometry.boxes import HeldBox
from deflect.geometry.section import Section, section_from_outline, unit_size_warning
from deflect.job.calibration import Calibration, read_calibration, with_calibration
from deflect.job.checks import check_keys, check_range, check_table, is_number, read_toml
from deflect.job.drawing import Drawing, drawing_notes, drawing_section, read_drawing
from deflect.job.holding import held_from_holding
from deflect.job.materials import Material, material_from_job

MM_PER_INCH = 25.4

# Tables a job may hold. The machining ones are read by the simulation; here they only pass through.
KNOWN_TABLES = ("job", "material", "part", "held", "stock", "tool", "pass", "machine", "tolerance", "holding",
                "dynamics")
JOB_KEYS = ("title", "units", "calibration")
PART_KEYS = ("outline", "drawing", "layer", "axis")
HELD_KEYS = ("r", "z")

# Lengths inside the machining tables, converted for inch jobs (key names as in INTERFACE.md).
TOOL_LENGTH_KEYS = ("nose_radius",)
BAR_LENGTH_KEYS = ("diameter", "overhang")
PASS_LENGTH_KEYS = ("allowance", "feed", "z", "r", "depth", "offset", "compensate")
HOLDING_LENGTH_KEYS = ("z", "width", "jaw_radius")
TOLERANCE_LENGTH_KEYS = ("wall", "roundness", "plus", "minus")


@dataclass(frozen=True)
class Job:
    """A checked job, every length in mm."""

    path: str
    title: str
    units: str                       # as written in the file: "mm" or "inch"
    section: Section                 # the finished (nominal) half-section
    material: Material
    held: list[HeldBox]
    tables: dict = field(default_factory=dict)   # machining tables (stock, tool, pass, ...), lengths in mm
    warnings: list[str] = field(default_factory=list)
    drawing: Drawing | None = None   # the DXF the section was read from ([part] drawing), else None
    calibration: Calibration | None = None       # a first article's (`deflect.job.calibration`), if given


def scale_lengths(value, factor: float):
    """Multiply every number in a nested list/dict structure by factor (for inch outlines)."""
    if is_number(value):
        return value * factor
    if isinstance(value, list):
        return [scale_lengths(v, factor) for v in value]
    if isinstance(value, dict):
        return {k: scale_lengths(v, factor) for k, v in value.items()}
    return value


def scale_keys(table: dict, keys: tuple[str, ...], factor: float) -> dict:
    """Copy of table with the named length keys scaled; other keys untouched."""
    return {k: (scale_lengths(v, factor) if k in keys else v) for k, v in table.items()}


def convert_machining_tables(data: dict, factor: float) -> dict:
    """The machining tables with their lengths in mm (factor = mm per file unit)."""
    tables = {}
    if "stock" in data:
        stock = check_table(data["stock"], "stock")
        tables["stock"] = {k: scale_lengths(v, factor) for k, v in stock.items()}
    if "tool" in data:
        tools = []
        for i, tool in enumerate(_array_of_tables(data["tool"], "tool")):
            converted = scale_keys(tool, TOOL_LENGTH_KEYS, factor)
            if isinstance(tool.get("bar"), dict):
                converted["bar"] = scale_keys(tool["bar"], BAR_LENGTH_KEYS, factor)
            tools.append(converted)
        tables["tool"] = tools
    if "pass" in data:
        tables["pass"] = [scale_keys(p, PASS_LENGTH_KEYS, factor)
                          for p in _array_of_tables(data["pass"], "pass")]
    if "holding" in data:
        tables["holding"] = scale_keys(check_table(data["holding"], "holding"), HOLDING_LENGTH_KEYS, factor)
    if "tolerance" in data:
        tolerance = check_table(data["tolerance"], "tolerance")
        # wall and roundness are lengths (a roundness table's od and id too); explicit limits hold lengths
        tables["tolerance"] = {k: (scale_lengths(v, factor) if k in TOLERANCE_LENGTH_KEYS
                                   else scale_keys(v, TOLERANCE_LENGTH_KEYS, factor) if isinstance(v, dict) else v)
                               for k, v in tolerance.items()}
    if "machine" in data:
        tables["machine"] = check_table(data["machine"], "machine")
    if "dynamics" in data:   # damping ratios and frequencies: no lengths
        tables["dynamics"] = check_table(data["dynamics"], "dynamics")
    return tables


def _array_of_tables(value, key: str) -> list[dict]:
    if not isinstance(value, list):
        raise InputError(key, f"must be an array of tables, written [[{key}]]")
    for i, item in enumerate(value):
        check_table(item, f"{key}[{i}]")
    return value


def read_held(data: dict, factor: float) -> list[HeldBox]:
    boxes = []
    for i, box in enumerate(_array_of_tables(data.get("held", []), "held")):
        key = f"held[{i}]"
        check_keys(box, HELD_KEYS, key)
        for name in HELD_KEYS:
            if name not in box:
                raise InputError(f"{key}.{name}", "missing; a held box needs r = [low, high] and z = [low, high]")
        r_range = check_range(box["r"], f"{key}.r")
        z_range = check_range(box["z"], f"{key}.z")
        boxes.append(HeldBox(r_range=(r_range[0] * factor, r_range[1] * factor),
                             z_range=(z_range[0] * factor, z_range[1] * factor), key=key))
    return boxes


def parse_job(data: dict, path: str, calibrated: bool = True) -> Job:
    """Check a parsed TOML document and build the Job (InputError without the file name); calibrated False
    leaves out a `[job] calibration` (the job with its recalled constants)."""
    for name in data:
        if name not in KNOWN_TABLES:
            raise InputError(name, f"unknown table; a job holds {', '.join(KNOWN_TABLES)}")
    job_table = check_table(data.get("job", {}), "job")
    check_keys(job_table, JOB_KEYS, "job")
    title = job_table.get("title", Path(path).stem)
    if not isinstance(title, str):
        raise InputError("job.title", "must be text in quotes")
    units = job_table.get("units", "mm")
    if units not in ("mm", "inch"):
        raise InputError("job.units", f'must be "mm" or "inch", got {shown(units)}')
    factor = MM_PER_INCH if units == "inch" else 1.0

    if "material" not in data:
        raise InputError("material", "missing; give [material] with name = a library material or E, nu, density")
    material = material_from_job(check_table(data["material"], "material"), "material")

    if "part" not in data:
        raise InputError("part", "missing; give [part] with outline = [[r, z], ...] (the finished half-section)")
    part = check_table(data["part"], "part")
    check_keys(part, PART_KEYS, "part")
    drawing = None
    if "drawing" in part:
        drawing, section, warnings = read_part_drawing(part, path, units)
    else:
        if "outline" not in part:
            raise InputError("part.outline", "missing; list the half-section's corners as [[r, z], ...], or name "
                                             'a DXF half-section with drawing = "part.dxf"')
        for name in ("layer", "axis"):
            if name in part:
                raise InputError(f"part.{name}", "belongs to a drawing: give it with drawing = \"part.dxf\"")
        section = section_from_outline(scale_lengths(part["outline"], factor), "part.outline")
        warnings = []
        warning = unit_size_warning(section, units)
        if warning:
            warnings.append(f"part.outline: {warning}")

    held = read_held(data, factor)
    tables = convert_machining_tables(data, factor)
    if "holding" in tables and not held:
        # the material under the jaws' contact is what holds the part for the cutting stiffness
        held = held_from_holding(section, tables["holding"])
    where = calibration_path(job_table["calibration"], path) if "calibration" in job_table else None
    if where is not None and not calibrated:
        warnings.append(f"job.calibration: {where} is not used here (the job's recalled constants, or the "
                        "calibration given in its place)")
    job = Job(path=path, title=title, units=units, section=section, material=material,
              held=held, tables=tables, warnings=warnings, drawing=drawing)
    return with_calibration(job, read_calibration(where)) if where is not None and calibrated else job


def read_part_drawing(part: dict, path: str, units: str) -> tuple[Drawing, Section, list[str]]:
    """[part] drawing = "file.dxf" (path relative to the job file), optional layer and axis: the drawing,
    its section in mm and its notes. A unitless drawing is read in the job's unit."""
    if "outline" in part:
        raise InputError("part.drawing", "give the half-section once: either outline or drawing, not both")
    name = part["drawing"]
    if not isinstance(name, str) or not name.strip():
        raise InputError("part.drawing", f'must be the DXF file\'s name in quotes, e.g. "housing.dxf"; got {name!r}')
    for key in ("layer", "axis"):
        if key in part and not isinstance(part[key], str):
            raise InputError(f"part.{key}", f"must be text in quotes, got {part[key]!r}")
    dxf = Path(path).parent / name
    try:
        drawing = read_drawing(dxf, layer=part.get("layer"), axis=part.get("axis"), unitless=units,
                               axis_key="part.axis")
    except InputError as exc:
        if exc.key.startswith("part."):
            raise
        raise InputError("part.drawing", f"{name}: {exc.key}: {exc.message}") from None
    section = drawing_section(drawing)
    return drawing, section, [f"part.drawing: {name}: {note}" for note in drawing_notes(drawing, section)]


def calibration_path(value, job_path: str) -> Path:
    """`[job] calibration = "file.toml"`: the calibration file, a path relative to the job's folder."""
    if not isinstance(value, str) or not value.strip():
        raise InputError("job.calibration", "must be the path of a calibration file in quotes, as written by "
                                            "`deflect explain --save`")
    return Path(job_path).parent / value


def read_job(path: str | Path, calibrated: bool = True) -> Job:
    """Read and check a job file; every problem is an InputError naming this file. calibrated False leaves
    out its `[job] calibration`."""
    path = str(path)
    data = read_toml(path, "job file")
    try:
        return parse_job(data, path, calibrated)
    except InputError as exc:
        exc.file = exc.file or path          # a problem in the calibration file names that file
        raise
