"""Independent checks of regenerative stability for the tests: the delay equation integrated in time, and the
roots of its characteristic function counted by the argument principle. Nothing from deflect.mechanics.stability.

The system: modes k of the part, eta_k'' + 2 zeta_k w_k eta_k' + w_k^2 eta_k = p_k . F, displacement
x = sum_k p_k eta_k (+ R F, a static residual, for the argument principle only) in the plane (normal, along);
the cut's force on the part F = d k (-a_in . x(t) + a_out . x(t - T)), T = 60 / n the spindle's revolution.

* `grows`: fixed-step classical Runge-Kutta (4th order) from a small kick, the delayed displacement taken from the
  stored history (linear between steps, for the half steps); the step divides the revolution exactly. The
  verdict compares the largest |x| over the last revolutions with that over revolutions early on.
* `roots_in_right_half_plane`: D(s) = 1 + k (Phi_in(s) - Phi_out(s) e^(-s T)), Phi = a^T G(s) d, is analytic in
  Re s >= 0 (the modes are damped); on a large half circle it stays near 1 + k (a_in - a_out e^(-s T))^T R d,
  which keeps clear of zero, so the number of its zeros with Re s > 0 is the winding of D(i w) about zero
  as w runs up the imaginary axis, counted clockwise: Z = -(arg D(i W) - arg D(0)) / pi by the symmetry
  D(-i w) = conj D(i w) (H. Nyquist, "Regeneration theory", Bell System Technical Journal 11 (1932) 126-147).
  The samples are refined wherever the phase moves fast, so that no turn about zero is missed.
"""

from __future__ import annotations

import math

import numpy as np


def grows(natural_hz, damping, participation, coefficient, inner, outer, direction, speed_rpm: float,
          revolutions: int = 40, steps_per_period: int = 40) -> float:
    """Ratio of the largest |x| over the last 5 revolutions to that over revolutions 5-10 (> 1: chatter grows)."""
    w = [2 * math.pi * f for f in natural_hz]
    c = [2 * z * wk for z, wk in zip(damping, w)]
    p = [tuple(map(float, pk)) for pk in participation]
    modes = range(len(w))
    # the force per unit displacement now and one revolution ago, along each mode's participation
    gain_now = [[-coefficient * float(np.dot(pi, direction)) * float(np.dot(inner, pj)) for pj in p] for pi in p]
    gain_then = [[coefficient * float(np.dot(pi, direction)) * float(np.dot(outer, pj)) for pj in p] for pi in p]
    period = 60.0 / speed_rpm
    per_revolution = max(8, math.ceil(period * max(natural_hz) * steps_per_period))
    h = period / per_revolution
    total = revolutions * per_revolution
    history = np.zeros((total + 1, len(w)))   # eta at every step (the delayed term needs eta(t - T))
    eta = [0.0] * len(w)
    speed = [1e-3 * (k + 1) for k in modes]   # the kick

    def delayed(step: int, share: float):
        """eta one revolution before step + share of a step (zero before the cut began)."""
        i = step - per_revolution
        if i < 0:
            return [0.0] * len(w)
        a, b = history[i], history[min(i + 1, total)]
        return [a[k] + share * (b[k] - a[k]) for k in modes]

    def accel(x, v, old):
        return [sum(gain_now[k][j] * x[j] + gain_then[k][j] * old[j] for j in modes) - c[k] * v[k] - w[k] ** 2 * x[k]
                for k in modes]

    peak = np.zeros(revolutions)
    for step in range(total):
        history[step] = eta
        old0, old1, old2 = delayed(step, 0.0), delayed(step, 0.5), delayed(step, 1.0)
        a1 = accel(eta, speed, old0)
        x2 = [eta[k] + 0.5 * h * speed[k] for k in modes]
        v2 = [speed[k] + 0.5 * h * a1[k] for k in modes]
        a2 = accel(x2, v2, old1)
        x3 = [eta[k] + 0.5 * h * v2[k] for k in modes]
        v3 = [speed[k] + 0.5 * h * a2[k] for k in modes]
        a3 = accel(x3, v3, old1)
        x4 = [eta[k] + h * v3[k] for k in modes]
        v4 = [speed[k] + h * a3[k] for k in modes]
        a4 = accel(x4, v4, old2)
        eta = [eta[k] + h / 6 * (speed[k] + 2 * v2[k] + 2 * v3[k] + v4[k]) for k in modes]
        speed = [speed[k] + h / 6 * (a1[k] + 2 * a2[k] + 2 * a3[k] + a4[k]) for k in modes]
        x = np.sum([np.multiply(p[k], eta[k]) for k in modes], axis=0)
        revolution = step // per_revolution
        peak[revolution] = max(peak[revolution], float(np.hypot(*x)))
    return float(peak[-5:].max() / peak[5:10].max())


def receptance(frequency_hz, natural_hz, damping, participation, residual=None) -> np.ndarray:
    """(F, 2, 2) G(i w) of the modal model."""
    w = 2 * math.pi * np.asarray(frequency_hz, float)[:, None]
    wn = 2 * math.pi * np.asarray(natural_hz, float)[None, :]
    z = np.asarray(damping, float)[None, :]
    p = np.asarray(participation, float)
    g = np.einsum("fk,ki,kj->fij", 1.0 / (wn**2 - w**2 + 2j * z * wn * w), p, p)
    return g if residual is None else g + np.asarray(residual)[None]


def roots_in_right_half_plane(receptance_of, top_hz: float, coefficient, inner, outer, direction, speed_rpm,
                              step_hz: float = 1.0) -> int:
    """Zeros of D(s) with Re s > 0 by the argument principle, D(i w) sampled from 0 to top_hz (where it has
    settled) every step_hz, and more finely wherever its phase moves by more than a twentieth of a turn between
    samples (near a root close to the axis it turns fast). receptance_of(f) gives the (F, 2, 2) response."""
    period = 60.0 / speed_rpm
    direction, inner, outer = (np.asarray(v, float) for v in (direction, inner, outer))

    def d_of(f):
        response_d = receptance_of(f) @ direction
        return 1.0 + coefficient * (response_d @ inner - response_d @ outer * np.exp(-2j * math.pi * f * period))

    f = np.arange(0.0, top_hz, step_hz)
    d = d_of(f)
    for _ in range(12):
        turn = np.abs(np.angle(d[1:] / d[:-1]))
        coarse = np.flatnonzero(turn > 0.1 * math.pi)
        if not len(coarse):
            break
        extra = (f[coarse, None] + (f[coarse + 1] - f[coarse])[:, None] * np.linspace(0, 1, 9)[None, 1:-1]).ravel()
        f = np.concatenate([f, extra])
        d = np.concatenate([d, d_of(extra)])
        order = np.argsort(f)
        f, d = f[order], d[order]
    else:
        raise ValueError("D(i w) turns too fast to follow: a root lies on the axis")
    phase = np.unwrap(np.angle(d))
    return int(round(-(phase[-1] - phase[0]) / math.pi))
