"""Jaw chuck grip: the jaws' centrifugal force and the torque held by friction.

Reference: VDI 3106 (2004), "Ermittlung der zulässigen Drehzahl von Drehfuttern (Backenfutter)", as quoted in
work-holding operating manuals ([S]: seen second-hand): Fc = (sum m_B r_s)(pi n/30)^2;
F_sp = F_sp0 - Fc gripping from outside (+ Fc from inside); the torque held, mu_sp F_sp D/2. The check numbers
are worked out by hand from those formulas ([D]): 3 jaws x 0.5 kg at r_s = 60 mm: 987 N at 1000/min, 3948 N at 2000/min, 8883 N at
3000/min, 15 791 N at 4000/min; F_sp = 10 kN, mu_sp = 0.1, clamping diameter 50 mm: 25 N m.
"""

import math

import pytest

from deflect.job.holding import holding_from_table
from deflect.mechanics.chuck import (
    centrifugal_force_n,
    friction_demand_n,
    grip_in_cut_n,
    least_static_grip_n,
    torque_capacity_nm,
)

ROUNDED = 0.5          # the hand-worked numbers are whole newtons


@pytest.mark.parametrize("rpm, book_n", [(1000, 987), (2000, 3948), (3000, 8883), (4000, 15791)])
def test_centrifugal_force_of_the_jaws(rpm, book_n):
    holding = holding_from_table({"jaws": 3, "z": [0, 8], "width": 10, "force": 1000, "jaw_mass": 0.5,
                                  "jaw_radius": 60.0})
    assert holding.centrifugal_moment_kg_m == pytest.approx(3 * 0.5 * 0.060)
    ours = centrifugal_force_n(holding.centrifugal_moment_kg_m, rpm)
    print(f"{rpm} /min: book {book_n} N, formula {3 * 0.5 * 0.06 * (math.pi * rpm / 30) ** 2:.1f} N, ours {ours:.1f} N")
    assert ours == pytest.approx(book_n, abs=ROUNDED)


def test_torque_held_by_friction():
    assert torque_capacity_nm(10000.0, 0.1, 50.0) == pytest.approx(25.0, rel=1e-12)


def test_the_grip_at_speed_is_lost_on_an_od_and_gained_in_a_bore():
    assert grip_in_cut_n(5000.0, 987.0, "od") == pytest.approx(4013.0)
    assert grip_in_cut_n(5000.0, 987.0, "id") == pytest.approx(5987.0)
    assert grip_in_cut_n(500.0, 987.0, "od") == 0.0       # the jaws lift off


def test_least_grip_holds_the_torque_back_to_the_book():
    """The least grip for 25 N m at mu 0.1 on 50 mm is 10 kN (the book's pair read backwards), times S_z, plus
    the centrifugal loss on an OD; in a bore the gain is counted for the margin only (never below S_z = 1)."""
    demand = friction_demand_n(25000.0, 0.0, 25.0)            # N mm, N, mm
    assert demand == pytest.approx(1000.0)
    assert least_static_grip_n(demand, 0.1, 1.0, 0.0, "od") == pytest.approx(10000.0)
    assert least_static_grip_n(demand, 0.1, 1.5, 987.0, "od") == pytest.approx(15987.0)
    assert least_static_grip_n(demand, 0.1, 1.5, 987.0, "id") == pytest.approx(14013.0)
    assert least_static_grip_n(demand, 0.1, 1.5, 9000.0, "id") == pytest.approx(10000.0)


def test_torque_and_axial_demand_add_as_a_vector():
    """Coulomb friction bounds the friction force of a contact by mu N in any direction of its plane."""
    assert friction_demand_n(3000.0 * 25.0, 4000.0, 25.0) == pytest.approx(5000.0)
