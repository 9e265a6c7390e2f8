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
        "CNMG432",     # inch designation (not read)
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
