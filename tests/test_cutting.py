"""Unit tests of the cutting-force, finish and cutting-time functions."""

import math

import numpy as np
import pytest

from deflect.errors import InputError, ModelError
from deflect.job.materials import load_library, material_from_job
from deflect.job.tooling import Tool
from deflect.mechanics.cutting import (
    SPEED_CORRECTION_FLOOR_M_MIN,
    chip_geometry,
    cutting_forces,
    cutting_time_s,
    kienzle_force,
    rake_factor,
    speed_factor,
    spindle_speed_rpm,
    theoretical_roughness,
)

ROUND_OFF = 1e-12   # identical arithmetic in another order

STEEL = load_library()["steel-c45"]
TOOL = Tool(name="T1", nose_radius_mm=0.8, approach_deg=95.0, rake_deg=STEEL.ref_rake_deg)
REF_SPEED = STEEL.ref_speed_m_min


def test_vectorised_call_equals_scalar_calls():
    depths = np.array([-0.1, 0.0, 0.0005, 0.01, 0.1, 0.5, 0.87, 1.5, 3.0])
    many = cutting_forces(STEEL, TOOL, depths, 0.15, 180.0)
    assert isinstance(many.cutting_n, np.ndarray) and many.cutting_n.shape == depths.shape
    for i, depth in enumerate(depths):
        one = cutting_forces(STEEL, TOOL, float(depth), 0.15, 180.0)
        assert isinstance(one.cutting_n, float)
        for name in ("cutting_n", "feed_n", "passive_n", "power_kw"):
            assert getattr(many, name)[i] == pytest.approx(getattr(one, name), rel=ROUND_OFF, abs=0.0)
        angle = one.chip.effective_approach_deg
        assert many.chip.effective_approach_deg[i] == pytest.approx(angle, rel=ROUND_OFF)


def test_no_chip_no_force():
    forces = cutting_forces(STEEL, TOOL, np.array([-1.0, 0.0]), 0.1, REF_SPEED)
    for values in (forces.cutting_n, forces.feed_n, forces.passive_n, forces.power_kw,
                   forces.chip.edge_length_mm, forces.chip.chip_thickness_mm):
        assert np.all(values == 0.0)


def test_forces_grow_steadily_with_depth():
    # The later force-deflection solver relies on F(depth) being continuous and increasing.
    depths = np.linspace(0.0, 2.0, 4001)
    forces = cutting_forces(STEEL, TOOL, depths, 0.1, REF_SPEED)
    assert np.all(np.diff(forces.cutting_n) > 0.0)
    thrust = np.hypot(forces.feed_n, forces.passive_n)
    assert np.all(np.diff(thrust) > 0.0)
    assert np.max(np.abs(np.diff(forces.passive_n))) < 0.01 * np.max(forces.passive_n)


def test_chip_geometry_is_continuous_at_the_cusp_height():
    f, r = 0.1, 0.8
    cusp = r - math.sqrt(r * r - f * f / 4)
    below, above = chip_geometry(np.array([cusp * (1 - 1e-9), cusp * (1 + 1e-9)]), f, r, 95.0).edge_length_mm
    assert below == pytest.approx(f, rel=1e-6) and above == pytest.approx(f, rel=1e-6)


def test_chip_area_is_depth_times_feed():
    chip = chip_geometry(np.array([0.05, 0.3, 2.0]), 0.12, 0.4, 93.0)
    assert np.allclose(chip.edge_length_mm * chip.chip_thickness_mm, np.array([0.05, 0.3, 2.0]) * 0.12,
                       rtol=ROUND_OFF)


def test_power_is_cutting_force_times_speed():
    forces = cutting_forces(STEEL, TOOL, 1.0, 0.2, 150.0)
    assert forces.power_kw == pytest.approx(forces.cutting_n * 150.0 / 60000.0, rel=ROUND_OFF)


def test_wear_and_force_scale_multiply_all_components():
    base = cutting_forces(STEEL, TOOL, 0.5, 0.1, REF_SPEED)
    worn = cutting_forces(STEEL, TOOL, 0.5, 0.1, REF_SPEED, wear_factor=1.3, force_scale=0.85)
    for name in ("cutting_n", "feed_n", "passive_n"):
        assert getattr(worn, name) == pytest.approx(1.3 * 0.85 * getattr(base, name), rel=ROUND_OFF)


def test_rake_correction_one_percent_per_degree():
    assert rake_factor(6.0, 6.0) == 1.0
    assert rake_factor(16.0, 6.0) == pytest.approx(0.90)
    sharp = Tool(name="T", nose_radius_mm=0.8, approach_deg=95.0, rake_deg=STEEL.ref_rake_deg + 10.0)
    sharper = cutting_forces(STEEL, sharp, 1.0, 0.2, REF_SPEED).cutting_n
    reference = cutting_forces(STEEL, TOOL, 1.0, 0.2, REF_SPEED).cutting_n
    assert sharper / reference == pytest.approx(0.90, rel=ROUND_OFF)


def test_speed_correction_normalised_at_the_reference_speed():
    # Tschaetsch's speed factor (from memory): 2.023 / vc^0.153 is 1 at 100 m/min, 0.90 at 200 and 0.85 at 300 m/min.
    assert speed_factor(100.0, 100.0) == 1.0
    assert speed_factor(200.0, 100.0) == pytest.approx(0.90, abs=0.005)
    assert speed_factor(300.0, 100.0) == pytest.approx(0.85, abs=0.005)
    assert speed_factor(200.0, 100.0) == pytest.approx(2.023 / 200.0**0.153, rel=1e-3)
    # held constant below the floor, so a face cut to the centre stays finite
    floor = speed_factor(SPEED_CORRECTION_FLOOR_M_MIN, 100.0)
    assert speed_factor(1e-6, 100.0) == floor


def test_kienzle_force_of_unit_chip_is_k11():
    assert kienzle_force(1659.0, 0.21, 1.0, 1.0) == 1659.0
    assert kienzle_force(1659.0, 0.21, 2.0, 0.0) == 0.0


def test_material_without_constants_is_refused():
    elastic = material_from_job({"E": 70000.0, "nu": 0.33, "density": 2.7})
    with pytest.raises(InputError) as error:
        cutting_forces(elastic, TOOL, 1.0, 0.1, 200.0)
    assert error.value.key == "material.kc11"


@pytest.mark.parametrize(
    "kwargs, pattern",
    [
        (dict(feed_mm=1.6), "twice the nose radius"),
        (dict(feed_mm=0.0), "feed"),
        (dict(speed_m_min=0.0), "cutting speed"),
        (dict(wear_factor=0.0), "wear factor"),
        (dict(force_scale=-1.0), "force scale"),
    ],
)
def test_out_of_range_cut_raises_model_error(kwargs, pattern):
    args = dict(depth_mm=1.0, feed_mm=0.2, speed_m_min=200.0)
    args.update({k: v for k, v in kwargs.items() if k in args})
    extra = {k: v for k, v in kwargs.items() if k not in args}
    with pytest.raises(ModelError, match=pattern):
        cutting_forces(STEEL, TOOL, **args, **extra)


def test_bad_chip_geometry_arguments():
    with pytest.raises(ModelError, match="nose radius"):
        chip_geometry(1.0, 0.1, 0.0, 95.0)
    with pytest.raises(ModelError, match="entering angle"):
        chip_geometry(1.0, 0.1, 0.8, 180.0)


def test_roughness_is_vectorised_and_checks_its_range():
    ra, rz = theoretical_roughness(np.array([0.1, 0.2]), 0.8)
    assert ra.shape == (2,) and rz[1] > rz[0]
    with pytest.raises(ModelError):
        theoretical_roughness(1.6, 0.8)


def test_spindle_speed_cap_and_centre():
    assert spindle_speed_rpm(200.0, 60.0, 6000.0) == pytest.approx(200000.0 / (math.pi * 60.0))
    assert spindle_speed_rpm(200.0, 5.0, 6000.0) == 6000.0
    assert spindle_speed_rpm(200.0, 0.0, 6000.0) == 6000.0
    assert spindle_speed_rpm(200.0, 0.0, math.inf) == math.inf
    assert np.allclose(spindle_speed_rpm(200.0, np.array([0.0, 80.0]), 4000.0), [4000.0, 795.7747])
    with pytest.raises(ModelError):
        spindle_speed_rpm(200.0, -1.0, 6000.0)


def test_cutting_time_does_not_depend_on_how_the_path_is_split():
    r = np.array([40.0, 25.0, 3.0, 0.0])
    z = np.array([0.0, -1.0, -1.0, -2.0])
    coarse = cutting_time_s(r, z, 0.1, 200.0, 4000.0)

    def refined(values):
        pieces = [np.linspace(a, b, 500, endpoint=False) for a, b in zip(values[:-1], values[1:])]
        return np.concatenate(pieces + [values[-1:]])

    fine_r, fine_z = refined(r), refined(z)
    assert cutting_time_s(fine_r, fine_z, 0.1, 200.0, 4000.0) == pytest.approx(coarse, rel=1e-12)
    assert cutting_time_s(r[::-1], z[::-1], 0.1, 200.0, 4000.0) == pytest.approx(coarse, rel=1e-12)


def test_cutting_time_against_a_dense_quadrature():
    # Independent check: sum ds / (f n(r)) at the midpoints of 200000 small steps.
    r0, r1, dz, f, vc, nmax = 30.0, 2.0, 12.0, 0.08, 180.0, 5000.0
    s = (np.arange(200000) + 0.5) / 200000
    radius = r0 + (r1 - r0) * s
    ds = math.hypot(r1 - r0, dz) / 200000
    n = np.minimum(1000.0 * vc / (2 * math.pi * radius), nmax)
    expected = 60.0 * np.sum(ds / (f * n))
    assert cutting_time_s([r0, r1], [0.0, dz], f, vc, nmax) == pytest.approx(expected, rel=1e-8)


def test_single_point_path_takes_no_time_and_bad_paths_raise():
    assert cutting_time_s([10.0], [0.0], 0.1, 200.0, 3000.0) == 0.0
    with pytest.raises(ModelError):
        cutting_time_s([10.0, 5.0], [0.0], 0.1, 200.0, 3000.0)
    with pytest.raises(ModelError):
        cutting_time_s([10.0, -5.0], [0.0, 0.0], 0.1, 200.0, 3000.0)
    with pytest.raises(ModelError):
        cutting_time_s([10.0, 5.0], [0.0, 0.0], 0.0, 200.0, 3000.0)
