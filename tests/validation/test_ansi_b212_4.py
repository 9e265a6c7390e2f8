"""Validation of the inch insert codes against the identification system of ANSI B212.4.

Reference
---------
ANSI B212.4, "Indexable inserts - identification system" (American National Standards Institute). The
standard's text was not read; the meanings below are those of public descriptions of it, from memory, to be
confirmed: positions 1-4 are letters as in ISO 1832 (shape, clearance, tolerance, type); then the inscribed
circle in eighths of an inch, the thickness in sixteenths of an inch, and the corner radius in sixty-fourths
of an inch (0.2 = 0.004 in, 0.5 = 0.008 in; a round insert has none). So CNMG 432 is the inch twin of the
metric CNMG 12 04 08: a 1/2 in inscribed circle (12.7 mm), 3/16 in thick (4.7625 mm), a 1/32 in corner
(0.79375 mm, written 0.8 in the metric code).
"""

import pytest

from deflect.errors import InputError
from deflect.job.tooling import parse_iso1832

MM_PER_INCH = 25.4           # by definition (1959)
EXACT = 1e-12
METRIC_ROUNDING_MM = 0.01    # the metric code writes 0.79375 mm as 08 (0.8 mm) and 4.7625 mm as 04 (4.76 mm)


@pytest.mark.parametrize("text", ["CNMG 432", "cnmg432", "CNMG 432-PM", "CNMG432MF"])
def test_cnmg_432_is_the_inch_twin_of_cnmg120408(text):
    inch, metric = parse_iso1832(text), parse_iso1832("CNMG120408")
    assert inch.standard == "ANSI B212.4"
    assert inch.inscribed_mm == pytest.approx(4 / 8 * MM_PER_INCH, abs=EXACT)
    assert inch.thickness_mm == pytest.approx(3 / 16 * MM_PER_INCH, abs=EXACT)
    assert inch.nose_radius_mm == pytest.approx(2 / 64 * MM_PER_INCH, abs=EXACT)
    assert (inch.shape, inch.included_angle_deg, inch.clearance_deg) == (metric.shape, metric.included_angle_deg,
                                                                         metric.clearance_deg)
    assert inch.inscribed_mm == pytest.approx(metric.inscribed_mm, abs=EXACT)
    assert inch.edge_mm == pytest.approx(metric.edge_mm, rel=1e-12)
    assert inch.nose_radius_mm == pytest.approx(metric.nose_radius_mm, abs=METRIC_ROUNDING_MM)
    assert inch.thickness_mm == pytest.approx(metric.thickness_mm, abs=METRIC_ROUNDING_MM)


@pytest.mark.parametrize("text, nose_in", [("TPGN 321", 1 / 64), ("DNMG 442", 2 / 64), ("VNMG 330.5", 0.008),
                                           ("CCMT 2.51.50.2", 0.004)])
def test_corner_radius_codes(text, nose_in):
    assert parse_iso1832(text).nose_radius_mm == pytest.approx(nose_in * MM_PER_INCH, abs=EXACT)


def test_round_inch_insert():
    code = parse_iso1832("RNMG 43")
    assert code.nose_radius_mm == pytest.approx(0.5 * 4 / 8 * MM_PER_INCH, abs=EXACT)


@pytest.mark.parametrize("text", ["CNMG 43", "ZNMG 432", "CNMG 4.3"])
def test_malformed_inch_codes(text):
    with pytest.raises(InputError, match="ANSI B212.4"):
        parse_iso1832(text, key="tool[0].insert")
