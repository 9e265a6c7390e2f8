"""Turning tools: ISO 1832 insert designations, boring bars, the job's [[tool]] tables.

Takes a `[[tool]]` table of the job (name, insert code, nose radius, entering and
rake angles, optional boring bar) and gives a `Tool`: the nose radius and angles
the cutting-force model needs, and the compliance of the bar that carries the
insert.

* Insert codes follow the position scheme of ISO 1832 ("Indexable inserts for
  cutting tools - Designation"), read from public descriptions of the standard,
  not from the standard's text; the inch form of ANSI B212.4 ("Indexable
  inserts - identification system", e.g. CNMG 432: inscribed circle in 1/8 in,
  thickness in 1/16 in, corner radius in 1/64 in) is read too, from the same
  kind of public description (from memory, to be confirmed).
* A code is checked against what the insert's geometry allows: a size of at
  least 1 mm, and a corner radius below half the inscribed circle (at half of it
  the corner is the whole insert: a round insert).
* A boring bar is an Euler-Bernoulli cantilever clamped at the holder: tip
  compliance L^3 / (3 E I), I = pi d^4 / 64 (S. P. Timoshenko, J. M. Gere,
  *Mechanics of Materials*; W. C. Young, R. G. Budynas, *Roark's Formulas for
  Stress and Strain*, cantilever with an end load).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from deflect.errors import InputError, shown
from deflect.job.checks import check_keys, number

# ISO 1832 position 1: insert shape -> corner (included) angle, deg; None = round.
SHAPE_ANGLE_DEG = {
    "A": 85.0, "B": 82.0, "C": 80.0, "D": 55.0, "E": 75.0, "H": 120.0, "K": 55.0,
    "L": 90.0, "M": 86.0, "O": 135.0, "P": 108.0, "R": None, "S": 90.0, "T": 60.0,
    "V": 35.0, "W": 80.0,
}
# Position 2: normal clearance, deg; O = other (given separately).
CLEARANCE_DEG = {
    "A": 3.0, "B": 5.0, "C": 7.0, "D": 15.0, "E": 20.0, "F": 25.0, "G": 30.0,
    "N": 0.0, "P": 11.0, "O": None,
}
# Position 3: tolerance class.
TOLERANCE_CLASSES = "ACEFGHJKLMNU"
# Position 4: fixing hole and chip breaker (N no hole no breaker, M hole + one-side
# breaker, G hole + two-side breakers, T one-side breaker + countersunk hole, X special...).
KIND_CODES = "ABCFGHJMNQRTUWX"
# Position 6: thickness code -> thickness, mm (metric designation).
THICKNESS_MM = {
    "01": 1.59, "T1": 1.98, "02": 2.38, "T2": 2.78, "03": 3.18, "T3": 3.97,
    "04": 4.76, "05": 5.56, "06": 6.35, "07": 7.94, "09": 9.52,
}
# Position 8 (optional): cutting-edge condition; position 9 (optional): hand.
EDGE_CODES = "EFKPST"
HAND_CODES = "LNR"

# Inscribed circle d over cutting-edge length l for each shape (ISO 1832 position 5 gives l in whole mm, for
# a round insert its diameter): a rhombus d = l sin(corner); a regular polygon of n sides d = l cot(pi / n);
# the 80 deg trigon W about 1.465 (d 9.525 mm for l 6.5 mm, from memory, to be confirmed). Parallelograms and
# rectangles (A, B, K, L) have two edge lengths; their size code is the longer edge.
INSCRIBED_PER_EDGE = {
    "C": math.sin(math.radians(80.0)), "D": math.sin(math.radians(55.0)), "E": math.sin(math.radians(75.0)),
    "M": math.sin(math.radians(86.0)), "V": math.sin(math.radians(35.0)),
    "T": 1.0 / math.tan(math.pi / 3), "S": 1.0, "P": 1.0 / math.tan(math.pi / 5), "H": 1.0 / math.tan(math.pi / 6),
    "O": 1.0 / math.tan(math.pi / 8), "W": 1.465, "R": 1.0,
}
# The inscribed circles inserts are made in [mm]: 5/32 to 1 1/4 in (the inch series the metric size codes come
# from) and the metric round inserts' diameters (common practice).
STANDARD_INSCRIBED_MM = (3.97, 4.76, 5.56, 6.35, 7.94, 9.525, 12.7, 15.875, 19.05, 25.4, 31.75)
MM_PER_INCH = 25.4
# ANSI B212.4 corner radius codes that are not n/64 in (from memory, to be confirmed).
INCH_CORNER_SPECIAL_IN = {"0.2": 0.004, "0.5": 0.008}
LARGEST_NOSE_RADIUS_MM = 16.0   # a round insert 32 mm across, the largest ISO 1832 size in common use

# Shape, clearance, tolerance, kind, size (2 digits), thickness, corner, then the rest. ASCII digits only: a
# full-width digit is not a digit of an insert code.
_CODE = re.compile(r"([A-Z])([A-Z])([A-Z])([A-Z])(\d\d)(\d\d|T\d)(\d\d|M0)(.*)", re.ASCII)
# The inch form: four letters, then the inscribed circle, thickness and corner radius codes (a digit, or a
# digit, a point and a digit), the corner left out on a round insert.
_INCH_CODE = re.compile(r"([A-Z])([A-Z])([A-Z])([A-Z])(\d(?:\.\d)?)(\d(?:\.\d)?)(\d(?:\.\d)?)?([A-Z][A-Z0-9]*)?",
                         re.ASCII)
_EDGE_HAND = re.compile(rf"([{EDGE_CODES}]?)([{HAND_CODES}]?)")
_MAKER = re.compile(r"[A-Z0-9]+", re.ASCII)  # after a hyphen
_MAKER_TAIL = re.compile(r"[A-Z][A-Z0-9]*", re.ASCII)  # run on directly: must start with a letter

RAKE_RANGE_DEG = (-30.0, 45.0)
APPROACH_RANGE_DEG = (5.0, 175.0)   # entering angles of turning tools run from about 15 to 107.5 deg; beyond
                                    # these bounds the chip's width a / sin(kappa_r) grows without limit
DEFAULT_RAKE_DEG = 0.0
DEFAULT_BAR_E_MPA = 210000.0  # a steel bar; carbide bars are about three times stiffer
BAR_E_RANGE_MPA = (10000.0, 1.2e6)   # from light alloys to diamond
MAX_BAR_OVERHANG_RATIO = 20.0   # overhang over diameter: damped bars reach about 14 (common practice)
MAX_BAR_DIAMETER_MM = 500.0

TOOL_KEYS = ("name", "insert", "nose_radius", "approach", "rake", "bar")
BAR_KEYS = ("diameter", "overhang", "E")


@dataclass(frozen=True)
class InsertCode:
    """An ISO 1832 designation taken apart (angles in deg, lengths in mm).

    ``nose_radius_mm`` is the corner radius (0.0 for a sharp corner); for a round
    insert it is half the diameter given by the size code.
    """

    shape: str
    included_angle_deg: float | None
    clearance_deg: float | None
    tolerance: str
    kind: str
    size_code: str
    thickness_mm: float | None
    nose_radius_mm: float | None
    edge: str | None
    hand: str | None
    chipbreaker: str | None = None
    inscribed_mm: float | None = None    # inscribed circle; None for a parallelogram or rectangle
    edge_mm: float | None = None         # cutting-edge length (a round insert: its diameter)
    standard: str = "ISO 1832"           # or "ANSI B212.4" for an inch code
    designation: str = ""                # the code as written, spaces and case tidied


def _bad_code(key: str, code: str, why: str) -> InputError:
    return InputError(
        key,
        f"{shown(code)} is not an ISO 1832 insert designation ({why}); expected the metric "
        "form such as 'CNMG120408', 'DCMT11T304' or 'CNMG 12 04 08-XX' (XX: a maker's chip-breaker code), "
        "or the inch form of ANSI B212.4 such as 'CNMG 432'",
    )


def _size_of(shape: str, size: str) -> tuple[float | None, float]:
    """(inscribed circle, edge length) [mm] of a metric size code: the standard inscribed circle whose edge
    the code gives in whole millimetres, else the middle of that millimetre."""
    if shape == "R":
        return float(size), float(size)
    ratio = INSCRIBED_PER_EDGE.get(shape)
    if ratio is None:
        return None, int(size) + 0.5
    for inscribed in STANDARD_INSCRIBED_MM:
        if math.floor(inscribed / ratio + 1e-9) == int(size):
            return inscribed, inscribed / ratio
    edge = int(size) + 0.5
    return edge * ratio, edge


def _checked_geometry(code: InsertCode, key: str, text: str) -> InsertCode:
    """The code, if its corner radius fits its size (below half the inscribed circle; a round insert's is
    half); InputError otherwise."""
    if code.edge_mm is not None and code.edge_mm < 1.0:
        raise _bad_code(key, text, f"size code {code.size_code!r} is an insert under 1 mm")
    limit = 0.5 * code.inscribed_mm if code.inscribed_mm is not None else 0.5 * code.edge_mm
    if code.shape != "R" and code.nose_radius_mm >= limit:
        raise InputError(key, f"{shown(text)}: a corner radius of {code.nose_radius_mm:g} mm does not fit an insert "
                              f"of size {code.size_code} (its inscribed circle is about {2 * limit:.3g} mm, so the "
                              f"radius must stay under {limit:.3g} mm); check the corner code")
    return code


def _parse_inch(text: str, main: str, maker: str, key: str) -> InsertCode | None:
    """An ANSI B212.4 inch code (CNMG432): size in 1/8 in of the inscribed circle, thickness in 1/16 in, corner
    radius in 1/64 in (0.2 and 0.5: 0.004 and 0.008 in); None when `main` is not of that form."""
    match = _INCH_CODE.fullmatch(main)
    if match is None:
        return None
    shape, clearance, tolerance, kind, size, thickness, corner, tail = match.groups()
    if tail and maker:
        raise _bad_code(key, text, f"cannot read {tail!r} after the corner code")
    maker = maker or tail
    _check_letters(key, text, shape, clearance, tolerance, kind)
    inscribed = float(size) / 8.0 * MM_PER_INCH
    if shape == "R":
        if corner not in (None, "0"):
            raise _bad_code(key, text, "a round insert has no corner radius code")
        nose = 0.5 * inscribed
    elif corner is None:
        raise _bad_code(key, text, "the corner radius code is missing")
    else:
        nose = INCH_CORNER_SPECIAL_IN.get(corner, float(corner) / 64.0) * MM_PER_INCH
    ratio = INSCRIBED_PER_EDGE.get(shape)
    return InsertCode(shape=shape, included_angle_deg=SHAPE_ANGLE_DEG[shape], clearance_deg=CLEARANCE_DEG[clearance],
                      tolerance=tolerance, kind=kind, size_code=size, thickness_mm=float(thickness) / 16.0 * MM_PER_INCH,
                      nose_radius_mm=nose, edge=None, hand=None, chipbreaker=maker or None,
                      inscribed_mm=inscribed if ratio is not None else None,
                      edge_mm=inscribed / ratio if ratio is not None else inscribed, standard="ANSI B212.4",
                      designation=text.strip().upper())


def _check_letters(key: str, code: str, shape: str, clearance: str, tolerance: str, kind: str) -> None:
    if shape not in SHAPE_ANGLE_DEG:
        raise _bad_code(key, code, f"unknown shape letter {shape!r}")
    if clearance not in CLEARANCE_DEG:
        raise _bad_code(key, code, f"unknown clearance letter {clearance!r}")
    if tolerance not in TOLERANCE_CLASSES:
        raise _bad_code(key, code, f"unknown tolerance class {tolerance!r}")
    if kind not in KIND_CODES:
        raise _bad_code(key, code, f"unknown hole/chip-breaker letter {kind!r}")


def parse_iso1832(code: str, key: str = "tool.insert") -> InsertCode:
    """Take an ISO 1832 insert code (or the inch form of ANSI B212.4) apart and check that its corner fits.

    Spaces are ignored; a maker's chip-breaker code may follow after a hyphen or
    directly after the standard positions (then it is kept in ``chipbreaker``).
    """
    if not isinstance(code, str):
        raise InputError(key, f"must be a text string such as 'CNMG120408', got {shown(code)}")
    text = code.strip().upper().replace(" ", "")
    main, _, maker = text.partition("-")
    if maker and not _MAKER.fullmatch(maker):
        raise _bad_code(key, code, f"cannot read the chip-breaker code {maker!r}")
    match = _CODE.fullmatch(main)
    if match is None:
        inch = _parse_inch(code, main, maker, key)
        if inch is not None:
            return _checked_geometry(inch, key, code)
        raise _bad_code(key, code, "seven positions: 4 letters, size, thickness, corner")
    shape, clearance, tolerance, kind, size, thickness, corner, rest = match.groups()
    _check_letters(key, code, shape, clearance, tolerance, kind)

    edge_hand = _EDGE_HAND.fullmatch(rest)
    if edge_hand is not None:
        edge, hand = (g or None for g in edge_hand.groups())
        chipbreaker = maker or None
    elif not maker and _MAKER_TAIL.fullmatch(rest):
        edge, hand, chipbreaker = None, None, rest
    else:
        raise _bad_code(key, code, f"cannot read {rest!r} after the corner code")

    if shape == "R":
        if corner not in ("M0", "00"):
            raise _bad_code(key, code, "a round insert has corner code M0 or 00")
        nose_radius = int(size) / 2.0  # the size code of a round insert is its diameter
    elif corner == "M0":
        raise _bad_code(key, code, "corner code M0 belongs to round inserts")
    else:
        nose_radius = int(corner) / 10.0  # in tenths of a millimetre

    inscribed, edge_mm = _size_of(shape, size)
    return _checked_geometry(InsertCode(
        designation=code.strip().upper(),
        shape=shape,
        included_angle_deg=SHAPE_ANGLE_DEG[shape],
        clearance_deg=CLEARANCE_DEG[clearance],
        tolerance=tolerance,
        kind=kind,
        size_code=size,
        thickness_mm=THICKNESS_MM.get(thickness),
        nose_radius_mm=nose_radius,
        edge=edge,
        hand=hand,
        chipbreaker=chipbreaker,
        inscribed_mm=inscribed,
        edge_mm=edge_mm,
    ), key, code)


@dataclass(frozen=True)
class BoringBar:
    """A round boring bar as a cantilever from the holder (mm, MPa).

    Overhang/diameter above about 4 (steel) or 6-10 (carbide) is where bars
    usually start to chatter; such bars are accepted, but the static model here
    says nothing about chatter.
    """

    diameter_mm: float
    overhang_mm: float
    E_mpa: float = DEFAULT_BAR_E_MPA

    def compliance_mm_per_n(self) -> float:
        """Tip deflection per newton of a tip load, L^3 / (3 E I) [mm/N].

        Euler-Bernoulli bending only. Shear deflection of a solid round bar adds
        L / (k G A) with k about 0.89, i.e. about 0.55 (d/L)^2 relative for steel
        (3 % at L/d = 4, 14 % at L/d = 2); the give of the clamping in the holder is
        not included either, so the real bar is somewhat softer than this.
        """
        inertia_mm4 = math.pi * self.diameter_mm**4 / 64.0
        return self.overhang_mm**3 / (3.0 * self.E_mpa * inertia_mm4)


@dataclass(frozen=True)
class Tool:
    """A turning tool as the force model sees it (mm, deg).

    ``approach_deg`` is the tool cutting-edge (entering) angle kappa_r, measured from
    the feed direction; ``rake_deg`` the effective rake angle gamma.
    """

    name: str
    nose_radius_mm: float
    approach_deg: float
    rake_deg: float
    insert: InsertCode | None = None
    bar: BoringBar | None = None
    included_angle_deg: float | None = None

    def compliance_mm_per_n(self) -> float:
        """Compliance of the tool at the tip [mm/N]: the bar's, 0.0 for a rigid holder."""
        return self.bar.compliance_mm_per_n() if self.bar is not None else 0.0


def _bar_from_job(table, key: str) -> BoringBar:
    if not isinstance(table, dict):
        raise InputError(key, "must be a table: bar = { diameter = 16.0, overhang = 60.0, E = 210000.0 }")
    check_keys(table, BAR_KEYS, key)
    values = {}
    for name in BAR_KEYS:
        if name not in table:
            if name == "E":
                continue
            raise InputError(f"{key}.{name}", "missing: a boring bar needs diameter and overhang (mm)")
        value = number(table[name], f"{key}.{name}")
        if value <= 0.0:
            raise InputError(f"{key}.{name}", f"must be > 0, got {value:g}")
        values[name] = value
    if not BAR_E_RANGE_MPA[0] <= values.get("E", DEFAULT_BAR_E_MPA) <= BAR_E_RANGE_MPA[1]:
        raise InputError(f"{key}.E", f"{values['E']:g} MPa is no bar's modulus (steel 210,000, carbide about "
                                     f"600,000; between {BAR_E_RANGE_MPA[0]:g} and {BAR_E_RANGE_MPA[1]:g})")
    if values["overhang"] > MAX_BAR_OVERHANG_RATIO * values["diameter"]:
        raise InputError(f"{key}.overhang", f"{values['overhang']:g} mm is more than {MAX_BAR_OVERHANG_RATIO:g} times "
                                            f"the bar's {values['diameter']:g} mm diameter: no boring bar reaches so "
                                            "far (steel bars about 4, carbide about 10, damped bars about 14)")
    if values["diameter"] > MAX_BAR_DIAMETER_MM:
        raise InputError(f"{key}.diameter", f"{values['diameter']:g} mm is thicker than any boring bar "
                                            f"(at most {MAX_BAR_DIAMETER_MM:g} mm)")
    return BoringBar(
        diameter_mm=values["diameter"],
        overhang_mm=values["overhang"],
        E_mpa=values.get("E", DEFAULT_BAR_E_MPA),
    )


def tool_from_job(table, key: str = "tool[0]") -> Tool:
    """One [[tool]] table of the job as a Tool.

    ``nose_radius`` given in the table wins over the insert code's corner radius.
    ``rake`` defaults to 0 deg, which for the usual +6 deg reference rake of steel
    constants errs on the side of a higher force.
    """
    if not isinstance(table, dict):
        raise InputError(key, "must be a table with name, insert or nose_radius, approach, rake")
    check_keys(table, TOOL_KEYS, key)

    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{key}.name", "missing or empty: give each tool a name such as \"T1\"")

    insert = parse_iso1832(table["insert"], f"{key}.insert") if "insert" in table else None

    if "nose_radius" in table:
        nose_radius = number(table["nose_radius"], f"{key}.nose_radius")
        radius_key = f"{key}.nose_radius"
    elif insert is not None:
        nose_radius = insert.nose_radius_mm
        radius_key = f"{key}.insert"
    else:
        raise InputError(
            f"{key}.nose_radius",
            "missing: give nose_radius (mm) or an ISO 1832 insert code that carries it",
        )
    if nose_radius < 0.0:
        raise InputError(radius_key, f"nose radius must not be negative, got {nose_radius:g} mm")
    if nose_radius > LARGEST_NOSE_RADIUS_MM:
        raise InputError(radius_key, f"a nose radius of {nose_radius:g} mm is larger than any turning insert's "
                                     f"(a round insert 32 mm across has {LARGEST_NOSE_RADIUS_MM:g} mm)")
    if insert is not None and radius_key.endswith("nose_radius") and insert.shape != "R":
        limit = 0.5 * (insert.inscribed_mm if insert.inscribed_mm is not None else insert.edge_mm)
        if nose_radius >= limit:
            raise InputError(radius_key, f"a nose radius of {nose_radius:g} mm does not fit the insert "
                                         f"{table['insert']} (inscribed circle about {2 * limit:.3g} mm): it must "
                                         f"stay under {limit:.3g} mm")
    if nose_radius == 0.0:
        raise InputError(
            radius_key,
            "a sharp corner (nose radius 0) is not modelled: the chip and finish models "
            "need the corner radius; give nose_radius (e.g. 0.2)",
        )

    if "approach" not in table:
        raise InputError(f"{key}.approach", "missing: give the entering angle kappa_r in degrees (e.g. 93)")
    approach = number(table["approach"], f"{key}.approach")
    low, high = APPROACH_RANGE_DEG
    if not low <= approach <= high:
        raise InputError(f"{key}.approach", f"must lie between {low:g} and {high:g} deg (a turning tool's entering "
                                            f"angle), got {approach:g}")

    rake = number(table["rake"], f"{key}.rake") if "rake" in table else DEFAULT_RAKE_DEG
    low, high = RAKE_RANGE_DEG
    if not low < rake < high:
        raise InputError(f"{key}.rake", f"must lie between {low:g} and {high:g} deg, got {rake:g}")

    bar = _bar_from_job(table["bar"], f"{key}.bar") if "bar" in table else None

    return Tool(
        name=name.strip(),
        nose_radius_mm=nose_radius,
        approach_deg=approach,
        rake_deg=rake,
        insert=insert,
        bar=bar,
        included_angle_deg=insert.included_angle_deg if insert is not None else None,
    )


__all__ = ["BoringBar", "InsertCode", "Tool", "parse_iso1832", "tool_from_job"]
