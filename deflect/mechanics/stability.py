"""Regenerative chatter of a turning cut: the limit of stability and the lobes against spindle speed.

Takes the frequency response of the wall and the tool at the cut (2 x 2 in the meridian plane: normal into the
material, along the boundary) and the cut (material, tool, depth, feed, cutting speed); gives for the cut the
limiting dynamic cutting coefficient at every spindle speed, whether the cut is stable, the spindle-speed
windows where it is, and the largest stable depth at a speed.

Regeneration (S. A. Tobias, Machine Tool Vibration, Blackie 1965; J. Tlusty, M. Polacek, "The stability of
machine tools against self-excited vibrations in machining", Int. Research in Production Engineering, ASME
1963): the chip a tool takes is bounded by the surface its edge cuts now and by the surface it left one
revolution earlier, so a vibration of tool against part modulates the chip twice, now and with the delay T of
one revolution. Tlusty's limit for a cut whose chip thickness and force act along one direction, with the
oriented transfer function G_d there and the cutting coefficient K_f, is b_lim = -1 / (2 K_f Re G_d) at the
chatter frequency, and the lobes put that frequency at the spindle speed n = 60 f_c / (j + eps / (2 pi)),
eps = 3 pi + 2 atan2(Im G_d, Re G_d), j = 0, 1, 2, ... (Y. Altintas, Manufacturing Automation, 2nd ed.,
Cambridge University Press 2012, ch. 3).

Nose-radius chip, in several directions (after E. Budak, E. Ozlu, "Analytical modeling of chatter stability
in turning and boring operations: a multi-dimensional approach", CIRP Annals 56(1) (2007) 401-404, who take
the dynamic chip of a nose-radius insert in both the radial and the feed direction). Here the chip is that of
the force model, Colwell's equivalent edge (`cutting.chip_geometry`): in the tool's reference plane (x along
the feed, y the depth) the edge engaged runs from B, where the nose meets the arc it left a revolution ago,
to A on the uncut surface. To first order, a shift dv of the edge changes the chip area by the integral of
dv . n ds along the edge, which is dv . (the chord B -> A turned a quarter turn): the chord's length L times
its normal, whatever the curve between (the derivation here). The surface of the revolution before is the
same edge shifted back by the feed f, bounding the chip from B to A' = A - f x, so
    dA(t) = a_in . dv(t) - a_out . dv(t - T),
    a_in = (x_A - x_B, y_A - y_B) -> (normal, feed) components (dx, dy), a_out = (dx - f, dy),
the inner and the outer modulation differing by the feed in the depth direction (an overlap below one in
that direction). The thrust T (feed and passive forces together) acts normal to the chord (Colwell; as in
`cutting.cutting_forces`), d = a_in / |a_in|, and follows the chip area with the tangent coefficient
k = dT/dA of Kienzle's law at the cut's chip. With the relative response G (wall plus tool) the
characteristic equation is
    1 + k (Phi_in - Phi_out e^(-i w T)) = 0,   Phi_in = a_in^T G d,  Phi_out = a_out^T G d.
On the limit |e^(-i w T)| = 1: |1 + k Phi_in| = k |Phi_out|, a quadratic in k,
    (|Phi_in|^2 - |Phi_out|^2) k^2 + 2 Re(Phi_in) k + 1 = 0,
whose positive roots are the limiting coefficients at the chatter frequency, and the phase of
(1 + k Phi_in) / (k Phi_out) = e^(-i w T) gives the revolution's delay T = (j + p) / f_c, p in [0, 1).
With a_in = a_out this is Tlusty's limit and lobes exactly (the tests check it), and the cut is stable at a
spindle speed when its coefficient lies below the least limit of all the lobes that reach that speed.
The cutting (tangential) force does not change the chip thickness to first order and, on a part of
revolution and a round bar, moves nothing in the meridian plane at its own point: it is left out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.mechanics.cutting import chip_geometry, cutting_forces

SPEED_CHUNK = 256                # spindle speeds evaluated together (memory: chunk x frequencies)
POINTS_PER_BANDWIDTH = 10.0      # frequency steps per damping ratio (a mode's half-power band is 2 zeta wide)


@dataclass(frozen=True, eq=False)
class LobeBranch:
    """Points (chatter frequency, limiting coefficient, delay phase) where the cut sits on its limit: one root
    family of the characteristic equation along a frequency grid (NaN where the family has no root)."""

    frequency_hz: np.ndarray     # (F,)
    coefficient: np.ndarray      # (F,) limiting k = dT/dA [N/mm2]; NaN where none
    phase_turns: np.ndarray      # (F,) p: the revolution lasts j + p chatter periods; unwrapped along each run


@dataclass(frozen=True)
class ChipModulation:
    """How a vibration changes the chip of a cut and how the thrust answers (the module docstring).

    Components are (normal into the material, along the feed) [mm].
    """

    coefficient_n_per_mm2: float  # k = dT/dA, the thrust's tangent coefficient at the cut's chip
    inner_mm: np.ndarray          # a_in: the chord B -> A turned, length L (edge engaged, as a chord)
    outer_mm: np.ndarray          # a_out: the same for the surface of the revolution before
    thrust_direction: np.ndarray  # d = a_in / |a_in|, the thrust on the part (unit)


def tlusty_limit(real_part) -> np.ndarray:
    """b K_f at the limit, -1 / (2 Re G), where Re G < 0 (inf elsewhere) [N/mm for G in mm/N]."""
    real_part = np.asarray(real_part, float)
    with np.errstate(divide="ignore"):
        return np.where(real_part < 0.0, -0.5 / real_part, np.inf)


def lobe_speed_rpm(frequency_hz, phase_turns, lobe: int):
    """n = 60 f_c / (j + p): the spindle speed at which lobe j has its chatter frequency f_c [1/min]."""
    return 60.0 * np.asarray(frequency_hz, float) / (lobe + np.asarray(phase_turns, float))


def lobe_branches(frequency_hz: np.ndarray, phi_in: np.ndarray, phi_out: np.ndarray) -> list[LobeBranch]:
    """The root families of (|Phi_in|^2 - |Phi_out|^2) k^2 + 2 Re(Phi_in) k + 1 = 0 with k > 0 (module
    docstring). The roots are written 2 / (-b -+ sqrt(b^2 - 4 a)), which stays exact as a -> 0 (equal inner
    and outer modulation: k = -1 / (2 Re Phi), Tlusty)."""
    frequency_hz = np.asarray(frequency_hz, float)
    phi_in, phi_out = np.asarray(phi_in, complex), np.asarray(phi_out, complex)
    a = np.abs(phi_in) ** 2 - np.abs(phi_out) ** 2
    b = 2.0 * phi_in.real
    disc = b * b - 4.0 * a
    root = np.sqrt(np.maximum(disc, 0.0))
    branches = []
    for sign in (1.0, -1.0):
        with np.errstate(divide="ignore", invalid="ignore"):
            k = 2.0 / (-b - sign * root)
        valid = (disc >= 0.0) & np.isfinite(k) & (k > 0.0)
        k = np.where(valid, k, np.nan)
        with np.errstate(divide="ignore", invalid="ignore"):
            delay = (1.0 + k * phi_in) / (k * phi_out)    # e^(-i w T)
        turns = np.mod(-np.angle(delay), 2.0 * math.pi) / (2.0 * math.pi)
        branches.append(LobeBranch(frequency_hz, k, _unwrapped_runs(turns, valid)))
    return [branch for branch in branches if np.isfinite(branch.coefficient).any()]


def _unwrapped_runs(turns: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """The phase in turns made continuous along each run of valid points (NaN elsewhere)."""
    out = np.full(turns.shape, np.nan)
    for first, last in _runs(valid):
        out[first:last + 1] = np.unwrap(turns[first:last + 1], period=1.0)
    return out


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """(first, last) indices of the runs of True."""
    edges = np.diff(np.concatenate([[0], mask.astype(int), [0]]))
    return list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1))


def limit_at_speeds(branches: list[LobeBranch], speeds_rpm, cap: float = math.inf) -> tuple[np.ndarray, np.ndarray]:
    """The limiting coefficient k [N/mm2] at each spindle speed, the least over every lobe that has its chatter
    frequency there (inf where none), and that chatter frequency [Hz] (NaN where none).

    At speed n the delay is T = 60 / n, so a branch point sits on lobe j where 60 f / n - p = j; between grid
    points f, p and k are taken as linear, and of the lobes crossed in one step the least k is at the first
    or the last. cap: only limits up to this are looked for (steps whose k lies above it at both ends are
    skipped; inf is returned where none is below), which saves time when only the verdict matters."""
    speeds = np.atleast_1d(np.asarray(speeds_rpm, float))
    best = np.full(speeds.shape, np.inf)
    where = np.full(speeds.shape, np.nan)
    for branch in branches:
        low_enough = np.fmin(branch.coefficient[:-1], branch.coefficient[1:]) <= cap
        steps = np.flatnonzero(low_enough)
        if not len(steps):
            continue
        ends = np.unique(np.concatenate([steps, steps + 1]))
        f, p, k = branch.frequency_hz[ends], branch.phase_turns[ends], branch.coefficient[ends]
        # where kept points are not neighbours on the grid, a NaN between them breaks the step
        gap = np.flatnonzero(np.diff(ends) != 1)
        f, p, k = (np.insert(a, gap + 1, np.nan) for a in (f, p, k))
        for start in range(0, len(speeds), SPEED_CHUNK):
            chunk = slice(start, start + SPEED_CHUNK)
            q = 60.0 * f[None, :] / speeds[chunk, None] - p[None, :]   # (S, F): lobe number and fraction
            q0, q1 = q[:, :-1], q[:, 1:]
            k0, k1 = k[None, :-1], k[None, 1:]
            usable = np.isfinite(q0) & np.isfinite(q1)
            first = np.maximum(np.ceil(np.fmin(q0, q1)), 0.0)
            last = np.floor(np.fmax(q0, q1))
            crossed = usable & (first <= last)
            step = np.where(crossed & (q1 != q0), q1 - q0, 1.0)
            share_first = np.clip((first - q0) / step, 0.0, 1.0)
            share_last = np.clip((last - q0) / step, 0.0, 1.0)
            at_first = k0 + (k1 - k0) * share_first
            at_last = k0 + (k1 - k0) * share_last
            value = np.where(crossed, np.fmin(at_first, at_last), np.inf)
            share = np.where(at_first <= at_last, share_first, share_last)
            column = np.argmin(value, axis=1)
            rows = np.arange(len(column))
            lowest = value[rows, column]
            frequency = f[column] + (f[column + 1] - f[column]) * share[rows, column]
            better = lowest < best[chunk]
            best[chunk] = np.where(better, lowest, best[chunk])
            where[chunk] = np.where(better, frequency, where[chunk])
    return best, where


def unstable_speeds(branches: list[LobeBranch], coefficient: float, low_rpm: float, high_rpm: float
                    ) -> list[tuple[float, float]]:
    """Spindle-speed intervals in [low_rpm, high_rpm] where a cut of coefficient k [N/mm2] is unstable, merged.

    On each run of chatter frequencies where the limit lies below k, lobe j covers the speeds 60 f / (j + p)
    of the run, an interval since the run is connected; the run's ends are put where the limit crosses k."""
    intervals = []
    for branch in branches:
        f, p, k = branch.frequency_hz, branch.phase_turns, branch.coefficient
        below = np.isfinite(k) & (k < coefficient)
        for first, last in _runs(below):
            fr, pr = _run_with_ends(f, p, k, first, last, coefficient)
            lobes = np.arange(max(0, math.floor(np.min(60.0 * fr / high_rpm - pr))),
                              math.ceil(np.max(60.0 * fr / low_rpm - pr)) + 1)
            denominator = lobes[:, None] + pr[None, :]
            keep = np.all(denominator > 0.0, axis=1)
            speeds = 60.0 * fr[None, :] / denominator[keep]
            for lo, hi in zip(speeds.min(axis=1), speeds.max(axis=1)):
                if hi >= low_rpm and lo <= high_rpm:
                    intervals.append((max(lo, low_rpm), min(hi, high_rpm)))
    return merged(intervals)


def _run_with_ends(f, p, k, first, last, coefficient):
    """The run's frequencies and phases with its ends moved to where k crosses the coefficient (linear)."""
    fr, pr = list(f[first:last + 1]), list(p[first:last + 1])
    for end, outside, sign in ((first, first - 1, 0), (last, last + 1, 1)):
        if 0 <= outside < len(f) and np.isfinite(k[outside]):
            share = (coefficient - k[end]) / (k[outside] - k[end])
            point_f = f[end] + share * (f[outside] - f[end])
            point_p = p[end] + share * (_near(p[outside], p[end]) - p[end])
            if sign == 0:
                fr.insert(0, point_f)
                pr.insert(0, point_p)
            else:
                fr.append(point_f)
                pr.append(point_p)
    return np.array(fr), np.array(pr)


def _near(value: float, reference: float) -> float:
    """value shifted by whole turns to lie within half a turn of reference."""
    return value - round(value - reference)


def merged(intervals: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """Overlapping or touching intervals joined, in order."""
    out: list[list[float]] = []
    for lo, hi in sorted(intervals):
        if out and lo <= out[-1][1]:
            out[-1][1] = max(out[-1][1], hi)
        else:
            out.append([lo, hi])
    return [(lo, hi) for lo, hi in out]


def complement(intervals: list[tuple[float, float]], low: float, high: float) -> list[tuple[float, float]]:
    """The parts of [low, high] outside the (merged) intervals."""
    out, start = [], low
    for lo, hi in merged(intervals):
        if lo > start:
            out.append((start, min(lo, high)))
        start = max(start, hi)
    if start < high:
        out.append((start, high))
    return [(lo, hi) for lo, hi in out if hi > lo]


def frequency_grid(natural_hz, damping, points_per_bandwidth: float = POINTS_PER_BANDWIDTH) -> np.ndarray:
    """Chatter frequencies to evaluate [Hz]: geometric steps of zeta_min / points_per_bandwidth (a mode's
    half-power band is 2 zeta wide), from half the lowest natural frequency to 1.5 times the highest."""
    natural_hz = np.asarray(natural_hz, float)
    zeta = max(float(np.min(damping)), 1e-4)
    low, high = 0.5 * natural_hz.min(), 1.5 * natural_hz.max()
    count = int(math.ceil(math.log(high / low) / math.log1p(zeta / points_per_bandwidth))) + 1
    return np.geomspace(low, high, count)


def chip_modulation(material, tool, depth_mm: float, feed_mm: float, speed_m_min: float) -> ChipModulation:
    """The inner and outer modulation vectors and the thrust's tangent coefficient of a cut (module docstring).

    k = dT/dA with T = K L sqrt((kf11 h^(1-mf))^2 + (kp11 h^(1-mp))^2) at the fixed chord length L and
    h = A / L: dT/dh = (T / h) [kf^2 (1 - mf) h^(2 - 2 mf) + kp^2 (1 - mp) h^(2 - 2 mp)] / [kf^2 h^(2 - 2 mf)
    + kp^2 h^(2 - 2 mp)], the tangent of Kienzle's law at the cut's chip (its slope, not the secant T / A:
    the dynamic force is the change of the force with the chip, 1 - m of the secant for one component).
    """
    chip = chip_geometry(depth_mm, feed_mm, tool.nose_radius_mm, tool.approach_deg)
    forces = cutting_forces(material, tool, depth_mm, feed_mm, speed_m_min)
    length, angle = float(chip.edge_length_mm), math.radians(float(chip.effective_approach_deg))
    h = float(chip.chip_thickness_mm)
    dx, dy = length * math.cos(angle), length * math.sin(angle)   # chord along the feed, along the depth
    inner = np.array([dx, dy])   # (normal: the chord's extent along the feed, feed: its extent in depth)
    outer = np.array([dx - feed_mm, dy])
    thrust = math.hypot(float(forces.feed_n), float(forces.passive_n))
    f_part = material.kf11 ** 2 * h ** (2.0 - 2.0 * material.mf)
    p_part = material.kp11 ** 2 * h ** (2.0 - 2.0 * material.mp)
    slope = (f_part * (1.0 - material.mf) + p_part * (1.0 - material.mp)) / (f_part + p_part)
    coefficient = thrust / (h * length) * slope if h > 0.0 and length > 0.0 else 0.0
    return ChipModulation(coefficient_n_per_mm2=coefficient, inner_mm=inner, outer_mm=outer,
                          thrust_direction=inner / max(length, 1e-300))


def oriented(response: np.ndarray, modulation: ChipModulation, feed_sign: float) -> tuple[np.ndarray, np.ndarray]:
    """(Phi_in, Phi_out) [mm2/N] from the relative response (F, 2, 2) in (normal, along the boundary); the feed
    runs along the boundary's counter-clockwise tangent when feed_sign = +1, against it when -1."""
    to_boundary = np.array([1.0, feed_sign])
    d = modulation.thrust_direction * to_boundary
    response_d = response @ d
    return response_d @ (modulation.inner_mm * to_boundary), response_d @ (modulation.outer_mm * to_boundary)
