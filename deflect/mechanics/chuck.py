"""Jaw chuck formulas: the jaws' centrifugal force, the torque a grip holds, the grip a cut needs, and the
stress the grip puts in the gripped ring.

Takes forces [N], speeds [1/min], masses [kg] and radii; gives forces [N], torques and stresses [MPa]. Jaw
chuck practice as quoted from VDI 3106 (2004) "Ermittlung der zulaessigen Drehzahl von Drehfuttern
(Backenfutter)" in chuck makers' operating manuals (seen second-hand, not in the guideline's own text);
`deflect.machining.grip` explains how they combine into the grip window. The ring under N equal jaws: thin-ring
theory (bending energy, Castigliano), as in W. C. Young, R. G. Budynas, *Roark's Formulas for Stress and
Strain*, 7th ed. (2002), Table 9.2 (ring under equal radial loads), and S. P. Timoshenko, *Strength of
Materials*, part I, thin curved rings.
"""

from __future__ import annotations

import math

import numpy as np


def centrifugal_force_n(moment_kg_m: float, rpm) -> np.ndarray | float:
    """Fc = (sum m_B r_s) (pi n / 30)^2 [N]: the jaw set's centrifugal force at n [1/min]."""
    return moment_kg_m * (math.pi * np.asarray(rpm, dtype=float) / 30.0) ** 2


def torque_capacity_nm(force_n: float, friction: float, clamp_diameter_mm: float) -> float:
    """mu F_sp D / 2 [N m]: the torque a grip F_sp holds by friction on the diameter D."""
    return friction * force_n * clamp_diameter_mm / 2.0 / 1000.0


def friction_demand_n(torque_n_mm, axial_n, clamp_radius_mm: float):
    """The friction force the grip must supply [N]: the tangential (torque / R) and axial demands as a vector."""
    return np.hypot(np.asarray(torque_n_mm, dtype=float) / clamp_radius_mm, axial_n)


def least_static_grip_n(demand_n, friction: float, safety: float, centrifugal_n, grip: str):
    """F_sp0 [N] that holds the demand with the safety factor at speed (`deflect.machining.grip` docstring)."""
    needed = np.asarray(demand_n, dtype=float) / friction
    if grip == "od":
        return safety * needed + centrifugal_n
    return np.maximum(safety * needed - centrifugal_n, needed)


def grip_in_cut_n(force_n: float, centrifugal_n, grip: str):
    """The grip on the part while it turns [N]: F_sp0 - Fc on an OD (never below 0), F_sp0 + Fc in a bore."""
    if grip == "od":
        return np.maximum(force_n - np.asarray(centrifugal_n, dtype=float), 0.0)
    return force_n + np.asarray(centrifugal_n, dtype=float)




def ring_stress_under_jaws_mpa(force_n: float, jaws: int, mean_radius_mm: float, wall_mm: float,
                               length_mm: float) -> float:
    """The largest stress in a thin ring of the gripped length under `jaws` equal radial point loads [MPa].

    Under a load the bending moment is M_A = (P R / 2)(1 / a - cot a) and the hoop force N_A = P / (2 tan a),
    a = pi / N, P = F / N (Roark, Table 9.2; M_A / (P R) = 0.18879 for N = 3); the fibre stress is
    6 M_A / (b t^2) + N_A / (b t) for a ring b long and t thick. Point loads on a ring only as long as the
    contact: an upper bound of the stress of a jaw spread over its width on a wall that carries on beyond it.
    """
    alpha = math.pi / jaws
    load_n = force_n / jaws
    moment = 0.5 * load_n * mean_radius_mm * (1.0 / alpha - 1.0 / math.tan(alpha))
    hoop = load_n / (2.0 * math.tan(alpha))
    return 6.0 * moment / (length_mm * wall_mm ** 2) + hoop / (length_mm * wall_mm)


def ring_stress_all_round_mpa(force_n: float, wall_mm: float, length_mm: float) -> float:
    """Hoop stress of a ring under a uniform grip all round (a collet or mandrel) [MPa]: the pressure
    p = F / (2 pi R b) gives p R / t = F / (2 pi b t) (thin ring, Timoshenko)."""
    return force_n / (2.0 * math.pi * length_mm * wall_mm)
