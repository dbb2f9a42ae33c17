"""The plan being judged: vehicle, setpoints, battery and reserve, route, decision settings.

A go/no-go board approves a plan, not a probability: :func:`plan_summary` lays out what the
scenario fixes (and, for uncertain fields, their median and distribution), every number
with its unit, from the typed scenario (:mod:`uq.scenario.types`). Leg arrival days come
from the deterministic (median-input) flight when one is given.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from uq.report._format import DASH, DISPLAY_UNITS
from uq.scenario import DragCoefficient, HullGeometry
from uq.scenario.distributions import Marginal

__all__ = ["PlanTable", "RouteTable", "Plan", "plan_summary", "value_text", "DISPLAY_UNITS"]



def _number(x: float, figures: int = 4) -> str:
    """Up to ``figures`` significant figures, thousands separators, a real minus sign."""
    if math.isinf(x):
        return "\u221e" if x > 0 else "\u2212\u221e"
    if x == 0:
        return "0"
    digits = max(0, figures - 1 - int(math.floor(math.log10(abs(x)))))
    text = f"{x:,.{digits}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text.replace("-", "\u2212")


def value_text(value, unit: str = "", *, percent: bool = False) -> str:
    """A fixed value with its unit, or an uncertain one as its median and distribution.

    ``percent``: a fraction shown in percent (the distribution keeps the file's numbers).
    """
    if value is None:
        return DASH
    shown = DISPLAY_UNITS.get(unit, unit)
    if isinstance(value, Marginal):
        median = value.median * (100.0 if percent else 1.0)  # 3 figures: an estimate's median
        head = (f"{_number(median, 3)} %" if percent
                else f"{_number(median, 3)} {shown}".rstrip())
        return f"{head} \u00b7 {value.describe()}"  # median, then the distribution
    v = float(value)
    if percent:
        return f"{_number(100.0 * v)} %"
    return f"{_number(v)} {shown}".rstrip()


@dataclass(frozen=True)
class PlanTable:
    """A titled list of (what, value with unit) rows."""

    title: str
    rows: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class RouteTable:
    """The legs: header and one row of texts per leg, then a total row."""

    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    total: tuple[str, ...]


@dataclass(frozen=True)
class Plan:
    tables: tuple[PlanTable, ...]
    route: RouteTable
    headline: str  # one sentence: vehicle, route, setpoint, battery


def _vehicle(sc) -> PlanTable:
    v = sc.vehicle
    rows = [("Vehicle", f"{v.name} ({v.kind})"), ("Hotel load", value_text(v.hotel_load_W, "W"))]
    if v.kind == "propeller":
        rows.append(("Propulsive efficiency (at the setpoint speed)",
                     value_text(v.propulsive_efficiency, percent=True)))
        if v.efficiency_curve is not None:
            c = v.efficiency_curve
            rows.append(("Efficiency curve over speed", ", ".join(
                f"{_number(s)} m/s: {_number(100 * e)} %" for s, e in zip(c.speed_m_s, c.efficiency))))
        body = v.drag
        if isinstance(body, HullGeometry):
            rows += [("Hull drag", "from geometry: ITTC-1957 friction \u00d7 Hoerner form factor "
                                   "\u00d7 appendage factor"),
                     ("Hull length", value_text(body.length_m, "m")),
                     ("Hull diameter", value_text(body.diameter_m, "m")),
                     ("Appendage factor", value_text(body.appendage_factor)),
                     ("Wetted area", value_text(body.wetted_area_m2, "m^2")
                      if body.wetted_area_m2 is not None else "prolate spheroid of the same "
                                                              "length and diameter")]
        elif isinstance(body, DragCoefficient):
            rows += [("Hull drag", f"given drag coefficient on the {body.reference} area"),
                     ("Drag coefficient C_D", value_text(body.coefficient)),
                     ("Reference area", value_text(body.reference_area_m2, "m^2"))]
        if v.max_speed_m_s is not None:
            rows.append(("Maximum speed", value_text(v.max_speed_m_s, "m/s")))
    else:
        p = v.polar
        rows += [("Pump efficiency", value_text(v.pump_efficiency, percent=True)),
                 ("Wing reference area", value_text(p.reference_area_m2, "m^2")),
                 ("Zero-lift drag C_D0", value_text(p.zero_lift_drag))]
        if p.induced_drag_factor is not None:
            rows.append(("Induced drag factor K", value_text(p.induced_drag_factor)))
        else:
            rows += [("Aspect ratio", value_text(p.aspect_ratio)),
                     ("Span efficiency", value_text(p.span_efficiency))]
        rows += [("Maximum lift coefficient", value_text(p.max_lift_coefficient)),
                 ("Energy per inflection", value_text(v.inflection_energy_J, "J")),
                 ("Time per inflection", value_text(v.inflection_time_s, "s"))]
        if v.max_pumped_volume_L is not None:
            rows += [("Buoyancy engine swing", value_text(v.max_pumped_volume_L, "L")),
                     ("Hull volume", value_text(v.hull_volume_L, "L"))]
        rows += [("Fixed energy per pump stroke", value_text(v.pump_stroke_fixed_energy_J, "J")),
                 ("Surface time per surfacing", value_text(v.surface_time_s, "s")),
                 ("Surface power (on top of hotel)", value_text(v.surface_power_W, "W"))]
    return PlanTable("Vehicle", tuple(rows))


def _setpoints(sc) -> PlanTable:
    sp = sc.setpoint
    if sc.vehicle.kind == "propeller":
        rows = [("Speed through water", value_text(sp.speed_m_s, "m/s")),
                ("Depth", value_text(sp.depth_m, "m"))]
        if sp.min_ground_speed_m_s is not None:
            rows.append(("Speeds up to hold a ground speed of",
                         value_text(sp.min_ground_speed_m_s, "m/s")))
    else:
        rows = [("Flight policy", sp.flight_policy.replace("_", " ")),
                ("Glide angle (commanded)", value_text(sp.glide_angle_deg, "deg")),
                ("Net buoyancy (commanded)", value_text(sp.net_buoyancy_N, "N")),
                ("Dive band", f"{value_text(sp.top_depth_m, 'm')} to "
                              f"{value_text(sp.bottom_depth_m, 'm')}")]
        if sp.horizontal_speed_m_s is not None:
            rows.append(("Horizontal speed held", value_text(sp.horizontal_speed_m_s, "m/s")))
    fo = sc.fouling
    if not (isinstance(fo.time_constant_days, float) and math.isinf(fo.time_constant_days)):
        rows += [("Fouling onset", value_text(fo.onset_days, "day")),
                 ("Fouling time constant", value_text(fo.time_constant_days, "day")),
                 ("Drag increase at full fouling", value_text(fo.drag_increase, percent=True))]
        if sc.vehicle.kind == "glider":
            rows.append(("Lift loss at full fouling", value_text(fo.lift_loss, percent=True)))
    return PlanTable("Setpoints and fouling", tuple(rows))


def _battery(sc) -> PlanTable:
    b = sc.battery
    rows = [("Nominal energy", value_text(b.nominal_energy_Wh, "Wh")),
            ("Cold derating" if b.capacity_curve is None and b.chemistry is None
             else "Pack spread on the temperature curve", value_text(b.cold_derating, percent=True)),
            ("Usable fraction", value_text(b.usable_fraction, percent=True)),
            ("Reserve kept on arrival (policy)", value_text(b.reserve_fraction, percent=True))]
    if b.chemistry is not None or b.capacity_curve is not None:
        rows.append(("Capacity against temperature", "scenario curve" if b.capacity_curve
                     is not None else f"{b.chemistry} default curve (from memory)"))
    if _nonzero(b.fade_per_day):
        rows.append(("Capacity fade", value_text(b.fade_per_day, "1/day")))
    if b.self_discharge_per_month is not None:
        rows.append(("Self-discharge", value_text(b.self_discharge_per_month, "1/month")))
    rec = sc.recovery
    if _nonzero(rec.loiter_time_h) or _nonzero(rec.homing_distance_km):
        rows += [("Loiter at the recovery point", f"{value_text(rec.loiter_time_h, 'h')} at "
                                                  f"{value_text(rec.loiter_power_W, 'W')}"),
                 ("Homing at the recovery point", value_text(rec.homing_distance_km, "km"))]
    ui = sc.under_ice
    if any(leg.under_ice for leg in sc.legs):
        rows.append(("Under ice", "turn back at the point of no return when the goal looks out "
                                  "of reach" if ui.policy == "turn-back" else "continue"))
        if _nonzero(ui.dead_reckoning_overhead):
            rows.append(("Extra distance under ice (navigation)",
                         value_text(ui.dead_reckoning_overhead, percent=True)))
    return PlanTable("Battery, reserve and recovery", tuple(rows))


def _decision(sc) -> PlanTable:
    d = sc.decision
    # "P(success) <number>" on a page always means the estimate: the requirement is worded
    # so that it never reads like one
    rows = [("P(success) required, at least", value_text(d.required_probability, percent=True)),
            ("Confidence of the interval", value_text(d.confidence, percent=True))]
    if math.isfinite(_med(sc.limits.max_duration_days)):
        rows.append(("Duration limit", value_text(sc.limits.max_duration_days, "day")))
    if d.ship_day_rate:
        rows.append(("Ship", f"{_number(d.ship_day_rate)} {d.currency}/d, "
                             + ("on station for the transit" if d.ship_booking == "on_station"
                                else "booked for the recovery window only")))
    if d.deployment_date is not None:
        rows.append(("Deployment date", d.deployment_date.isoformat()))
    return PlanTable("Decision settings", tuple(rows))


def _route(sc, arrival_days=None) -> RouteTable:
    kind = sc.vehicle.kind
    header = ["Leg", "Length", "Current along (+ following)", "Current across",
              "Water", "Ice ceiling", "Seabed"]
    header += ["Speed" if kind == "propeller" else "Surfacing"]
    header += ["Arrival (medians)"] if arrival_days is not None else []
    rows = []
    for j, leg in enumerate(sc.legs):
        water = (f"{value_text(leg.temperature_C, 'degC')}, "
                 f"S {value_text(leg.practical_salinity)}")
        ice = value_text(leg.ice_ceiling_m, "m") if leg.under_ice else "open water"
        seabed = value_text(leg.seabed_m, "m") if math.isfinite(_med(leg.seabed_m)) else DASH
        if kind == "propeller":
            extra = value_text(leg.speed_m_s, "m/s") if leg.speed_m_s is not None else "setpoint"
        else:
            extra = ("never (ice)" if leg.under_ice else
                     f"every {value_text(leg.dives_per_surfacing)} dives"
                     if leg.dives_per_surfacing is not None else "never")
        row = [f"{j + 1}. {leg.name}", value_text(leg.length_km, "km"),
               value_text(leg.current_along_m_s, "m/s"),
               value_text(leg.current_across_m_s, "m/s"), water, ice, seabed, extra]
        if arrival_days is not None:
            row.append(_day_text(arrival_days[j], sc.decision.deployment_date))
        rows.append(tuple(row))
    total = ["Route", value_text(sc.route_length_km, "km")] + [""] * (len(header) - 2)
    if arrival_days is not None:
        total[-1] = _day_text(arrival_days[-1], sc.decision.deployment_date)
    return RouteTable(tuple(header), tuple(rows), tuple(total))


def _day_text(day: float, start) -> str:
    if not math.isfinite(day):
        return DASH
    text = f"day {_number(round(day, 1))}"
    if start is not None:
        import datetime

        text += f" ({(start + datetime.timedelta(days=float(day))).isoformat()})"
    return text


def _med(value) -> float:
    return float(value.median) if isinstance(value, Marginal) else float(value)


def _nonzero(value) -> bool:
    return isinstance(value, Marginal) or float(value) != 0.0


def plan_summary(scenario, *, arrival_days=None) -> Plan:
    """The plan of ``scenario`` as titled tables and a route table.

    ``arrival_days`` [d], one per leg: when the median-input vehicle reaches each leg's end
    (shown as a column, with dates when the scenario has a deployment date).
    """
    sc = scenario
    sp = sc.setpoint
    if sc.vehicle.kind == "propeller":
        how = f"at {value_text(sp.speed_m_s, 'm/s')} and {value_text(sp.depth_m, 'm')}"
    else:
        how = (f"gliding {value_text(sp.top_depth_m, 'm')} to {value_text(sp.bottom_depth_m, 'm')}"
               f" ({sp.flight_policy.replace('_', ' ')} policy)")
    ice_km = sum(_med(leg.length_km) for leg in sc.legs if leg.under_ice)
    headline = (f"{sc.vehicle.name} ({sc.vehicle.kind}) over {value_text(sc.route_length_km, 'km')}"
                f" in {len(sc.legs)} legs{f', {_number(ice_km)} km under ice' if ice_km else ''}, "
                f"{how}, on {value_text(sc.battery.nominal_energy_Wh, 'Wh')} nominal with "
                f"{value_text(sc.battery.reserve_fraction, percent=True)} kept in reserve; "
                f"P(success) required to be at least "
                f"{value_text(sc.decision.required_probability, percent=True)}, judged at "
                f"{value_text(sc.decision.confidence, percent=True)} confidence.")
    return Plan(tables=(_vehicle(sc), _setpoints(sc), _battery(sc), _decision(sc)),
                route=_route(sc, arrival_days), headline=headline)
