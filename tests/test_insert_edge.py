"""Cuts no insert can take (issue 10, item 4): each cut's depth against its insert's usable edge, a finishing
cut's chip against what the allowance before it implies, the warning in `deflect predict`, and `deflect tune`
splitting the cut into more passes.

The usable edge is common practice (`deflect.machining.insert_edge`): two thirds of the cutting edge l, which a
cut of depth a engages over a / sin(kappa_r); l follows from the inscribed circle d of the ISO 1832 size code,
l = d / sin(80 deg) for the 80 deg rhombus C (plane geometry, re-evaluated here). Before the fix a 5.8 mm cut
on a 6 mm edge and a finishing pass meeting 7.6 mm of stock at a face ran without a word, and `tune` lowered
the speed where the cut should have been split.
"""

import copy
import json
import math
import re
import sys
from pathlib import Path
from types import SimpleNamespace

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import OD_SLEEVE, run_cli, write_job  # noqa: E402

from deflect.job.reader import read_job  # noqa: E402
from deflect.machining.insert_edge import edge_problems, usable_depth_mm  # noqa: E402
from deflect.machining.simulate import STATION_SPACING_MM, laid_out, met_depth  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
ROUGHING_SHARE = 2.0 / 3.0              # common practice, as the module states
CCMT06_INSCRIBED_MM = 6.35              # 1/4 in: the inscribed circle of size code 06 of an 80 deg rhombus
APPROACH_DEG = 93.0
DEEP_MM = 5.8                           # the cut


def deep_sleeve() -> dict:
    """The test sleeve (r 19..20), 16 mm tall, turned from a tube 5.8 mm thicker on the OD in one roughing cut
    with a CCMT 06 insert, then finished."""
    tables = copy.deepcopy(OD_SLEEVE)
    top = 20.0 + DEEP_MM + 0.2
    tables["part"] = {"outline": [[19.0, 0.0], [20.0, 0.0], [20.0, 16.0], [19.0, 16.0]]}
    tables["stock"] = {"outline": [[19.0, 0.0], [20.0, 0.0], [20.0, 6.0], [top, 6.0], [top, 16.0], [19.0, 16.0]]}
    tables["tool"] = [{"name": "T1", "insert": "CCMT060204", "approach": APPROACH_DEG, "rake": 7.0},
                      {"name": "T2", "nose_radius": 0.4, "approach": 93.0, "rake": 7.0}]
    tables["pass"] = [{"name": "rough OD", "surface": "od", "tool": "T1", "allowance": 0.2, "feed": 0.2,
                       "speed": 150.0, "z": [16.0, 6.0]},
                      {"name": "finish OD", "surface": "od", "tool": "T2", "allowance": 0.0, "feed": 0.1,
                       "speed": 200.0, "z": [16.0, 6.0]}]
    tables["machine"] = {"max_rpm": 6000.0, "power_kw": 30.0}
    return tables


def usable_mm() -> float:
    edge = CCMT06_INSCRIBED_MM / math.sin(math.radians(80.0))
    return ROUGHING_SHARE * edge * math.sin(math.radians(APPROACH_DEG))


def test_the_usable_depth_is_two_thirds_of_the_edge(tmp_path):
    job = read_job(write_job(tmp_path, "deep", deep_sleeve()))
    tool = process_from_job(job).tools["T1"]
    assert usable_depth_mm(tool) == pytest.approx(usable_mm(), rel=1e-12)
    assert usable_depth_mm(process_from_job(job).tools["T2"]) is None      # no insert code: no known edge


def test_a_cut_deeper_than_the_insert_takes_is_warned(tmp_path):
    code, out, err = run_cli(["predict", str(write_job(tmp_path, "deep", deep_sleeve())), "--json"])
    assert code == 0, err
    said = [w for w in json.loads(out)["warnings"] if "'rough OD', cut 1" in w]
    assert len(said) == 1, json.loads(out)["warnings"]
    assert f"over the {usable_mm():.3g} mm T1's insert CCMT060204 takes" in said[0]
    assert f"depth = {math.floor(usable_mm() * 10) / 10:g}" in said[0]


def test_a_finishing_pass_meeting_a_roughing_chip_at_a_face_is_warned(tmp_path):
    """7.6 mm of stock on the rim and only a finishing face pass over it (the issue's 2146 N case)."""
    tables = copy.deepcopy(OD_SLEEVE)
    tables["stock"] = {"outline": [[19.0, 0.0], [20.0, 0.0], [20.0, 47.6], [19.0, 47.6]]}
    tables["tool"] = [{"name": "T1", "insert": "DCMT11T304", "approach": 93.0, "rake": 7.0}]
    tables["pass"] = [{"name": "face rim", "surface": "face", "tool": "T1", "allowance": 0.0, "feed": 0.1,
                       "speed": 200.0, "r": [21.0, 18.5]}]
    code, out, err = run_cli(["predict", str(write_job(tmp_path, "face", tables)), "--json"])
    assert code == 0, err
    said = [w for w in json.loads(out)["warnings"] if "'face rim'" in w and "a finishing cut is for" in w]
    assert len(said) == 1 and "a finishing cut is for (no pass before it on this side" in said[0]
    taken = float(re.search(r"takes up to ([0-9.]+) mm, over the 2 mm", said[0]).group(1))
    assert 7.6 <= taken < 7.6 + 0.1        # the stock's 7.6 mm, a little more where the face meets the OD's corner


@pytest.mark.parametrize("example", sorted(p.name for p in EXAMPLES.glob("*.toml")
                                            if "[measured]" not in p.read_text()))   # jobs, not measured parts
def test_the_shipped_examples_take_cuts_their_inserts_can(example):
    """Judged on the depth each cut meets on the part cut to the earlier targets (no shell model needed): the
    depth actually cut is that less the push-off, so none that meets less than its limit cuts more."""
    job = read_job(EXAMPLES / example)
    process = process_from_job(job)
    paths, parts = laid_out(process, job.section.polygon(), STATION_SPACING_MM, {})
    met = [SimpleNamespace(cuts=[SimpleNamespace(cut=j, depth_mm=met_depth(part, path, p))
                                 for j, (path, part) in enumerate(zip(paths[i], parts[i]))])
           for i, p in enumerate(process.passes)]
    assert edge_problems(process, met) == []


def test_tune_splits_the_cut_instead_of_slowing_it(tmp_path):
    tables = deep_sleeve()
    tables["tolerance"] = {"od": "h11"}
    code, out, err = run_cli(["tune", str(write_job(tmp_path, "deep-tune", tables)), "--json", "--quiet"])
    assert code == 0, err
    result = json.loads(out)
    assert result["options"], result
    for option in result["options"]:
        depth = [c for c in option["changes"] if c["key"] == "depth"]
        assert depth == [{"pass": "rough OD", "key": "depth", "from": None, "to": math.floor(usable_mm() * 10) / 10,
                          "unit": "mm"}]
        assert not [c for c in option["changes"] if c["key"] == "speed" and c["pass"] == "rough OD"]
        assert "rough OD: take the stock in cuts of at most" in option["in_words"]
        assert not [b for b in option["breaks"] if "takes up to" in b]
    # the option written into the job predicts without the warning
    tables["pass"][0]["depth"] = math.floor(usable_mm() * 10) / 10
    code, out, err = run_cli(["predict", str(write_job(tmp_path, "deep-split", tables)), "--json"])
    assert code == 0, err
    assert not [w for w in json.loads(out)["warnings"] if "takes up to" in w]
    assert len(json.loads(out)["passes"][0]["stations"]) > 0
