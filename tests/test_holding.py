"""Work holding: the [holding] reader, where the grip bears, the grip window and its remedies, and
`deflect clamp` (JSON keys of INTERFACE.md, the figure, bad input as one error line)."""

import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from deflect.cli import main
from deflect.errors import InputError
from deflect.geometry.section import section_from_outline
from deflect.job.holding import contact_of, holding_from_table
from deflect.job.reader import parse_job, read_job
from deflect.machining.grip import clamp_study, finished_surfaces, released_profile
from deflect.machining.targets import process_from_job
from deflect.mechanics.clamping import GripModel
from deflect.mechanics.cutting import cutting_forces

RING = Path(__file__).parent.parent / "data" / "examples" / "ring.toml"

SLEEVE = """
[job]
title = "stepped ring"
[material]
name = "al-6061-t6"
[part]
outline = [[37.0, 0.0], [40.0, 0.0], [40.0, 8.0], [45.0, 8.0], [45.0, 16.0], [37.0, 16.0]]
[holding]
jaws = 3
z = [0.0, 6.0]
width = 10.0
force = 1000.0
"""


@pytest.fixture(scope="module")
def ring_study():
    return clamp_study(read_job(RING))


def run_clamp(tmp_path, capsys, text=None, *options):
    path = RING
    if text is not None:
        path = tmp_path / "job.toml"
        path.write_text(text)
    try:
        main(["clamp", str(path), *options])
        code = 0
    except SystemExit as exc:
        code = exc.code
    out = capsys.readouterr()
    return code, out.out, out.err, str(path)


# ---------------------------------------------------------------------------------------------------
# the reader

def test_defaults_are_assumed_and_said():
    h = holding_from_table({"z": [0.0, 8.0], "width": 10.0, "force": 1000.0})
    assert (h.kind, h.jaws, h.grip, h.friction, h.safety, h.jaw_mass_kg) == ("jaws", 3, "od", 0.1, 1.5, None)
    said = " ".join(h.notes)
    for key in ("holding.jaws", "holding.friction", "holding.safety", "holding.jaw_mass"):
        assert key in said


def test_a_mandrel_grips_the_bore_all_round():
    h = holding_from_table({"kind": "mandrel", "z": [0.0, 8.0], "force": 1000.0, "jaws": 3})
    assert (h.grip, h.jaws, h.width_mm, h.all_round) == ("id", 0, None, True)
    with pytest.raises(InputError, match="mandrel expands in the bore") as err:
        holding_from_table({"kind": "mandrel", "grip": "od", "z": [0.0, 8.0], "force": 1000.0})
    assert err.value.key == "holding.grip"


def test_the_grip_bears_on_the_largest_od_in_its_range():
    section = section_from_outline([[37.0, 0.0], [40.0, 0.0], [40.0, 8.0], [45.0, 8.0], [45.0, 16.0], [37.0, 16.0]])
    contact = contact_of(section, holding_from_table({"z": [4.0, 12.0], "width": 10.0, "force": 1.0}))
    assert contact.radius_mm == pytest.approx(45.0)
    assert contact.z_mm[0] == pytest.approx(8.0, abs=0.1) and contact.z_mm[1] == pytest.approx(12.0, abs=0.1)
    assert contact.wall_mm == pytest.approx(8.0, rel=1e-3)
    assert contact.weights.sum() == pytest.approx(1.0)


def test_without_held_boxes_the_material_under_the_grip_holds_the_part():
    job = read_job(RING)
    [box] = job.held
    assert box.key == "holding"
    assert box.r_range == pytest.approx((41.5, 42.5))
    assert box.z_range == pytest.approx((0.0, 8.0), abs=0.1)
    drawn = RING.read_text().replace("[holding]", "[[held]]\nr = [0.0, 100.0]\nz = [0.0, 2.0]\n\n[holding]")
    assert [b.key for b in parse_job(tomllib.loads(drawn), "ring.toml").held] == ["held[0]"]   # a drawn box wins


def test_an_inch_job_grips_in_mm(tmp_path):
    text = SLEEVE.replace('title = "stepped ring"', 'title = "stepped ring"\nunits = "inch"')
    path = tmp_path / "inch.toml"
    path.write_text(text)
    [box] = read_job(path).held
    assert box.r_range[1] == pytest.approx(40.0 * 25.4 + 0.5)
    assert box.z_range == pytest.approx((0.0, 6.0 * 25.4), abs=0.1 * 25.4)


# ---------------------------------------------------------------------------------------------------
# the grip window on the shipped ring

def test_the_heaviest_cut_is_taken_at_its_true_depth(ring_study):
    """The rough bore meets the 1 mm a side of stock less its 0.2 mm allowance, 0.8 mm, at r 36.8 - 0.4 (the
    middle of the chip); the spindle turns 1000 vc / (pi D) there."""
    job = read_job(RING)
    process = process_from_job(job)
    demand = ring_study.given.demand
    rough = process.passes[0]
    expected = cutting_forces(job.material, process.tools[rough.tool], 0.8, rough.feed_mm, rough.speed_m_min)
    assert demand.pass_name == "rough bore"
    assert demand.r_mm == pytest.approx(36.4, abs=1e-6)
    assert demand.cutting_n == pytest.approx(float(expected.cutting_n), rel=1e-6)
    assert demand.axial_n == pytest.approx(float(expected.feed_n), rel=1e-6)
    assert demand.rpm == pytest.approx(1000.0 * rough.speed_m_min / (math.pi * 72.8), rel=1e-9)
    # VDI 3106 as quoted: S_z sqrt((F_c r / R)^2 + F_f^2) / mu + Fc at that speed
    h = ring_study.given.holding
    fc = 3 * 0.25 * 0.050 * (math.pi * demand.rpm / 30.0) ** 2
    least = h.safety * math.hypot(demand.cutting_n * 36.4 / 42.0, demand.axial_n) / h.friction + fc
    assert ring_study.given.least_to_hold_n == pytest.approx(least, rel=1e-9)


def test_three_jaws_leave_three_lobes_and_an_empty_window(ring_study):
    g = ring_study.given
    assert g.lobes == 3
    assert g.window_open is False
    assert g.least_to_hold_n > g.most_for_roundness_n
    assert set(g.surfaces.surface) == {"id"}                   # the OD is gripped, not cut, here
    assert np.all(g.size_change_mm[g.surfaces.points_rz[:, 1] < 8.0] > 0.0)   # the bore comes out larger there


def test_at_the_most_grip_the_form_fills_the_band(ring_study):
    """3 lobes: a two-point gauge reads the bore's size constant, so the released peak to valley may take the
    whole band (30 um for H7 at 74 mm) before a plug gauge at the maximum-material size stops it."""
    g = ring_study.given
    k = g.limiting
    centrifugal = 3 * 0.25 * 0.050 * (math.pi * g.surfaces.rpm[k] / 30.0) ** 2
    at_most = (g.most_for_roundness_n - centrifugal) * g.squeeze.roundness_mm_per_n[k]
    assert 2.0 * g.limits.half_band_mm[k] == pytest.approx(0.030, rel=1e-12)
    assert g.limited_by == "diameter band"
    assert at_most == pytest.approx(0.030, rel=0.05)           # pure 3 lobes: exactly; higher harmonics move it


def test_the_remedies_are_computed(ring_study):
    g = ring_study.given
    def remedy(start):
        [found] = [r for r in ring_study.remedies if r.change.startswith(start)]
        return found

    six = remedy("6 jaws").clamped
    assert six.lobes == 6 and six.holding.force_n == g.holding.force_n
    assert g.roundness_mm.max() / six.roundness_mm.max() > 10.0      # ring theory: about 19 (a thin ring)
    assert six.window_open is True
    pie = remedy("pie jaws").clamped
    assert pie.roundness_mm.max() < 0.5 * g.roundness_mm.max()
    assert remedy("a collet").clamped.roundness_mm.max() == 0.0
    assert remedy("grip on").clamped is None                     # a plain ring has no thicker stretch
    light = remedy("re-grip lighter").clamped
    assert light.holding.force_n < g.least_to_hold_n
    # the release is linear in the grip during the cut
    ratio = light.grip_in_cut_n / g.grip_in_cut_n
    assert light.roundness_mm == pytest.approx(ratio * g.roundness_mm, rel=1e-9)


def test_a_thicker_section_is_found_and_evaluated(tmp_path):
    path = tmp_path / "stepped.toml"
    path.write_text(SLEEVE)
    study = clamp_study(read_job(path))
    [thicker] = [r for r in study.remedies if r.change.startswith("grip on a thicker")]
    assert thicker.clamped is not None
    assert thicker.clamped.contact.radius_mm == pytest.approx(45.0)
    assert thicker.clamped.roundness_mm.max() < study.given.roundness_mm.max()
    assert study.given.least_to_hold_n is None                      # no passes: nothing to hold against
    assert any(note.startswith("pass:") for note in study.notes)


def test_the_profile_shows_the_jaws(ring_study):
    profile = released_profile(ring_study.given, ring_study.given.worst)
    assert list(profile.jaw_deg) == [0.0, 120.0, 240.0]
    assert profile.radial_mm.max() - profile.radial_mm.min() == pytest.approx(
        ring_study.given.roundness_mm.max(), rel=1e-3)
    assert profile.radial_mm[0] == pytest.approx(profile.radial_mm.max(), rel=1e-6)   # the bore opens under a jaw


CONVERGED = 1e-3   # relative change of the worst roundness; measured 3e-5 (mesh 0.525 -> 0.125 mm), 1.4e-5 (tail)


def test_the_released_shape_is_converged_in_mesh_and_series():
    job = read_job(RING)
    holding = holding_from_table(job.tables["holding"])
    contact = contact_of(job.section, holding)
    bore = finished_surfaces(job.section, contact, None)
    args = (job.section, job.material.E_mpa, job.material.nu, contact)
    default = GripModel(*args).squeeze(holding, bore.points_rz, bore.normals)
    finer = GripModel(*args, element_mm=0.125).squeeze(holding, bore.points_rz, bore.normals, tolerance=1e-4)
    assert finer.harmonics[-1] > default.harmonics[-1]
    assert finer.roundness_mm_per_n.max() == pytest.approx(default.roundness_mm_per_n.max(), rel=CONVERGED)
    largest = np.abs(default.mean_mm_per_n).max()     # the size change crosses zero along the bore
    assert np.abs(finer.mean_mm_per_n - default.mean_mm_per_n).max() < CONVERGED * largest


def test_jaws_expanding_in_the_bore_leave_the_od_flat_under_them(tmp_path):
    """Pushed out under the jaws while cut round, the OD comes back in there: smaller under each jaw."""
    path = tmp_path / "expanding.toml"
    path.write_text(SLEEVE.replace("jaws = 3", 'jaws = 3\ngrip = "id"'))
    given = clamp_study(read_job(path)).given
    od = np.flatnonzero(given.surfaces.surface == "od")
    profile = released_profile(given, int(od[np.argmax(given.roundness_mm[od])]))
    assert profile.radial_mm[0] == pytest.approx(profile.radial_mm.min(), rel=1e-6)
    assert given.lobes == 3


# ---------------------------------------------------------------------------------------------------
# the command

def test_clamp_json_has_the_contract_keys(tmp_path, capsys):
    code, out, err, _ = run_clamp(tmp_path, capsys, None, "--json")
    assert code == 0, err
    data = json.loads(out)
    grip = data["grip_force_N"]
    assert set(grip) >= {"given", "least_to_hold", "most_for_roundness"}
    assert grip["given"] == 2000.0 and grip["least_to_hold"] > 0 and grip["most_for_roundness"] > 0
    assert data["lobes"] == 3
    assert data["roundness_um"] and all({"surface", "z", "value"} <= set(p) for p in data["roundness_um"])
    assert all(p["surface"] in ("od", "id") and math.isfinite(p["value"]) for p in data["roundness_um"])


def test_clamp_report_and_plot(tmp_path, capsys):
    figure = tmp_path / "released.png"
    code, out, err, _ = run_clamp(tmp_path, capsys, None, "--plot", str(figure), "--plot-at", "id,8")
    assert code == 0, err
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    for words in ("least grip to hold", "most grip for roundness", "EMPTY", "Cautions", "thrown from the chuck",
                  "chuck maker's limits", "confirm them on the first part"):
        assert words in out


BAD = {
    "grip zone touching no material": ("z = [0.0, 6.0]", "z = [30.0, 40.0]", "holding.z"),
    "zero jaws": ("jaws = 3", "jaws = 0", "holding.jaws"),
    "negative jaws": ("jaws = 3", "jaws = -3", "holding.jaws"),
    "negative force": ("force = 1000.0", "force = -1000.0", "holding.force"),
    "zero force": ("force = 1000.0", "force = 0.0", "holding.force"),
    "friction 0": ("force = 1000.0", "force = 1000.0\nfriction = 0.0", "holding.friction"),
    "friction 1.5": ("force = 1000.0", "force = 1000.0\nfriction = 1.5", "holding.friction"),
    "unknown key": ("force = 1000.0", "force = 1000.0\nfroce = 3.0", "holding.froce"),
    "jaws too wide": ("width = 10.0", "width = 90.0", "holding.width"),
    "no width": ("width = 10.0\n", "", "holding.width"),
    "unknown kind": ("jaws = 3", 'jaws = 3\nkind = "vice"', "holding.kind"),
    "jaw mass without radius": ("force = 1000.0", "force = 1000.0\njaw_mass = 0.5", "holding.jaw_radius"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_holding_is_one_error_line(tmp_path, capsys, case):
    old, new, key = BAD[case]
    assert old in SLEEVE
    code, out, err, path = run_clamp(tmp_path, capsys, SLEEVE.replace(old, new, 1), "--json")
    assert code == 2, f"{case}: exit {code}, stderr {err!r}"
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {path}: {key}:"), err
    assert "Traceback" not in err


def test_bad_plot_at_is_one_error_line(tmp_path, capsys):
    code, out, err, _ = run_clamp(tmp_path, capsys, None, "--plot", str(tmp_path / "x.png"), "--plot-at", "rim,3")
    assert code == 2 and out == ""
    assert err.strip().startswith("error: ") and "--plot-at" in err and len(err.strip().splitlines()) == 1
