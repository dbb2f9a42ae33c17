"""From a scenario and a sample of its uncertain inputs to per-sample transit outcomes.

This is the one place where the scenario's file units (km, days, Wh, degrees) become SI and
where scenario fields are routed to the physics; no physical formula is written here.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from physics import battery as cells
from physics import drag, lift, mission, propulsion, seawater, turnback
from physics.states import FAILURE_MODE_NAMES, FailureMode
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
    "ScenarioModel",
    "simulate_arrays",
    "simulate",
    "nominal_inputs",
    "nominal",
    "NominalResult",
]

SECONDS_PER_DAY = 86400.0
_J_PER_WH = 3600.0


class _Fields:
    """Looks up a scenario field's per-sample values in the sample array."""

    def __init__(self, scenario: Scenario, x: np.ndarray):
        x = np.asarray(x, dtype=float)
        if x.ndim != 2 or x.shape[1] != len(scenario.inputs):
            raise ValueError(
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


def _propeller_setpoints(scenario: Scenario, f: _Fields):
    """Speed through water [m/s] and depth [m] per leg, (n, J) or (n, 1) without overrides."""
    sp = scenario.setpoint
    legs = scenario.legs
    cruise = f(sp.speed_m_s)
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


def _propeller_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray) -> mission.PropellerRates:
    vehicle: PropellerVehicle = scenario.vehicle
    speed, depth = _propeller_setpoints(scenario, f)
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
        efficiency = propulsion.efficiency_at_speed(
            leg_speed, efficiency[:, None], f(scenario.setpoint.speed_m_s)[:, None],
            curve.speed_m_s, curve.efficiency)
    return mission.PropellerRates(
        clean_drag=np.ascontiguousarray(clean_drag),
        speed=speed,
        propulsive_efficiency=efficiency,
        hotel_load=hotel,
        drag_increase=f(scenario.fouling.drag_increase),
    )


def _glider_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray) -> mission.GliderRates:
    vehicle: GliderVehicle = scenario.vehicle
    polar = vehicle.polar
    sp = scenario.setpoint
    top = np.maximum(f(sp.top_depth_m)[:, None], f.legs(scenario.legs, "ice_ceiling_m"))
    bottom = np.minimum(f(sp.bottom_depth_m)[:, None], f.legs(scenario.legs, "seabed_m"))
    rho, _ = _leg_water(scenario, f, 0.5 * (top + np.maximum(bottom, top)))
    if polar.induced_drag_factor is not None:
        k = f(polar.induced_drag_factor)
    else:
        k = lift.induced_drag_factor(f(polar.aspect_ratio), f(polar.span_efficiency))
    return mission.GliderRates(
        glide_angle=np.deg2rad(f(sp.glide_angle_deg)),
        net_buoyancy=f(sp.net_buoyancy_N),
        density=rho,
        reference_area=f(polar.reference_area_m2),
        zero_lift_drag=f(polar.zero_lift_drag),
        induced_drag_factor=k,
        max_lift_coefficient=f(polar.max_lift_coefficient),
        pump_efficiency=f(vehicle.pump_efficiency),
        hotel_load=hotel,
        top_depth=top,
        bottom_depth=bottom,
        inflection_energy=f(vehicle.inflection_energy_J),
        inflection_time=f(vehicle.inflection_time_s),
        drag_increase=f(scenario.fouling.drag_increase),
        lift_loss=f(scenario.fouling.lift_loss),
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


def _transit(scenario: Scenario, x: np.ndarray, **options):
    """Forward flight, under-ice outcome and hardware split of every sample row of ``x``."""
    f = _Fields(scenario, x)
    hotel = f.legs(scenario.legs, "hotel_load_W", fallback=f(scenario.vehicle.hotel_load_W))
    if scenario.vehicle.kind == "propeller":
        rates = _propeller_rates(scenario, f, hotel)
    else:
        rates = _glider_rates(scenario, f, hotel)
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
        current_along=f.legs(scenario.legs, "current_along_m_s"),
        current_across=f.legs(scenario.legs, "current_across_m_s"),
        distance_overhead=overhead,
        capacity_factor=capacity,
    )
    transit = mission.fly_route(
        rates,
        battery,
        fouling_growth_factor=f.legs(scenario.legs, "fouling_growth_factor"),
        fouling_onset=f(fo.onset_days) * SECONDS_PER_DAY,
        fouling_time_constant=f(fo.time_constant_days) * SECONDS_PER_DAY,
        max_duration=f(scenario.limits.max_duration_days) * SECONDS_PER_DAY,
        **route,
        **options,
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
    return transit, under_ice, faults


def simulate_arrays(scenario: Scenario, x: np.ndarray, **options) -> dict[str, np.ndarray]:
    """Outcomes of every sample row of ``x`` (columns = ``scenario.input_names``), report units.

    Keys: ``range_km``, ``range_censored``, ``arrived``, ``reaches_recovery`` (arrived before
    the pack is truly empty, possibly on its reserve), ``success``, ``failure_mode``,
    ``failing_leg``, ``duration_days``, ``margin_Wh``, ``margin_fraction``,
    ``energy_per_km_Wh`` (n, J), ``route_energy_per_km_Wh`` (energy drawn over distance
    flown on the route) and ``route_km``.
    """
    out, ice, faults = _transit(scenario, x, **options)
    # a sample that reaches the recovery point but cannot afford loiter and homing above the
    # reserve fails on energy at the last leg
    short = out.success & ~ice.success & ~ice.turned_back
    last = len(scenario.legs) - 1
    return {
        "range_km": out.range / 1000.0,
        "range_censored": out.range_censored,
        "arrived": out.arrived,
        "reaches_recovery": ice.reaches_recovery,
        "success": ice.success,
        "failure_mode": np.where(short, FailureMode.ENERGY, out.failure_mode).astype(np.int8),
        "failing_leg": np.where(short, last, out.failing_leg).astype(np.int16),
        "duration_days": out.duration / SECONDS_PER_DAY,
        "margin_Wh": ice.margin / _J_PER_WH,
        "margin_fraction": ice.margin_fraction,
        "turned_back": ice.turned_back,
        "lost_under_ice": ice.lost_under_ice,
        "point_of_no_return_km": ice.point_of_no_return / 1000.0,
        "p_no_fault": faults.no_fault,
        "p_fault_under_ice": faults.under_ice,
        "p_fault_open_water": faults.open_water,
        "energy_per_km_Wh": out.energy_per_distance * (1000.0 / _J_PER_WH),
        "route_energy_per_km_Wh": out.route_energy_per_distance * (1000.0 / _J_PER_WH),
        "route_km": out.route_length / 1000.0,
    }


@dataclass(frozen=True)
class ScenarioModel:
    """Picklable model function ``x -> outcomes`` for the sampling engine."""

    scenario: Scenario

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        return simulate_arrays(self.scenario, x)


def simulate(scenario: Scenario, x: np.ndarray, **options) -> pd.DataFrame:
    """Per-sample outcomes as a DataFrame, one row per row of ``x``.

    Columns: range_km, range_censored, arrived, success, failure_mode (name),
    failing_leg (name or ""), duration_days, margin_Wh, margin_fraction,
    energy_per_km_Wh.<leg> for every leg (NaN where the leg was never reached).
    """
    a = simulate_arrays(scenario, x, **options)
    names = [leg.name for leg in scenario.legs]
    frame = pd.DataFrame({
        "range_km": a["range_km"],
        "range_censored": a["range_censored"],
        "arrived": a["arrived"],
        "success": a["success"],
        "failure_mode": [FAILURE_MODE_NAMES[FailureMode(m)] for m in a["failure_mode"]],
        "failing_leg": [names[j] if j >= 0 else "" for j in a["failing_leg"]],
        "duration_days": a["duration_days"],
        "margin_Wh": a["margin_Wh"],
        "margin_fraction": a["margin_fraction"],
    })
    for j, name in enumerate(names):
        frame[f"energy_per_km_Wh.{name}"] = a["energy_per_km_Wh"][:, j]
    return frame


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
