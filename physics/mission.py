"""A transit along a route of legs, vectorized over samples.

The vehicle flies leg after leg at a fixed setpoint while fouling grows and the battery drains.
Everything a leg needs is an array of shape ``(n, J)`` (n samples, J legs) or ``(n,)``; nothing
here loops over samples. Only the legs (and sub-steps within them) are looped over.

Along the route the independent variable is the distance made good ``x``; the state is the
elapsed time ``t`` and the energy drawn ``E``. A propeller vehicle (its speed does not foul, its
power is affine in the fouling state) is flown exactly, leg by leg, in closed form
(:mod:`physics.route_exact`); any other rate model, such as a glider re-trimming for fouling,
by fourth-order Runge-Kutta steps in distance with the events located inside the step
(:mod:`physics.route_rk`). The energy drawn keeps being counted after the usable energy falls
to the reserve, so that the arrival margin is a smooth (possibly negative) function of the
inputs; the range is the distance where the margin

    g(x) = (1 - r) E_usable(t(x)) - E(x)

crosses zero. A state from which the vehicle cannot go on (no headway, infeasible glide) stops
the sample. Past the last leg the vehicle continues with the last leg's conditions, up to
``(1 + extension)`` times the route length; a range still positive there is reported as
censored at that distance (a stop in that extension ends the range there, uncensored).

Fouling multiplies the polar's zero-lift drag C_D0 (for a glider) or the hull drag (for a
propeller vehicle) by (1 + Delta_D phi); the glider's induced drag grows through the lift loss.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple, Protocol

import numpy as np

from physics import battery as _battery
from physics import buoyancy_engine as _engine
from physics import currents as _currents
from physics import drag as _drag
from physics import fouling as _fouling
from physics import route_exact as _exact
from physics import route_rk as _rk
from physics import glide as _glide
from physics import lift as _lift
from physics.route_state import RouteInputs, RouteRecord
from physics.states import FailureMode, FlightEvent

__all__ = [
    "VehicleRates",
    "RateModel",
    "PropellerRates",
    "GliderRates",
    "BatteryState",
    "TransitOutcome",
    "RouteProfile",
    "fly_route",
    "INTEGRATIONS",
]

#: how fly_route integrates: exact per leg where the rate model allows it, else Runge-Kutta
INTEGRATIONS = ("auto", "exact", "runge-kutta")


class VehicleRates(NamedTuple):
    """Power drawn and speed through water at one fouling state, for every sample."""

    power: np.ndarray  # [W]
    speed_through_water: np.ndarray  # horizontal, cycle-mean for a glider [m/s]
    state: np.ndarray  # int8: FailureMode.NONE or the vehicle's own stop state
    # velocity over ground the vehicle adds to the leg's current (a glider's drift while it
    # is at the surface, cycle-mean) [m/s]
    drift_along: np.ndarray | float = 0.0
    drift_across: np.ndarray | float = 0.0
    flags: np.ndarray | int = 0  # FlightEvent bits of this state
    surfacing_rate: np.ndarray | float = 0.0  # surfacings per second [1/s]


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
        clean, fouled, speed = self.power_terms(leg)
        power = clean + fouled * np.clip(phi, 0.0, 1.0)
        speed = np.broadcast_to(speed, power.shape)
        state = np.zeros(power.shape, dtype=np.int8)
        return VehicleRates(power, speed, state)

    def power_terms(self, leg: int):
        """P_0 = D U / eta + P_hotel and P_1 = D U Delta_D / eta [W] on leg ``leg``, so that
        P(phi) = P_0 + P_1 phi, and the speed through water U [m/s]."""
        drag = self.clean_drag[:, leg]
        speed = self.speed if np.ndim(self.speed) < 2 else self.speed[:, leg]
        efficiency = self.propulsive_efficiency
        if np.ndim(efficiency) >= 2:  # per leg, e.g. from an efficiency curve over speed
            efficiency = efficiency[:, leg]
        propulsion = drag * speed / efficiency
        return propulsion + self.hotel_load[:, leg], propulsion * self.drag_increase, speed


@dataclass(frozen=True)
class GliderRates:
    """Buoyancy glider on saw-tooth dive cycles, trimmed by a pilot's flight policy.

    Fouling multiplies C_D0 by (1 + Delta_D phi) and the lift slope by (1 - Delta_L phi), which
    raises the polar's K by 1/(1 - Delta_L phi)^2. On each leg the flight policy
    (:func:`physics.glide.glide_trim`) sets the angle and the net buoyancy within the engine's
    limit; the cycle-mean horizontal speed and power, with surfacing every N dives, come from
    :func:`physics.buoyancy_engine.dive_cycle`. While at the surface the vehicle moves with the
    surface current instead of the dive band's: the difference, times the share of time at
    the surface, is returned as a drift velocity.

    Parameters (arrays)
    ----------
    glide_angle : commanded [rad], (n,);  net_buoyancy : commanded [N], (n,)
    density : seawater density on each leg [kg/m3], (n, J)
    reference_area : polar reference area [m2], (n,)
    zero_lift_drag, induced_drag_factor, max_lift_coefficient : clean polar, (n,)
    pump_efficiency : (n,);  hotel_load : [W], (n, J) (sensor payload included)
    top_depth, bottom_depth : dive band on each leg [m], (n, J)
    inflection_energy [J], inflection_time [s] : per inflection, (n,)
    drag_increase, lift_loss : at full fouling, (n,)
    flight_policy : physics.glide FLY_* code on each leg, (n, J) (default hold_angle)
    horizontal_speed : commanded horizontal speed through water [m/s], (n,)
    max_net_buoyancy : engine limit on each leg after trimming for the route [N], (n, J)
    stroke_fixed_energy : fixed cost per pump stroke [J], (n,)
    dives_per_surfacing : N on each leg (inf: never, e.g. under ice), (n, J)
    surface_time [s], surface_power [W] : per surfacing, (n,)
    surface_drift_along, surface_drift_across : surface current minus the dive band's
        current on each leg [m/s], (n, J)
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
    flight_policy: np.ndarray | int = _glide.FLY_HOLD_ANGLE
    horizontal_speed: np.ndarray | float = 0.0
    max_net_buoyancy: np.ndarray | float = np.inf
    stroke_fixed_energy: np.ndarray | float = 0.0
    dives_per_surfacing: np.ndarray | float = np.inf
    surface_time: np.ndarray | float = 0.0
    surface_power: np.ndarray | float = 0.0
    surface_drift_along: np.ndarray | float = 0.0
    surface_drift_across: np.ndarray | float = 0.0
    # the clean vehicle's trim on each leg (it does not depend on fouling): computed once
    _clean_trim: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def __call__(self, leg: int, phi: np.ndarray) -> VehicleRates:
        trim, cycle, clean, state = self.cycle_at(leg, phi)
        n_dives = _on_leg(self.dives_per_surfacing, leg)
        surfaces = np.isfinite(n_dives) & (n_dives > 0)
        trimmed = trim.state == _glide.GLIDE_OK
        # re-trimmed for fouling: 10 % more net buoyancy or 0.5 deg steeper than the clean
        # vehicle would fly on this leg (thresholds: a reporting choice)
        for_fouling = trimmed & ((trim.net_buoyancy > 1.1 * clean.net_buoyancy)
                                 | (trim.glide_angle > clean.glide_angle + _RETRIM_ANGLE))
        flags = (np.where(for_fouling, FlightEvent.RETRIMMED, 0)
                 | np.where(trim.at_limit, FlightEvent.AT_ENGINE_LIMIT, 0))
        time = np.where(cycle.time > 0, cycle.time, np.inf)
        return VehicleRates(
            cycle.mean_power, cycle.mean_horizontal_speed, state,
            drift_along=cycle.surface_fraction * _on_leg(self.surface_drift_along, leg),
            drift_across=cycle.surface_fraction * _on_leg(self.surface_drift_across, leg),
            flags=flags.astype(np.int8),
            surfacing_rate=np.where(surfaces, 1.0 / (np.where(surfaces, n_dives, 1.0) * time),
                                    0.0),
        )

    def cycle_at(self, leg: int, phi: np.ndarray):
        """The trim, the dive cycle, the clean vehicle's trim and the stop state on leg
        ``leg`` at fouling ``phi`` (what :meth:`__call__` and the energy split both read)."""
        cd0 = self.zero_lift_drag * _drag.fouling_drag_multiplier(phi, self.drag_increase)
        k = _lift.fouled_induced_drag_factor(self.induced_drag_factor, self.lift_loss * phi)
        top = self.top_depth[:, leg]
        bottom = self.bottom_depth[:, leg]
        hotel = self.hotel_load[:, leg]
        n_dives = _on_leg(self.dives_per_surfacing, leg)
        policy = _on_leg(self.flight_policy, leg)
        b_max = _on_leg(self.max_net_buoyancy, leg)
        band = bottom - top
        surfaces = np.isfinite(n_dives) & (n_dives > 0)
        per_cycle = np.where(surfaces, self.surface_time / np.where(surfaces, n_dives, 1.0), 0.0)
        overhead = (2.0 * (self.inflection_energy + hotel * self.inflection_time)
                    + self.stroke_fixed_energy + (self.surface_power + hotel) * per_cycle)
        def trim_with(zero_lift_drag, induced_drag_factor, rows=slice(None)):
            def pick(value):  # the per-sample fields at ``rows``; scalars as they are
                return value[rows] if np.ndim(value) else value
            return _glide.glide_trim(
                pick(policy), pick(self.glide_angle), pick(self.net_buoyancy),
                pick(self.horizontal_speed), pick(self.density[:, leg]),
                pick(self.reference_area), zero_lift_drag, induced_drag_factor,
                pick(self.max_lift_coefficient), pick(b_max),
                pump_efficiency=pick(self.pump_efficiency),
                overhead_per_tan=pick(overhead / (2.0 * np.where(band > 0, band, 1.0))))

        clean = self._clean_trim.get(leg)
        if clean is None:
            clean = self._clean_trim[leg] = trim_with(self.zero_lift_drag,
                                                      self.induced_drag_factor)
        # a sample not yet fouled (phi = 0, before the onset) flies the clean trim exactly:
        # the polar is the clean one to the last bit, so only the fouled rows are trimmed
        fouled = np.flatnonzero(np.broadcast_to(phi, cd0.shape) > 0.0)
        if cd0.ndim == 0 or fouled.size == cd0.size:
            trim = trim_with(cd0, k)
        else:
            trim = clean
            if fouled.size:
                part = trim_with(cd0[fouled], k[fouled], fouled)
                trim = _glide.GlideTrim(*(_scatter(c, fouled, p) for c, p in zip(clean, part)))
        cycle = _engine.dive_cycle(
            trim.horizontal_speed, trim.vertical_speed, trim.net_buoyancy, top, bottom,
            self.pump_efficiency, hotel,
            inflection_energy=self.inflection_energy, inflection_time=self.inflection_time,
            stroke_fixed_energy=self.stroke_fixed_energy, dives_per_surfacing=n_dives,
            surface_time=self.surface_time, surface_power=self.surface_power,
        )
        trimmed = trim.state == _glide.GLIDE_OK
        limited = trim.state == _glide.TRIM_ABOVE_ENGINE_LIMIT
        cannot_trim = limited & ((b_max <= 0.0) | (policy == _glide.FLY_HOLD_ANGLE))
        state = np.where(
            limited, np.where(cannot_trim, FailureMode.CANNOT_TRIM,
                              FailureMode.CANNOT_HOLD_FLIGHT),
            np.where(trimmed & (band > 0) & (cycle.time > 0), FailureMode.NONE,
                     FailureMode.INFEASIBLE_GLIDE)).astype(np.int8)
        return trim, cycle, clean, state


_RETRIM_ANGLE = np.deg2rad(0.5)


def _scatter(values, rows, part):
    """A copy of ``values`` with ``part`` written at ``rows``."""
    out = np.array(values, copy=True)
    out[rows] = part
    return out


def _on_leg(value, leg):
    """Column ``leg`` of a per-leg (n, J) field; a per-sample or scalar field as it is."""
    value = np.asarray(value)
    return value[:, leg] if value.ndim == 2 else value


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
    flight_events: np.ndarray  # int8 FlightEvent bits seen along the route (policy actions)
    surfacings: np.ndarray  # number of surfacings on the route (glider) [-]
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
    current_policy: np.ndarray | int = _currents.CRAB,
    distance_overhead: np.ndarray | float = 0.0,
    capacity_factor: np.ndarray | float = 1.0,
    integration: str = "auto",
    profile_steps: int | None = None,
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
        Runge-Kutta sub-steps per leg (closed-form checks: ~1e-9 relative with constant
        rates, ~3e-5 with a fouling onset inside a leg, whose kink limits that step's order).
    extension : float
        How far past the route end (as a fraction of the route) to follow the range.
    extension_steps : int
        Runge-Kutta steps over that extension.
    min_ground_speed : float
        Ground speed [m/s] below which the vehicle is taken to have no headway (default
        1 cm/s, under 1 km a day: a vehicle crawling slower is lost to the mission; a
        modelling choice, common practice, no source). 0 gives the bare u_g <= 0 rule.
    current_policy : array_like of int, (J,) or (n, J)
        How each leg's cross current is met (:data:`physics.currents.CURRENT_POLICIES`):
        crab to hold the track (default), drift and make the offset good later, or the
        faster of the two.
    distance_overhead : array_like, (n, J), optional
        Extra distance flown per metre made good on each leg f [-] (dead reckoning under
        ice): time and energy per metre of route are multiplied by (1 + f).
    capacity_factor : array_like, (n, J), optional
        Share of its rated capacity the pack delivers at each leg's cell temperature c [-]
        (:func:`physics.battery.capacity_fraction`): energy drawn on the leg is counted
        against the rated capacity as E / c, so margins and energies per distance are in
        rated-capacity joules. 1 everywhere reproduces a temperature-blind budget.
    integration : {"auto", "exact", "runge-kutta"}
        "exact" flies each leg in closed form (a :class:`PropellerRates` vehicle only);
        "runge-kutta" steps any rate model; "auto" (default) takes the exact path where the
        rate model allows it.
    profile_steps : int, optional
        Profile columns recorded per leg (default ``steps_per_leg``; 1 records the leg
        boundaries only, all :func:`physics.turnback.fault_split` needs). With Runge-Kutta it
        must divide ``steps_per_leg``.

    Returns
    -------
    TransitOutcome
    """
    route = _route_inputs(leg_length, current_along, current_across, fouling_growth_factor,
                          fouling_onset, fouling_time_constant, max_duration, current_policy,
                          distance_overhead, capacity_factor, min_ground_speed, extension)
    if integration not in INTEGRATIONS:
        raise ValueError(f"integration must be one of {INTEGRATIONS}, got {integration!r}")
    exact = isinstance(rates, PropellerRates)
    if integration == "exact" and not exact:
        raise ValueError(f"exact integration needs PropellerRates, got {type(rates).__name__}")
    exact = exact and integration != "runge-kutta"
    profile_steps = steps_per_leg if profile_steps is None else int(profile_steps)
    if profile_steps < 1 or (not exact and steps_per_leg % profile_steps):
        raise ValueError(f"profile_steps must be >= 1 and divide steps_per_leg = "
                         f"{steps_per_leg} (Runge-Kutta), got {profile_steps}")
    rec = RouteRecord(route.n, route.n_legs)
    # a budget already at the reserve at departure: range 0, an energy failure on leg 0
    empty = battery.drawable(np.zeros(route.n)) <= 0.0
    rec.range_x[empty] = 0.0
    rec.range_leg[empty] = 0
    if exact:
        _exact.fly_legs_exact(rates, battery, route, rec, profile_steps=profile_steps)
    else:
        _rk.fly_legs_rk(rates, battery, route, rec, steps_per_leg=steps_per_leg,
                        profile_every=steps_per_leg // profile_steps)
    arrival = _arrival(battery, rec)
    if rec.columns is not None:  # written in place by the flight
        profile = RouteProfile(*rec.columns)
    else:  # a trace item is one column (n,) or a block of columns (n, m) of one leg
        profile = RouteProfile(*(np.column_stack(column) for column in list(zip(*rec.trace))[:4]),
                               leg=np.concatenate([np.full(np.shape(item[0])[1:] or 1, item[4])
                                                   for item in rec.trace]).astype(int))
    # past the route end with the last leg's conditions, only to find where the range ends
    follow = arrival["arrived"] & np.isnan(rec.range_x)
    if extension > 0 and follow.any():
        if exact:
            _exact.follow_extension_exact(rates, battery, route, rec, follow)
        else:
            _rk.follow_extension_rk(rates, battery, route, rec, follow, extension_steps)
    return _outcome(route, rec, arrival, profile)


def _route_inputs(leg_length, current_along, current_across, growth, onset, tau, max_duration,
                  policy, overhead, capacity, min_ground_speed, extension) -> RouteInputs:
    """The route normalised once to (n, J) and (n,) arrays; impossible fouling refused."""
    leg_length = np.atleast_2d(np.asarray(leg_length, dtype=float))
    n, n_legs = leg_length.shape
    shape = (n, n_legs)

    def per_leg(value):
        return np.broadcast_to(np.asarray(value, dtype=float), shape)

    def per_sample(value):
        return np.broadcast_to(np.asarray(value, dtype=float), (n,))

    tau = per_sample(tau)
    _fouling.fouling_state(0.0, 0.0, tau)  # a negative time constant is refused here, once
    return RouteInputs(
        leg_length=leg_length, current_along=per_leg(current_along),
        current_across=per_leg(current_across), growth=per_leg(growth),
        onset=per_sample(onset), time_constant=tau, max_duration=per_sample(max_duration),
        policy=np.broadcast_to(np.asarray(policy), shape),
        # per metre of route: (1 + f) metres flown; energy counted against capacity as E / c
        path=1.0 + per_leg(overhead), charge=per_leg(capacity),
        min_ground_speed=float(min_ground_speed), extension=float(extension))


def _arrival(battery: BatteryState, rec: RouteRecord) -> dict:
    """State at the route end (or at the stop) before any extension past it."""
    arrived = rec.moving.copy()
    margin = battery.drawable(rec.t) - rec.energy
    usable_end = battery.usable(rec.t)
    # a sample that stopped has no arrival margin: report at most 0 (both forms alike)
    margin = np.where(arrived, margin, np.minimum(margin, 0.0))
    return dict(
        arrived=arrived, duration=rec.t.copy(), margin=margin, x=rec.x.copy(),
        margin_fraction=np.divide(margin, usable_end, out=np.zeros(rec.n),
                                  where=usable_end > 0),
        # reaches the recovery point before the pack is truly empty (possibly on its reserve)
        reaches=arrived & (rec.energy <= usable_end))


def _outcome(route: RouteInputs, rec: RouteRecord, arrival: dict, profile) -> TransitOutcome:
    """The first event along the route decides the failure mode; assemble the outcome."""
    n, last = route.n, route.n_legs - 1
    total = route.route
    arrived, duration = arrival["arrived"], arrival["duration"]
    cap = total * (1.0 + route.extension)
    censored = np.isnan(rec.range_x)
    range_x = np.where(censored, np.where(arrived, cap, arrival["x"]), rec.range_x)
    t_limit = route.max_duration
    energy_x = np.where(rec.range_leg >= 0, range_x, np.inf)
    energy_x = np.where(energy_x < total, energy_x, np.inf)
    time_x_route = np.where(rec.time_x <= total, rec.time_x, np.inf)
    time_x_route = np.where(arrived & (duration > t_limit) & np.isinf(time_x_route), total,
                            time_x_route)
    events = np.stack([energy_x, rec.stop_x, time_x_route])
    first = np.argmin(events, axis=0)
    any_event = np.isfinite(events.min(axis=0))
    mode_of = np.stack([np.full(n, FailureMode.ENERGY, dtype=np.int8), rec.stop_mode,
                        np.full(n, FailureMode.TIME_LIMIT, dtype=np.int8)])
    leg_of = np.stack([rec.range_leg, rec.stop_leg,
                       np.where(rec.time_leg >= 0, rec.time_leg, last)])
    cols = np.arange(n)
    failure_mode = np.where(any_event, mode_of[first, cols], FailureMode.NONE).astype(np.int8)
    failing_leg = np.where(any_event, leg_of[first, cols], -1).astype(np.int16)
    with np.errstate(invalid="ignore", divide="ignore"):
        per_distance = np.where(rec.leg_distance > 0, rec.leg_energy / rec.leg_distance, np.nan)
    flown = rec.leg_distance.sum(axis=1)
    route_per_distance = np.divide(rec.leg_energy.sum(axis=1), flown, out=np.zeros(n),
                                   where=flown > 0)
    return TransitOutcome(
        range=range_x,
        range_censored=censored & arrived,
        arrived=arrived,
        reaches_recovery=arrival["reaches"],
        success=failure_mode == FailureMode.NONE,
        failure_mode=failure_mode,
        failing_leg=failing_leg,
        duration=duration,
        margin=arrival["margin"],
        margin_fraction=arrival["margin_fraction"],
        energy_per_distance=per_distance,
        route_energy_per_distance=route_per_distance,
        route_length=total,
        flight_events=rec.seen_events,
        surfacings=rec.surfacings,
        profile=profile,
    )
