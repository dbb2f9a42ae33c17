"""Exact flight along a route, leg by leg, for a vehicle whose speed does not foul.

A propeller vehicle holds its speed through water on a leg, so its ground speed u_g, the
metres flown per metre made good and the capacity factor are constant within the leg, and
its power is affine in the fouling state, P(phi) = P_0 + P_1 phi (hull drag times
(1 + Delta_D phi)). Time is then linear in distance and the energy drawn s seconds into a
leg entered at fouling clock c_0, with the clock running at k on the leg, is (derived)

    E(s) = E_0 + [P_0 s + P_1 (1/k) int_{c_0}^{c_0 + k s} phi(c) dc] / c_cap,

with the integral in closed form (:func:`physics.fouling.fouling_state_integral`; phi(c_0) s
when k = 0). The margin g(s) = drawable(t_0 + s) - E(s) never increases (the battery fades,
the vehicle draws power), so a leg holds the reserve crossing iff g > 0 at its start and
g <= 0 at its end; the crossing is solved by a safeguarded Newton iteration started at the
leg's end (monotone where g is concave, bisection wherever a step leaves the bracket). The
duration limit is met where t is linear in x. A leg without headway stops the vehicle at its
start. Everything is vectorized over samples; the only loop is over legs.
"""
from __future__ import annotations

import numpy as np

from physics import currents as _currents
from physics import fouling as _fouling
from physics.route_state import RouteInputs, RouteRecord, stop_code, take
from physics.states import FailureMode, FlightEvent

__all__ = ["fly_legs_exact", "follow_extension_exact"]

_NEWTON_LIMIT = 64  # bisection fallback halves the bracket: 64 steps reach double precision


class _Leg:
    """Constant rates of every sample on one leg (rated-capacity joules per second).

    The rate model gives ``power_terms(leg)`` -> (P_0, P_1, U) with P(phi) = P_0 + P_1 phi
    and a speed through water U that does not foul (no drift of its own, no surfacing).
    """

    def __init__(self, rates, route: RouteInputs, leg: int):
        clean_power, fouling_power, speed = rates.power_terms(leg)
        charge = route.charge[:, leg]
        self.p0 = clean_power / charge
        self.p1 = fouling_power / charge
        speed = np.broadcast_to(speed, charge.shape)
        track = _currents.track_made_good(speed, route.current_along[:, leg],
                                          route.current_across[:, leg], route.policy[:, leg])
        self.code = stop_code(0, track, route.min_ground_speed)
        self.fine = self.code == FailureMode.NONE
        # metres of route made good per second
        self.speed = np.where(self.fine, track.ground_speed, 1.0) / route.path[:, leg]
        self.growth = route.growth[:, leg]
        self.events = np.where(track.drifting, FlightEvent.DRIFTED, 0)

    def drawn(self, route: RouteInputs, clock, s, idx=None):
        """Energy drawn in ``s`` seconds from fouling clock ``clock`` [J] and the fouling state
        then [-] (of samples ``idx``, all by default)."""
        if idx is None:  # all samples, each with one or several times (columns)
            p0, p1, k, onset, tau = (v.reshape(v.shape + (1,) * (np.ndim(s) - 1)) for v in (
                self.p0, self.p1, self.growth, route.onset, route.time_constant))
        else:
            p0, p1, k = self.p0[idx], self.p1[idx], self.growth[idx]
            onset, tau = route.onset[idx], route.time_constant[idx]
        running = k > 0.0
        if running.all():
            integral, phi = _fouling.fouling_growth(clock, clock + k * s, onset, tau)
            return p0 * s + p1 * (integral / k), phi
        k_safe = np.where(running, k, 1.0)
        integral, phi = _fouling.fouling_growth(clock, clock + k_safe * s, onset, tau)
        frozen = _fouling.fouling_state(clock, onset, tau)  # the clock stands still: phi(c_0)
        frozen = np.broadcast_to(frozen, np.shape(s))
        fouled = np.where(running, integral / k_safe, frozen * s)
        return p0 * s + p1 * fouled, np.where(running, phi, frozen)


def fly_legs_exact(rates, battery, route: RouteInputs, rec: RouteRecord, *,
                   profile_steps: int) -> None:
    """Fly every leg of the route, writing events into ``rec``; ``profile_steps`` profile
    columns per leg (at equal fractions of the leg)."""
    # the profile is written in place, one block of columns per leg after the departure's
    # (a list of blocks stacked at the end copied the whole profile once more)
    n_cols = 1 + route.n_legs * profile_steps
    position, elapsed, energy, fouling = np.empty((4, route.n, n_cols))
    position[:, 0], elapsed[:, 0], energy[:, 0] = rec.x, rec.t, rec.energy
    fouling[:, 0] = route.fouling(rec.clock)
    rec.columns = (position, elapsed, energy, fouling,
                   np.concatenate([[0], np.repeat(np.arange(route.n_legs), profile_steps)]))
    margin = battery.drawable(rec.t) - rec.energy
    timed = bool(np.isfinite(route.max_duration).any())
    fractions = np.arange(1, profile_steps + 1) / profile_steps
    for leg in range(route.n_legs):
        cols = slice(1 + leg * profile_steps, 1 + (leg + 1) * profile_steps)
        seg = _Leg(rates, route, leg)
        ok = rec.moving & seg.fine
        stopped = rec.moving & ~ok
        if stopped.any():  # no headway from the leg's start: a stop where it begins
            rec.stop_x[stopped] = rec.x[stopped]
            rec.stop_mode[stopped] = seg.code[stopped]
            rec.stop_leg[stopped] = leg
            open_range = stopped & np.isnan(rec.range_x)
            rec.range_x[open_range] = rec.x[open_range]
        length = np.where(ok, route.leg_length[:, leg], 0.0)
        span = length / seg.speed
        # the profile columns of the leg, its end last: (n, profile_steps) at once
        s_cols = span[:, None] * fractions
        drawn, fouling[:, cols] = seg.drawn(route, rec.clock[:, None], s_cols)
        x_cols = np.multiply(length[:, None], fractions, out=position[:, cols])
        x_cols += rec.x[:, None]
        t_cols = np.add(rec.t[:, None], s_cols, out=elapsed[:, cols])
        e_cols = np.add(rec.energy[:, None], drawn, out=energy[:, cols])
        x_end, t_end, e_end = x_cols[:, -1], t_cols[:, -1], e_cols[:, -1]
        margin_end = battery.drawable(t_end) - e_end
        cross = ok & (margin > 0.0) & (margin_end <= 0.0) & np.isnan(rec.range_x)
        if cross.any():
            idx = np.flatnonzero(cross)
            s = _reserve_crossing(seg, route, take(battery, idx, route.n), idx, rec.t[idx],
                                  rec.energy[idx], rec.clock[idx], span[idx], margin_end[idx])
            rec.range_x[idx] = rec.x[idx] + seg.speed[idx] * s
            rec.range_leg[idx] = leg
        if timed:
            limit = route.max_duration
            late = ok & (rec.t <= limit) & (t_end > limit) & np.isinf(rec.time_x)
            rec.time_x = np.where(late, rec.x + (limit - rec.t) * seg.speed, rec.time_x)
            rec.time_leg[late] = leg
        if np.any(seg.events):
            rec.seen_events = np.where(ok, rec.seen_events | seg.events,
                                       rec.seen_events).astype(np.int8)
        rec.leg_energy[:, leg] = e_end - rec.energy
        rec.leg_distance[:, leg] = x_end - rec.x
        rec.x, rec.t, rec.energy = x_end.copy(), t_end.copy(), e_end.copy()
        rec.clock = rec.clock + seg.growth * span
        rec.moving = ok
        margin = margin_end


def follow_extension_exact(rates, battery, route: RouteInputs, rec: RouteRecord,
                           follow) -> None:
    """Where the range of samples ``follow`` ends past the route end, flying on with the last
    leg's conditions up to ``route.extension`` route lengths; other records stay as they are.
    """
    seg = _Leg(rates, route, route.n_legs - 1)
    idx = np.flatnonzero(follow)
    sub = take(battery, idx, route.n)
    t0, e0, c0 = rec.t[idx], rec.energy[idx], rec.clock[idx]
    span = route.route[idx] * route.extension / seg.speed[idx]
    margin_end = sub.drawable(t0 + span) - e0 - seg.drawn(route, c0, span, idx)[0]
    cross = margin_end <= 0.0
    if cross.any():
        j = idx[cross]
        s = _reserve_crossing(seg, route, take(sub, np.flatnonzero(cross), idx.size), j,
                              rec.t[j], rec.energy[j], rec.clock[j], span[cross],
                              margin_end[cross])
        rec.range_x[j] = rec.x[j] + seg.speed[j] * s
        rec.range_leg[j] = route.n_legs - 1


def _reserve_crossing(seg: _Leg, route: RouteInputs, battery, idx, t0, e0, clock0, span,
                      margin_end):
    """Seconds s into the leg where the margin reaches zero, for samples ``idx`` whose margin
    is > 0 at s = 0 and <= 0 at s = ``span``: safeguarded Newton from the right end.

    g(s) = drawable(t0 + s) - E(s) never increases; where it is concave (before the pack is
    faded out) Newton from the right end approaches the root from the right and never leaves
    the bracket; any step that would (a kink) is replaced by bisection of the bracket.
    """
    s = span.copy()
    lo, hi = np.zeros_like(span), span.copy()
    g = margin_end.copy()
    p0, p1 = seg.p0[idx], seg.p1[idx]
    tolerance = 4.0 * np.finfo(float).eps * np.maximum(span, 1.0)
    done = np.zeros(span.shape, dtype=bool)
    phi = seg.drawn(route, clock0, s, idx)[1]
    for _ in range(_NEWTON_LIMIT):
        slope = battery.drawable_rate(t0 + s) - (p0 + p1 * phi)
        with np.errstate(divide="ignore", invalid="ignore"):
            trial = s - g / slope
        inside = (trial >= lo) & (trial <= hi)  # NaN (no slope): bisect
        trial = np.where(done, s, np.where(inside, trial, 0.5 * (lo + hi)))
        drawn, phi = seg.drawn(route, clock0, trial, idx)
        g_trial = battery.drawable(t0 + trial) - e0 - drawn
        above = g_trial > 0.0
        lo = np.where(above, trial, lo)
        hi = np.where(above, hi, trial)
        done |= (np.abs(trial - s) <= tolerance) | (hi - lo <= tolerance)
        s, g = trial, g_trial
        if done.all():
            break
    return s
