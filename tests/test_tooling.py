"""Unit tests of the job's [[tool]] tables and the boring-bar cantilever.

Boring-bar check: tip deflection of a cantilever with an end load, delta = P L^3 / (3 E I),
I = pi d^4 / 64 for a solid round section (S. P. Timoshenko, J. M. Gere, *Mechanics of
Materials*, deflections of cantilever beams; W. C. Young, R. G. Budynas, *Roark's Formulas
for Stress and Strain*, 7th ed., table of beam deflections, cantilever with an end load;
the table and page numbers are from memory).
"""

import math

import pytest

from deflect.errors import InputError
from deflect.job.tooling import BoringBar, Tool, tool_from_job

RELATIVE = 1e-12          # same formula, float round-off only
HAND_DIGITS = 5e-5        # hand calculation carried to 5 significant digits

T1 = {"name": "T1", "insert": "DCMT11T304", "approach": 93.0, "rake": 7.0}


def test_tool_from_insert_code():
    tool = tool_from_job(dict(T1))
    assert tool.name == "T1"
    assert tool.nose_radius_mm == 0.4
    assert tool.approach_deg == 93.0 and tool.rake_deg == 7.0
    assert tool.included_angle_deg == 55.0
    assert tool.insert.shape == "D"
    assert tool.bar is None and tool.compliance_mm_per_n() == 0.0


def test_nose_radius_key_wins_over_the_code():
    tool = tool_from_job({**T1, "nose_radius": 0.2})
    assert tool.nose_radius_mm == 0.2
    assert tool.insert.nose_radius_mm == 0.4


def test_tool_without_insert_code():
    tool = tool_from_job({"name": "T2", "nose_radius": 0.8, "approach": 95})
    assert tool.insert is None and tool.included_angle_deg is None
    assert tool.rake_deg == 0.0  # default: no rake, the conservative side for the force


def test_boring_bar_16_mm_at_60_mm_steel_against_hand_calculation():
    # Hand calculation: I = pi 16^4 / 64 = 1024 pi = 3216.99 mm^4;
    # 3 E I = 3 * 210000 * 3216.99 = 2.02670e9 N mm^2; L^3 = 216000 mm^3;
    # L^3 / (3 E I) = 1.06577e-4 mm/N.
    hand_value = 1.06577e-4
    closed_form = 60.0**3 / (3.0 * 210000.0 * math.pi * 16.0**4 / 64.0)
    tool = tool_from_job({**T1, "bar": {"diameter": 16.0, "overhang": 60.0, "E": 210000.0}})
    ours = tool.compliance_mm_per_n()
    assert ours == pytest.approx(closed_form, rel=RELATIVE)
    assert ours == pytest.approx(hand_value, rel=HAND_DIGITS)


@pytest.mark.parametrize("diameter, overhang", [(8.0, 30.0), (16.0, 60.0), (32.0, 240.0)])
def test_boring_bar_scales_as_cube_of_overhang_over_fourth_power_of_diameter(diameter, overhang):
    def compliance(d, length, e_mpa=210000.0):
        return BoringBar(d, length, e_mpa).compliance_mm_per_n()

    base = compliance(diameter, overhang)
    assert compliance(diameter, 2 * overhang) == pytest.approx(8 * base, rel=RELATIVE)
    assert compliance(2 * diameter, overhang) == pytest.approx(base / 16, rel=RELATIVE)
    assert compliance(diameter, overhang, 630000.0) == pytest.approx(base / 3, rel=RELATIVE)


def test_bar_young_modulus_defaults_to_steel():
    tool = tool_from_job({**T1, "bar": {"diameter": 16.0, "overhang": 60.0}})
    assert tool.bar.E_mpa == 210000.0


def test_long_slender_bar_is_accepted():
    tool = tool_from_job({**T1, "bar": {"diameter": 10.0, "overhang": 120.0}})
    assert tool.compliance_mm_per_n() > 0.0


def test_tool_dataclass_defaults():
    tool = Tool(name="T", nose_radius_mm=0.8, approach_deg=95.0, rake_deg=6.0)
    assert tool.compliance_mm_per_n() == 0.0


@pytest.mark.parametrize(
    "table, key, pattern",
    [
        ({"insert": "CNMG120408", "approach": 95}, "tool[0].name", "name"),
        ({"name": "T", "approach": 95}, "tool[0].nose_radius", "nose_radius"),
        ({"name": "T", "nose_radius": -0.4, "approach": 95}, "tool[0].nose_radius", "negative"),
        ({"name": "T", "nose_radius": 0.0, "approach": 95}, "tool[0].nose_radius", "sharp corner"),
        ({"name": "T", "insert": "CNMG120400", "approach": 95}, "tool[0].insert", "sharp corner"),
        ({"name": "T", "nose_radius": "0.4", "approach": 95}, "tool[0].nose_radius", "number"),
        ({"name": "T", "nose_radius": 0.4}, "tool[0].approach", "missing"),
        ({"name": "T", "nose_radius": 0.4, "approach": 0.0}, "tool[0].approach", "between 0 and 180"),
        ({"name": "T", "nose_radius": 0.4, "approach": 180.0}, "tool[0].approach", "between 0 and 180"),
        ({"name": "T", "nose_radius": 0.4, "approach": True}, "tool[0].approach", "number"),
        ({**T1, "rake": -30.0}, "tool[0].rake", "between -30 and 45"),
        ({**T1, "rake": 45.0}, "tool[0].rake", "between -30 and 45"),
        ({**T1, "bar": {"diameter": 0.0, "overhang": 60.0}}, "tool[0].bar.diameter", "> 0"),
        ({**T1, "bar": {"diameter": 16.0, "overhang": -1.0}}, "tool[0].bar.overhang", "> 0"),
        ({**T1, "bar": {"diameter": 16.0, "overhang": 60.0, "E": 0}}, "tool[0].bar.E", "> 0"),
        ({**T1, "bar": {"diameter": 16.0}}, "tool[0].bar.overhang", "missing"),
        ({**T1, "bar": {"diameter": 16.0, "overhang": 60.0, "L": 1}}, "tool[0].bar.L", "allowed keys"),
        ({**T1, "bar": 16.0}, "tool[0].bar", "must be a table"),
        ({**T1, "holder": "PCLNR2525M12"}, "tool[0].holder", "allowed keys: name, insert"),
        ({**T1, "insert": "CNMG12"}, "tool[0].insert", "ISO 1832"),
        ({**T1, "insert": 120408}, "tool[0].insert", "text string"),
    ],
)
def test_bad_tool_values_name_their_key(table, key, pattern):
    with pytest.raises(InputError, match=pattern) as error:
        tool_from_job(table)
    assert error.value.key == key


def test_the_key_prefix_is_passed_through():
    with pytest.raises(InputError) as error:
        tool_from_job({**T1, "rake": 60.0}, key="tool[3]")
    assert error.value.key == "tool[3].rake"


def test_the_example_code_of_a_bad_insert_is_neutral():
    """The message shows the ISO 1832 form with a placeholder for the maker's chip-breaker suffix, not one
    maker's own code."""
    with pytest.raises(InputError) as caught:
        tool_from_job({"name": "T1", "insert": "CNMG12040", "approach": 93.0, "rake": 7.0})
    assert "'CNMG 12 04 08-XX' (XX: a maker's chip-breaker code)" in caught.value.message


def test_tool_table_must_be_a_table():
    with pytest.raises(InputError, match="must be a table"):
        tool_from_job(["T1"])
