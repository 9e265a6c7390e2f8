"""Turning tools: ISO 1832 insert designations, boring bars, the job's [[tool]] tables.

Takes a `[[tool]]` table of the job (name, insert code, nose radius, entering and
rake angles, optional boring bar) and gives a `Tool`: the nose radius and angles
the cutting-force model needs, and the compliance of the bar that carries the
insert.

* Insert codes follow the position scheme of ISO 1832 ("Indexable inserts for
  cutting tools - Designation"), read from public descriptions of the standard,
  not from the standard's text.
* A boring bar is an Euler-Bernoulli cantilever clamped at the holder: tip
  compliance L^3 / (3 E I), I = pi d^4 / 64 (S. P. Timoshenko, J. M. Gere,
  *Mechanics of Materials*; W. C. Young, R. G. Budynas, *Roark's Formulas for
  Stress and Strain*, cantilever with an end load).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from deflect.errors import InputError
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

# Shape, clearance, tolerance, kind, size (2 digits), thickness, corner, then the rest.
_CODE = re.compile(r"([A-Z])([A-Z])([A-Z])([A-Z])(\d\d)(\d\d|T\d)(\d\d|M0)(.*)")
_EDGE_HAND = re.compile(rf"([{EDGE_CODES}]?)([{HAND_CODES}]?)")
_MAKER = re.compile(r"[A-Z0-9]+")  # after a hyphen
_MAKER_TAIL = re.compile(r"[A-Z][A-Z0-9]*")  # run on directly: must start with a letter

RAKE_RANGE_DEG = (-30.0, 45.0)
DEFAULT_RAKE_DEG = 0.0
DEFAULT_BAR_E_MPA = 210000.0  # a steel bar; carbide bars are about three times stiffer

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


def _bad_code(key: str, code: str, why: str) -> InputError:
    return InputError(
        key,
        f"{code!r} is not an ISO 1832 insert designation ({why}); expected the metric "
        "form such as 'CNMG120408', 'DCMT11T304' or 'CNMG 12 04 08-XX' (XX: a maker's chip-breaker code)",
    )


def parse_iso1832(code: str, key: str = "tool.insert") -> InsertCode:
    """Take an ISO 1832 insert code apart.

    Spaces are ignored; a maker's chip-breaker code may follow after a hyphen or
    directly after the standard positions (then it is kept in ``chipbreaker``).
    Only metric designations are read.
    """
    if not isinstance(code, str):
        raise InputError(key, f"must be a text string such as 'CNMG120408', got {code!r}")
    text = code.strip().upper().replace(" ", "")
    main, _, maker = text.partition("-")
    match = _CODE.fullmatch(main)
    if match is None:
        raise _bad_code(key, code, "seven positions: 4 letters, size, thickness, corner")
    shape, clearance, tolerance, kind, size, thickness, corner, rest = match.groups()
    if shape not in SHAPE_ANGLE_DEG:
        raise _bad_code(key, code, f"unknown shape letter {shape!r}")
    if clearance not in CLEARANCE_DEG:
        raise _bad_code(key, code, f"unknown clearance letter {clearance!r}")
    if tolerance not in TOLERANCE_CLASSES:
        raise _bad_code(key, code, f"unknown tolerance class {tolerance!r}")
    if kind not in KIND_CODES:
        raise _bad_code(key, code, f"unknown hole/chip-breaker letter {kind!r}")

    edge_hand = _EDGE_HAND.fullmatch(rest)
    if edge_hand is not None:
        edge, hand = (g or None for g in edge_hand.groups())
        chipbreaker = maker or None
    elif not maker and _MAKER_TAIL.fullmatch(rest):
        edge, hand, chipbreaker = None, None, rest
    else:
        raise _bad_code(key, code, f"cannot read {rest!r} after the corner code")
    if maker and not _MAKER.fullmatch(maker):
        raise _bad_code(key, code, f"cannot read the chip-breaker code {maker!r}")

    if shape == "R":
        if corner not in ("M0", "00"):
            raise _bad_code(key, code, "a round insert has corner code M0 or 00")
        nose_radius = int(size) / 2.0  # the size code of a round insert is its diameter
    elif corner == "M0":
        raise _bad_code(key, code, "corner code M0 belongs to round inserts")
    else:
        nose_radius = int(corner) / 10.0  # in tenths of a millimetre

    return InsertCode(
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
    )


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
    if nose_radius == 0.0:
        raise InputError(
            radius_key,
            "a sharp corner (nose radius 0) is not modelled: the chip and finish models "
            "need the corner radius; give nose_radius (e.g. 0.2)",
        )

    if "approach" not in table:
        raise InputError(f"{key}.approach", "missing: give the entering angle kappa_r in degrees (e.g. 93)")
    approach = number(table["approach"], f"{key}.approach")
    if not 0.0 < approach < 180.0:
        raise InputError(f"{key}.approach", f"must lie between 0 and 180 deg, got {approach:g}")

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
