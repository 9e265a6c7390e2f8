"""Jaw chuck formulas: the jaws' centrifugal force, the torque a grip holds, the grip a cut needs.

Takes forces [N], speeds [1/min], masses [kg] and radii; gives forces [N] and torques. Jaw chuck practice as
quoted from VDI 3106 (2004) "Ermittlung der zulaessigen Drehzahl von Drehfuttern (Backenfutter)" in
chuck makers' operating manuals (seen second-hand, not in the guideline's own text); `deflect.machining.grip` explains how they combine into the grip window.
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


