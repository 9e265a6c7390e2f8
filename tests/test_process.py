"""Unit tests of the machining keys of a job ([stock], [[tool]], [[pass]], [machine], [tolerance]).

Key names and meanings as in INTERFACE.md, section "The machining job". Every bad input must be an
InputError naming the key; the messages are pinned to the words that tell the user what to do.
"""

import copy
import math
from types import SimpleNamespace

import numpy as np
import pytest
from shapely.geometry import Polygon

from deflect.errors import InputError
from deflect.geometry.section import section_from_outline
from deflect.job.process import DEFAULT_MACHINE, Machine, Pass
from deflect.job.reader import parse_job
from deflect.machining.targets import process_from_job

NOMINAL_OUTLINE = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]
SECTION = section_from_outline(NOMINAL_OUTLINE)
SAME_POINT = 1e-12      # coordinates built from the job's numbers by halving or copying

FINISH_OD = {"name": "finish OD", "surface": "od", "tool": "T1", "allowance": 0.0, "feed": 0.08,
             "speed": 200.0, "z": [40.0, 0.0]}
TABLES = {
    "stock": {"outline": [[19.0, 0.0], [20.5, 0.0], [20.5, 40.0], [19.0, 40.0]]},
    "tool": [{"name": "T1", "insert": "DCMT11T304", "approach": 93.0, "rake": 7.0},
             {"name": "B2", "nose_radius": 0.2, "approach": 95.0,
              "bar": {"diameter": 16.0, "overhang": 60.0}}],
    "pass": [FINISH_OD],
    "machine": {"max_rpm": 6000.0, "power_kw": 7.5},
    "tolerance": {"od": "h8", "wall": 0.03},
}


def job(**changes):
    """A stand-in for deflect.job.reader.Job: the nominal section and the machining tables (in mm)."""
    tables = copy.deepcopy(TABLES)
    for name, value in changes.items():
        if value is None:
            tables.pop(name)
        else:
            tables[name] = value
    return SimpleNamespace(section=SECTION, tables=tables)


def with_pass(**keys):
    """The tables' pass list with the first pass changed (None drops a key)."""
    first = {**FINISH_OD, **keys}
    return [{k: v for k, v in first.items() if v is not None}]


def test_process_reads_every_key():
    tables_pass = {**FINISH_OD, "depth": 0.2, "spring": 1, "offset": -0.01}
    process = process_from_job(job(**{"pass": [tables_pass]}))
    assert np.allclose(process.stock_rz, TABLES["stock"]["outline"], atol=SAME_POINT)
    assert set(process.tools) == {"T1", "B2"} and process.tools["T1"].nose_radius_mm == 0.4
    assert process.passes == [Pass(name="finish OD", surface="od", tool="T1", allowance_mm=0.0, feed_mm=0.08,
                                   speed_m_min=200.0, start_mm=40.0, end_mm=0.0, depth_mm=0.2, spring=1,
                                   offset_mm=-0.01, key="pass[0]")]
    assert process.machine == Machine(max_rpm=6000.0, power_kw=7.5)
    assert process.tolerance == {"od": "h8", "wall": 0.03}
    assert process.warnings == []


def test_optional_pass_keys_default():
    p = process_from_job(job()).passes[0]
    assert (p.depth_mm, p.spring, p.offset_mm) == (None, 0, 0.0)


def test_bar_and_tube_stock():
    bar = process_from_job(job(stock={"bar": {"diameter": 45.0, "z": [-10.0, 45.0]}})).stock_rz
    assert np.allclose(bar, [[0.0, -10.0], [22.5, -10.0], [22.5, 45.0], [0.0, 45.0]], atol=SAME_POINT)
    tube = process_from_job(job(stock={"tube": {"od": 41.0, "id": 38.0, "z": [0.0, 40.0]}})).stock_rz
    assert np.allclose(tube, [[19.0, 0.0], [20.5, 0.0], [20.5, 40.0], [19.0, 40.0]], atol=SAME_POINT)


def test_id_and_face_passes():
    passes = [{**FINISH_OD, "name": "bore", "surface": "id", "tool": "B2", "allowance": 0.0, "z": [40.0, 0.0]},
              {"name": "face", "surface": "face", "tool": "T1", "allowance": 0.0, "feed": 0.1, "speed": 150.0,
               "r": [25.0, 18.0]}]
    process = process_from_job(job(stock={"bar": {"diameter": 42.0, "z": [0.0, 41.0]}}, **{"pass": passes}))
    assert [(p.surface, p.start_mm, p.end_mm) for p in process.passes] == [("id", 40.0, 0.0), ("face", 25.0, 18.0)]


def test_missing_machine_assumes_a_small_lathe_and_warns():
    process = process_from_job(job(machine=None))
    assert process.machine == Machine(**DEFAULT_MACHINE) == Machine(max_rpm=4000.0, power_kw=10.0)
    assert len(process.warnings) == 1 and "machine" in process.warnings[0]
    partial = process_from_job(job(machine={"max_rpm": 3000.0}))
    assert partial.machine == Machine(max_rpm=3000.0, power_kw=10.0)
    assert partial.warnings and "power_kw" in partial.warnings[0]


def test_missing_tolerance_is_empty():
    assert process_from_job(job(tolerance=None)).tolerance == {}


def test_inch_job_through_the_job_reader():
    data = {"job": {"units": "inch"},
            "material": {"E": 68900.0, "nu": 0.33, "density": 2.70},
            "part": {"outline": [[0.75, 0.0], [0.8, 0.0], [0.8, 1.5], [0.75, 1.5]]},
            "stock": {"tube": {"od": 1.7, "id": 1.5, "z": [0.0, 1.5]}},
            "tool": [{"name": "T1", "nose_radius": 0.016, "approach": 93.0}],
            "pass": [{"name": "od", "surface": "od", "tool": "T1", "allowance": 0.0, "feed": 0.004,
                      "speed": 200.0, "z": [1.5, 0.0]}],
            "machine": {"max_rpm": 5000.0, "power_kw": 5.0}}
    process = process_from_job(parse_job(data, "inch.toml"))
    assert process.stock_rz[:, 0].max() == pytest.approx(0.85 * 25.4, rel=1e-15)
    p = process.passes[0]
    assert (p.feed_mm, p.start_mm, p.speed_m_min) == pytest.approx((0.004 * 25.4, 1.5 * 25.4, 200.0), rel=1e-15)


BAD_INPUTS = [
    # (changes to the tables, the key named, words of the message)
    ({"stock": None}, "stock", "missing"),
    ({"stock": {}}, "stock", "exactly one of outline, bar or tube"),
    ({"stock": {"bar": {"diameter": 45.0, "z": [0.0, 40.0]}, "tube": {"od": 45.0, "id": 30.0, "z": [0, 40]}}},
     "stock", "exactly one"),
    ({"stock": {"block": {}}}, "stock.block", "unknown key"),
    ({"stock": {"bar": {"diameter": 45.0}}}, "stock.bar.z", "missing"),
    ({"stock": {"bar": {"diameter": -45.0, "z": [0.0, 40.0]}}}, "stock.bar.diameter", "more than 0"),
    ({"stock": {"bar": {"diameter": 45.0, "z": [40.0, 0.0]}}}, "stock.bar.z", "smaller number first"),
    ({"stock": {"bar": {"diameter": "45", "z": [0.0, 40.0]}}}, "stock.bar.diameter", "must be a number"),
    ({"stock": {"tube": {"od": 45.0, "id": 46.0, "z": [0.0, 40.0]}}}, "stock.tube.id", "smaller than od"),
    ({"stock": {"bar": {"diameter": 45.0, "z": [0.0, 39.0]}}}, "stock.bar",
     "stock is smaller than the finished part at r = 19, z = 40"),
    ({"stock": {"tube": {"od": 41.0, "id": 38.5, "z": [0.0, 40.0]}}}, "stock.tube",
     "stock is smaller than the finished part"),
    ({"stock": {"outline": [[19.0, 0.0], [20.5, 0.0]]}}, "stock.outline", "at least 3"),
    ({"pass": None}, "pass", "missing"),
    ({"pass": with_pass(feed=0.0)}, "pass[0].feed", "zero feed"),
    ({"pass": with_pass(feed=-0.1)}, "pass[0].feed", "more than 0"),
    ({"pass": with_pass(speed=0.0)}, "pass[0].speed", "more than 0"),
    ({"pass": with_pass(speed="fast")}, "pass[0].speed", "must be a number"),
    ({"pass": with_pass(tool="T9")}, "pass[0].tool", "no tool named 'T9'; defined tools: T1, B2"),
    ({"tool": None}, "pass[0].tool", "no [[tool]] is defined"),
    ({"pass": with_pass(surface="bore")}, "pass[0].surface", '"od", "id" or "face"'),
    ({"pass": with_pass(z=[50.0, 45.0])}, "pass[0].z", "outside the stock"),
    ({"pass": with_pass(z=[10.0, 10.0])}, "pass[0].z", "needs a length"),
    ({"pass": with_pass(z=None)}, "pass[0].z", "missing"),
    ({"pass": with_pass(z=None, r=[25.0, 0.0])}, "pass[0].r", "runs along z"),
    ({"pass": with_pass(surface="face", z=None, r=[30.0, 25.0])}, "pass[0].r", "outside the stock"),
    ({"pass": with_pass(depth=0.0)}, "pass[0].depth", "more than 0"),
    ({"pass": with_pass(spring=-1)}, "pass[0].spring", "whole number"),
    ({"pass": with_pass(spring=1.5)}, "pass[0].spring", "whole number"),
    ({"pass": with_pass(spring=True)}, "pass[0].spring", "whole number"),
    ({"pass": with_pass(allowance=None)}, "pass[0].allowance", "missing"),
    ({"pass": with_pass(allowance=-0.1)}, "pass[0].allowance", "use offset"),
    ({"pass": with_pass(name=None)}, "pass[0].name", "missing"),
    ({"pass": with_pass(chuck=1)}, "pass[0].chuck", "unknown key"),
    ({"pass": with_pass(offset=-1.2)}, "pass[0].offset", "cut through the wall"),
    ({"pass": with_pass(offset=-1.0)}, "pass[0].offset", "cut through the wall"),
    # a target past the spin axis (the axis is no surface): the key that takes it there
    ({"pass": with_pass(offset=-25.0)}, "pass[0].offset", "past the spin axis"),
    ({"pass": with_pass(surface="id", tool="B2", offset=20.0)}, "pass[0].offset", "past the spin axis"),
    ({"pass": with_pass(surface="id", tool="B2", allowance=20.0)}, "pass[0].allowance", "past the spin axis"),
    ({"pass": [FINISH_OD, FINISH_OD]}, "pass[1].name", "own name"),
    ({"tool": [TABLES["tool"][0], TABLES["tool"][0]]}, "tool[1].name", "already defined at tool[0]"),
    ({"tool": [{"name": "T1", "approach": 93.0}]}, "tool[0].nose_radius", "missing"),
    ({"machine": {"max_rpm": 0.0, "power_kw": 7.5}}, "machine.max_rpm", "more than 0"),
    ({"machine": {"max_rpm": 6000.0, "power_kw": -1.0}}, "machine.power_kw", "more than 0"),
    ({"machine": {"rpm": 6000.0}}, "machine.rpm", "unknown key"),
]


@pytest.mark.parametrize("changes, key, words", BAD_INPUTS, ids=[f"{k}:{w}" for _, k, w in BAD_INPUTS])
def test_bad_input_names_the_key(changes, key, words):
    with pytest.raises(InputError) as caught:
        process_from_job(job(**changes))
    assert caught.value.key == key
    assert words in caught.value.message


def test_wall_check_allows_a_thin_wall_and_a_necked_part():
    assert process_from_job(job(**{"pass": with_pass(offset=-0.99)})).passes[0].offset_mm == -0.99
    # a pass whose extent ends before a thin neck does not touch it
    necked = section_from_outline([[19.0, 0.0], [22.0, 0.0], [22.0, 10.0], [19.5, 10.0], [19.5, 30.0],
                                   [22.0, 30.0], [22.0, 40.0], [19.0, 40.0]])
    stock = {"tube": {"od": 46.0, "id": 38.0, "z": [0.0, 40.0]}}
    tables = job(stock=stock, **{"pass": with_pass(z=[40.0, 31.0], offset=-0.6)}).tables
    assert process_from_job(SimpleNamespace(section=necked, tables=tables)).passes[0].end_mm == 31.0
    tables = job(stock=stock, **{"pass": with_pass(z=[40.0, 0.0], offset=-0.6)}).tables
    with pytest.raises(InputError, match="cut through the wall") as caught:
        process_from_job(SimpleNamespace(section=necked, tables=tables))
    assert caught.value.key == "pass[0].offset"


def test_wall_check_refuses_a_deep_offset_on_a_short_cup_that_hangs_together_by_its_base():
    """An offset deeper than half the part's length: the target lies in the air inside the cup, behind the
    wall the pass would take away; the part left still hangs together by its base (regression: accepted,
    since the heights checked shrank by the offset at both ends to nothing)."""
    cup = section_from_outline([[0.0, 0.0], [20.0, 0.0], [20.0, 10.0], [19.0, 10.0], [19.0, 2.0], [0.0, 2.0]])
    stock = {"bar": {"diameter": 41.0, "z": [0.0, 10.5]}}
    for offset in (-6.0, -1.5):
        tables = job(stock=stock, **{"pass": with_pass(z=[11.0, 0.0], offset=offset)}).tables
        with pytest.raises(InputError, match="cut through the wall") as caught:
            process_from_job(SimpleNamespace(section=cup, tables=tables))
        assert caught.value.key == "pass[0].offset" and f"r = {20.0 + offset:g}" in caught.value.message
    tables = job(stock=stock, **{"pass": with_pass(z=[11.0, 0.0], offset=-0.99)}).tables
    assert process_from_job(SimpleNamespace(section=cup, tables=tables)).passes[0].offset_mm == -0.99


def test_stock_fits_a_part_with_arcs_on_the_same_circle():
    rounded = [[19.0, 0.0], [20.0, 0.0], [20.0, 39.0], {"to": [19.0, 40.0], "radius": 1.0}]
    part = section_from_outline(rounded)
    stock = {"outline": [[19.0, 0.0], [21.0, 0.0], [21.0, 38.0], [20.0, 38.0], [20.0, 39.0],
                         {"to": [19.0, 40.0], "radius": 1.0}]}
    process = process_from_job(SimpleNamespace(section=part, tables=job(stock=stock).tables))
    # 2 x 38 below the step, 1 x 1 above it, a quarter disc of radius 1 (chords of 1e-5 mm sagitta)
    assert Polygon(process.stock_rz).area == pytest.approx(2.0 * 38.0 + 1.0 + math.pi / 4, rel=1e-6)
