"""Forces, power, theoretical finish and cutting time of one turning cut.

Takes a `Material` (Kienzle constants), a `Tool` (nose radius, entering and rake
angles) and the cut (depth of cut, feed, cutting speed); gives the three force
components on the tool, the cutting power, the theoretical roughness of the turned
surface and the time to follow a tool path at constant surface speed. Depth may be
a numpy array (one value per station of a pass); results then are arrays too.

Published methods:

* Chip with a nose radius: the equivalent cutting edge of L. V. Colwell, "Predicting
  the angle of chip flow for single-point cutting tools", Trans. ASME 76 (1954)
  199-204: the chord joining the two ends of the engaged edge. Its length L_eq and
  its angle to the feed direction kr_eff replace the straight edge's b and kr; the
  chip thickness on it is h_eq = ap f / L_eq (the area over the edge length, as in
  R. Woxén's equivalent chip thickness, 1932).
* Forces: O. Kienzle, VDI-Z 94 (1952) 299-305, F = k11 L_eq h_eq^(1 - m) for each
  component, with the usual correction factors of H. Tschätsch, J. Dietrich,
  *Praxis der Zerspantechnik* (11th ed. 2014) for rake, cutting speed and wear
  (recalled, to be confirmed).
* Thrust direction: the thrust (feed and passive components together) is assumed to
  act in the tool reference plane normal to Colwell's chord, so Ff = T sin kr_eff,
  Fp = T cos kr_eff. This is an assumption, used e.g. by J. A. Arsecularatne,
  R. F. Fowle, P. Mathew, P. L. B. Oxley, "Prediction of chip flow direction,
  cutting forces and surface roughness in finish turning", J. Manuf. Sci. Eng.
  120(1) (1998) 1-12. It is what makes the radial (passive) force grow when the
  depth of cut is small compared with the nose radius. The approach angle enters only
  through this chip geometry: the material record's reference approach angle is kept
  for the record, and no further approach-angle correction of the constants is made.
* Roughness of the circular cusps left by the nose (peak-to-valley and arithmetic
  mean), as in G. Boothroyd, W. A. Knight, *Fundamentals of Machining and Machine
  Tools*, but for the exact circular arc rather than its parabolic approximation.
* Cutting time: dt = ds / (f n(r)) with n = 1000 vc / (2 pi r) capped at the
  spindle limit, integrated exactly along straight pieces of the path.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.errors import ModelError
from deflect.job.materials import Material, require_cutting_constants
from deflect.job.tooling import Tool

# Cutting-speed correction for carbide, K_v = (v_ref / vc)^0.153 (Tschätsch: 2.023 /
# vc^0.153, i.e. 1 at 100 m/min; from memory, to be confirmed).
CARBIDE_SPEED_EXPONENT = 0.153
# Below this speed the power law is not used (built-up edge region; at the centre of
# a face vc tends to 0 and the law to infinity): the factor is held at its value here.
SPEED_CORRECTION_FLOOR_M_MIN = 20.0
# Rake correction, K_gamma = 1 - (gamma - gamma_ref) / 100: about 1 % less force per
# degree of rake above the reference (Tschätsch; König & Klocke; from memory).
RAKE_PERCENT_PER_DEG = 1.0


def _result(value):
    """A float for a scalar computation, the array otherwise."""
    value = np.asarray(value, dtype=float)
    return float(value) if value.ndim == 0 else value


@dataclass(frozen=True)
class ChipGeometry:
    """The chip of one cut on Colwell's equivalent edge (mm, deg).

    ``effective_approach_deg`` is kr_eff, the angle of the equivalent edge (the
    chord) to the feed direction; ``edge_length_mm`` the chord length L_eq;
    ``chip_thickness_mm`` h_eq = ap f / L_eq. All zero where there is no chip.
    """

    depth_mm: float | np.ndarray
    feed_mm: float | np.ndarray
    nose_radius_mm: float | np.ndarray
    approach_deg: float | np.ndarray
    effective_approach_deg: float | np.ndarray
    edge_length_mm: float | np.ndarray
    chip_thickness_mm: float | np.ndarray


def _check_positive(name: str, value, unit: str) -> None:
    if np.any(~np.isfinite(value)) or np.any(np.asarray(value) <= 0.0):
        raise ModelError(f"{name} must be a positive number of {unit}, got {value}")


def chip_geometry(depth_mm, feed_mm, nose_radius_mm, approach_deg) -> ChipGeometry:
    """Colwell's equivalent edge for a tool with a nose radius.

    Axes in the reference plane: x along the feed, y the depth above the lowest
    point of the nose. The chord runs from the trailing end B, where the nose arc
    meets the arc left one revolution earlier (x = -f/2, y = r - sqrt(r^2 - f^2/4)),
    to the leading end A on the uncut surface y = ap, on the nose arc or on the
    straight major edge beyond it. For large ap/r this tends to the straight edge,
    L_eq -> ap / sin kr and h_eq -> f sin kr.

    Assumptions: the trailing end lies on the nose arc (f/2 <= r sin kr', kr' the
    minor-edge angle; with a 95 deg holder and an 80 deg insert, kr' = 5 deg, this
    holds only for f <= 0.17 r; beyond it B lies a few micrometres lower and the
    model's passive share is slightly low); the chip area is taken as ap f, which
    neglects the cusps left on the surface (a relative error of about f^2 / (24 r ap)).
    When ap is below the cusp height the edge is engaged only on the nose between
    the two points at height ap: the chord is then parallel to the feed (kr_eff = 0).

    Parameters
    ----------
    depth_mm : depth of cut ap [mm], scalar or array; ap <= 0 means no chip
    feed_mm : feed f per revolution [mm], 0 < f < 2 r
    nose_radius_mm : nose radius r [mm], > 0
    approach_deg : tool cutting-edge (entering) angle kr [deg], 0 < kr < 180

    Raises
    ------
    ModelError : feed, radius or angle outside the model's range
    """
    ap = np.asarray(depth_mm, dtype=float)
    f = np.asarray(feed_mm, dtype=float)
    r = np.asarray(nose_radius_mm, dtype=float)
    kr_deg = np.asarray(approach_deg, dtype=float)
    _check_positive("feed", f, "mm/rev")
    _check_positive("nose radius", r, "mm")
    if np.any(f >= 2.0 * r):
        raise ModelError(
            f"feed {f} mm/rev is not smaller than twice the nose radius {r} mm: "
            "the nose would not cut a continuous surface"
        )
    if np.any(~np.isfinite(kr_deg)) or np.any((kr_deg <= 0.0) | (kr_deg >= 180.0)):
        raise ModelError(f"entering angle must lie between 0 and 180 deg, got {kr_deg}")
    kr = np.radians(kr_deg)

    # Trailing end B: intersection of the nose arcs of this and the previous revolution.
    y_b = r - np.sqrt(r * r - f * f / 4.0)
    x_b = -f / 2.0

    # Leading end A at height ap: on the nose arc up to the height r (1 - cos kr)
    # where the arc meets the straight major edge, on that edge beyond it.
    y_nose = r * (1.0 - np.cos(kr))

    def x_on_arc(height):  # half-width of the nose circle at a height above its lowest point
        height = np.clip(height, 0.0, 2.0 * r)  # the clip only guards the unused branch
        return np.sqrt(np.maximum(r * r - (r - height) ** 2, 0.0))

    x_edge = r * np.sin(kr) + (ap - y_nose) * np.cos(kr) / np.sin(kr)
    x_a = np.where(ap <= y_nose, x_on_arc(ap), x_edge)

    # Below the cusp height both ends of the engaged edge lie at height ap on the nose.
    above_cusp = ap > y_b
    dx = np.where(above_cusp, x_a - x_b, x_a + x_on_arc(ap))
    dy = np.where(above_cusp, ap - y_b, 0.0)
    cutting = ap > 0.0
    length = np.where(cutting, np.hypot(dx, dy), 0.0)
    angle = np.where(cutting, np.degrees(np.arctan2(dy, dx)), 0.0)
    thickness = np.where(cutting, ap * f / np.where(cutting, length, 1.0), 0.0)

    return ChipGeometry(
        depth_mm=_result(ap),
        feed_mm=_result(f),
        nose_radius_mm=_result(r),
        approach_deg=_result(kr_deg),
        effective_approach_deg=_result(angle),
        edge_length_mm=_result(length),
        chip_thickness_mm=_result(thickness),
    )


def kienzle_force(k11, m, width_mm, thickness_mm):
    """Kienzle's law F = k11 b h^(1 - m) [N] (k11 in N/mm2, b and h in mm)."""
    width = np.asarray(width_mm, dtype=float)
    thickness = np.asarray(thickness_mm, dtype=float)
    return _result(k11 * width * np.power(np.maximum(thickness, 0.0), 1.0 - m))


def rake_factor(rake_deg, ref_rake_deg):
    """K_gamma = 1 - (gamma - gamma_ref) / 100 (Tschätsch; from memory)."""
    return 1.0 - (rake_deg - ref_rake_deg) * RAKE_PERCENT_PER_DEG / 100.0


def speed_factor(speed_m_min, ref_speed_m_min):
    """K_v = (v_ref / vc)^0.153 for carbide, 1 at the reference speed (Tschätsch; from memory).

    Held constant below SPEED_CORRECTION_FLOOR_M_MIN, where the law is not meant to hold.
    """
    speed = np.maximum(np.asarray(speed_m_min, dtype=float), SPEED_CORRECTION_FLOOR_M_MIN)
    return _result((ref_speed_m_min / speed) ** CARBIDE_SPEED_EXPONENT)


@dataclass(frozen=True)
class CuttingForces:
    """Force components on the tool [N] and cutting power [kW] of one cut.

    ``cutting_n`` along the cutting speed (tangential), ``feed_n`` along the feed,
    ``passive_n`` normal to both in the reference plane (radial in longitudinal
    turning, pushing tool and wall apart).
    """

    cutting_n: float | np.ndarray
    feed_n: float | np.ndarray
    passive_n: float | np.ndarray
    power_kw: float | np.ndarray
    chip: ChipGeometry


def cutting_forces(
    material: Material,
    tool: Tool,
    depth_mm,
    feed_mm,
    speed_m_min,
    *,
    wear_factor: float = 1.0,
    force_scale: float = 1.0,
) -> CuttingForces:
    """Forces of one cut on Colwell's equivalent edge.

    F_c = K kc11 L_eq h_eq^(1 - mc); the thrust T = K sqrt(Ff_ref^2 + Fp_ref^2) with
    Ff_ref = kf11 L_eq h_eq^(1 - mf) and Fp_ref = kp11 L_eq h_eq^(1 - mp) on the same
    chip, split as F_feed = T sin kr_eff, F_passive = T cos kr_eff (the assumption of
    an equivalent edge, see the module docstring). K = K_gamma K_v wear_factor
    force_scale multiplies all three components alike (an assumption: the books give
    the factors for F_c). Power P = F_c vc / 60000.

    Parameters
    ----------
    material : a Material with Kienzle constants
    tool : the Tool (nose radius, entering angle, rake angle)
    depth_mm : depth of cut [mm], scalar or array; <= 0 gives zero forces
    feed_mm : feed [mm/rev]
    speed_m_min : cutting speed vc [m/min]
    wear_factor : 1.0 for a sharp edge; about 1.3 for a worn one (Tschätsch; from memory)
    force_scale : multiplies all three components (the +/- spread of the constants)

    Raises
    ------
    InputError : the material has no Kienzle constants (key ``material.kc11``)
    ModelError : feed, speed, factors or tool geometry outside the model's range
    """
    require_cutting_constants(material)
    _check_positive("cutting speed", speed_m_min, "m/min")
    _check_positive("wear factor", wear_factor, "(1.0 for a sharp edge)")
    _check_positive("force scale", force_scale, "(1.0 for the nominal constants)")
    chip = chip_geometry(depth_mm, feed_mm, tool.nose_radius_mm, tool.approach_deg)
    length = np.asarray(chip.edge_length_mm)
    thickness = np.asarray(chip.chip_thickness_mm)

    factor = (
        rake_factor(tool.rake_deg, material.ref_rake_deg)
        * np.asarray(speed_factor(speed_m_min, material.ref_speed_m_min))
        * wear_factor
        * force_scale
    )
    cutting = factor * kienzle_force(material.kc11, material.mc, length, thickness)
    feed_ref = kienzle_force(material.kf11, material.mf, length, thickness)
    passive_ref = kienzle_force(material.kp11, material.mp, length, thickness)
    thrust = factor * np.hypot(feed_ref, passive_ref)
    kr_eff = np.radians(np.asarray(chip.effective_approach_deg))
    power = cutting * np.asarray(speed_m_min, dtype=float) / 60000.0

    return CuttingForces(
        cutting_n=_result(cutting),
        feed_n=_result(thrust * np.sin(kr_eff)),
        passive_n=_result(thrust * np.cos(kr_eff)),
        power_kw=_result(power),
        chip=chip,
    )


def theoretical_roughness(feed_mm, nose_radius_mm):
    """Ra and Rz [um] of the circular cusps a nose of radius r leaves at feed f.

    The profile over one feed period is s(x) = r - sqrt(r^2 - x^2), |x| <= f/2.
    Rz (= Rt, one cusp) = r - sqrt(r^2 - f^2/4). Ra is the mean absolute deviation
    from the profile's mean line m, in closed form: with a = f/2, the line crosses
    the arc at x0 = sqrt(r^2 - (r - m)^2), and since the deviations above and below
    the line balance, Ra = (4/f) int_0^x0 (m - s) dx = (4/f) [(m - r) x0 + G(x0)],
    G(x) = int_0^x sqrt(r^2 - t^2) dt = (x sqrt(r^2 - x^2) + r^2 asin(x/r)) / 2.
    For f << r these tend to f^2/(8 r) and f^2/(18 sqrt(3) r) (parabolic cusp).

    Parameters
    ----------
    feed_mm : feed f [mm/rev], 0 < f < 2 r, scalar or array
    nose_radius_mm : nose radius r [mm]

    Returns
    -------
    (ra_um, rz_um)
    """
    f = np.asarray(feed_mm, dtype=float)
    r = np.asarray(nose_radius_mm, dtype=float)
    _check_positive("feed", f, "mm/rev")
    _check_positive("nose radius", r, "mm")
    if np.any(f >= 2.0 * r):
        raise ModelError(f"feed {f} mm/rev must be smaller than twice the nose radius {r} mm")
    a = f / 2.0

    def arc_integral(x):
        return (x * np.sqrt(r * r - x * x) + r * r * np.arcsin(x / r)) / 2.0

    rz = r - np.sqrt(r * r - a * a)
    mean_line = r - arc_integral(a) / a  # (1/a) int_0^a s dx
    x0 = np.sqrt(r * r - (r - mean_line) ** 2)
    ra = 4.0 / f * ((mean_line - r) * x0 + arc_integral(x0))
    return _result(1000.0 * ra), _result(1000.0 * rz)


def spindle_speed_rpm(speed_m_min, diameter_mm, max_rpm):
    """n = 1000 vc / (pi D) [1/min], never above max_rpm (also as D -> 0).

    ``max_rpm`` may be math.inf for no limit (then D = 0 gives inf).
    """
    _check_positive("cutting speed", speed_m_min, "m/min")
    if not max_rpm > 0.0:
        raise ModelError(f"spindle limit must be > 0 1/min, got {max_rpm}")
    diameter = np.asarray(diameter_mm, dtype=float)
    if np.any(diameter < 0.0):
        raise ModelError(f"diameter must not be negative, got {diameter_mm}")
    with np.errstate(divide="ignore"):
        free = 1000.0 * np.asarray(speed_m_min, dtype=float) / (math.pi * diameter)
    return _result(np.minimum(free, max_rpm))


def cutting_time_s(path_r_mm, path_z_mm, feed_mm, speed_m_min, max_rpm) -> float:
    """Time [s] to feed along a polyline of (r, z) points at constant surface speed.

    On each straight piece r is linear in the path length s, and
    dt = ds / (f n(r)). Where the spindle turns freely, n = 1000 vc / (2 pi r) and
    t = 2 pi int r ds / (1000 vc f) = 2 pi L r_mean / (1000 vc f); inside the radius
    r_c = 1000 vc / (2 pi n_max) the spindle limit holds, n = n_max and t = L / (f n_max).
    A piece that crosses r_c is split there, so the sum is exact (min -> s: x 60).

    Parameters
    ----------
    path_r_mm, path_z_mm : the path's points [mm], r >= 0, at least one point
    feed_mm : feed [mm/rev]
    speed_m_min : cutting speed [m/min]
    max_rpm : spindle limit [1/min] (math.inf for none)
    """
    r = np.asarray(path_r_mm, dtype=float).ravel()
    z = np.asarray(path_z_mm, dtype=float).ravel()
    if r.shape != z.shape or r.size == 0:
        raise ModelError("a tool path needs the same number (>= 1) of r and z values")
    if np.any(~np.isfinite(r)) or np.any(~np.isfinite(z)) or np.any(r < 0.0):
        raise ModelError("tool path radii must be finite and >= 0")
    _check_positive("feed", feed_mm, "mm/rev")
    _check_positive("cutting speed", speed_m_min, "m/min")
    if not max_rpm > 0.0:
        raise ModelError(f"spindle limit must be > 0 1/min, got {max_rpm}")

    r_clamp = 1000.0 * speed_m_min / (2.0 * math.pi * max_rpm)  # 0 when max_rpm is inf
    r0, r1 = r[:-1], r[1:]
    length = np.hypot(np.diff(r), np.diff(z))
    # Share of each piece (by length, r linear in s) lying inside r <= r_clamp.
    low, high = np.minimum(r0, r1), np.maximum(r0, r1)
    span = high - low
    with np.errstate(divide="ignore", invalid="ignore"):
        inside = np.where(
            span > 0.0,
            np.clip((r_clamp - low) / span, 0.0, 1.0),
            (low <= r_clamp).astype(float),
        )
    # Free part: r runs from max(low, r_c) to high, linearly; its mean radius.
    free_low = np.maximum(low, r_clamp)
    free_mean_r = np.where(span > 0.0, (free_low + high) / 2.0, high)
    time_free_min = (
        2.0 * math.pi * (1.0 - inside) * length * free_mean_r / (1000.0 * speed_m_min * feed_mm)
    )
    time_clamped_min = inside * length / (feed_mm * max_rpm)
    return float(60.0 * np.sum(time_free_min + time_clamped_min))


__all__ = [
    "ChipGeometry",
    "CuttingForces",
    "chip_geometry",
    "cutting_forces",
    "cutting_time_s",
    "kienzle_force",
    "rake_factor",
    "speed_factor",
    "spindle_speed_rpm",
    "theoretical_roughness",
]
