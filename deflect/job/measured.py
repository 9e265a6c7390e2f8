"""A measured part (first article): the TOML file of what the shop measured -> checked `Measured` readings in mm.

Takes the path of a measurement file and the `Job` the part was made by; gives a `Measured`: the part's mass
and a list of `Reading`s (diameters, wall thickness, face heights, roundness), each with its uncertainty (a
standard uncertainty, one sigma), how it was taken, and the drawn value at the same place.

    [measured]
    units = "mm"                 # optional; default the job's unit. Mass in g, roundness in um, always.
    mass = 59.86                 # g, the part weighed (optional)
    mass_uncertainty = 0.01      # g (optional)
    density = 2.701              # g/cm3 of this batch, if it was measured (optional)
    density_uncertainty = 0.002

    [[measured.diameter]]        # any number of each
    surface = "od"               # "od" | "id"
    z = 38.0
    value = 50.014
    uncertainty = 0.002          # optional
    how = "two-point"            # optional: "two-point" (micrometer, bore gauge) | "circle" (a fitted circle, CMM)

    [[measured.wall]]
    z = 38.0
    value = 1.214
    how = "micrometer"           # optional: "micrometer" (a tube micrometer, ball anvil) | "ultrasonic"

    [[measured.face]]            # a face's height above the job's z = 0, at radius r
    r = 24.4
    value = 45.002
    how = "height gauge"         # optional: "height gauge" | "cmm"

    [[measured.roundness]]
    surface = "id"
    z = 3.0
    value_um = 12.0              # radial peak to valley
    lobes = 3                    # optional

Where no uncertainty is given, the instrument's usual one is taken (`DEFAULT_UNCERTAINTY`, common practice;
no published source) and the reading says so. Heights and radii must lie on the part (its ends included), on a
surface it has there (an OD or bore within 60 degrees of the axis, a face within 60 degrees of square to it);
values must be near the drawn ones (a first article is off by micrometres to tenths): a diameter that is the
drawn one divided by 25.4 is taken for inches in a millimetre file, and the like. Every problem is an
`InputError` naming the measurement file and the entry.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from deflect.errors import InputError
from deflect.geometry.gauging import nearest_face, outer_wall, surface_radius
from deflect.geometry.section import POLYGON_CHORD_MM, mass_properties
from deflect.job.checks import check_keys, check_table, read_toml, required_number

MM_PER_INCH = 25.4
MEASURED_KEYS = ("units", "mass", "mass_uncertainty", "density", "density_uncertainty", "diameter", "wall", "face",
                 "roundness")
ENTRY_KEYS = {
    "diameter": ("surface", "z", "value", "uncertainty", "how"),
    "wall": ("z", "value", "uncertainty", "how"),
    "face": ("r", "value", "uncertainty", "how"),
    "roundness": ("surface", "z", "value_um", "uncertainty_um", "lobes"),
}
HOW = {"diameter": ("two-point", "circle"), "wall": ("micrometer", "ultrasonic"), "face": ("height gauge", "cmm")}

# The usual standard uncertainty of each instrument [mm] (roundness [um], mass [g]): common practice, no
# published source; give `uncertainty` where the gauge's own is known.
DEFAULT_UNCERTAINTY = {
    ("diameter", "od", "two-point"): (0.002, "outside micrometer"),
    ("diameter", "id", "two-point"): (0.003, "bore gauge"),
    ("diameter", "od", "circle"): (0.002, "circle fitted on a coordinate measuring machine"),
    ("diameter", "id", "circle"): (0.002, "circle fitted on a coordinate measuring machine"),
    ("wall", "wall", "micrometer"): (0.003, "tube micrometer"),
    ("wall", "wall", "ultrasonic"): (0.010, "ultrasonic thickness gauge"),
    ("face", "face", "height gauge"): (0.003, "height gauge"),
    ("face", "face", "cmm"): (0.002, "coordinate measuring machine"),
    ("roundness", "od", ""): (0.001, "roundness tester"),
    ("roundness", "id", ""): (0.001, "roundness tester"),
}
DEFAULT_MASS_UNCERTAINTY_G = 0.01      # a laboratory scale reading to 0.01 g (common practice)
MIN_RADIAL_NORMAL = 0.5     # a diameter is read on a boundary within 60 degrees of the axis (not on a face)
FACE_SEARCH_MM = 1.0        # a measured face lies within this of a drawn one at its radius
GROSS_SHARE = 0.05          # a diameter this far (share) from the drawn one, and more than GROSS_MM,
GROSS_MM = 1.0              # is a wrong surface, height or unit, not a first article's error
WALL_GROSS_SHARE = 0.25     # the same for a wall (a wall of 1.2 mm measured 1.5 is no push-off)
WALL_GROSS_MM = 0.2
COARSEST_MM = 0.05          # a gauge coarser than this cannot see push-off (micrometres): said in a note
MOST_ROUNDNESS_UM = 500.0   # roundness beyond this is no jaw mark on a turned part (or it is not in um)
MASS_RATIO = (0.5, 2.0)     # a first article weighs about its drawn mass; outside this the entry is refused
DENSITY_SHARE = 0.1         # a measured density within 10 % of the material's
END_REACH_MM = POLYGON_CHORD_MM   # a height this near an end of the part is a reading at that end


@dataclass(frozen=True)
class Reading:
    """One measured dimension, in mm (roundness as a radial peak to valley, mm)."""

    kind: str                    # "diameter" | "wall" | "face" | "roundness"
    surface: str                 # "od" | "id" for diameters and roundness, "wall", "face"
    at_mm: float                 # where: z for diameters, walls and roundness; r for a face
    value_mm: float
    uncertainty_mm: float        # standard uncertainty (one sigma)
    uncertainty_from: str        # "given", or the instrument whose usual uncertainty was taken (common practice)
    how: str                     # "two-point", "circle", "micrometer", "ultrasonic", "height gauge", "cmm", ""
    nominal_mm: float            # the drawn value at the same place
    key: str                     # "measured.diameter[2]", for messages
    lobes: int | None = None     # roundness: the lobes counted, if given


@dataclass(frozen=True)
class Measured:
    """A measured part: its mass and its readings (mm, g)."""

    path: str
    units: str                   # the unit the file's lengths were given in
    mass_g: float | None
    mass_uncertainty_g: float
    mass_uncertainty_from: str   # "given" or "laboratory scale (common practice)"
    density_g_cm3: float | None  # the batch's density, if it was measured
    density_uncertainty_g_cm3: float | None
    readings: tuple[Reading, ...]
    notes: tuple[str, ...] = ()


def read_measured(path: str | Path, job) -> Measured:
    """Read and check a measurement file against the job whose part it measures; every problem is an
    InputError naming the file and the entry."""
    path = str(path)
    data = read_toml(path, "measurement file")
    try:
        return measured_from_data(data, path, job)
    except InputError as exc:
        exc.file = path
        raise


def measured_from_data(data: dict, path: str, job) -> Measured:
    """Check a parsed measurement file (InputError without the file name)."""
    for name in data:
        if name != "measured":
            raise InputError(name, "unknown table; a measurement file holds [measured] and its "
                                   "[[measured.diameter]], [[measured.wall]], [[measured.face]] and "
                                   "[[measured.roundness]] entries")
    if "measured" not in data:
        raise InputError("measured", "missing; give [measured] with the part's mass and its "
                                     "[[measured.diameter]] entries")
    table = check_table(data["measured"], "measured")
    check_keys(table, MEASURED_KEYS, "measured")
    units = table.get("units", job.units)
    if units not in ("mm", "inch"):
        raise InputError("measured.units", f'must be "mm" or "inch", got {units!r}')
    factor = MM_PER_INCH if units == "inch" else 1.0
    polygon = job.section.polygon(POLYGON_CHORD_MM)
    notes: list[str] = []
    readings = []
    assumed: dict[tuple[str, str], list[str]] = {}
    for kind in ("diameter", "wall", "face", "roundness"):
        for i, entry in enumerate(_entries(table, kind)):
            reading = READERS[kind](entry, f"measured.{kind}[{i}]", polygon, factor, units)
            if reading.uncertainty_from != "given":
                assumed.setdefault((reading.uncertainty_from, _shown(reading)), []).append(
                    reading.key.removeprefix("measured."))
            elif reading.kind != "roundness" and reading.uncertainty_mm > COARSEST_MM:
                notes.append(f"{reading.key}: an uncertainty of {reading.uncertainty_mm:g} mm is coarser than the "
                             "push-off it is meant to see (micrometres); it weighs little in the fit")
            readings.append(reading)
    notes += [f"uncertainty {shown} assumed for {', '.join(keys)}: usual for the {instrument} (common "
              "practice); give `uncertainty` to override" for (instrument, shown), keys in assumed.items()]
    mass, mass_u, mass_from = _mass(table, job)
    if mass is not None and mass_from != "given":
        notes.append(f"measured.mass_uncertainty: {mass_u:g} g assumed, a laboratory scale (common practice)")
    density, density_u = _density(table, job)
    if mass is None and not readings:
        raise InputError("measured", "nothing measured: give the mass or at least one [[measured.diameter]], "
                                     "[[measured.wall]] or [[measured.face]]")
    return Measured(path=path, units=units, mass_g=mass, mass_uncertainty_g=mass_u, mass_uncertainty_from=mass_from,
                    density_g_cm3=density, density_uncertainty_g_cm3=density_u, readings=tuple(readings),
                    notes=tuple(notes))


def _shown(reading: Reading) -> str:
    if reading.kind == "roundness":
        return f"{1000 * reading.uncertainty_mm:g} um"
    return f"{reading.uncertainty_mm:g} mm"


def _entries(table: dict, kind: str) -> list[dict]:
    value = table.get(kind, [])
    if not isinstance(value, list):
        raise InputError(f"measured.{kind}", f"must be an array of tables, written [[measured.{kind}]]")
    for i, item in enumerate(value):
        check_table(item, f"measured.{kind}[{i}]")
        check_keys(item, ENTRY_KEYS[kind], f"measured.{kind}[{i}]")
    return value


def _choice(entry: dict, name: str, key: str, allowed: tuple[str, ...], default: str) -> str:
    value = entry.get(name, default)
    if value not in allowed:
        raise InputError(f"{key}.{name}", f"must be one of {', '.join(repr(a) for a in allowed)}, got {value!r}")
    return value


def _uncertainty(entry: dict, key: str, factor: float, default: tuple[float, str], name: str = "uncertainty",
                 scale: float = 1.0) -> tuple[float, str]:
    """(standard uncertainty [mm], where it came from); factor converts the file's unit, scale um -> mm."""
    if name not in entry:
        return default
    value = required_number(entry, name, key, "the standard uncertainty of the reading")
    if value <= 0.0:
        raise InputError(f"{key}.{name}", f"must be more than 0, got {value:g} (no gauge reads exactly); "
                                          "leave it out for the instrument's usual one")
    return value * factor * scale, "given"


def _height(entry: dict, key: str, polygon, factor: float) -> float:
    """The entry's z [mm] on the part's axial extent, its ends included: a reading at an end (within
    END_REACH_MM, the chord the drawn outline is kept to, so a z converted from inches still counts) is taken
    END_REACH_MM inside it, where a gauge's line still crosses the part's boundary."""
    z = required_number(entry, "z", key, "the height along the axis where it was measured") * factor
    low, high = float(polygon[:, 1].min()), float(polygon[:, 1].max())
    if not low - END_REACH_MM <= z <= high + END_REACH_MM:
        raise InputError(f"{key}.z", f"{z / factor:g} lies outside the part, which runs from z = {low / factor:g} "
                                     f"to {high / factor:g}")
    return min(max(z, low + END_REACH_MM), high - END_REACH_MM)


def _surface_at(entry: dict, key: str, polygon, z: float, factor: float) -> tuple[str, float]:
    """The entry's surface and its drawn radius at z; an error where the part has no such surface there."""
    surface = _choice(entry, "surface", key, ("od", "id"), "")
    found = surface_radius(polygon, surface, z)
    if found is None:
        lacks = "no ID (bore)" if surface == "id" else "no material"
        raise InputError(f"{key}.surface", f"the part has {lacks} at z = {z / factor:g}: there is no {surface} to "
                                           "measure there")
    r, n_r = found
    if abs(n_r) < MIN_RADIAL_NORMAL:
        raise InputError(f"{key}.z", f"at z = {z / factor:g} the {surface} is a face or the fillet of a corner "
                                     "(its boundary is more than 60 degrees from the axis); measure a diameter "
                                     "further along the turned surface")
    return surface, r


def _unit_hint(value_mm: float, nominal_mm: float, units: str, diameter: bool) -> str:
    """What a gross value looks like: the other unit, or (for a diameter) a radius."""
    if units == "mm" and abs(value_mm * MM_PER_INCH - nominal_mm) <= GROSS_SHARE * nominal_mm:
        return 'it looks like inches in a millimetre file: say units = "inch" in [measured], or convert'
    if units == "inch" and abs(value_mm / MM_PER_INCH - nominal_mm) <= GROSS_SHARE * nominal_mm:
        return 'it looks like millimetres in an inch file: say units = "mm" in [measured], or convert'
    if diameter and abs(2.0 * value_mm - nominal_mm) <= GROSS_SHARE * nominal_mm:
        return "it looks like a radius: give the diameter"
    return "a first article is off by micrometres to tenths: check the surface, the height and the unit"


def _diameter(entry: dict, key: str, polygon, factor: float, units: str) -> Reading:
    z = _height(entry, key, polygon, factor)
    surface, r = _surface_at(entry, key, polygon, z, factor)
    value = required_number(entry, "value", key, "the diameter measured") * factor
    nominal = 2.0 * r
    if value <= 0.0:
        raise InputError(f"{key}.value", f"must be a diameter more than 0, got {value / factor:g}")
    if abs(value - nominal) > max(GROSS_MM, GROSS_SHARE * nominal):
        raise InputError(f"{key}.value", f"{value / factor:g} is far from the drawn {surface} of "
                                         f"{nominal / factor:g} at z = {z / factor:g}: "
                                         + _unit_hint(value, nominal, units, diameter=True))
    how = _choice(entry, "how", key, HOW["diameter"], "two-point")
    u, source = _uncertainty(entry, key, factor, DEFAULT_UNCERTAINTY[("diameter", surface, how)])
    return Reading("diameter", surface, z, value, u, source, how, nominal, key)


def _wall(entry: dict, key: str, polygon, factor: float, units: str) -> Reading:
    z = _height(entry, key, polygon, factor)
    wall = outer_wall(polygon, z)
    if wall is None or wall[0][0] <= 0.0 or min(abs(wall[0][1]), abs(wall[1][1])) < MIN_RADIAL_NORMAL:
        raise InputError(f"{key}.z", f"the part has no wall between an OD and an ID at z = {z / factor:g}")
    nominal = wall[1][0] - wall[0][0]
    value = required_number(entry, "value", key, "the wall thickness measured") * factor
    if value <= 0.0:
        raise InputError(f"{key}.value", f"must be a thickness more than 0, got {value / factor:g}")
    if abs(value - nominal) > max(WALL_GROSS_MM, WALL_GROSS_SHARE * nominal):
        raise InputError(f"{key}.value", f"{value / factor:g} is far from the drawn wall of {nominal / factor:g} at "
                                         f"z = {z / factor:g}: " + _unit_hint(value, nominal, units, diameter=False))
    how = _choice(entry, "how", key, HOW["wall"], "micrometer")
    u, source = _uncertainty(entry, key, factor, DEFAULT_UNCERTAINTY[("wall", "wall", how)])
    return Reading("wall", "wall", z, value, u, source, how, nominal, key)


def _face(entry: dict, key: str, polygon, factor: float, units: str) -> Reading:
    r = required_number(entry, "r", key, "the radius at which the face's height was measured") * factor
    r_max = float(polygon[:, 0].max())
    if not 0.0 <= r <= r_max + END_REACH_MM:
        raise InputError(f"{key}.r", f"{r / factor:g} lies outside the part, which reaches r = {r_max / factor:g}")
    r = min(r, r_max - END_REACH_MM)        # at the rim, as a height at an end (`_height`)
    value = required_number(entry, "value", key, "the face's height above the job's z = 0") * factor
    found = nearest_face(polygon, r, value)
    if found is None or abs(found[0] - value) > FACE_SEARCH_MM or abs(found[1]) < MIN_RADIAL_NORMAL:
        raise InputError(f"{key}.value", f"the part has no face near z = {value / factor:g} at r = {r / factor:g}; "
                                         "give the height of a drawn face in the job's coordinates "
                                         "(its z above the job's z = 0)")
    how = _choice(entry, "how", key, HOW["face"], "height gauge")
    u, source = _uncertainty(entry, key, factor, DEFAULT_UNCERTAINTY[("face", "face", how)])
    return Reading("face", "face", r, value, u, source, how, found[0], key)


def _roundness(entry: dict, key: str, polygon, factor: float, units: str) -> Reading:
    z = _height(entry, key, polygon, factor)
    surface, _ = _surface_at(entry, key, polygon, z, factor)
    value_um = required_number(entry, "value_um", key, "the radial peak to valley, um")
    if not 0.0 <= value_um <= MOST_ROUNDNESS_UM:
        raise InputError(f"{key}.value_um", f"must lie between 0 and {MOST_ROUNDNESS_UM:g} um (a radial peak to "
                                            f"valley in micrometres), got {value_um:g}")
    lobes = entry.get("lobes")
    if lobes is not None and (isinstance(lobes, bool) or not isinstance(lobes, int) or lobes < 2):
        raise InputError(f"{key}.lobes", f"must be a whole number of lobes, 2 or more, got {lobes!r}")
    u, source = _uncertainty(entry, key, 1.0, DEFAULT_UNCERTAINTY[("roundness", surface, "")], "uncertainty_um",
                             scale=1e-3)
    return Reading("roundness", surface, z, 1e-3 * value_um, u, source, "", 0.0, key, lobes)


READERS = {"diameter": _diameter, "wall": _wall, "face": _face, "roundness": _roundness}


def _mass(table: dict, job) -> tuple[float | None, float, str]:
    """(mass [g] or None, its standard uncertainty [g], where that came from)."""
    u, source = DEFAULT_MASS_UNCERTAINTY_G, "laboratory scale (common practice)"
    if "mass_uncertainty" in table:
        u = required_number(table, "mass_uncertainty", "measured", "the scale's standard uncertainty, g")
        if u <= 0.0:
            raise InputError("measured.mass_uncertainty", f"must be more than 0 g, got {u:g}")
        source = "given"
    if "mass" not in table:
        return None, u, source
    mass = required_number(table, "mass", "measured", "the part's mass in grams")
    nominal = mass_properties(job.section, job.material.density_g_cm3).mass_g
    if mass <= 0.0:
        raise InputError("measured.mass", f"must be more than 0 g, got {mass:g}")
    ratio = mass / nominal
    if not MASS_RATIO[0] <= ratio <= MASS_RATIO[1]:
        if 0.3e-3 <= ratio <= 3e-3:
            hint = "it looks like kilograms: give grams"
        elif 0.3e3 <= ratio <= 3e3:
            hint = "it looks like milligrams: give grams"
        else:
            hint = "check the part, the unit (grams) and the material's density"
        raise InputError("measured.mass", f"{mass:g} g is {ratio:.3g} times the drawn part's {nominal:.4g} g: {hint}")
    if u >= 0.1 * nominal:
        raise InputError("measured.mass_uncertainty", f"{u:g} g is a tenth of the part's mass or more; give the "
                                                      "scale's standard uncertainty in grams")
    return mass, u, source


def _density(table: dict, job) -> tuple[float | None, float | None]:
    """The batch's measured density [g/cm3] and its standard uncertainty, if given."""
    if "density" not in table:
        if "density_uncertainty" in table:
            raise InputError("measured.density_uncertainty", "given without density; give the batch's measured "
                                                             "density too, or leave both out")
        return None, None
    density = required_number(table, "density", "measured", "the batch's measured density, g/cm3")
    stated = job.material.density_g_cm3
    if not math.isclose(density, stated, rel_tol=DENSITY_SHARE):
        raise InputError("measured.density", f"{density:g} g/cm3 is more than {100 * DENSITY_SHARE:g} % from "
                                             f"{job.material.name}'s {stated:g} g/cm3: another material, or not g/cm3")
    if "density_uncertainty" not in table:
        raise InputError("measured.density_uncertainty", "missing; a measured density needs its standard "
                                                         "uncertainty in g/cm3")
    u = required_number(table, "density_uncertainty", "measured", "the density's standard uncertainty, g/cm3")
    if not 0.0 < u < DENSITY_SHARE * stated:
        raise InputError("measured.density_uncertainty", f"must be more than 0 and less than "
                                                         f"{DENSITY_SHARE * stated:.3g} g/cm3, got {u:g}")
    return density, u
