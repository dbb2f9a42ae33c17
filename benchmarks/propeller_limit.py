"""An independent, minimal closed-form transit of a propeller vehicle: "the limit".

Written for the benchmarks from the equations alone (MODEL.md s5, s6), sharing no code with
``physics.mission``. Within a leg the vehicle holds its speed through water U, so the ground
speed g = sqrt(U^2 - c_x^2) + c_a and the clean drag are constant and the leg is flown in
closed form: with the fouling clock running at k per unit time on the leg, phi(c) = 1 -
exp(-(c - c_on)/tau) past the onset, the energy drawn after time s in the leg is

    E(s) = (D U / eta + P_h) s + (D U delta_D / eta) (1/k) int_{c0}^{c0 + k s} phi(c) dc,

and the energy that may be drawn before the reserve is A(t) = A0 (1 - f t) (linear fade).
The range is where A(t) = E(t): located leg by leg on the boundary values, then by Newton
started at the leg's end (A - E is concave and decreasing in time, so Newton from the right
converges monotonically). Past the route end the last leg's conditions hold, up to 1.5 route
lengths. Vectorized over samples, one loop over legs.
"""
from __future__ import annotations

import numpy as np


def _phi_integral(c0, c1, onset, tau):
    """int_{c0}^{c1} (1 - exp(-(c - onset)/tau))^+ dc for c1 >= c0 (tau may be inf)."""
    a = np.maximum(c0, onset)
    b = np.maximum(c1, onset)
    d = b - a
    with np.errstate(over="ignore", invalid="ignore"):
        out = d + tau * np.exp(-(a - onset) / tau) * np.expm1(-d / tau)
    return np.where(np.isinf(tau), 0.0, np.where(d > 0, out, 0.0))


def _phi(c, onset, tau):
    with np.errstate(invalid="ignore"):
        return np.where(c > onset, -np.expm1(-(c - onset) / tau), 0.0)


def propeller_transit(clean_drag, speed, efficiency, hotel, drag_increase, leg_length,
                      current_along, current_across, growth, onset, tau, drawable0, fade_rate,
                      *, extension=0.5, newton_steps=6, min_ground_speed=0.01):
    """Range [m], duration to the route end [s] and margin at the end [J] of every sample.

    Arrays are (n, J) per leg or (n,) per sample (speed and efficiency may be either), SI
    units. Samples without headway on some leg get range at the stop, duration inf and margin
    -inf (the benchmark compares the others).
    """
    n, legs = clean_drag.shape
    u = speed if np.ndim(speed) == 2 else speed[:, None]
    eta = efficiency if np.ndim(efficiency) == 2 else efficiency[:, None]
    ground = np.sqrt(np.maximum(u * u - current_across ** 2, 0.0)) + current_along
    moving = np.all(ground > min_ground_speed, axis=1) & np.all(u > np.abs(current_across), axis=1)
    power_clean = clean_drag * u / eta + hotel          # [W]
    power_fouling = clean_drag * u * drag_increase[:, None] / eta
    lengths = np.append(leg_length, leg_length[:, -1:] * 0 + extension * leg_length.sum(1, keepdims=True), axis=1)
    cols = list(range(legs)) + [legs - 1]  # the extension flies the last leg's conditions

    t = np.zeros(n)
    clock = np.zeros(n)
    energy = np.zeros(n)
    x = np.zeros(n)
    rng = np.full(n, np.nan)
    duration = np.full(n, np.inf)
    margin = np.full(n, -np.inf)
    for seg, j in enumerate(cols):
        g = np.where(moving, ground[:, j], 1.0)
        k = growth[:, j]
        p0, p1 = power_clean[:, j], power_fouling[:, j]
        span = lengths[:, seg] / g

        def energy_after(s, t=t, clock=clock, energy=energy, k=k, p0=p0, p1=p1):
            return energy + p0 * s + p1 * _phi_integral(clock, clock + k * s, onset, tau) / k

        def gap(s, t=t):
            return drawable0 * (1.0 - fade_rate * (t + s)) - energy_after(s)

        end_gap = gap(span)
        cross = np.isnan(rng) & (end_gap < 0.0) & moving
        if cross.any():
            s = span.copy()
            for _ in range(newton_steps):
                h = gap(s)
                dh = (-drawable0 * fade_rate - p0 - p1 * _phi(clock + k * s, onset, tau))
                s = np.where(cross, np.clip(s - h / dh, 0.0, span), s)
            rng = np.where(cross, x + g * s, rng)
        if seg == legs - 1:  # route end
            duration = np.where(moving, t + span, np.inf)
            margin = np.where(moving, end_gap, -np.inf)
        energy = energy_after(span)
        clock = clock + k * span
        t = t + span
        x = x + lengths[:, seg]
    rng = np.where(np.isnan(rng) & moving, x, rng)  # still open at the cap: censored
    return rng, duration, margin


def propeller_transit_scalar(clean_drag, speed, efficiency, hotel, drag_increase, leg_length,
                             current_along, current_across, growth, onset, tau, drawable0,
                             fade_rate, *, extension=0.5, newton_steps=6, min_ground_speed=0.01):
    """One sample of :func:`propeller_transit` in plain Python with ``math``: what a competent
    user writes when they loop over samples (lists of floats in, three floats out); speed and
    efficiency are floats or per-leg lists."""
    import math

    def phi_integral(c0, c1):
        a, b = max(c0, onset), max(c1, onset)
        d = b - a
        if d <= 0 or math.isinf(tau):
            return 0.0
        return d + tau * math.exp(-(a - onset) / tau) * math.expm1(-d / tau)

    def phi(c):
        return -math.expm1(-(c - onset) / tau) if c > onset else 0.0

    legs = len(leg_length)
    lengths = list(leg_length) + [extension * sum(leg_length)]
    t = clock = energy = x = 0.0
    rng = duration = margin = None
    for seg in range(legs + 1):
        j = min(seg, legs - 1)
        u = speed[j] if isinstance(speed, list) else speed
        eta = efficiency[j] if isinstance(efficiency, list) else efficiency
        if u <= abs(current_across[j]):
            return x, math.inf, -math.inf
        g = math.sqrt(u * u - current_across[j] ** 2) + current_along[j]
        if g <= min_ground_speed:
            return x, math.inf, -math.inf
        k = growth[j]
        p0 = clean_drag[j] * u / eta + hotel[j]
        p1 = clean_drag[j] * u * drag_increase / eta
        span = lengths[seg] / g

        def gap(s):
            return (drawable0 * (1.0 - fade_rate * (t + s))
                    - (energy + p0 * s + p1 * phi_integral(clock, clock + k * s) / k))

        end_gap = gap(span)
        if rng is None and end_gap < 0.0:
            s = span
            for _ in range(newton_steps):
                dh = -drawable0 * fade_rate - p0 - p1 * phi(clock + k * s)
                s = min(max(s - gap(s) / dh, 0.0), span)
            rng = x + g * s
        if seg == legs - 1:
            duration, margin = t + span, end_gap
        energy += p0 * span + p1 * phi_integral(clock, clock + k * span) / k
        clock += k * span
        t += span
        x += lengths[seg]
    return (x if rng is None else rng), duration, margin
