"""Validation of the insert-code reader against the ISO 1832 position scheme.

Reference
---------
ISO 1832, "Indexable inserts for cutting tools - Designation". The standard's text was
not read; the position meanings are those given by several public descriptions of it,
summarised here ([S]: seen second-hand): shape / corner angle,
normal clearance, tolerance class, hole and chip breaker, size, thickness (04 = 4.76 mm,
T3 = 3.97 mm), corner radius in tenths of a millimetre, optional edge condition and hand,
then a maker's chip-breaker code that is not standardised.
"""

import math

import pytest

from deflect.errors import InputError
from deflect.job.tooling import parse_iso1832

EXACT = 1e-12


def test_cnmg120408():
    code = parse_iso1832("CNMG120408")
    assert (code.shape, code.included_angle_deg) == ("C", 80.0)
    assert code.clearance_deg == 0.0  # N
    assert code.tolerance == "M"
    assert code.kind == "G"  # hole and chip breakers on both sides
    assert code.size_code == "12"
    assert code.thickness_mm == pytest.approx(4.76, abs=EXACT)
    assert code.nose_radius_mm == pytest.approx(0.8, abs=EXACT)
    assert code.edge is None and code.hand is None and code.chipbreaker is None


def test_dcmt11t304():
    code = parse_iso1832("DCMT11T304")
    assert (code.shape, code.included_angle_deg) == ("D", 55.0)
    assert code.clearance_deg == 7.0  # C
    assert code.kind == "T"
    assert code.size_code == "11"
    assert code.thickness_mm == pytest.approx(3.97, abs=EXACT)
    assert code.nose_radius_mm == pytest.approx(0.4, abs=EXACT)


def test_vcmt160404():
    code = parse_iso1832("VCMT160404")
    assert (code.shape, code.included_angle_deg, code.clearance_deg) == ("V", 35.0, 7.0)
    assert code.size_code == "16"
    assert code.thickness_mm == pytest.approx(4.76, abs=EXACT)
    assert code.nose_radius_mm == pytest.approx(0.4, abs=EXACT)


def test_vbmt160404():
    code = parse_iso1832("VBMT160404")
    assert (code.shape, code.clearance_deg) == ("V", 5.0)  # B = 5 deg


def test_round_insert_rcmt():
    # Round insert: no corner angle; size code 10 = diameter 10 mm; corner code M0.
    code = parse_iso1832("RCMT10T3M0")
    assert code.shape == "R" and code.included_angle_deg is None
    assert code.clearance_deg == 7.0
    assert code.thickness_mm == pytest.approx(3.97, abs=EXACT)
    assert code.nose_radius_mm == pytest.approx(5.0, abs=EXACT)


@pytest.mark.parametrize(
    # XX stands for a maker's chip-breaker code (not standardised; no maker's own code is used here)
    "text", ["CNMG 12 04 08-XX", "cnmg120408-xx", "CNMG120408XX", "  CNMG120408 - XX "],
)
def test_spaces_case_and_maker_suffix_are_tolerated(text):
    code = parse_iso1832(text)
    plain = parse_iso1832("CNMG120408")
    assert code.chipbreaker == "XX"
    assert (code.shape, code.size_code, code.thickness_mm, code.nose_radius_mm) == (
        plain.shape, plain.size_code, plain.thickness_mm, plain.nose_radius_mm)


def test_optional_edge_condition_and_hand():
    code = parse_iso1832("TNMG160404ER")
    assert (code.shape, code.included_angle_deg) == ("T", 60.0)
    assert (code.edge, code.hand) == ("E", "R")
    assert parse_iso1832("SNMA120412T").edge == "T"


@pytest.mark.parametrize(
    "text",
    [
        "",            # nothing
        "CNMG12040",   # corner code cut short
        "CNMG43",      # an inch designation without its corner radius code
        "CCMT09T3\uff104",  # a full-width digit is not a digit of the code
        "CNMG000408",  # size 00: an insert under 1 mm
        "ZNMG120408",  # no shape Z
        "CZMG120408",  # no clearance Z
        "CNZG120408",  # no tolerance class Z
        "CNMZ120408",  # no hole/chip-breaker letter Z
        "CNMG1204081",  # a stray digit after the corner
        "CNMG12040M0",  # M0 corner on a rhombic insert
        "RCMT100308",  # round insert with a corner radius
        "CNMG120408-P/M",  # unreadable maker code
    ],
)
def test_malformed_codes_raise_input_error(text):
    with pytest.raises(InputError, match="ISO 1832") as error:
        parse_iso1832(text, key="tool[1].insert")
    assert error.value.key == "tool[1].insert"


def test_non_text_code():
    with pytest.raises(InputError, match="text string"):
        parse_iso1832(120408)


@pytest.mark.parametrize("text, limit_mm", [("CCMT09T399", 9.525 / 2), ("CNMG120464", 12.7 / 2),
                                            ("VCMT160450", 9.525 / 2)])
def test_corner_radius_must_fit_the_insert(text, limit_mm):
    """A corner radius of half the inscribed circle or more is no corner of a rhombic or triangular insert: the
    arc would be the inscribed circle itself. The inscribed circles are those the size codes stand for
    (C 09: 3/8 in, C 12 and the others: 1/2 in and 3/8 in), the edge length l = d / sin(corner) for a rhombus,
    d sqrt(3) for a triangle (plane geometry)."""
    with pytest.raises(InputError, match="does not fit") as error:
        parse_iso1832(text, key="tool[0].insert")
    assert error.value.key == "tool[0].insert"
    assert f"{limit_mm:.3g}" in error.value.message


def test_size_code_is_the_edge_length_of_a_standard_inscribed_circle():
    """ISO 1832 position 5 is the cutting-edge length in whole millimetres; the inserts are made on the inch
    series of inscribed circles. For an 80 deg rhombus l = d / sin 80 deg, for 55 deg l = d / sin 55 deg, for a
    triangle l = d sqrt(3), for 35 deg l = d / sin 35 deg (plane geometry, re-evaluated here)."""
    cases = {"CNMG120408": (12.7, 12.7 / math.sin(math.radians(80))),
             "DCMT11T304": (9.525, 9.525 / math.sin(math.radians(55))),
             "TNMG160404": (9.525, 9.525 * math.sqrt(3)),
             "VCMT160404": (9.525, 9.525 / math.sin(math.radians(35))),
             "SNMA120412": (12.7, 12.7)}
    for text, (inscribed, edge) in cases.items():
        code = parse_iso1832(text)
        assert code.inscribed_mm == pytest.approx(inscribed, abs=EXACT)
        assert code.edge_mm == pytest.approx(edge, rel=1e-12)
        assert int(code.size_code) == math.floor(edge)
