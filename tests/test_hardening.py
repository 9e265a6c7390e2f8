"""Hostile input refused within bounds (issue 17, items 1, 2, 4 and 7): each case the bad-input attack found,
as a regression test that failed before the fix.

1. tracebacks: a 400-digit TOML integer, an array nested 3,000 deep, a figure name that is no image format or
   an existing folder, a stdout that cannot be written;
2. unbounded work: a pass extent far beyond the stock, cuts without limit (depth 1e-9, spring 1e9), an outline
   radius typed 42000000.0, outlines of thousands of nodes (the memory of the outline checks, measured with
   tracemalloc, and the work of the ray and level tests, counted: both must grow about linearly);
4. absurd input accepted: insert codes no insert has (a full-width digit, a corner larger than the insert, size
   00), a nose radius of 1e6 mm, a grip of 1e12 N (refused against the material's yield strength, and never a
   negative diameter);
7. error lines: every refusal in the `error: FILE: KEY: ...` form (the part cut in two, the harmonic sum, the
   wall that cannot be measured), a job path that is a folder, no numpy warning for absurd coordinates, and a
   point-coincidence tolerance set by the part's size, not by how far it lies from the origin.

The machining jobs are the thin aluminium sleeve of tests/test_simulate.py (about half a second a prediction).
"""

import copy
import functools
import json
import math
import subprocess
import sys
import tracemalloc
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import OD_SLEEVE, run_cli, write_job  # noqa: E402

from deflect.errors import InputError, ModelError  # noqa: E402
from deflect.geometry import section as section_module  # noqa: E402
from deflect.geometry.section import MAX_COORDINATE_MM, min_wall, section_from_outline  # noqa: E402
from deflect.job import holding as holding_module  # noqa: E402
from deflect.job.holding import contact_of, holding_from_table  # noqa: E402
from deflect.job.reader import read_job  # noqa: E402
from deflect.machining import simulate as simulate_module  # noqa: E402
from deflect.machining.inprocess import MAX_CUTS_PER_PASS  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402
from deflect.mechanics.chuck import ring_stress_under_jaws_mpa  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[1] / "data" / "examples"
SLEEVE_SECTION = """
[job]
title = "sleeve"
[material]
name = "al-6061-t6"
[part]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0, 0.3], [19.0, 40.0]]
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
"""
HUGE = "1" + "0" * 400            # a 401-digit TOML integer
DENSE_NODES = 5000                # a drawing's spline: thousands of nodes
# Peak memory of the outline checks on DENSE_NODES nodes [bytes]: the pairwise boxes took 25 MB per array of
# N x N booleans (about 150 MB with the temporaries), the grip's levels x edges about 1 GB; linear work needs a
# few MB. The bound sits far from both.
DENSE_PEAK_BYTES = 60e6
PAIRS_PER_RAY = 20                # the rays across a smooth sleeve meet a handful of segment boxes each


def write(tmp_path, text: str, name: str = "job.toml") -> str:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def error_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert lines, "no error line"
    return lines[-1]


def sleeve_job(tmp_path, name: str = "sleeve", **pass_keys) -> str:
    tables = copy.deepcopy(OD_SLEEVE)
    tables["pass"][0].update(pass_keys)
    return str(write_job(tmp_path, name, tables))


# ---------------------------------------------------------------------------------------------------
# 1. tracebacks

@pytest.mark.parametrize("where, key", [
    ("E", "material.E"), ("node", "part.outline[1]"), ("feed", "pass[0].feed")])
def test_a_400_digit_integer_is_one_error_line(tmp_path, where, key):
    if where == "feed":
        path = sleeve_job(tmp_path)
        Path(path).write_text(Path(path).read_text().replace("feed = 0.1", f"feed = {HUGE}"))
        code, out, err = run_cli(["predict", path, "--quiet"])
    else:
        text = (SLEEVE_SECTION.replace('name = "al-6061-t6"', f"E = {HUGE}\nnu = 0.33\ndensity = 2.7")
                if where == "E" else SLEEVE_SECTION.replace("[20.0, 0.0]", f"[{HUGE}, 0.0]"))
        code, out, err = run_cli(["section", write(tmp_path, text)])
    assert code == 2 and out == ""
    assert error_line(err).startswith(f"error: {tmp_path}") and f": {key}: " in err, err
    assert "Traceback" not in err and "digits" in err and HUGE not in err


def test_an_array_nested_3000_deep_is_refused(tmp_path):
    text = SLEEVE_SECTION.replace('title = "sleeve"', 'title = "sleeve"\nx = ' + "[" * 3000 + "]" * 3000)
    code, out, err = run_cli(["section", write(tmp_path, text)])
    assert code == 2 and "file: the file nests arrays or tables too deeply" in err


def test_nesting_deeper_than_a_job_needs_is_refused(tmp_path):
    text = SLEEVE_SECTION.replace('title = "sleeve"', 'title = "sleeve"\nx = ' + "[" * 20 + "]" * 20)
    code, _, err = run_cli(["section", write(tmp_path, text)])
    assert code == 2 and "nests arrays or tables 21 deep" in err


@pytest.mark.parametrize("command", ["compliance", "clamp"])
def test_a_figure_name_that_is_no_image_is_refused_before_any_work(tmp_path, command):
    # the job does not even exist: the name is refused before it is read
    code, out, err = run_cli([command, str(tmp_path / "absent.toml"), "--plot", str(tmp_path / "map.txt")])
    assert code == 2 and out == ""
    assert "--plot: " in err and "not a figure format" in err and ".png" in err
    assert not (tmp_path / "map.txt").exists()


def test_a_figure_name_that_is_a_folder_is_refused(tmp_path):
    (tmp_path / "map.png").mkdir()
    code, _, err = run_cli(["compliance", write(tmp_path, SLEEVE_SECTION), "--plot", str(tmp_path / "map.png")])
    assert code == 2 and "--plot: " in err and "is a folder" in err


@pytest.mark.skipif(not Path("/dev/full").exists(), reason="no /dev/full on this system")
def test_a_full_stdout_is_one_error_line_and_exit_1(tmp_path):
    path = write(tmp_path, SLEEVE_SECTION)
    with open("/dev/full", "w") as full:
        result = subprocess.run([sys.executable, "-c", "import sys; from deflect.cli import main; main(sys.argv[1:])",
                                 "section", path, "--json"], stdout=full, stderr=subprocess.PIPE, text=True)
    assert result.returncode == 1, result.stderr
    assert result.stderr.strip().splitlines() == ["error: cannot write the output to stdout: No space left on device"]


class ClosedPipe:
    """A stdout whose reader has gone (`deflect ... | head -0`)."""

    def write(self, text):
        raise BrokenPipeError(32, "Broken pipe")

    def flush(self):
        pass


def test_a_closed_pipe_is_one_error_line(tmp_path, monkeypatch, capsys):
    path = write(tmp_path, SLEEVE_SECTION)
    monkeypatch.setattr(sys, "stdout", ClosedPipe())
    from deflect.cli import main
    with pytest.raises(SystemExit) as exit_:
        main(["section", path])
    assert exit_.value.code == 1
    assert capsys.readouterr().err.strip().splitlines() == ["error: cannot write the output to stdout: Broken pipe"]


# ---------------------------------------------------------------------------------------------------
# 2. unbounded work

def test_a_pass_far_beyond_the_stock_is_cut_back_to_it(tmp_path):
    code, out, err = run_cli(["predict", sleeve_job(tmp_path, z=[1e6, -1e6]), "--json"])
    assert code == 0, err
    assert "pass[0].z: [1e+06, -1e+06] runs more than 5 mm beyond the stock and the part" in err
    stations = json.loads(out)["passes"][0]["stations"]
    # the stock and the part span z 0 .. 40: the pass runs from 45 to -5 at 0.1 mm a station
    z = [s["z"] for s in stations]
    assert max(z) <= 45.0 + 1e-9 and min(z) >= -5.0 - 1e-9 and len(stations) <= 50.0 / 0.1 + 10


@pytest.mark.parametrize("keys, key, said", [
    ({"depth": 1e-9}, "pass[0].depth", f"at most {MAX_CUTS_PER_PASS} cuts a pass"),
    ({"spring": 1000000000}, "pass[0].spring", "at most 10"),
])
def test_cuts_without_limit_are_refused(tmp_path, keys, key, said):
    code, out, err = run_cli(["predict", sleeve_job(tmp_path, **keys), "--quiet"])
    assert code == 2 and out == ""
    assert f": {key}: " in error_line(err) and said in err, err


def test_the_job_s_cuts_and_stations_are_bounded(tmp_path, monkeypatch):
    job = read_job(sleeve_job(tmp_path, depth=0.1))       # 0.3 mm of stock in 3 cuts
    process = process_from_job(job)
    nominal = job.section.polygon()
    monkeypatch.setattr(simulate_module, "MAX_CUTS_PER_JOB", 2)
    with pytest.raises(InputError, match="makes 3 cuts; deflect simulates at most 2") as error:
        simulate_module.laid_out(process, nominal, 0.1, {})
    assert error.value.key == "pass[0].depth"
    monkeypatch.setattr(simulate_module, "MAX_CUTS_PER_JOB", 400)
    monkeypatch.setattr(simulate_module, "MAX_STATIONS_PER_JOB", 500)
    with pytest.raises(InputError, match="tool positions") as error:
        simulate_module.laid_out(process, nominal, 0.1, {})
    assert error.value.key == "pass[0].z"


def test_an_outline_radius_typed_42000000_is_refused_at_once(tmp_path):
    text = SLEEVE_SECTION.replace("[20.0, 0.0]", "[42000000.0, 0.0]").replace(
        "[[held]]\nr = [0.0, 100.0]\nz = [0.0, 5.0]", "[holding]\nz = [0.0, 5.0]\nwidth = 10.0\nforce = 1000.0")
    tracemalloc.start()
    code, _, err = run_cli(["section", write(tmp_path, text)])
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert code == 2 and ": part.outline[1]: " in err and f"{MAX_COORDINATE_MM:g} mm" in err
    assert peak < DENSE_PEAK_BYTES


def dense_outline(nodes: int) -> list:
    """A sleeve whose OD is a smooth bulge drawn with nodes - 2 points (a spline from a drawing)."""
    count = nodes - 2
    z = np.linspace(0.0, 40.0, count)
    od = [[20.0 + 0.3 * math.sin(math.pi * v / 40.0) ** 2, float(v)] for v in z]
    return [[19.0, 0.0], *od, [19.0, 40.0]]


def test_dense_outline_checks_take_little_memory():
    tracemalloc.start()
    section = section_from_outline(dense_outline(DENSE_NODES))
    contact_of(section, holding_from_table({"z": [0.0, 5.0], "width": 10.0, "force": 1000.0}))
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < DENSE_PEAK_BYTES, f"{peak / 1e6:.0f} MB"


def test_dense_outline_rays_meet_only_the_segments_they_can_reach(monkeypatch):
    section = section_from_outline(dense_outline(DENSE_NODES))
    counted = {"rays": 0, "pairs": 0}
    first_hits = section_module._RayTargets.first_hits

    def counting(self, origins, dirs, s_min):
        counted["rays"] += len(origins)
        counted["pairs"] += len(self.tree.query(section_module.shapely.linestrings(
            np.stack([origins, origins + self.reach_mm * dirs], axis=1)), predicate="intersects")[0])
        return first_hits(self, origins, dirs, s_min)

    monkeypatch.setattr(section_module._RayTargets, "first_hits", counting)
    assert min_wall(section) == pytest.approx(1.0, abs=1e-6)     # OD r 20 at the ends, bore r 19
    assert counted["pairs"] <= PAIRS_PER_RAY * counted["rays"]


def test_grip_levels_meet_only_the_edges_that_cross_them():
    section = section_from_outline(dense_outline(DENSE_NODES))
    polygon = section.polygon(1e-4)
    z = np.linspace(0.5, 39.5, 2000)
    level, radius = holding_module._crossings(polygon, z)
    # every level of the sleeve crosses the bore and the OD once: two crossings a level, no levels x edges
    assert np.bincount(level, minlength=len(z)).tolist() == [2] * len(z)
    assert np.allclose(np.sort(radius.reshape(-1, 2), axis=1)[:, 0], 19.0)


def test_too_many_outline_items_are_refused(monkeypatch):
    monkeypatch.setattr(section_module, "MAX_OUTLINE_ITEMS", 100)
    with pytest.raises(InputError, match="at most 100") as error:
        section_from_outline(dense_outline(101))
    assert error.value.key == "part.outline"


def test_a_grip_shorter_than_any_jaw_is_refused():
    with pytest.raises(InputError, match="at least 0.1 mm") as error:
        holding_from_table({"z": [0.0, 1e-9], "width": 10.0, "force": 1000.0})
    assert error.value.key == "holding.z"


# ---------------------------------------------------------------------------------------------------
# 4. absurd input accepted

@pytest.mark.parametrize("insert, said", [
    ("CCMT09T3\uff104", "not an ISO 1832"),        # a full-width digit
    ("CCMT09T399", "does not fit"),               # a 9.9 mm corner on a 9.525 mm inscribed circle
    ("CNMG000408", "size code '00'"),
])
def test_insert_codes_no_insert_has_are_refused(tmp_path, insert, said):
    tables = copy.deepcopy(OD_SLEEVE)
    tables["tool"][0] = {"name": "T1", "insert": insert, "approach": 93.0, "rake": 7.0}
    code, _, err = run_cli(["predict", str(write_job(tmp_path, "insert", tables)), "--quiet"])
    assert code == 2 and ": tool[0].insert: " in err and said in err, err


@pytest.mark.parametrize("radius, said", [(1e6, "larger than any turning insert"), (5.0, "does not fit the insert")])
def test_a_nose_radius_no_insert_has_is_refused(tmp_path, radius, said):
    tables = copy.deepcopy(OD_SLEEVE)
    tables["tool"][0].update({"nose_radius": radius, "insert": "CCMT09T304"})
    code, _, err = run_cli(["predict", str(write_job(tmp_path, "nose", tables)), "--quiet"])
    assert code == 2 and ": tool[0].nose_radius: " in err and said in err, err


RING = (EXAMPLES / "ring.toml").read_text()


@pytest.mark.parametrize("command", ["predict", "clamp"])
def test_a_grip_of_1e12_newton_is_refused_against_the_yield_strength(tmp_path, command):
    path = write(tmp_path, RING.replace("force = 2000.0", "force = 1e12"))
    code, out, err = run_cli([command, path, "--quiet"] if command == "predict" else [command, path])
    assert code == 2 and out == ""
    assert ": holding.force: " in err and "yield strength of al-6061-t6 (240 MPa)" in err
    assert "-1110478" not in err


def test_a_crushing_grip_on_a_material_without_a_yield_strength_is_refused(tmp_path):
    inline = "E = 68900.0\nnu = 0.33\ndensity = 2.7\nkc11 = 740.0\nmc = 0.24\nkf11 = 170.0\nmf = 0.5\nkp11 = 146.0\nmp = 0.5"
    text = RING.replace("force = 2000.0", "force = 1e12").replace('name = "al-6061-t6"', inline)
    code, out, err = run_cli(["predict", write(tmp_path, text), "--json"])
    assert code == 2 and out == "" and ": holding.force: " in err and "as much as the gripped wall is thick" in err


def test_a_grip_that_may_mark_the_part_is_said_in_clamp_and_predict(tmp_path):
    path = write(tmp_path, RING.replace("force = 2000.0", "force = 5000.0"))
    code, out, err = run_cli(["clamp", path, "--json"])
    assert code == 0, err
    assert any("may take a permanent set" in note for note in json.loads(out)["notes"])
    code, out, err = run_cli(["predict", path, "--json"])
    assert code == 0, err
    assert any("may take a permanent set" in w for w in json.loads(out)["warnings"])
    # the ring's 2000 N stays under the yield strength everywhere: nothing said
    code, out, _ = run_cli(["clamp", str(EXAMPLES / "ring.toml"), "--json"])
    assert not any("yield" in note for note in json.loads(out)["notes"])


def test_the_ring_stress_under_three_jaws_is_the_thin_ring_value():
    """Thin ring under N equal radial loads (Roark's Formulas for Stress and Strain, 7th ed., Table 9.2; derived
    by Castigliano): M_A = 0.18879 P R under a load for N = 3, hoop force P / (2 tan 60 deg); stress
    6 M / (b t^2) + N / (b t)."""
    force, radius, wall, length = 3000.0, 40.0, 2.0, 10.0
    load = force / 3
    expected = 6.0 * 0.18879 * load * radius / (length * wall ** 2) + load / (2.0 * math.tan(math.pi / 3)) / (length * wall)
    assert ring_stress_under_jaws_mpa(force, 3, radius, wall, length) == pytest.approx(expected, rel=2e-5)


def test_every_library_material_has_a_yield_strength_with_its_source():
    import tomllib

    from deflect.job.materials import library_path, load_library
    data = tomllib.loads(library_path().read_text(encoding="utf-8"))
    for name, material in load_library().items():
        assert material.yield_strength_mpa is not None and material.yield_strength_mpa > 0.0, name
        assert data[name]["sources"]["yield_strength"].strip(), name


# ---------------------------------------------------------------------------------------------------
# 7. error lines

def test_a_part_cut_in_two_names_the_pass(tmp_path):
    """The housing with 7.6 mm more stock on the rim and no roughing over it: 'finish bore' cuts the part in two
    (before: the line had no key)."""
    text = (EXAMPLES / "housing.toml").read_text().replace("[22.6, 46.0], [22.6, 6.0]", "[22.6, 53.6], [22.6, 6.0]")
    text = text.replace("[26.2, 46.0]", "[26.2, 53.6]")
    path = write(tmp_path, text)
    code, _, err = run_cli(["predict", path, "--quiet"])
    assert code == 2
    assert error_line(err).startswith(f"error: {path}: pass[3]: 'finish bore' cuts the part in two"), err


def test_the_harmonic_sum_that_does_not_converge_names_the_patch(tmp_path, monkeypatch):
    # the series gives up at n_max; a low one reaches the same error line in a fraction of the time
    from deflect.mechanics import compliance as compliance_module
    monkeypatch.setattr(compliance_module, "harmonic_compliance",
                        functools.partial(compliance_module.harmonic_compliance, n_max=60))
    code, _, err = run_cli(["compliance", write(tmp_path, SLEEVE_SECTION), "--at", "20,30", "--patch", "0.01,0.01"])
    assert code == 2 and f"{tmp_path}/job.toml: --patch: the harmonic sum" in error_line(err)


def test_a_wall_that_cannot_be_measured_names_the_outline(monkeypatch):
    def no_hits(self, origins, dirs, s_min):
        return np.full(len(origins), np.inf), np.zeros((len(origins), 2))

    monkeypatch.setattr(section_module._RayTargets, "first_hits", no_hits)
    with pytest.raises(ModelError, match="could not measure the wall") as error:
        min_wall(section_from_outline([[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]]))
    assert error.value.key == "part.outline"


def test_a_job_path_that_is_a_folder(tmp_path):
    code, _, err = run_cli(["section", str(tmp_path)])
    assert code == 2 and error_line(err) == f"error: {tmp_path}: file: is a folder, not a job file; give the path " \
                                           "of a .toml file"


@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("node", ["[1e300, 0.0]", "[20.0, 1e300]", "[20.0, -1e300]"])
def test_absurd_coordinates_are_refused_without_numpy_warnings(tmp_path, node):
    code, out, err = run_cli(["section", write(tmp_path, SLEEVE_SECTION.replace("[20.0, 0.0]", node))])
    assert code == 2 and out == "" and ": part.outline[1]: " in err and "from the origin" in err
    assert len(err.strip().splitlines()) == 1


def test_the_coincidence_tolerance_is_set_by_the_part_not_its_place(tmp_path):
    """A 40 mm sleeve drawn at z = 9000 with a 5 um step at its top: the two nodes are 5e-6 mm apart, far more
    than the rounding of coordinates of 9000 (1e-12) and far less than any drawing tolerance. Before, the
    tolerance was 1e-9 of the largest coordinate (9e-6 mm) and called them the same point."""
    outline = "[[19.0, 9000.0], [20.0, 9000.0], [20.0, 9040.0], [19.000005, 9040.0], [19.0, 9040.0]]"
    text = SLEEVE_SECTION.replace("[[19.0, 0.0], [20.0, 0.0], [20.0, 40.0, 0.3], [19.0, 40.0]]", outline)
    code, out, err = run_cli(["section", write(tmp_path, text.replace("z = [0.0, 5.0]", "z = [9000.0, 9005.0]")),
                              "--json"])
    assert code == 0, err
    # the same sleeve drawn at z = 0: the same area to rounding (Pappus: the section does not care where it is)
    plain = SLEEVE_SECTION.replace("[[19.0, 0.0], [20.0, 0.0], [20.0, 40.0, 0.3], [19.0, 40.0]]",
                                   "[[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.000005, 40.0], [19.0, 40.0]]")
    _, plain_out, _ = run_cli(["section", write(tmp_path, plain, "plain.toml"), "--json"])
    assert json.loads(out)["area_mm2"] == pytest.approx(json.loads(plain_out)["area_mm2"], rel=1e-9)
