"""Runge-Kutta flight along a route, for any vehicle rate model (the glider's re-trim).

Along the route the independent variable is the distance made good ``x``. Within a leg every
rate depends on time only through the fouling state, so the state is the elapsed time ``t``
and the energy drawn ``E``:

    dt/dx = 1 / u_g(phi(t)),     dE/dx = P(phi(t)) / u_g(phi(t)),

integrated with the classical fourth-order Runge-Kutta scheme on ``steps_per_leg`` equal
sub-steps of each sample's own leg length (so every sample sits at the same fraction of the
same leg at each step). The range is where the margin g(x) = drawable(t(x)) - E(x) crosses
zero, located inside its step by a cubic Hermite interpolant of g (both ends' slopes are
known). A state from which the vehicle cannot go on (no headway, infeasible glide) stops the
sample. Near such a stop dt/dx grows without bound (u_g -> 0), so inside that step time becomes
the variable: the stop time is bisected, and distance and energy are integrated in time
(dx/dt = u_g, dE/dt = P), where the rates stay regular.
"""
from __future__ import annotations

import numpy as np

from physics import fouling as _fouling
from physics.route_state import RouteInputs, RouteRecord, made_good, stop_code, take
from physics.states import FailureMode, FlightEvent

__all__ = ["fly_legs_rk", "follow_extension_rk", "hermite_root"]

_BISECTION_STEPS = 30  # 1e-9 of a step
_EXTENSION_CHUNK = 4  # extension steps between drops of the samples whose range is found
_ROOT_STEPS = 40  # safeguarded Newton in hermite_root: 3-6 steps in practice, 40 at worst
_GAUSS_NODES, _GAUSS_WEIGHTS = np.polynomial.legendre.leggauss(8)


def fly_legs_rk(rates, battery, route: RouteInputs, rec: RouteRecord, *, steps_per_leg: int,
                profile_every: int) -> None:
    """Fly every leg and the extension past the route end, writing events into ``rec``.

    A profile column is recorded every ``profile_every`` RK steps on the route's legs.
    """
    flight = _RungeKutta(rates, battery, route, rec)
    rec.record(route.fouling(rec.clock), 0)
    for leg in range(route.n_legs):
        t_entry, clock_entry = rec.t.copy(), rec.clock.copy()
        h = route.leg_length[:, leg] / steps_per_leg
        flight.leg(leg, h, steps_per_leg, t_entry, clock_entry, profile_every=profile_every)
        rec.clock = clock_entry + route.growth[:, leg] * (rec.t - t_entry)


def follow_extension_rk(rates, battery, route: RouteInputs, rec: RouteRecord, follow,
                        extension_steps: int) -> None:
    """Continue the samples ``follow`` past the route end with the last leg's conditions,
    only to find where their range ends; the route's own events are left as they were.

    Only the range is wanted here, so the samples are flown a few steps at a time and each
    is dropped once its range is found (or it stops): the others go on as a subset. Every
    step of a sample is the same as in one pass over all samples (the rates of a sample
    depend on its own state alone, and the fouling clock is counted from the same entry).
    """
    last = route.n_legs - 1
    n = route.n
    h = route.route * route.extension / extension_steps
    t_entry, clock_entry = rec.t.copy(), rec.clock.copy()
    rec.moving[:] = follow
    active = np.flatnonzero(follow)
    done = 0
    while done < extension_steps and active.size:
        steps = min(_EXTENSION_CHUNK, extension_steps - done)
        sub = RouteRecord(active.size, route.n_legs)
        sub.x, sub.t, sub.energy = rec.x[active], rec.t[active], rec.energy[active]
        flight = _RungeKutta(take(rates, active, n), take(battery, active, n),
                             take(route, active, n), sub)
        flight.leg(last, h[active], steps, t_entry[active], clock_entry[active],
                   profile_every=0)
        rec.x[active], rec.t[active], rec.energy[active] = sub.x, sub.t, sub.energy
        rec.moving[active] = sub.moving
        rec.range_x[active], rec.range_leg[active] = sub.range_x, sub.range_leg
        active = active[sub.moving & np.isnan(sub.range_x)]
        done += steps


class _RungeKutta:
    """RK4 steps of one leg for all samples, with stops and crossings located in the step."""

    def __init__(self, rates, battery, route: RouteInputs, rec: RouteRecord):
        self.rates, self.battery, self.route, self.rec = rates, battery, route, rec
        self.probe = {}  # rates of the latest evaluation at all samples (for the event counts)

    def derivatives(self, leg, t_now, t_entry, clock_entry):
        """dt/dx, dE/dx and a stop code at time t_now on leg `leg` (all samples)."""
        rt = self.route
        c = clock_entry + rt.growth[:, leg] * (t_now - t_entry)
        r = self.rates(leg, rt.fouling(c))
        track = made_good(r, rt.current_along[:, leg], rt.current_across[:, leg],
                          rt.policy[:, leg])
        self.probe["rate"] = np.broadcast_to(r.surfacing_rate, (rt.n,))
        self.probe["events"] = r.flags | np.where(track.drifting, FlightEvent.DRIFTED, 0)
        code = stop_code(r.state, track, rt.min_ground_speed)
        ug = np.where(code == FailureMode.NONE, track.ground_speed, 1.0)
        per_metre = rt.path[:, leg] / ug
        return per_metre, r.power / rt.charge[:, leg] * per_metre, code

    def leg(self, leg, h, n_steps, t_entry, clock_entry, *, profile_every):
        rec, rt = self.rec, self.route
        k1t, k1e, code1 = self.derivatives(leg, rec.t, t_entry, clock_entry)
        for step in range(n_steps):
            x0, t0, e0 = rec.x.copy(), rec.t.copy(), rec.energy.copy()
            rate0, events0 = self.probe["rate"], self.probe["events"]
            k2t, k2e, code2 = self.derivatives(leg, t0 + 0.5 * h * k1t, t_entry, clock_entry)
            k3t, k3e, code3 = self.derivatives(leg, t0 + 0.5 * h * k2t, t_entry, clock_entry)
            k4t, k4e, code4 = self.derivatives(leg, t0 + h * k3t, t_entry, clock_entry)
            t1 = t0 + h / 6.0 * (k1t + 2 * k2t + 2 * k3t + k4t)
            e1 = e0 + h / 6.0 * (k1e + 2 * k2e + 2 * k3e + k4e)
            k5t, k5e, code5 = self.derivatives(leg, t1, t_entry, clock_entry)
            bad = rec.moving & ((code1 | code2 | code3 | code4 | code5) != FailureMode.NONE)
            ok = rec.moving & ~bad
            # policy actions and surfacings (trapezoid in time over the step: a count)
            rec.seen_events = np.where(ok, rec.seen_events | events0 | self.probe["events"],
                                       rec.seen_events).astype(np.int8)
            rec.surfacings = rec.surfacings + np.where(
                ok, 0.5 * (rate0 + self.probe["rate"]) * (t1 - t0), 0.0)
            # samples that can go on: take the step
            rec.x = np.where(ok, x0 + h, rec.x)
            rec.t = np.where(ok, t1, rec.t)
            rec.energy = np.where(ok, e1, rec.energy)
            if bad.any():
                stage_t = (t0 + 0.5 * h * k1t, t0 + 0.5 * h * k2t, t0 + h * k3t, t1)
                self.stop_inside_step(leg, bad, h, x0, t0, e0, code1, stage_t,
                                      (code2, code3, code4, code5), t_entry, clock_entry)
            self.locate_crossings(leg, ok, h, x0, t0, e0, t1, e1, k1t, k1e, k5t, k5e)
            rec.leg_energy[:, leg] += rec.energy - e0  # zero for samples already stopped
            rec.leg_distance[:, leg] += rec.x - x0
            rec.moving[:] = ok
            k1t, k1e, code1 = k5t, k5e, code5
            if profile_every and (step + 1) % profile_every == 0:
                c = clock_entry + rt.growth[:, leg] * (rec.t - t_entry)
                rec.record(rt.fouling(c), leg)

    def stop_inside_step(self, leg, bad, h, x0, t0, e0, code1, stage_t, stage_code, t_entry,
                         clock_entry):
        """Place the stop of samples ``bad`` inside this step, with time as the variable.

        Near a loss of headway dt/dx grows without bound, so the stop is found in time: the
        latest time t* at which the vehicle can still go on (bisection between the step start
        and the earliest stage found bad), then distance and energy are integrated in time,
        dx/dt = u_g and dE/dt = P, which stay regular up to t* (Gauss-Legendre).
        """
        rec = self.rec
        idx = np.flatnonzero(bad)
        sub = _Subset(self, idx, leg, t_entry, clock_entry)
        ta = t0[idx]
        at_start = code1[idx] != FailureMode.NONE
        bad_times = np.where(np.stack(stage_code)[:, idx] != FailureMode.NONE,
                             np.stack(stage_t)[:, idx], np.inf)
        lo = ta.copy()
        hi = np.where(at_start, ta, bad_times.min(axis=0))
        for _ in range(_BISECTION_STEPS):
            mid = 0.5 * (lo + hi)
            fine = sub.rates(mid)[2] == FailureMode.NONE
            lo = np.where(fine, mid, lo)
            hi = np.where(fine, hi, mid)
        t_stop = np.where(at_start, ta, lo)
        mode = np.where(at_start, code1[idx], sub.rates(hi)[2])
        # a bracket that lost its bad end (rates exactly at the threshold): keep the stage's
        mode = np.where(mode == FailureMode.NONE,
                        np.stack(stage_code)[:, idx].max(axis=0), mode)
        dx, de = sub.integrate(ta, t_stop)
        new_x = np.minimum(x0[idx] + dx, x0[idx] + h[idx])
        new_e = e0[idx] + de
        rec.x[idx], rec.t[idx], rec.energy[idx] = new_x, t_stop, new_e
        rec.stop_x[idx] = new_x
        rec.stop_mode[idx] = mode
        rec.stop_leg[idx] = leg
        t_limit = self.route.max_duration
        # the duration limit may be passed before the stop
        late = (ta <= t_limit[idx]) & (t_stop > t_limit[idx]) & np.isinf(rec.time_x[idx])
        if late.any():
            j = np.flatnonzero(late)
            dx_l, _ = sub.integrate(ta, np.where(late, t_limit[idx], ta))
            rec.time_x[idx[j]] = x0[idx[j]] + dx_l[j]
            rec.time_leg[idx[j]] = leg
        # the energy may reach the reserve before the stop: bisection in time on g(t)
        g0 = sub.battery.drawable(ta) - e0[idx]
        g1 = sub.battery.drawable(t_stop) - new_e
        cross = (g0 > 0) & (g1 <= 0) & np.isnan(rec.range_x[idx])
        if cross.any():
            lo_c, hi_c = ta.copy(), t_stop.copy()
            for _ in range(_BISECTION_STEPS):
                mid = 0.5 * (lo_c + hi_c)
                _, de_mid = sub.integrate(ta, mid)
                above = sub.battery.drawable(mid) - (e0[idx] + de_mid) > 0
                lo_c = np.where(above, mid, lo_c)
                hi_c = np.where(above, hi_c, mid)
            dx_c, _ = sub.integrate(ta, 0.5 * (lo_c + hi_c))
            j = idx[cross]
            rec.range_x[j] = x0[j] + dx_c[cross]
            rec.range_leg[j] = leg
        no_range = np.isnan(rec.range_x[idx])  # range ends at the stop; not an energy event
        rec.range_x[idx[no_range]] = new_x[no_range]

    def locate_crossings(self, leg, ok, h, x0, t0, e0, t1, e1, k1t, k1e, k5t, k5e):
        rec, battery, t_limit = self.rec, self.battery, self.route.max_duration
        # reserve crossing: g = drawable(t) - E, Hermite-cubic in the step
        g0 = battery.drawable(t0) - e0
        g1 = battery.drawable(t1) - e1
        cross = ok & (g0 > 0) & (g1 <= 0) & np.isnan(rec.range_x)
        if cross.any():
            j = np.flatnonzero(cross)
            d0 = (battery.drawable_rate(t0)[j] * k1t[j] - k1e[j]) * h[j]
            d1 = (battery.drawable_rate(t1)[j] * k5t[j] - k5e[j]) * h[j]
            s = hermite_root(g0[j], g1[j], d0, d1)
            rec.range_x[j] = x0[j] + s * h[j]
            rec.range_leg[j] = leg
        # duration limit crossing
        late = ok & (t0 <= t_limit) & (t1 > t_limit) & np.isinf(rec.time_x)
        if late.any():
            j = np.flatnonzero(late)
            s = hermite_root(t0[j] - t_limit[j], t1[j] - t_limit[j],
                             k1t[j] * h[j], k5t[j] * h[j], increasing=True)
            rec.time_x[j] = x0[j] + s * h[j]
            rec.time_leg[j] = leg


class _Subset:
    """Rates in time of the few samples that stop inside a step."""

    def __init__(self, flight: _RungeKutta, idx, leg, t_entry, clock_entry):
        n = flight.route.n
        self.route, self.idx, self.leg = flight.route, idx, leg
        self.rates_model = take(flight.rates, idx, n)
        self.battery = take(flight.battery, idx, n)
        self.t_entry, self.clock_entry = t_entry[idx], clock_entry[idx]

    def rates(self, t_now):
        """(power [W], ground speed [m/s], stop code) at times ``t_now``."""
        i, leg, rt = self.idx, self.leg, self.route
        c = self.clock_entry + rt.growth[i, leg] * (t_now - self.t_entry)
        r = self.rates_model(leg, rt.fouling(c, i))
        track = made_good(r, rt.current_along[i, leg], rt.current_across[i, leg],
                          rt.policy[i, leg])
        code = stop_code(r.state, track, rt.min_ground_speed)
        return r.power / rt.charge[i, leg], track.ground_speed / rt.path[i, leg], code

    def integrate(self, ta, tb):
        """Distance and energy from ta to tb: 8-point Gauss-Legendre in time."""
        half = 0.5 * (tb - ta)
        dx = np.zeros_like(ta)
        de = np.zeros_like(ta)
        for node, weight in zip(_GAUSS_NODES, _GAUSS_WEIGHTS):
            power, ground_speed, _ = self.rates(ta + half * (node + 1.0))
            dx += weight * half * ground_speed
            de += weight * half * power
        return dx, de


def hermite_root(y0, y1, d0, d1, *, increasing=False):
    """Fraction s in [0, 1] where the cubic Hermite through (0, y0, d0), (1, y1, d1) is zero.

    For a decreasing quantity (y0 > 0 >= y1) or, with ``increasing``, y0 <= 0 < y1. Newton
    steps on the cubic from the secant's root, safeguarded by the sign-change bracket (a step
    that would leave it bisects instead), so it never leaves the bracket even if the slopes
    are inconsistent; stops when every step is below 1e-14 of the interval (at most
    ``_ROOT_STEPS``). A 30-step bisection did the same to 1e-9 at several times the cost.
    """
    sign = -1.0 if increasing else 1.0
    # y(s) = ((a s + b) s + d0) s + y0, the Hermite basis expanded
    a = 2.0 * (y0 - y1) + d0 + d1
    b = 3.0 * (y1 - y0) - 2.0 * d0 - d1
    lo = np.zeros_like(y0)
    hi = np.ones_like(y0)
    done = np.zeros(np.shape(y0), dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.clip(y0 / (y0 - y1), 0.0, 1.0)
        for _ in range(_ROOT_STEPS):
            y = sign * (((a * s + b) * s + d0) * s + y0)
            slope = sign * ((3.0 * a * s + 2.0 * b) * s + d0)
            above = y > 0
            lo = np.where(above, s, lo)
            hi = np.where(above, hi, s)
            newton = s - y / slope
            # a Newton step inside the bracket, or one already below 1e-14 (converged: y may
            # be exactly 0, when the bracket closes on s itself); else bisect
            keep = ((newton > lo) & (newton < hi)) | ~(np.abs(newton - s) > 1e-14)
            step = np.where(keep, newton, 0.5 * (lo + hi)) - s
            # a row that has converged stays as it is, so each row's result depends on its
            # own data only, not on which other rows share the call (block independence)
            step = np.where(np.isfinite(step) & ~done, step, 0.0)
            s = s + step
            done |= ~(np.abs(step) > 1e-14)
            if done.all():
                break
    return np.clip(s, 0.0, 1.0)
