"""A transit along a route of legs, vectorized over samples.

The vehicle flies leg after leg at a fixed setpoint while fouling grows and the battery drains.
Everything a leg needs is an array of shape ``(n, J)`` (n samples, J legs) or ``(n,)``; nothing
here loops over samples. Only the legs (and sub-steps within them) are looped over.

Integration
-----------
Along the route the independent variable is the distance made good ``x``. Within a leg every
rate depends on time only through the fouling state, so the state is the elapsed time ``t``
and the energy drawn ``E``:

    dt/dx = 1 / u_g(phi(t)),     dE/dx = P(phi(t)) / u_g(phi(t)),

integrated with the classical fourth-order Runge-Kutta scheme on ``steps_per_leg`` equal
sub-steps of each sample's own leg length (so every sample sits at the same fraction of the
same leg at each step). The energy drawn keeps being integrated after the usable energy falls
to the reserve, so that the arrival margin is a smooth (possibly negative) function of the
inputs; the range is the distance where the margin

    g(x) = (1 - r) E_usable(t(x)) - E(x)

crosses zero, located inside its step by a cubic Hermite interpolant of g (both ends' slopes
are known). A state from which the vehicle cannot go on (no headway, infeasible glide) stops
the sample. Near such a stop dt/dx grows without bound (u_g -> 0), so inside that step time
becomes the variable: the stop time is bisected, and distance and energy are integrated in
time (dx/dt = u_g, dE/dt = P), where the rates stay regular.
Past the last leg the vehicle continues with the last leg's conditions, up to
``(1 + extension)`` times the route length; a range still positive there is reported as
censored at that distance (a stop in that extension ends the range there, uncensored).

Fouling multiplies the polar's zero-lift drag C_D0 (for a glider) or the hull drag (for a
propeller vehicle) by (1 + Delta_D phi); the glider's induced drag grows through the lift loss.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import NamedTuple, Protocol

import numpy as np

from physics import battery as _battery
from physics import buoyancy_engine as _engine
from physics import currents as _currents
from physics import drag as _drag
from physics import fouling as _fouling
from physics import glide as _glide
from physics import lift as _lift
from physics.states import FailureMode

__all__ = [
    "VehicleRates",
    "RateModel",
    "PropellerRates",
    "GliderRates",
    "BatteryState",
    "TransitOutcome",
    "RouteProfile",
    "fly_route",
]

_BISECTION_STEPS = 30  # 1e-9 of a step
_GAUSS_NODES, _GAUSS_WEIGHTS = np.polynomial.legendre.leggauss(8)


class VehicleRates(NamedTuple):
    """Power drawn and speed through water at one fouling state, for every sample."""

    power: np.ndarray  # [W]
    speed_through_water: np.ndarray  # horizontal, cycle-mean for a glider [m/s]
    state: np.ndarray  # int8: FailureMode.NONE or FailureMode.INFEASIBLE_GLIDE


class RateModel(Protocol):
    """What ``fly_route`` needs from a vehicle: its rates on leg ``leg`` at fouling ``phi``.

    Implementations are frozen dataclasses whose array fields carry the sample axis first
    (shape (n,) or (n, J)), so that the model can be restricted to a subset of samples.
    """

    def __call__(self, leg: int, phi: np.ndarray) -> VehicleRates: ...


@dataclass(frozen=True)
class PropellerRates:
    """Propeller vehicle in level flight at a fixed speed through water.

    P = D(phi) U / eta + P_hotel, with D(phi) = D_clean (1 + Delta_D phi).

    Parameters (arrays broadcastable to (n, J) or (n,))
    ----------
    clean_drag : hull drag of the clean vehicle on each leg at the setpoint [N], (n, J)
    speed : speed through water [m/s], (n,) or per leg (n, J)
    propulsive_efficiency : overall propulsive efficiency (0, 1], (n,) or per leg (n, J)
    hotel_load : hotel load on each leg [W], (n, J)
    drag_increase : fractional drag increase at full fouling [-], (n,)
    """

    clean_drag: np.ndarray
    speed: np.ndarray
    propulsive_efficiency: np.ndarray
    hotel_load: np.ndarray
    drag_increase: np.ndarray

    def __call__(self, leg: int, phi: np.ndarray) -> VehicleRates:
        drag = self.clean_drag[:, leg] * _drag.fouling_drag_multiplier(phi, self.drag_increase)
        speed = self.speed if np.ndim(self.speed) < 2 else self.speed[:, leg]
        efficiency = self.propulsive_efficiency
        if np.ndim(efficiency) >= 2:  # per leg, e.g. from an efficiency curve over speed
            efficiency = efficiency[:, leg]
        power = drag * speed / efficiency + self.hotel_load[:, leg]
        speed = np.broadcast_to(speed, power.shape)
        state = np.zeros(power.shape, dtype=np.int8)
        return VehicleRates(power, speed, state)


@dataclass(frozen=True)
class GliderRates:
    """Buoyancy glider on saw-tooth dive cycles at a commanded glide angle and net buoyancy.

    Fouling multiplies C_D0 by (1 + Delta_D phi) and the lift slope by (1 - Delta_L phi), which
    raises the polar's K by 1/(1 - Delta_L phi)^2. The cycle-mean horizontal speed and power
    come from :func:`physics.buoyancy_engine.dive_cycle`.

    Parameters (arrays)
    ----------
    glide_angle : [rad], (n,);  net_buoyancy : [N], (n,)
    density : seawater density on each leg [kg/m3], (n, J)
    reference_area : polar reference area [m2], (n,)
    zero_lift_drag, induced_drag_factor, max_lift_coefficient : clean polar, (n,)
    pump_efficiency : (n,);  hotel_load : [W], (n, J)
    top_depth, bottom_depth : dive band on each leg [m], (n, J)
    inflection_energy [J], inflection_time [s] : per inflection, (n,)
    drag_increase, lift_loss : at full fouling, (n,)
    """

    glide_angle: np.ndarray
    net_buoyancy: np.ndarray
    density: np.ndarray
    reference_area: np.ndarray
    zero_lift_drag: np.ndarray
    induced_drag_factor: np.ndarray
    max_lift_coefficient: np.ndarray
    pump_efficiency: np.ndarray
    hotel_load: np.ndarray
    top_depth: np.ndarray
    bottom_depth: np.ndarray
    inflection_energy: np.ndarray
    inflection_time: np.ndarray
    drag_increase: np.ndarray
    lift_loss: np.ndarray

    def __call__(self, leg: int, phi: np.ndarray) -> VehicleRates:
        cd0 = self.zero_lift_drag * _drag.fouling_drag_multiplier(phi, self.drag_increase)
        k = _lift.fouled_induced_drag_factor(self.induced_drag_factor, self.lift_loss * phi)
        sol = _glide.steady_glide(
            self.glide_angle, self.net_buoyancy, self.density[:, leg], self.reference_area,
            cd0, k, max_lift_coefficient=self.max_lift_coefficient,
        )
        top = self.top_depth[:, leg]
        bottom = self.bottom_depth[:, leg]
        cycle = _engine.dive_cycle(
            sol.horizontal_speed, sol.vertical_speed, self.net_buoyancy, top, bottom,
            self.pump_efficiency, self.hotel_load[:, leg],
            inflection_energy=self.inflection_energy, inflection_time=self.inflection_time,
        )
        ok = (sol.state == _glide.GLIDE_OK) & (bottom > top) & (cycle.time > 0)
        state = np.where(ok, FailureMode.NONE, FailureMode.INFEASIBLE_GLIDE).astype(np.int8)
        return VehicleRates(cycle.mean_power, cycle.mean_horizontal_speed, state)


@dataclass(frozen=True)
class BatteryState:
    """Battery and reserve policy of every sample (SI: J, 1/s).

    The energy that may be drawn before touching the reserve at elapsed time t is
    (1 - r) * usable_energy(t), see :func:`physics.battery.usable_energy`.
    """

    nominal_energy: np.ndarray
    cold_derating: np.ndarray
    fade_rate: np.ndarray
    usable_fraction: np.ndarray
    reserve_fraction: np.ndarray

    def drawable(self, elapsed: np.ndarray) -> np.ndarray:
        usable = _battery.usable_energy(
            self.nominal_energy, cold_derating=self.cold_derating, fade_rate=self.fade_rate,
            elapsed=elapsed, usable_fraction=self.usable_fraction,
        )
        return _battery.energy_above_reserve(usable, self.reserve_fraction)

    def usable(self, elapsed: np.ndarray) -> np.ndarray:
        """Energy the pack can deliver at all (reserve included) at elapsed time t [J]."""
        return _battery.usable_energy(
            self.nominal_energy, cold_derating=self.cold_derating, fade_rate=self.fade_rate,
            elapsed=elapsed, usable_fraction=self.usable_fraction,
        )

    def drawable_rate(self, elapsed: np.ndarray) -> np.ndarray:
        """d/dt of :meth:`drawable` [W]: linear fade, zero once the pack is faded out."""
        slope = -(1.0 - self.reserve_fraction) * self.nominal_energy * self.cold_derating \
            * self.usable_fraction * self.fade_rate
        return np.where(self.drawable(elapsed) > 0.0, slope, 0.0)


class TransitOutcome(NamedTuple):
    """Per-sample outcome of :func:`fly_route` (SI units)."""

    range: np.ndarray  # distance at which drawable energy reaches the reserve [m]
    range_censored: np.ndarray  # bool: still above reserve at the extension's end
    arrived: np.ndarray  # bool: reached the route end (no headway/glide stop)
    reaches_recovery: np.ndarray  # bool: arrived with drawn energy <= usable (reserve may be used)
    success: np.ndarray  # bool: arrived, range >= route, duration <= limit
    failure_mode: np.ndarray  # int8 FailureMode, first event along the route
    failing_leg: np.ndarray  # int16 leg index of that event, -1 for success
    duration: np.ndarray  # time to the route end if arrived, else time at the stop [s]
    margin: np.ndarray  # drawable energy left at the route end, negative = shortfall [J]
    margin_fraction: np.ndarray  # margin / usable energy at arrival [-]
    energy_per_distance: np.ndarray  # (n, J) per leg [J/m]; NaN for legs never reached
    route_energy_per_distance: np.ndarray  # energy drawn / distance flown on the route [J/m]
    route_length: np.ndarray  # [m]
    profile: "RouteProfile | None" = None  # state at every step boundary on the route


class RouteProfile(NamedTuple):
    """State of every sample at each RK4 step boundary on the route, shape (n, K).

    K = J * steps_per_leg + 1; column 0 is the departure, column ``j * steps_per_leg + s`` the
    end of sub-step s of leg j. A stopped sample keeps its stop state in later columns.
    """

    position: np.ndarray  # distance made good along the route [m]
    elapsed: np.ndarray  # [s]
    energy: np.ndarray  # energy drawn from the pack [J]
    fouling: np.ndarray  # fouling state phi [-]
    leg: np.ndarray  # (K,) int: leg of the step that ends at each column (0 for column 0)


def fly_route(
    rates: RateModel,
    battery: BatteryState,
    *,
    leg_length: np.ndarray,
    current_along: np.ndarray,
    current_across: np.ndarray,
    fouling_growth_factor: np.ndarray,
    fouling_onset: np.ndarray,
    fouling_time_constant: np.ndarray,
    max_duration: np.ndarray | float = np.inf,
    steps_per_leg: int = 8,
    extension: float = 0.5,
    extension_steps: int = 16,
    min_ground_speed: float = 0.01,
    distance_overhead: np.ndarray | float = 0.0,
    capacity_factor: np.ndarray | float = 1.0,
) -> TransitOutcome:
    """Fly every sample along the route and return its range, arrival and failure mode.

    Parameters
    ----------
    rates : RateModel
        The vehicle (:class:`PropellerRates` or :class:`GliderRates`).
    battery : BatteryState
    leg_length : array_like, (n, J)
        Length of each leg over ground [m].
    current_along, current_across : array_like, (n, J)
        Current along track (+ following) and across track [m/s].
    fouling_growth_factor : array_like, (n, J)
        Rate of the fouling clock on each leg relative to elapsed time [-].
    fouling_onset, fouling_time_constant : array_like, (n,)
        Onset delay and time constant of fouling growth on the fouling clock [s].
    max_duration : array_like or float
        Duration limit of the mission [s].
    steps_per_leg : int
        RK4 sub-steps per leg (closed-form checks: ~1e-9 relative with constant rates,
        ~3e-5 with a fouling onset inside a leg, whose kink limits that step's order).
    extension : float
        How far past the route end (as a fraction of the route) to follow the range.
    extension_steps : int
        RK4 steps over that extension.
    min_ground_speed : float
        Ground speed [m/s] below which the vehicle is taken to have no headway (default
        1 cm/s, under 1 km a day: a vehicle crawling slower is lost to the mission; a
        modelling choice, common practice, no source). 0 gives the bare u_g <= 0 rule.
    distance_overhead : array_like, (n, J), optional
        Extra distance flown per metre made good on each leg f [-] (dead reckoning under
        ice): time and energy per metre of route are multiplied by (1 + f).
    capacity_factor : array_like, (n, J), optional
        Share of its rated capacity the pack delivers at each leg's cell temperature c [-]
        (:func:`physics.battery.capacity_fraction`): energy drawn on the leg is counted
        against the rated capacity as E / c, so margins and energies per distance are in
        rated-capacity joules. 1 everywhere reproduces a temperature-blind budget.

    Returns
    -------
    TransitOutcome
    """
    leg_length = np.atleast_2d(np.asarray(leg_length, dtype=float))
    n, n_legs = leg_length.shape
    shape = (n, n_legs)
    c_along = np.broadcast_to(np.asarray(current_along, dtype=float), shape)
    c_across = np.broadcast_to(np.asarray(current_across, dtype=float), shape)
    growth = np.broadcast_to(np.asarray(fouling_growth_factor, dtype=float), shape)
    onset = np.broadcast_to(np.asarray(fouling_onset, dtype=float), (n,))
    tau = np.broadcast_to(np.asarray(fouling_time_constant, dtype=float), (n,))
    t_limit = np.broadcast_to(np.asarray(max_duration, dtype=float), (n,))
    # per metre of route: (1 + f) metres flown; energy counted against rated capacity as E / c
    path = 1.0 + np.broadcast_to(np.asarray(distance_overhead, dtype=float), shape)
    charge = np.broadcast_to(np.asarray(capacity_factor, dtype=float), shape)
    trace = []

    route = leg_length.sum(axis=1)
    x = np.zeros(n)
    t = np.zeros(n)
    energy = np.zeros(n)
    clock = np.zeros(n)

    moving = np.ones(n, dtype=bool)  # not stopped by headway / glide
    stop_x = np.full(n, np.inf)
    stop_mode = np.zeros(n, dtype=np.int8)
    stop_leg = np.full(n, -1, dtype=np.int16)
    range_x = np.full(n, np.nan)
    range_leg = np.full(n, -1, dtype=np.int16)
    time_x = np.full(n, np.inf)
    time_leg = np.full(n, -1, dtype=np.int16)
    leg_energy = np.zeros(shape)
    leg_distance = np.zeros(shape)
    reached = np.zeros(shape, dtype=bool)

    def derivatives(leg, t_now, t_entry, clock_entry):
        """dt/dx, dE/dx and a stop code at time t_now on leg `leg` (all samples)."""
        c = clock_entry + growth[:, leg] * (t_now - t_entry)
        phi = _fouling.fouling_state(c, onset, tau)
        r = rates(leg, phi)
        track = _currents.ground_track(r.speed_through_water, c_along[:, leg], c_across[:, leg])
        code = _stop_code(r.state, track, min_ground_speed)
        ug = np.where(code == FailureMode.NONE, track.ground_speed, 1.0)
        per_metre = path[:, leg] / ug
        return per_metre, r.power / charge[:, leg] * per_metre, code

    def one_leg(leg, h, n_steps, t_entry, clock_entry, record=False):
        nonlocal x, t, energy
        k1t, k1e, code1 = derivatives(leg, t, t_entry, clock_entry)
        for _ in range(n_steps):
            x0, t0, e0 = x.copy(), t.copy(), energy.copy()
            k2t, k2e, code2 = derivatives(leg, t0 + 0.5 * h * k1t, t_entry, clock_entry)
            k3t, k3e, code3 = derivatives(leg, t0 + 0.5 * h * k2t, t_entry, clock_entry)
            k4t, k4e, code4 = derivatives(leg, t0 + h * k3t, t_entry, clock_entry)
            t1 = t0 + h / 6.0 * (k1t + 2 * k2t + 2 * k3t + k4t)
            e1 = e0 + h / 6.0 * (k1e + 2 * k2e + 2 * k3e + k4e)
            k5t, k5e, code5 = derivatives(leg, t1, t_entry, clock_entry)
            bad = moving & ((code1 | code2 | code3 | code4 | code5) != FailureMode.NONE)
            ok = moving & ~bad
            # samples that can go on: take the step
            x = np.where(ok, x0 + h, x)
            t = np.where(ok, t1, t)
            energy = np.where(ok, e1, energy)
            if bad.any():
                stage_t = (t0 + 0.5 * h * k1t, t0 + 0.5 * h * k2t, t0 + h * k3t, t1)
                _stop_inside_step(leg, bad, h, x0, t0, e0, code1, stage_t,
                                  (code2, code3, code4, code5), t_entry, clock_entry)
            _locate_crossings(leg, ok, h, x0, t0, e0, t1, e1, k1t, k1e, k5t, k5e)
            leg_energy[:, leg] += energy - e0  # zero for samples already stopped
            leg_distance[:, leg] += x - x0
            moving[:] = ok
            k1t, k1e, code1 = k5t, k5e, code5
            if record:
                c = clock_entry + growth[:, leg] * (t - t_entry)
                trace.append((x.copy(), t.copy(), energy.copy(),
                              _fouling.fouling_state(c, onset, tau), leg))

    def _stop_inside_step(leg, bad, h, x0, t0, e0, code1, stage_t, stage_code, t_entry,
                          clock_entry):
        """Place the stop of samples ``bad`` inside this step, with time as the variable.

        Near a loss of headway dt/dx grows without bound, so the stop is found in time: the
        latest time t* at which the vehicle can still go on (bisection between the step start
        and the earliest stage found bad), then distance and energy are integrated in time,
        dx/dt = u_g and dE/dt = P, which stay regular up to t* (Gauss-Legendre).
        """
        nonlocal x, t, energy
        idx = np.flatnonzero(bad)
        sub = _Subset(idx, leg, t_entry, clock_entry)
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
        x[idx], t[idx], energy[idx] = new_x, t_stop, new_e
        stop_x[idx] = new_x
        stop_mode[idx] = mode
        stop_leg[idx] = leg
        # the duration limit may be passed before the stop
        late = (ta <= t_limit[idx]) & (t_stop > t_limit[idx]) & np.isinf(time_x[idx])
        if late.any():
            j = np.flatnonzero(late)
            dx_l, _ = sub.integrate(ta, np.where(late, t_limit[idx], ta))
            time_x[idx[j]] = x0[idx[j]] + dx_l[j]
            time_leg[idx[j]] = leg
        # the energy may reach the reserve before the stop: bisection in time on g(t)
        g0 = battery_drawable(ta, idx) - e0[idx]
        g1 = battery_drawable(t_stop, idx) - new_e
        cross = (g0 > 0) & (g1 <= 0) & np.isnan(range_x[idx])
        if cross.any():
            lo_c, hi_c = ta.copy(), t_stop.copy()
            for _ in range(_BISECTION_STEPS):
                mid = 0.5 * (lo_c + hi_c)
                _, de_mid = sub.integrate(ta, mid)
                above = battery_drawable(mid, idx) - (e0[idx] + de_mid) > 0
                lo_c = np.where(above, mid, lo_c)
                hi_c = np.where(above, hi_c, mid)
            dx_c, _ = sub.integrate(ta, 0.5 * (lo_c + hi_c))
            j = idx[cross]
            range_x[j] = x0[j] + dx_c[cross]
            range_leg[j] = leg
        no_range = np.isnan(range_x[idx])  # range ends at the stop; not an energy event
        range_x[idx[no_range]] = new_x[no_range]

    class _Subset:
        """Rates in time of the few samples that stop inside a step."""

        def __init__(self, idx, leg, t_entry, clock_entry):
            self.idx, self.leg = idx, leg
            self.rates_model = _take(rates, idx, n)
            self.t_entry, self.clock_entry = t_entry[idx], clock_entry[idx]

        def rates(self, t_now):
            """(power [W], ground speed [m/s], stop code) at times ``t_now``."""
            i, leg = self.idx, self.leg
            c = self.clock_entry + growth[i, leg] * (t_now - self.t_entry)
            r = self.rates_model(leg, _fouling.fouling_state(c, onset[i], tau[i]))
            track = _currents.ground_track(r.speed_through_water, c_along[i, leg],
                                           c_across[i, leg])
            code = _stop_code(r.state, track, min_ground_speed)
            return r.power / charge[i, leg], track.ground_speed / path[i, leg], code

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

    def battery_drawable(t_vals, idx=None):
        if idx is None:
            return battery.drawable(t_vals)
        b = battery
        usable = _battery.usable_energy(
            b.nominal_energy[idx], cold_derating=b.cold_derating[idx], fade_rate=b.fade_rate[idx],
            elapsed=t_vals, usable_fraction=b.usable_fraction[idx])
        return _battery.energy_above_reserve(usable, b.reserve_fraction[idx])

    def _locate_crossings(leg, ok, h, x0, t0, e0, t1, e1, k1t, k1e, k5t, k5e):
        # reserve crossing: g = drawable(t) - E, Hermite-cubic in the step
        g0 = battery.drawable(t0) - e0
        g1 = battery.drawable(t1) - e1
        cross = ok & (g0 > 0) & (g1 <= 0) & np.isnan(range_x)
        if cross.any():
            j = np.flatnonzero(cross)
            d0 = (battery.drawable_rate(t0)[j] * k1t[j] - k1e[j]) * h[j]
            d1 = (battery.drawable_rate(t1)[j] * k5t[j] - k5e[j]) * h[j]
            s = _hermite_root(g0[j], g1[j], d0, d1)
            range_x[j] = x0[j] + s * h[j]
            range_leg[j] = leg
        # duration limit crossing
        late = ok & (t0 <= t_limit) & (t1 > t_limit) & np.isinf(time_x)
        if late.any():
            j = np.flatnonzero(late)
            s = _hermite_root(t0[j] - t_limit[j], t1[j] - t_limit[j],
                              k1t[j] * h[j], k5t[j] * h[j], increasing=True)
            time_x[j] = x0[j] + s * h[j]
            time_leg[j] = leg

    # a budget already at the reserve at departure: range 0, an energy failure on leg 0
    empty = battery.drawable(np.zeros(n)) <= 0.0
    range_x[empty] = 0.0
    range_leg[empty] = 0

    # --- the legs -------------------------------------------------------------------------
    trace.append((x.copy(), t.copy(), energy.copy(), _fouling.fouling_state(clock, onset, tau), 0))
    for leg in range(n_legs):
        reached[:, leg] = moving
        t_entry = t.copy()
        clock_entry = clock.copy()
        h = leg_length[:, leg] / steps_per_leg
        one_leg(leg, h, steps_per_leg, t_entry, clock_entry, record=True)
        clock = clock_entry + growth[:, leg] * (t - t_entry)

    arrived = moving.copy()
    duration = t.copy()
    margin = battery.drawable(t) - energy
    usable_end = _battery.usable_energy(
        battery.nominal_energy, cold_derating=battery.cold_derating,
        fade_rate=battery.fade_rate, elapsed=t, usable_fraction=battery.usable_fraction)
    # a sample that stopped has no arrival margin: report at most 0 (both forms alike)
    margin = np.where(arrived, margin, np.minimum(margin, 0.0))
    margin_fraction = np.divide(margin, usable_end, out=np.zeros(n), where=usable_end > 0)
    # reaches the recovery point before the pack is truly empty (possibly on its reserve)
    reaches = arrived & (energy <= usable_end)

    # --- past the route end with the last leg's conditions ----------------------------------
    last = n_legs - 1
    cap = route * (1.0 + extension)
    follow = arrived & np.isnan(range_x)
    if extension > 0 and follow.any():
        moving[:] = follow
        h = np.where(follow, (cap - route) / extension_steps, 0.0)
        t_entry = t.copy()
        clock_entry = clock.copy()
        saved = (leg_energy[:, last].copy(), leg_distance[:, last].copy(), stop_x.copy(),
                 stop_mode.copy(), stop_leg.copy(), time_x.copy(), time_leg.copy())
        one_leg(last, h, extension_steps, t_entry, clock_entry)
        # events past the route end do not change the verdict at the recovery point
        (leg_energy[:, last], leg_distance[:, last], stop_x, stop_mode, stop_leg,
         time_x, time_leg) = saved
    censored = np.isnan(range_x)
    range_x = np.where(censored, np.where(arrived, cap, x), range_x)

    # --- first event along the route decides the failure mode -------------------------------
    energy_x = np.where(range_leg >= 0, range_x, np.inf)
    energy_x = np.where(energy_x < route, energy_x, np.inf)
    time_x_route = np.where(time_x <= route, time_x, np.inf)
    time_x_route = np.where(arrived & (duration > t_limit) & np.isinf(time_x_route), route,
                            time_x_route)
    events = np.stack([energy_x, stop_x, time_x_route])
    first = np.argmin(events, axis=0)
    any_event = np.isfinite(events.min(axis=0))
    mode_of = np.stack([np.full(n, FailureMode.ENERGY, dtype=np.int8), stop_mode,
                        np.full(n, FailureMode.TIME_LIMIT, dtype=np.int8)])
    leg_of = np.stack([range_leg, stop_leg, np.where(time_leg >= 0, time_leg, last)])
    cols = np.arange(n)
    failure_mode = np.where(any_event, mode_of[first, cols], FailureMode.NONE).astype(np.int8)
    failing_leg = np.where(any_event, leg_of[first, cols], -1).astype(np.int16)
    success = failure_mode == FailureMode.NONE

    with np.errstate(invalid="ignore", divide="ignore"):
        per_distance = np.where(leg_distance > 0, leg_energy / leg_distance, np.nan)
    flown = leg_distance.sum(axis=1)
    route_per_distance = np.divide(leg_energy.sum(axis=1), flown, out=np.zeros(n),
                                   where=flown > 0)

    return TransitOutcome(
        range=range_x,
        range_censored=censored & arrived,
        arrived=arrived,
        reaches_recovery=reaches,
        success=success,
        failure_mode=failure_mode,
        failing_leg=failing_leg,
        duration=duration,
        margin=margin,
        margin_fraction=margin_fraction,
        energy_per_distance=per_distance,
        route_energy_per_distance=route_per_distance,
        route_length=route,
        profile=RouteProfile(*(np.column_stack(column) for column in list(zip(*trace))[:4]),
                             leg=np.array([item[4] for item in trace], dtype=int)),
    )


def _stop_code(vehicle_state, track, min_ground_speed):
    """The vehicle's own stop state, else NO_HEADWAY below the ground-speed floor (int8)."""
    headway = track.headway & (track.ground_speed > min_ground_speed)
    code = np.where(vehicle_state != FailureMode.NONE, vehicle_state,
                    np.where(headway, FailureMode.NONE, FailureMode.NO_HEADWAY))
    return code.astype(np.int8)


def _take(model, idx, n):
    """The same rate model restricted to samples ``idx`` (array fields have samples first)."""
    changes = {}
    for f in dataclasses.fields(model):
        value = np.asarray(getattr(model, f.name))
        if value.ndim >= 1 and value.shape[0] == n:
            changes[f.name] = value[idx]
    return dataclasses.replace(model, **changes)


def _hermite_root(y0, y1, d0, d1, *, increasing=False):
    """Fraction s in [0, 1] where the cubic Hermite through (0, y0, d0), (1, y1, d1) is zero.

    For a decreasing quantity (y0 > 0 >= y1) or, with ``increasing``, y0 <= 0 < y1. Bisection,
    so it never leaves the bracket even if the slopes are inconsistent.
    """
    lo = np.zeros_like(y0)
    hi = np.ones_like(y0)
    sign = -1.0 if increasing else 1.0
    for _ in range(_BISECTION_STEPS):
        s = 0.5 * (lo + hi)
        s2, s3 = s * s, s * s * s
        y = (2 * s3 - 3 * s2 + 1) * y0 + (s3 - 2 * s2 + s) * d0 \
            + (-2 * s3 + 3 * s2) * y1 + (s3 - s2) * d1
        above = sign * y > 0
        lo = np.where(above, s, lo)
        hi = np.where(above, hi, s)
    return 0.5 * (lo + hi)
