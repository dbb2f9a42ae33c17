"""From a scenario and a sample of its uncertain inputs to per-sample transit outcomes.

This is the one place where the scenario's file units (km, days, Wh, degrees) become SI and
where scenario fields are routed to the physics; no physical formula is written here.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from physics import buoyancy_engine, currents, drag, glide, lift, mission, seawater
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


def _propeller_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray) -> mission.PropellerRates:
    vehicle: PropellerVehicle = scenario.vehicle
    speed = f(scenario.setpoint.speed_m_s)
    depth = f(scenario.setpoint.depth_m)[:, None]
    rho, nu = _leg_water(scenario, f, depth)
    body = vehicle.drag
    if isinstance(body, HullGeometry):
        length = f(body.length_m)[:, None]
        diameter = f(body.diameter_m)[:, None]
        coefficient = drag.hull_drag_coefficient(
            speed[:, None], length, diameter, nu, appendage_factor=f(body.appendage_factor)[:, None]
        )
        area = (drag.spheroid_wetted_area(length, diameter) if body.wetted_area_m2 is None
                else f(body.wetted_area_m2)[:, None])
    elif isinstance(body, DragCoefficient):
        coefficient = f(body.coefficient)[:, None]
        area = f(body.reference_area_m2)[:, None]
    else:  # pragma: no cover - the loader admits only the two
        raise TypeError(f"unknown hull description {type(body).__name__}")
    clean_drag = drag.drag_force(rho, speed[:, None], coefficient, area)
    return mission.PropellerRates(
        clean_drag=np.ascontiguousarray(clean_drag),
        speed=speed,
        propulsive_efficiency=f(vehicle.propulsive_efficiency),
        hotel_load=hotel,
        drag_increase=f(scenario.fouling.drag_increase),
    )


_FLIGHT_CODES = {name: code for code, name in glide.FLIGHT_POLICIES.items()}
_CURRENT_CODES = {name: code for code, name in currents.CURRENT_POLICIES.items()}


def _depth_band(scenario: Scenario, f: _Fields) -> tuple[np.ndarray, np.ndarray]:
    """Top and bottom [m] of the water the vehicle is in on each leg, (n, J) each."""
    sp = scenario.setpoint
    if scenario.vehicle.kind == "propeller":
        depth = np.broadcast_to(f(sp.depth_m)[:, None], (f.n, len(scenario.legs)))
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


def _glider_rates(scenario: Scenario, f: _Fields, hotel: np.ndarray, top: np.ndarray,
                  bottom: np.ndarray, water_currents) -> mission.GliderRates:
    vehicle: GliderVehicle = scenario.vehicle
    polar = vehicle.polar
    sp = scenario.setpoint
    legs = scenario.legs
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


def _transit(scenario: Scenario, x: np.ndarray, **options) -> mission.TransitOutcome:
    f = _Fields(scenario, x)
    hotel = f.legs(scenario.legs, "hotel_load_W", fallback=f(scenario.vehicle.hotel_load_W))
    top, bottom = _depth_band(scenario, f)
    water = _leg_currents(scenario, f, top, bottom)
    if scenario.vehicle.kind == "propeller":
        rates = _propeller_rates(scenario, f, hotel)
    else:
        rates = _glider_rates(scenario, f, hotel, top, bottom, water)
    b = scenario.battery
    battery = mission.BatteryState(
        nominal_energy=f(b.nominal_energy_Wh) * _J_PER_WH,
        cold_derating=f(b.cold_derating),
        fade_rate=f(b.fade_per_day) / SECONDS_PER_DAY,
        usable_fraction=f(b.usable_fraction),
        reserve_fraction=f(b.reserve_fraction),
    )
    fo = scenario.fouling
    return mission.fly_route(
        rates,
        battery,
        leg_length=f.legs(scenario.legs, "length_km") * 1000.0,
        current_along=water[0],
        current_across=water[2],
        current_policy=np.array([_CURRENT_CODES[leg.current_policy] for leg in scenario.legs]),
        fouling_growth_factor=f.legs(scenario.legs, "fouling_growth_factor"),
        fouling_onset=f(fo.onset_days) * SECONDS_PER_DAY,
        fouling_time_constant=f(fo.time_constant_days) * SECONDS_PER_DAY,
        max_duration=f(scenario.limits.max_duration_days) * SECONDS_PER_DAY,
        **options,
    )


def simulate_arrays(scenario: Scenario, x: np.ndarray, **options) -> dict[str, np.ndarray]:
    """Outcomes of every sample row of ``x`` (columns = ``scenario.input_names``), report units.

    Keys: ``range_km``, ``range_censored``, ``arrived``, ``reaches_recovery`` (arrived before
    the pack is truly empty, possibly on its reserve), ``success``, ``failure_mode``,
    ``failing_leg``, ``duration_days``, ``margin_Wh``, ``margin_fraction``,
    ``energy_per_km_Wh`` (n, J), ``route_energy_per_km_Wh`` (energy drawn over distance
    flown on the route), ``route_km``, ``flight_events`` (int8 bits of
    :class:`physics.states.FlightEvent`: re-trimmed, at the engine's limit, drifted) and
    ``surfacings`` (number of surfacings on the route).
    """
    out = _transit(scenario, x, **options)
    return {
        "range_km": out.range / 1000.0,
        "range_censored": out.range_censored,
        "arrived": out.arrived,
        "reaches_recovery": out.reaches_recovery,
        "success": out.success,
        "failure_mode": out.failure_mode,
        "failing_leg": out.failing_leg,
        "duration_days": out.duration / SECONDS_PER_DAY,
        "margin_Wh": out.margin / _J_PER_WH,
        "margin_fraction": out.margin_fraction,
        "energy_per_km_Wh": out.energy_per_distance * (1000.0 / _J_PER_WH),
        "route_energy_per_km_Wh": out.route_energy_per_distance * (1000.0 / _J_PER_WH),
        "route_km": out.route_length / 1000.0,
        "flight_events": out.flight_events,
        "surfacings": out.surfacings,
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
