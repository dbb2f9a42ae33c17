"""From a scenario and a sample of its uncertain inputs to per-sample transit outcomes.

This is the one place where the scenario's file units (km, days, Wh, degrees) become SI and
where scenario fields are routed to the physics; no physical formula is written here. Every
consumer that needs the vehicle at given inputs (the sampled transit, the nominal budget, the
glide operating point of the report, the deterministic optimum of a sweep) goes through the
same routing functions below, so one density rule and one drag rule hold everywhere.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize

from physics import battery as cells
from physics import (buoyancy_engine, currents, drag, energy_split, glide, lift, mission,
                     propulsion, seawater, turnback)
from physics.states import FAILURE_MODE_NAMES, FailureMode
from uq.errors import InputError
from uq.outcomes import Outcomes
from uq.route_energy import RouteEnergy
from uq.scenario import (
    DragCoefficient,
    GliderVehicle,
    HullGeometry,
    PropellerVehicle,
    Scenario,
    Value,
)

__all__ = [
    "SECONDS_PER_DAY",
    "RANGE_EXTENSION",
    "range_limit_km",
    "FAILURE_MODE_NAMES",
    "possible_failure_modes",
    "FailureMode",
    "Outcomes",
    "ScenarioModel",
    "simulate_arrays",
    "simulate",
    "route_energy",
    "RouteEnergy",
    "nominal_inputs",
    "nominal",
    "NominalResult",
    "GlideOperatingPoint",
    "glide_operating_point",
    "deterministic_optimum",
]

SECONDS_PER_DAY = 86400.0
_J_PER_WH = 3600.0


class _Fields:
    """Looks up a scenario field's per-sample values in the sample array."""

    def __init__(self, scenario: Scenario, x: np.ndarray):
        x = np.asarray(x, dtype=float)
        if x.ndim != 2 or x.shape[1] != len(scenario.inputs):
            raise InputError(
                f"sample array has shape {x.shape}; expected (n, {len(scenario.inputs)}) "
                f"for the inputs {list(scenario.input_names)}"
            )
        self.x = x
        self.n = x.shape[0]
        self.column = {name: i for i, name in enumerate(scenario.input_names)}

    def __call__(self, value: Value | None, default: float | None = None) -> np.ndarray:
        if value is None:
            value = default
        if isinstance(value, (int, float)):
            return np.full(self.n, float(value))
        return self.x[:, self.column[value.name]]

    def legs(self, legs, attribute: str, *, fallback: np.ndarray | None = None) -> np.ndarray:
        cols = []
        for leg in legs:
            value = getattr(leg, attribute)
            cols.append(fallback if value is None else self(value))
        return np.column_stack(cols)


def _leg_water(scenario: Scenario, f: _Fields, depth: np.ndarray):
    """Density and kinematic viscosity on every leg at the given depth [m] (p ~ z in dbar)."""
    temperature = f.legs(scenario.legs, "temperature_C")
    salinity = f.legs(scenario.legs, "practical_salinity")
    pressure = np.broadcast_to(depth, temperature.shape)  # 1 dbar ~ 1 m of seawater
    rho = seawater.density(salinity, temperature, pressure)
    nu = seawater.kinematic_viscosity(temperature, salinity, rho)
    return rho, nu


def _propeller_setpoints(scenario: Scenario, f: _Fields, cruise: np.ndarray | None = None):
    """Speed through water [m/s] and depth [m] per leg, (n, J) or (n, 1) without overrides.

    ``cruise`` [m/s] replaces the [setpoint] speed (legs with their own speed keep it).
    """
    sp = scenario.setpoint
    legs = scenario.legs
    cruise = f(sp.speed_m_s) if cruise is None else np.broadcast_to(
        np.asarray(cruise, dtype=float), (f.n,))
    depth = f.legs(legs, "depth_m", fallback=f(sp.depth_m)) if any(
        leg.depth_m is not None for leg in legs) else f(sp.depth_m)[:, None]
    per_leg = any(leg.speed_m_s is not None for leg in legs) or sp.min_ground_speed_m_s is not None
    if not per_leg:
        return cruise, depth
    speed = f.legs(legs, "speed_m_s", fallback=cruise)
    if sp.min_ground_speed_m_s is not None:
        ceiling = speed if scenario.vehicle.max_speed_m_s is None else \
            f(scenario.vehicle.max_speed_m_s)[:, None]
        speed = propulsion.speed_to_hold_ground_speed(
            speed, f(sp.min_ground_speed_m_s)[:, None], f.legs(legs, "current_along_m_s"),
            f.legs(legs, "current_across_m_s"), ceiling)
    return speed, depth


def _propeller_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray, *,
                     speed: np.ndarray | None = None) -> mission.PropellerRates:
    """Propeller rates per sample and leg; ``speed`` [m/s] overrides the setpoint if given."""
    vehicle: PropellerVehicle = scenario.vehicle
    speed, depth = _propeller_setpoints(scenario, f, speed)
    rho, nu = _leg_water(scenario, f, depth)
    leg_speed = speed if speed.ndim == 2 else speed[:, None]
    body = vehicle.drag
    if isinstance(body, HullGeometry):
        length = f(body.length_m)[:, None]
        diameter = f(body.diameter_m)[:, None]
        coefficient = drag.hull_drag_coefficient(
            leg_speed, length, diameter, nu, appendage_factor=f(body.appendage_factor)[:, None]
        )
        area = (drag.spheroid_wetted_area(length, diameter) if body.wetted_area_m2 is None
                else f(body.wetted_area_m2)[:, None])
    elif isinstance(body, DragCoefficient):
        coefficient = f(body.coefficient)[:, None]
        area = f(body.reference_area_m2)[:, None]
    else:  # pragma: no cover - the loader admits only the two
        raise TypeError(f"unknown hull description {type(body).__name__}")
    clean_drag = drag.drag_force(rho, leg_speed, coefficient, area)
    efficiency = f(vehicle.propulsive_efficiency)
    if vehicle.efficiency_curve is not None:
        curve = vehicle.efficiency_curve
        efficiency = np.ascontiguousarray(np.broadcast_to(propulsion.efficiency_at_speed(
            leg_speed, efficiency[:, None], f(scenario.setpoint.speed_m_s)[:, None],
            curve.speed_m_s, curve.efficiency), hotel.shape))
    return mission.PropellerRates(
        clean_drag=np.ascontiguousarray(clean_drag),
        speed=speed,
        propulsive_efficiency=efficiency,
        hotel_load=hotel,
        drag_increase=f(scenario.fouling.drag_increase),
    )


_FLIGHT_CODES = {name: code for code, name in glide.FLIGHT_POLICIES.items()}
_CURRENT_CODES = {name: code for code, name in currents.CURRENT_POLICIES.items()}


def _depth_band(scenario: Scenario, f: _Fields) -> tuple[np.ndarray, np.ndarray]:
    """Top and bottom [m] of the water the vehicle is in on each leg, (n, J) each."""
    sp = scenario.setpoint
    if scenario.vehicle.kind == "propeller":
        depth = f.legs(scenario.legs, "depth_m", fallback=f(sp.depth_m))  # per-leg override
        return depth, depth
    top = np.maximum(f(sp.top_depth_m)[:, None], f.legs(scenario.legs, "ice_ceiling_m"))
    bottom = np.minimum(f(sp.bottom_depth_m)[:, None], f.legs(scenario.legs, "seabed_m"))
    return top, bottom


def _leg_currents(scenario: Scenario, f: _Fields, top: np.ndarray, bottom: np.ndarray):
    """Along/across current over the depth band and at the surface, (n, J) each [m/s]."""
    legs = scenario.legs
    layer = f.legs(legs, "surface_layer_m")
    out = []
    for component in ("along", "across"):
        deep = f.legs(legs, f"current_{component}_m_s")
        key = f"surface_current_{component}_m_s"
        surface = np.column_stack([deep[:, j] if getattr(leg, key) is None else f(getattr(leg, key))
                                   for j, leg in enumerate(legs)])
        band = currents.layered_current(surface, deep, layer, top, np.maximum(bottom, top))
        out += [band, surface]
    return out  # along, surface along, across, surface across


def _glider_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray, top: np.ndarray | None = None,
                  bottom: np.ndarray | None = None, water_currents=None) -> mission.GliderRates:
    vehicle: GliderVehicle = scenario.vehicle
    polar = vehicle.polar
    sp = scenario.setpoint
    legs = scenario.legs
    if top is None or bottom is None:
        top, bottom = _depth_band(scenario, f)
    if water_currents is None:
        water_currents = _leg_currents(scenario, f, top, bottom)
    rho, _ = _leg_water(scenario, f, 0.5 * (top + np.maximum(bottom, top)))
    if polar.induced_drag_factor is not None:
        k = f(polar.induced_drag_factor)
    else:
        k = lift.induced_drag_factor(f(polar.aspect_ratio), f(polar.span_efficiency))
    if vehicle.max_pumped_volume_L is not None:
        rho_top, _ = _leg_water(scenario, f, top)
        rho_bottom, _ = _leg_water(scenario, f, np.maximum(bottom, top))
        limit = buoyancy_engine.trim_buoyancy_limit(
            f(vehicle.max_pumped_volume_L) / 1000.0, f(vehicle.hull_volume_L) / 1000.0,
            rho_top, rho_bottom)
    else:
        limit = np.full(rho.shape, np.inf)
    policy = np.array([_FLIGHT_CODES[leg.flight_policy or sp.flight_policy] for leg in legs])
    dives = f.legs(legs, "dives_per_surfacing", fallback=np.full(f.n, np.inf))
    dives = np.where(f.legs(legs, "ice_ceiling_m") > 0.0, np.inf, dives)  # no surfacing under ice
    payload = f.legs(legs, "payload_power_W") * f.legs(legs, "payload_duty_cycle")
    along, surface_along, across, surface_across = water_currents
    return mission.GliderRates(
        glide_angle=np.deg2rad(f(sp.glide_angle_deg)),
        net_buoyancy=f(sp.net_buoyancy_N),
        density=rho,
        reference_area=f(polar.reference_area_m2),
        zero_lift_drag=f(polar.zero_lift_drag),
        induced_drag_factor=k,
        max_lift_coefficient=f(polar.max_lift_coefficient),
        pump_efficiency=f(vehicle.pump_efficiency),
        hotel_load=hotel + payload,
        top_depth=top,
        bottom_depth=bottom,
        inflection_energy=f(vehicle.inflection_energy_J),
        inflection_time=f(vehicle.inflection_time_s),
        drag_increase=f(scenario.fouling.drag_increase),
        lift_loss=f(scenario.fouling.lift_loss),
        flight_policy=np.broadcast_to(policy, rho.shape),
        horizontal_speed=f(sp.horizontal_speed_m_s, 0.0),
        max_net_buoyancy=limit,
        stroke_fixed_energy=f(vehicle.pump_stroke_fixed_energy_J),
        dives_per_surfacing=dives,
        surface_time=f(vehicle.surface_time_s),
        surface_power=f(vehicle.surface_power_W),
        surface_drift_along=surface_along - along,
        surface_drift_across=surface_across - across,
    )


def _battery_by_leg(scenario: Scenario, f: _Fields):
    """Capacity factor per leg (n, J) or 1.0, and self-discharge rate [1/s] of the pack."""
    b = scenario.battery
    table = None
    if b.capacity_curve is not None:
        table = (b.capacity_curve.temperature_C, b.capacity_curve.fraction)
    elif b.chemistry is not None:
        default = cells.CHEMISTRIES[b.chemistry]
        table = (default.temperature, default.fraction)
    capacity = 1.0 if table is None else cells.capacity_fraction(
        f.legs(scenario.legs, "temperature_C"), *table)
    if b.self_discharge_per_month is not None:
        monthly = f(b.self_discharge_per_month)
    elif b.chemistry is not None:
        monthly = np.full(f.n, cells.CHEMISTRIES[b.chemistry].self_discharge_per_month)
    else:
        return capacity, 0.0
    return capacity, cells.self_discharge_rate(monthly)


def _ice_legs(scenario: Scenario):
    """Legs under an ice ceiling (J,) and the leg boundaries named as safe exits (J+1,)."""
    ice = np.array([leg.under_ice for leg in scenario.legs], dtype=bool)
    names = [leg.name for leg in scenario.legs]
    exits = np.zeros(len(names) + 1, dtype=bool)
    for name in scenario.under_ice.safe_exits_after:
        exits[names.index(name) + 1] = True
    return ice, exits


#: failure modes only the glider model can produce
_GLIDER_ONLY = (FailureMode.INFEASIBLE_GLIDE, FailureMode.CANNOT_TRIM,
                FailureMode.CANNOT_HOLD_FLIGHT)


def possible_failure_modes(scenario: Scenario) -> dict[int, str]:
    """Code -> name of the failure modes the transit model can give ``scenario``: glider-only
    modes only for gliders, turning back only with a leg under ice, the duration limit only
    when there is one."""
    ice, _ = _ice_legs(scenario)
    limit = scenario.limits.max_duration_days
    out = {}
    for mode, name in FAILURE_MODE_NAMES.items():
        if mode == FailureMode.NONE:
            continue
        if mode in _GLIDER_ONLY and scenario.vehicle.kind != "glider":
            continue
        if mode == FailureMode.TURNED_BACK and not ice.any():
            continue
        if mode == FailureMode.TIME_LIMIT and isinstance(limit, (int, float)) \
                and limit == float("inf"):
            continue
        out[int(mode)] = name
    return out


def _hotel(scenario: Scenario, f: _Fields) -> np.ndarray:
    """Hotel load on every leg [W], (n, J): the leg's own value, else the vehicle's."""
    return f.legs(scenario.legs, "hotel_load_W", fallback=f(scenario.vehicle.hotel_load_W))


def _transit(scenario: Scenario, x: np.ndarray, **options):
    """Forward flight, under-ice outcome and hardware split of every sample row of ``x``."""
    transit, under_ice, faults, _ = _flight(scenario, x, **options)
    return transit, under_ice, faults


def _flight(scenario: Scenario, x: np.ndarray, **options):
    """:func:`_transit` plus what it flew: rates, battery and capacity factor per leg."""
    f = _Fields(scenario, x)
    hotel = _hotel(scenario, f)
    top, bottom = _depth_band(scenario, f)
    water = _leg_currents(scenario, f, top, bottom)
    if scenario.vehicle.kind == "propeller":
        rates = _propeller_rates(scenario, f, hotel)
    else:
        rates = _glider_rates(scenario, f, hotel, top, bottom, water)
    b = scenario.battery
    capacity, self_discharge = _battery_by_leg(scenario, f)
    battery = mission.BatteryState(
        nominal_energy=f(b.nominal_energy_Wh) * _J_PER_WH,
        cold_derating=f(b.cold_derating),
        fade_rate=f(b.fade_per_day) / SECONDS_PER_DAY + self_discharge,
        usable_fraction=f(b.usable_fraction),
        reserve_fraction=f(b.reserve_fraction),
    )
    fo = scenario.fouling
    ice, exits = _ice_legs(scenario)
    overhead = np.where(ice, f(scenario.under_ice.dead_reckoning_overhead)[:, None], 0.0)
    route = dict(
        leg_length=f.legs(scenario.legs, "length_km") * 1000.0,
        current_along=water[0],
        current_across=water[2],
        distance_overhead=overhead,
        capacity_factor=capacity,
    )
    if not ice.any():  # turn-back reads only the leg boundaries of the profile then
        options = {"profile_steps": 1, **options}
    transit = mission.fly_route(
        rates,
        battery,
        fouling_growth_factor=f.legs(scenario.legs, "fouling_growth_factor"),
        fouling_onset=f(fo.onset_days) * SECONDS_PER_DAY,
        fouling_time_constant=f(fo.time_constant_days) * SECONDS_PER_DAY,
        max_duration=f(scenario.limits.max_duration_days) * SECONDS_PER_DAY,
        current_policy=np.array([_CURRENT_CODES[leg.current_policy] for leg in scenario.legs]),
        **route,
        **{"extension": RANGE_EXTENSION, **options},
    )
    rec = scenario.recovery
    under_ice = turnback.under_ice_outcome(
        rates, battery, transit, ice=ice, safe_boundary=exits,
        loiter_power=f(rec.loiter_power_W), loiter_time=f(rec.loiter_time_h) * 3600.0,
        homing_distance=f(rec.homing_distance_km) * 1000.0, policy=scenario.under_ice.policy,
        min_ground_speed=options.get("min_ground_speed", 0.01), **route)
    subsystems = scenario.hardware.subsystems
    faults = turnback.fault_split(
        under_ice, ice, [s.rate_per_day / SECONDS_PER_DAY for s in subsystems],
        [s.weibull_shape for s in subsystems])
    return transit, under_ice, faults, (rates, battery, capacity)


def simulate_arrays(scenario: Scenario, x: np.ndarray, **options) -> Outcomes:
    """Outcomes of every sample row of ``x`` (columns = ``scenario.input_names``), report units.

    ``options`` go to :func:`physics.mission.fly_route` (e.g. ``min_ground_speed``).
    """
    out, ice, faults = _transit(scenario, x, **options)
    # a sample that reaches the recovery point but cannot afford loiter and homing above the
    # reserve fails on energy at the last leg
    short = out.success & ~ice.success & ~ice.turned_back
    last = len(scenario.legs) - 1
    return Outcomes(
        range_km=out.range / 1000.0,
        range_censored=out.range_censored,
        arrived=out.arrived,
        reaches_recovery=ice.reaches_recovery,
        success=ice.success,
        failure_mode=np.where(ice.turned_back, FailureMode.TURNED_BACK, np.where(
            short, FailureMode.ENERGY, out.failure_mode)).astype(np.int8),
        failing_leg=np.where(ice.turned_back, ice.turn_leg,
                             np.where(short, last, out.failing_leg)).astype(np.int16),
        duration_days=out.duration / SECONDS_PER_DAY,
        margin_Wh=ice.margin / _J_PER_WH,
        margin_fraction=ice.margin_fraction,
        energy_per_km_Wh=out.energy_per_distance * (1000.0 / _J_PER_WH),
        route_energy_per_km_Wh=out.route_energy_per_distance * (1000.0 / _J_PER_WH),
        route_km=np.broadcast_to(out.route_length / 1000.0, np.shape(out.range)),
        flight_events=out.flight_events,
        surfacings=out.surfacings,
        turned_back=ice.turned_back,
        lost_under_ice=ice.lost_under_ice,
        point_of_no_return_km=ice.point_of_no_return / 1000.0,
        p_no_fault=faults.no_fault,
        p_fault_under_ice=faults.under_ice,
        p_fault_open_water=faults.open_water,
    )


def route_energy(scenario: Scenario, x: np.ndarray, *, steps_per_leg: int = 8) -> RouteEnergy:
    """Energy along the route of every sample row of ``x``, flown by the same model as
    :func:`simulate_arrays` (one flight; nothing is integrated twice), in report units.

    ``steps_per_leg`` profile columns are recorded per leg; the energy drawn on each leg is
    split by term with :func:`physics.energy_split.leg_energy_split`.
    """
    transit, ice, _, (rates, battery, capacity) = _flight(scenario, x,
                                                          profile_steps=steps_per_leg)
    prof = transit.profile
    n_legs = len(scenario.legs)
    split = energy_split.leg_energy_split(rates, prof, n_legs, capacity)
    usable = battery.usable(prof.elapsed.T).T
    finished = transit.duration + ice.arrival_duration
    return RouteEnergy(
        leg_names=tuple(leg.name for leg in scenario.legs),
        position_km=prof.position / 1000.0, elapsed_days=prof.elapsed / SECONDS_PER_DAY,
        usable_Wh=usable / _J_PER_WH, drawn_Wh=prof.energy / _J_PER_WH,
        reserve_Wh=usable * battery.reserve_fraction[:, None] / _J_PER_WH,
        column_leg=np.asarray(prof.leg, dtype=int),
        leg_split_Wh={k: v / _J_PER_WH for k, v in split.items()},
        recovery_point_Wh=np.asarray(ice.arrival_energy) / _J_PER_WH,
        drawable_at_end_Wh=battery.drawable(finished) / _J_PER_WH,
        arrived=np.asarray(transit.arrived, bool), turned_back=np.asarray(ice.turned_back, bool),
        turn_position_km=np.asarray(ice.turn_position) / 1000.0,
        margin_Wh=np.asarray(ice.margin) / _J_PER_WH,
        under_ice=np.array([leg.under_ice for leg in scenario.legs], dtype=bool),
        route_km=np.asarray(transit.route_length) / 1000.0,
    )


@dataclass(frozen=True)
class ScenarioModel:
    """Picklable model function ``x -> Outcomes`` for the sampling engine."""

    scenario: Scenario

    def __call__(self, x: np.ndarray) -> Outcomes:
        return simulate_arrays(self.scenario, x)


def simulate(scenario: Scenario, x: np.ndarray, **options) -> pd.DataFrame:
    """Per-sample outcomes as a DataFrame, one row per row of ``x`` (see :meth:`Outcomes.to_frame`)."""
    return simulate_arrays(scenario, x, **options).to_frame(scenario)


#: range is followed past the route end up to (1 + this) route lengths, then censored there
RANGE_EXTENSION = 0.5


def range_limit_km(scenario: Scenario) -> float:
    """Longest range a sample can report [km]: the route length (its leg lengths as given)
    times ``1 + RANGE_EXTENSION``, where an open range is censored."""
    return float(scenario.route_length_km) * (1.0 + RANGE_EXTENSION)


def nominal_inputs(scenario: Scenario) -> np.ndarray:
    """The (1, d) sample with every uncertain input at its median (the spreadsheet case)."""
    return np.array([[m.median for m in scenario.inputs]], dtype=float).reshape(1, -1)


@dataclass(frozen=True)
class NominalResult:
    """The deterministic budget: every uncertain input at its median."""

    outcome: pd.Series
    route_km: float
    energy_per_km_Wh: dict[str, float]

    @property
    def success(self) -> bool:
        return bool(self.outcome["success"])


def nominal(scenario: Scenario) -> NominalResult:
    """Evaluate the scenario with every uncertain input at its median."""
    x = nominal_inputs(scenario)
    frame = simulate(scenario, x)
    row = frame.iloc[0]
    per_km = {leg.name: float(row[f"energy_per_km_Wh.{leg.name}"]) for leg in scenario.legs}
    return NominalResult(outcome=row, route_km=scenario.route_length_km, energy_per_km_Wh=per_km)


# ------------------------------------------------------------------ the nominal vehicle
@dataclass(frozen=True)
class GlideOperatingPoint:
    """The clean glider's polar and operating point at nominal (median) inputs.

    ``density`` [kg/m3] is the length-weighted mean over legs of the density the transit
    model uses on each leg (mid-depth of the leg's dive band); speeds in [m/s].
    """

    polar: Any
    horizontal_speed: float
    vertical_speed: float
    feasible: bool
    glide_angle_deg: float
    net_buoyancy_N: float
    density: float
    zero_lift_drag: float
    induced_drag_factor: float
    reference_area_m2: float
    max_lift_coefficient: float


def _length_weights(scenario: Scenario, f: _Fields) -> np.ndarray:
    lengths = f.legs(scenario.legs, "length_km")[0]
    return lengths / lengths.sum()


def glide_operating_point(scenario: Scenario, *, points: int = 200) -> GlideOperatingPoint | None:
    """Clean-hull glide polar and operating point of a glider at nominal inputs, else None."""
    if scenario.vehicle.kind != "glider":
        return None
    f = _Fields(scenario, nominal_inputs(scenario))
    rates = _glider_rates(scenario, f, _hotel(scenario, f))
    rho = float(np.sum(rates.density[0] * _length_weights(scenario, f)))
    b, area = float(rates.net_buoyancy[0]), float(rates.reference_area[0])
    cd0, k = float(rates.zero_lift_drag[0]), float(rates.induced_drag_factor[0])
    cl_max = float(rates.max_lift_coefficient[0])
    # the clean vehicle as the first leg's flight policy trims it, in the route's mean water
    trim = glide.glide_trim(rates.flight_policy[0, 0], rates.glide_angle[0], b,
                            rates.horizontal_speed[0], rho, area, cd0, k, cl_max,
                            np.inf, pump_efficiency=rates.pump_efficiency[0])
    angle, b = float(trim.glide_angle), float(trim.net_buoyancy) or b
    state = glide.steady_glide(angle, b, rho, area, cd0, k, max_lift_coefficient=cl_max)
    return GlideOperatingPoint(
        polar=glide.glide_polar(b, rho, area, cd0, k, max_lift_coefficient=cl_max, n=points),
        horizontal_speed=float(state.horizontal_speed), vertical_speed=float(state.vertical_speed),
        feasible=bool(np.asarray(state.state) == 0), glide_angle_deg=float(np.rad2deg(angle)),
        net_buoyancy_N=b, density=rho, zero_lift_drag=cd0, induced_drag_factor=k,
        reference_area_m2=area, max_lift_coefficient=cl_max,
    )


def deterministic_optimum(scenario: Scenario, field: str, *,
                          bounds: tuple[float, float] = (0.05, 5.0)) -> float | None:
    """Energy-optimal setpoint of the nominal (median-input) vehicle in still water.

    Propeller speed only: the speed through water [m/s] minimising the route's energy,
    sum over legs of L_j (D_j(U)/eta + P_hotel,j / U), with each leg's own water, hotel load and
    a drag coefficient that follows U through the Reynolds number, found with a bounded scalar
    minimiser. For a constant drag coefficient on one leg it equals the closed form
    U* = (eta P_hotel / (rho C_D A))^(1/3). Gliders and other fields: None.
    """
    if scenario.vehicle.kind != "propeller" or field != "setpoint.speed_m_s":
        return None
    f = _Fields(scenario, nominal_inputs(scenario))
    hotel = _hotel(scenario, f)
    weights = _length_weights(scenario, f)

    def route_energy_per_metre(speed: float) -> float:
        rates = _propeller_rates(scenario, f, hotel, speed=np.array([speed]))
        per_metre = rates.clean_drag[0] / rates.propulsive_efficiency[0] + rates.hotel_load[0] / speed
        return float(np.sum(weights * per_metre))

    res = optimize.minimize_scalar(route_energy_per_metre, bounds=bounds, method="bounded",
                                   options={"xatol": 1e-9})
    return float(res.x)
