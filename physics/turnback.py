"""Under an ice ceiling: point of no return, the turn-back policy, the recovery-point demand.

Under ice a vehicle cannot surface. Where it can still fly back to the last safe exit behind it
(an ice edge at a leg boundary, or open water) with its reserve intact, an abort is safe; past
the point of no return it must reach the recovery point or be lost. This module reads the route
profile that :func:`physics.mission.fly_route` records and decides, sample by sample:

- the point of no return x*: the first position on an ice leg where the energy above the
  reserve E(x) no longer covers the return E_back(x) to the last safe exit x_s, flown against
  the reversed along-track currents at the fouling state of x;
- under the policy ``"turn-back"``, whether the vehicle turns back at x*: it does when its
  onboard forecast at x* (energy drawn so far per metre made good, extrapolated to the
  recovery point, plus the demand at the recovery point) says it would arrive below its
  reserve; a vehicle stopped by a current under ice before x* turns back where it stopped;
- the demand at the recovery point: loiter (waiting for the ship or an open hole) and homing or
  search at the hole, which the vehicle must afford before it is recovered.

Nothing here integrates the transit again: the forward flight is :func:`fly_route`'s.
"""
from __future__ import annotations

import dataclasses
from typing import NamedTuple

import numpy as np

from physics import currents as _currents
from physics import reliability as _reliability
from physics.mission import BatteryState, PropellerRates, RateModel, TransitOutcome
from physics.states import FailureMode

__all__ = [
    "POLICIES",
    "UnderIceOutcome",
    "FaultSplit",
    "last_safe_exit",
    "arrival_demand",
    "under_ice_outcome",
    "fault_split",
]

#: what the vehicle does where it cannot both reach the goal and still return
POLICIES = ("continue", "turn-back")


class UnderIceOutcome(NamedTuple):
    """Per-sample results of :func:`under_ice_outcome` (SI units, shape (n,) unless noted)."""

    point_of_no_return: np.ndarray  # first x* on an ice leg [m]; inf: none before the goal
    turned_back: np.ndarray  # bool: aborted and flew back to a safe exit
    turn_position: np.ndarray  # where it turned back [m]; inf where it did not
    turn_leg: np.ndarray  # int16 leg where it turned back; -1 where it did not
    return_energy: np.ndarray  # energy of the return flight [J] (0 where not turned)
    return_duration: np.ndarray  # [s] (0 where not turned)
    arrival_energy: np.ndarray  # loiter + homing demand at the recovery point [J]
    arrival_duration: np.ndarray  # loiter + homing time [s]
    margin: np.ndarray  # energy above the reserve after the recovery-point demand [J]
    margin_fraction: np.ndarray  # margin / usable energy when recovered [-]
    success: np.ndarray  # bool: transit success that also affords loiter and homing
    reaches_recovery: np.ndarray  # bool: recovered at the goal, possibly on the reserve
    lost_under_ice: np.ndarray  # bool: neither recovered nor returned, ends on an ice leg
    mission_end: np.ndarray  # time the mission ends (recovery, return, stop) [s]
    boundary_time: np.ndarray  # (n, J+1) time at each leg boundary on the way out [s]


class FaultSplit(NamedTuple):
    """Per-sample probabilities of the first hardware fault (they sum to 1)."""

    no_fault: np.ndarray  # P(no fault before the mission ends) [-]
    under_ice: np.ndarray  # P(first fault while under ice): the vehicle is lost [-]
    open_water: np.ndarray  # P(first fault in open water): the vehicle is recovered [-]


def last_safe_exit(ice, safe_boundary=None):
    """Index of the last safe leg boundary at or behind the start of each leg.

    Parameters
    ----------
    ice : array_like of bool, (J,)
        True for legs under an ice ceiling.
    safe_boundary : array_like of bool, (J+1,), optional
        Leg boundaries named as safe exits (e.g. an ice edge). The launch (boundary 0) and
        every boundary touching an open-water leg are always safe.

    Returns
    -------
    ndarray of int, (J,)
        For an ice leg j, the largest safe boundary b <= j; for an open-water leg, j itself.
    """
    ice = np.asarray(ice, dtype=bool)
    n_legs = ice.size
    safe = np.zeros(n_legs + 1, dtype=bool) if safe_boundary is None else \
        np.asarray(safe_boundary, dtype=bool).copy()
    if safe.shape != (n_legs + 1,):
        raise ValueError(f"safe_boundary needs {n_legs + 1} entries (one per leg boundary), "
                         f"got {safe.shape}")
    safe[0] = True
    safe[:-1] |= ~ice
    safe[1:] |= ~ice
    out = np.empty(n_legs, dtype=int)
    for j in range(n_legs):
        out[j] = max(b for b in range(j + 1) if safe[b])
    return out


def arrival_demand(loiter_power, loiter_time, homing_power, homing_speed, homing_distance,
                   capacity_factor=1.0):
    """Energy and time spent at the recovery point before the vehicle is recovered.

    Parameters
    ----------
    loiter_power : array_like
        Power while loitering (waiting for the ship or an open hole) P_l [W].
    loiter_time : array_like
        Loiter time T_l [s].
    homing_power : array_like
        Power while homing / searching at the recovery point P_h [W] (the transit power).
    homing_speed : array_like
        Speed through water while homing U_h [m/s], > 0.
    homing_distance : array_like
        Distance flown homing on the recovery point d_h [m].
    capacity_factor : array_like, optional
        Share of rated capacity the pack delivers at the recovery point's temperature c [-].

    Returns
    -------
    energy : ndarray
        E_arr = (P_l T_l + P_h d_h / U_h) / c [J, rated capacity].
    duration : ndarray
        T_l + d_h / U_h [s].
    """
    distance = np.asarray(homing_distance, dtype=float)
    speed = np.asarray(homing_speed, dtype=float)
    moving = speed > 0.0
    # a vehicle that cannot move cannot home: infinite time (a named state, not NaN)
    homing_time = np.where(distance > 0.0,
                           np.where(moving, distance / np.where(moving, speed, 1.0), np.inf), 0.0)
    homing_energy = np.where(homing_time > 0.0,
                             np.asarray(homing_power, dtype=float) * homing_time, 0.0)
    drawn = np.asarray(loiter_power, dtype=float) * np.asarray(loiter_time, dtype=float) \
        + homing_energy
    return drawn / np.asarray(capacity_factor, dtype=float), \
        np.asarray(loiter_time, dtype=float) + homing_time


def _return_costs(rates, profile, bounds, ice, exit_of, c_along, c_across, path, charge,
                  min_ground_speed):
    """Energy [J] and time [s] to fly back from every profile column to its last safe exit."""
    if isinstance(rates, PropellerRates):
        return _propeller_return_costs(rates, profile, bounds, ice, exit_of, c_along, c_across,
                                       path, charge, min_ground_speed)
    x = profile.position
    n, n_cols = x.shape
    e_back = np.zeros((n, n_cols))
    t_back = np.zeros((n, n_cols))
    for k in range(n_cols):
        leg = int(profile.leg[k])
        if not ice[leg]:
            continue
        start = bounds[:, exit_of[leg]]
        for i in range(exit_of[leg], leg + 1):
            overlap = np.clip(np.minimum(x[:, k], bounds[:, i + 1]) - np.maximum(start, bounds[:, i]),
                              0.0, None)
            r = rates(i, profile.fouling[:, k])
            track = _currents.track_made_good(r.speed_through_water, -c_along[:, i],
                                              c_across[:, i], _currents.CRAB)
            fine = (r.state == FailureMode.NONE) & track.headway \
                & (track.ground_speed > min_ground_speed)
            per_metre = path[:, i] / np.where(fine, track.ground_speed, 1.0)
            blocked = ~fine & (overlap > 0.0)
            t_back[:, k] = np.where(blocked, np.inf, t_back[:, k] + overlap * per_metre)
            e_back[:, k] = np.where(blocked, np.inf, e_back[:, k]
                                    + overlap * per_metre * r.power / charge[:, i])
    return e_back, t_back


def _propeller_return_costs(rates, profile, bounds, ice, exit_of, c_along, c_across, path,
                            charge, min_ground_speed):
    """:func:`_return_costs` of a propeller vehicle, leg by leg over all columns at once: its
    speed does not foul, so only the power P_0 + P_1 phi changes from column to column."""
    x = profile.position
    e_back = np.zeros(x.shape)
    t_back = np.zeros(x.shape)
    col_leg = np.asarray(profile.leg)
    for i in range(bounds.shape[1] - 1):
        cols = np.flatnonzero(ice[col_leg] & (exit_of[col_leg] <= i) & (col_leg >= i))
        if not cols.size:
            continue
        start = bounds[:, exit_of[col_leg[cols]]]
        overlap = np.clip(np.minimum(x[:, cols], bounds[:, i + 1, None])
                          - np.maximum(start, bounds[:, i, None]), 0.0, None)
        clean, fouled, speed = rates.power_terms(i)
        track = _currents.track_made_good(np.broadcast_to(speed, clean.shape), -c_along[:, i],
                                          c_across[:, i], _currents.CRAB)
        fine = (track.headway & (track.ground_speed > min_ground_speed))[:, None]
        per_metre = (path[:, i] / np.where(fine[:, 0], track.ground_speed, 1.0))[:, None]
        power = clean[:, None] + fouled[:, None] * np.clip(profile.fouling[:, cols], 0.0, 1.0)
        blocked = ~fine & (overlap > 0.0)
        t_back[:, cols] = np.where(blocked, np.inf, t_back[:, cols] + overlap * per_metre)
        e_back[:, cols] = np.where(blocked, np.inf, e_back[:, cols]
                                   + overlap * per_metre * power / charge[:, i, None])
    return e_back, t_back


def under_ice_outcome(
    rates: RateModel,
    battery: BatteryState,
    transit: TransitOutcome,
    *,
    ice,
    leg_length,
    current_along,
    current_across,
    safe_boundary=None,
    distance_overhead=0.0,
    capacity_factor=1.0,
    loiter_power=0.0,
    loiter_time=0.0,
    homing_distance=0.0,
    policy: str = "turn-back",
    min_ground_speed: float = 0.01,
) -> UnderIceOutcome:
    """Point of no return, turn-back decision and recovery-point demand of every sample.

    Parameters
    ----------
    rates, battery : as passed to :func:`physics.mission.fly_route`
    transit : TransitOutcome
        The forward flight from :func:`fly_route` (with its ``profile``), called with the same
        ``distance_overhead``, ``capacity_factor`` and ``min_ground_speed``.
    ice : array_like of bool, (J,)
        Legs under an ice ceiling.
    leg_length, current_along, current_across : array_like, (n, J)
        As passed to :func:`fly_route` [m], [m/s].
    safe_boundary : array_like of bool, (J+1,), optional
        Leg boundaries named as safe exits (see :func:`last_safe_exit`).
    distance_overhead, capacity_factor : array_like, (n, J)
        As passed to :func:`fly_route`.
    loiter_power [W], loiter_time [s], homing_distance [m] : array_like, (n,)
        Demand at the recovery point (:func:`arrival_demand`); homing is flown at the last
        leg's power and speed through water at the arrival's fouling state.
    policy : {"continue", "turn-back"}
        What the vehicle does at the point of no return when its forecast says it will not
        reach the recovery point with its reserve.
    min_ground_speed : float
        Ground-speed floor of the return flight [m/s], as in :func:`fly_route`.

    Returns
    -------
    UnderIceOutcome

    Notes
    -----
    With energy above the reserve E(x) and the return cost E_back(x), the point of no return
    solves E(x*) = E_back(x*) (derived). For constant consumption per metre, e_f forward and
    e_b back, E(x) = E(x_s) - e_f (x - x_s) and E_back = e_b (x - x_s), so
    x* = x_s + E(x_s) / (e_f + e_b) (derived). The crossing is located by linear
    interpolation between the profile's step boundaries (exact in that case). The drawable
    energy on return is taken at the time the vehicle would reach the exit.
    The forecast is the vehicle's own: energy drawn per metre made good so far, times the
    distance left, plus the recovery-point demand (a modelling choice, common practice, no
    source) — so a vehicle can abort a mission it would have completed, or press on into one
    it cannot.
    """
    if policy not in POLICIES:
        raise ValueError(f"policy must be one of {POLICIES}, got {policy!r}")
    prof = transit.profile
    if prof is None:
        raise ValueError("transit has no route profile; pass the outcome of fly_route")
    leg_length = np.atleast_2d(np.asarray(leg_length, dtype=float))
    n, n_legs = leg_length.shape
    shape = (n, n_legs)
    ice = np.broadcast_to(np.asarray(ice, dtype=bool), (n_legs,))
    c_along = np.broadcast_to(np.asarray(current_along, dtype=float), shape)
    c_across = np.broadcast_to(np.asarray(current_across, dtype=float), shape)
    path = 1.0 + np.broadcast_to(np.asarray(distance_overhead, dtype=float), shape)
    charge = np.broadcast_to(np.asarray(capacity_factor, dtype=float), shape)
    bounds = np.concatenate([np.zeros((n, 1)), np.cumsum(leg_length, axis=1)], axis=1)
    e_back, t_back = _return_costs(rates, prof, bounds, ice, last_safe_exit(ice, safe_boundary),
                                   c_along, c_across, path, charge, min_ground_speed)
    pnr = _point_of_no_return(battery, prof, ice, e_back, t_back)
    # --- the recovery-point demand: only a vehicle at the recovery point spends it ----------
    end = rates(n_legs - 1, prof.fouling[:, -1])
    arrival_energy, arrival_duration = arrival_demand(
        loiter_power, loiter_time, end.power, end.speed_through_water, homing_distance,
        charge[:, -1])
    arrival_energy = np.where(transit.arrived, arrival_energy, 0.0)
    arrival_duration = np.where(transit.arrived, arrival_duration, 0.0)
    finished = transit.duration + arrival_duration
    e_last = prof.energy[:, -1]
    margin = np.where(transit.arrived, battery.drawable(finished) - e_last - arrival_energy,
                      np.minimum(transit.margin, 0.0))
    usable_end = battery.usable(finished)
    margin_fraction = np.divide(margin, usable_end, out=np.zeros(n), where=usable_end > 0)
    turn = _turn_back(policy, battery, transit, prof, ice, bounds, pnr, arrival_energy,
                      e_back, t_back)
    success = transit.success & (margin >= 0.0) & ~turn.turned
    reaches = transit.arrived & (e_last + arrival_energy <= usable_end) & ~turn.turned
    lost = ~reaches & ~turn.turned & _ends_under_ice(battery, transit, ice, bounds)
    # --- the timeline -----------------------------------------------------------------------
    steps = (prof.position.shape[1] - 1) // n_legs
    boundary_time = np.minimum(prof.elapsed[:, ::steps][:, : n_legs + 1], turn.time[:, None])
    mission_end = np.where(turn.turned, turn.time + turn.return_duration,
                           np.where(transit.arrived, finished, transit.duration))
    return UnderIceOutcome(
        point_of_no_return=pnr.position,
        turned_back=turn.turned,
        turn_position=turn.position,
        turn_leg=np.where(turn.turned, _leg_at(np.where(turn.turned, turn.position, 0.0),
                                               bounds), -1).astype(np.int16),
        return_energy=turn.return_energy,
        return_duration=turn.return_duration,
        arrival_energy=np.array(arrival_energy),
        arrival_duration=np.array(arrival_duration),
        margin=margin,
        margin_fraction=margin_fraction,
        success=success,
        reaches_recovery=reaches,
        lost_under_ice=lost,
        mission_end=mission_end,
        boundary_time=boundary_time,
    )


def _ends_under_ice(battery, transit, ice, bounds):
    """Whether a vehicle that is neither recovered nor returned ends on an ice leg: where it
    stopped, else where its pack first ran empty (reserve spent), else at the goal."""
    prof = transit.profile
    x = prof.position
    empty = (prof.energy > _columns(battery).usable(prof.elapsed)) \
        & (np.arange(x.shape[1]) > 0)[None, :]
    end_x = np.where(~transit.arrived, x[:, -1],
                     np.where(empty.any(axis=1), x[np.arange(x.shape[0]), np.argmax(empty, axis=1)],
                              bounds[:, -1]))
    return ice[_leg_at(end_x, bounds)]


class _NoReturnPoint(NamedTuple):
    """The first point of no return of every sample, interpolated between profile columns."""

    position: np.ndarray  # x* [m], inf where there is none
    column: np.ndarray  # the first profile column past x*
    fraction: np.ndarray  # of the way from column - 1 to column
    spare: np.ndarray  # (n, K) energy above the reserve after a return [J]
    return_energy: np.ndarray  # of a return from x* [J]
    return_duration: np.ndarray  # [s]

    def at(self, values):
        """``values`` (n, K) interpolated at x*."""
        cols = np.arange(values.shape[0])
        v0, v1 = values[cols, self.column - 1], values[cols, self.column]
        return np.where(self.fraction > 0.0, v0 + self.fraction * (v1 - v0), v0)


def _point_of_no_return(battery, prof, ice, e_back, t_back) -> _NoReturnPoint:
    """x* where the energy above the reserve first fails to cover the return (ice legs)."""
    x, t, e = prof.position, prof.elapsed, prof.energy
    finite = np.isfinite(t_back)
    spare = np.where(finite, _columns(battery).drawable(t + np.where(finite, t_back, 0.0))
                     - e - e_back, -np.inf)
    crossed = ice[prof.leg][None, :] & (spare <= 0.0)
    crossed[:, 0] = False
    has_pnr = crossed.any(axis=1)
    k = np.where(has_pnr, np.argmax(crossed, axis=1), 1)
    cols = np.arange(x.shape[0])
    g0, g1 = spare[cols, k - 1], spare[cols, k]
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(g0 > 0.0, g0 / np.where(np.isfinite(g1), g0 - g1, np.inf), 0.0)
    frac = np.clip(np.nan_to_num(frac, nan=0.0), 0.0, 1.0)
    point = _NoReturnPoint(np.inf, k, frac, spare, 0.0, 0.0)
    # the return cost at x*: zero from an open-water column, linear on the ice leg
    return point._replace(
        position=np.where(has_pnr, point.at(x), np.inf),
        return_energy=np.where(frac > 0.0, point.at(np.where(np.isfinite(e_back), e_back, 0.0)),
                               e_back[cols, k - 1]),
        return_duration=np.where(frac > 0.0,
                                 point.at(np.where(np.isfinite(t_back), t_back, 0.0)),
                                 t_back[cols, k - 1]))


class _TurnBack(NamedTuple):
    turned: np.ndarray  # bool
    position: np.ndarray  # [m], inf where it did not turn
    time: np.ndarray  # [s], inf where it did not turn
    return_energy: np.ndarray  # [J]
    return_duration: np.ndarray  # [s]


def _turn_back(policy, battery, transit, prof, ice, bounds, pnr: _NoReturnPoint,
               arrival_energy, e_back, t_back) -> _TurnBack:
    """Who turns back where: at x* on a forecast shortfall, or where a current stopped it."""
    n = bounds.shape[0]
    if policy != "turn-back":
        return _TurnBack(np.zeros(n, dtype=bool), np.full(n, np.inf), np.full(n, np.inf),
                         np.zeros(n), np.zeros(n))
    x, t, e = prof.position, prof.elapsed, prof.energy
    x_pnr = pnr.position
    reached_pnr = np.isfinite(x_pnr) & (x[:, -1] >= x_pnr)
    e_star, t_star = pnr.at(e), pnr.at(t)
    per_metre = np.divide(e_star, x_pnr, out=np.zeros(n), where=reached_pnr & (x_pnr > 0))
    left = np.where(reached_pnr, bounds[:, -1] - x_pnr, 0.0)
    forecast = battery.drawable(t_star) - e_star - per_metre * left - arrival_energy
    at_pnr = reached_pnr & (forecast < 0.0)
    # stopped by a current under ice while a return was still possible
    stopped_ice = ~transit.arrived & ice[_leg_at(x[:, -1], bounds)] \
        & (pnr.spare[:, -1] > 0.0) & ~at_pnr
    return _TurnBack(
        turned=at_pnr | stopped_ice,
        position=np.where(at_pnr, x_pnr, np.where(stopped_ice, x[:, -1], np.inf)),
        time=np.where(at_pnr, t_star, np.where(stopped_ice, t[:, -1], np.inf)),
        return_energy=np.where(at_pnr, pnr.return_energy,
                               np.where(stopped_ice, e_back[:, -1], 0.0)),
        return_duration=np.where(at_pnr, pnr.return_duration,
                                 np.where(stopped_ice, t_back[:, -1], 0.0)))


def _columns(battery):
    """``battery`` with its per-sample fields as columns, to broadcast over (n, K) times."""
    return dataclasses.replace(battery, **{
        f.name: np.asarray(getattr(battery, f.name), dtype=float)[:, None]
        for f in dataclasses.fields(battery)})


def _leg_at(position, bounds):
    """Leg index of each sample's position (the last leg for the route end)."""
    inner = bounds[:, 1:-1]
    return np.sum(position[:, None] >= inner, axis=1) if inner.shape[1] else \
        np.zeros(position.shape, dtype=int)


def fault_split(outcome: UnderIceOutcome, ice, rates, shapes=None) -> FaultSplit:
    """Split each sample's hardware risk into no fault, a fault under ice, a fault in open water.

    Parameters
    ----------
    outcome : UnderIceOutcome
    ice : array_like of bool, (J,)
        Legs under an ice ceiling; the return flight of a turned-back vehicle and the loiter
        and homing at an ice-covered recovery point count as under ice.
    rates, shapes : array_like, (m,)
        Hazard rate [1/s] and Weibull shape [-] of each subsystem
        (:func:`physics.reliability.survival_probability`).

    Returns
    -------
    FaultSplit
        P(no fault) = S(T_end); P(fault under ice) = sum over the ice intervals
        [t_a, t_b] of S(t_a) - S(t_b); P(fault in open water) = the rest (derived).
    """
    ice = np.asarray(ice, dtype=bool)
    bt = outcome.boundary_time
    end = outcome.mission_end
    forward_end = np.where(outcome.turned_back, end - outcome.return_duration,
                           np.minimum(bt[:, -1], end))
    under = np.zeros(end.shape)
    for j in np.flatnonzero(ice):
        a = np.minimum(bt[:, j], forward_end)
        b = np.minimum(bt[:, j + 1], forward_end)
        under += _reliability.first_fault_probability(a, b, rates, shapes)
    # return flight (under ice by construction) and loiter/homing at an ice-covered hole
    tail_ice = outcome.turned_back | bool(ice[-1])
    under += np.where(tail_ice, _reliability.first_fault_probability(forward_end, end, rates,
                                                                     shapes), 0.0)
    no_fault = _reliability.survival_probability(end, rates, shapes)
    open_water = np.clip(1.0 - no_fault - under, 0.0, 1.0)
    return FaultSplit(no_fault=no_fault, under_ice=under, open_water=open_water)
