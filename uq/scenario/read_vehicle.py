"""The vehicle half of the scenario reader: ``[vehicle]`` (with ``[vehicle.hull]``,
``[vehicle.drag]`` or ``[vehicle.polar]``), ``[battery]``, ``[setpoint]``, ``[fouling]`` and
``[limits]``, and the check that a propeller hull can hold its battery.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from uq.scenario import envelope as _envelope
from uq.scenario.distributions import Marginal
from uq.scenario.errors import MISSING
from uq.scenario.field_reader import FieldReader
from uq.scenario.fields import (
    APPENDAGE, CHEMISTRY_NAMES, DRAG_REFERENCES, EFFICIENCY, FADE, FLIGHT_POLICIES,
    FRACTION_CLOSED0_OPEN1, FRACTION_OPEN0_CLOSED1, GLIDE_ANGLE, NONNEG_DAYS, NONNEG_DEPTH,
    NONNEG_FRACTION, NONNEG_J, NONNEG_S, NONNEG_SPEED, NONNEG_W, POSITIVE_DAYS, POSITIVE_L,
    POSITIVE_M, POSITIVE_M2, POSITIVE_N, POSITIVE_SPEED, POSITIVE_WH, Range, SELF_DISCHARGE,
    join_key,
)
from uq.scenario.types import (
    Battery, CapacityCurve, DragCoefficient, EfficiencyCurve, Fouling, GliderPolar,
    GliderSetpoint, GliderVehicle, HullGeometry, Limits, PropellerSetpoint, PropellerVehicle,
    Value,
)

__all__ = ["VehicleSections"]


class VehicleSections(FieldReader):
    """Readers of the vehicle, battery, setpoint, fouling and limits sections."""

    def vehicle(self, table: Mapping[str, Any], kind: str) -> PropellerVehicle | GliderVehicle:
        common = {
            "name": lambda r, v, p: r.text(v, p, what="the vehicle name"),
            "hotel_load_W": lambda r, v, p: r.number(v, p, NONNEG_W),
        }
        propeller = {
            "propulsive_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
            "hull": lambda r, v, p: r.hull(v, p),
            "drag": lambda r, v, p: r.drag(v, p),
            "efficiency_curve": lambda r, v, p: EfficiencyCurve(*r.curve(
                v, p, ("speed_m_s", "efficiency"), POSITIVE_SPEED, EFFICIENCY)),
            "max_speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
        }
        glider = {
            "pump_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
            "inflection_energy_J": lambda r, v, p: r.number(v, p, NONNEG_J),
            "inflection_time_s": lambda r, v, p: r.number(v, p, NONNEG_S),
            "polar": lambda r, v, p: r.polar(v, p),
            "max_pumped_volume_L": lambda r, v, p: r.number(v, p, POSITIVE_L),
            "hull_volume_L": lambda r, v, p: r.number(v, p, POSITIVE_L),
            "pump_stroke_fixed_energy_J": lambda r, v, p: r.number(v, p, NONNEG_J),
            "surface_time_s": lambda r, v, p: r.number(v, p, NONNEG_S),
            "surface_power_W": lambda r, v, p: r.number(v, p, NONNEG_W),
        }
        mine, theirs, other = (propeller, glider, "glider") if kind == "propeller" else (glider, propeller, "propeller")
        other_kind = {k: f"kind = {other!r}" for k in theirs}
        if kind == "propeller":
            out = self.read_fields(table, "vehicle", {**common, **mine},
                                   ("name", "hotel_load_W", "propulsive_efficiency"),
                                   other_kind=other_kind, skip=("kind",))
            given = [k for k in table if k in ("hull", "drag")]
            if not given:
                self.fail("vehicle.hull", MISSING,
                          "exactly one of [vehicle.hull] (geometry) or [vehicle.drag] (C_D with its reference area)")
            if len(given) > 1:
                self.fail(f"vehicle.{given[1]}", table[given[1]],
                          "exactly one of [vehicle.hull] or [vehicle.drag], not both")
            drag = out.pop(given[0])
            return PropellerVehicle(drag=drag, **out)
        out = self.read_fields(table, "vehicle", {**common, **mine},
                               ("name", "hotel_load_W", "pump_efficiency", "polar"),
                               other_kind=other_kind, skip=("kind",))
        engine = [k for k in ("max_pumped_volume_L", "hull_volume_L") if k in out]
        if len(engine) == 1:
            missing = ({"max_pumped_volume_L", "hull_volume_L"} - set(engine)).pop()
            self.fail(f"vehicle.{missing}", MISSING,
                      f"vehicle.{missing} together with vehicle.{engine[0]} (the trim check "
                      "needs the engine's swing and the hull's displaced volume)")
        return GliderVehicle(**out)

    def hull(self, value: Any, path: str) -> HullGeometry:
        table = self.table(value, path)
        fields = {
            "length_m": lambda r, v, p: r.number(v, p, POSITIVE_M),
            "diameter_m": lambda r, v, p: r.number(v, p, POSITIVE_M),
            "appendage_factor": lambda r, v, p: r.number(v, p, APPENDAGE),
            "wetted_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
        }
        out = self.read_fields(table, path, fields, ("length_m", "diameter_m"))
        self.below(out["diameter_m"], f"{path}.diameter_m", out["length_m"], f"{path}.length_m",
                   blame="a", relation=f"a diameter smaller than {path}.length_m")
        return HullGeometry(**out)

    def drag(self, value: Any, path: str) -> DragCoefficient:
        table = self.table(value, path)
        fields = {
            "coefficient": lambda r, v, p: r.number(v, p, Range("a drag coefficient", 0.0)),
            "reference_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
            "reference": lambda r, v, p: r.choice(v, p, DRAG_REFERENCES, what="the area the coefficient refers to"),
        }
        out = self.read_fields(table, path, fields, ("coefficient", "reference_area_m2", "reference"))
        return DragCoefficient(**out)

    def polar(self, value: Any, path: str) -> GliderPolar:
        table = self.table(value, path)
        fields = {
            "reference_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
            "zero_lift_drag": lambda r, v, p: r.number(v, p, Range("a zero-lift drag coefficient", 0.0)),
            "max_lift_coefficient": lambda r, v, p: r.number(v, p, Range("a maximum lift coefficient", 0.0)),
            "induced_drag_factor": lambda r, v, p: r.number(v, p, Range("an induced-drag factor K", 0.0)),
            "aspect_ratio": lambda r, v, p: r.number(v, p, Range("an aspect ratio", 0.0)),
            "span_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
        }
        out = self.read_fields(table, path, fields,
                               ("reference_area_m2", "zero_lift_drag", "max_lift_coefficient"))
        given = [k for k in table if k in ("induced_drag_factor", "aspect_ratio")]
        if not given:
            self.fail(f"{path}.induced_drag_factor", MISSING,
                      "exactly one of induced_drag_factor (K) or aspect_ratio (with span_efficiency)")
        if len(given) > 1:
            self.fail(f"{path}.{given[1]}", table[given[1]],
                      "exactly one of induced_drag_factor or aspect_ratio, not both")
        if "span_efficiency" in out and given[0] != "aspect_ratio":
            self.fail(f"{path}.span_efficiency", table["span_efficiency"],
                      "span_efficiency only together with aspect_ratio (K = 1/(pi e AR)); "
                      "with induced_drag_factor it has no effect")
        return GliderPolar(**out)

    # ------------------------------------------------------------------ other sections
    def battery(self, value: Any) -> Battery:
        table = self.table(value, "battery")
        fields = {
            "nominal_energy_Wh": lambda r, v, p: r.number(v, p, POSITIVE_WH),
            "cold_derating": lambda r, v, p: r.number(v, p, FRACTION_OPEN0_CLOSED1),
            "fade_per_day": lambda r, v, p: r.number(v, p, FADE),
            "usable_fraction": lambda r, v, p: r.number(v, p, FRACTION_OPEN0_CLOSED1),
            "reserve_fraction": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1),
            "chemistry": lambda r, v, p: r.choice(v, p, CHEMISTRY_NAMES,
                                                  what="the cell chemistry"),
            "capacity_curve": lambda r, v, p: CapacityCurve(*r.curve(
                v, p, ("temperature_C", "fraction"),
                Range("a cell temperature [degC]", -60.0, 80.0, False, False),
                Range("a capacity fraction", 0.0, 1.5, True, False))),
            "self_discharge_per_month": lambda r, v, p: r.number(v, p, SELF_DISCHARGE),
        }
        return Battery(**self.read_fields(table, "battery", fields, ("nominal_energy_Wh",)))

    def curve(self, value: Any, path: str, keys: tuple[str, str], x_range: Range,
              y_range: Range) -> tuple[tuple[float, ...], tuple[float, ...]]:
        """A table of two equal-length number lists, the first strictly increasing."""
        table = self.table(value, path, how=f"a table {{{keys[0]} = [...], {keys[1]} = [...]}}")
        for key in table:
            if key not in keys:
                self.unknown(key, table[key], path, list(keys))
        columns = []
        for key, rng in zip(keys, (x_range, y_range)):
            sub = join_key(path, key)
            items = table.get(key, MISSING)
            if items is MISSING:
                self.fail(sub, MISSING, f"a list of numbers ({rng.what})")
            if not isinstance(items, (list, tuple)) or len(items) < 2:
                self.fail(sub, items, f"a list of two or more numbers ({rng.what})")
            columns.append(tuple(self.number(v, sub, rng, uncertain=False) for v in items))
        if len(columns[0]) != len(columns[1]):
            self.fail(join_key(path, keys[1]), list(table[keys[1]]),
                      f"as many values as {path}.{keys[0]} ({len(columns[0])})")
        if any(b <= a for a, b in zip(columns[0], columns[0][1:])):
            self.fail(join_key(path, keys[0]), list(table[keys[0]]), "strictly increasing values")
        return columns[0], columns[1]

    def setpoint(self, value: Any, kind: str) -> PropellerSetpoint | GliderSetpoint:
        table = self.table(value, "setpoint")
        propeller = {
            "speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
            "depth_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "min_ground_speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
        }
        glider = {
            "glide_angle_deg": lambda r, v, p: r.number(v, p, GLIDE_ANGLE),
            "net_buoyancy_N": lambda r, v, p: r.number(v, p, POSITIVE_N),
            "top_depth_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "bottom_depth_m": lambda r, v, p: r.number(v, p, Range("a depth [m]", 0.0)),
            "flight_policy": lambda r, v, p: r.choice(v, p, FLIGHT_POLICIES, what="the flight policy"),
            "horizontal_speed_m_s": lambda r, v, p: r.number(v, p, NONNEG_SPEED),
        }
        if kind == "propeller":
            other = {k: "a glider's [setpoint]" for k in glider}
            out = self.read_fields(table, "setpoint", propeller, ("speed_m_s",), other_kind=other)
            return PropellerSetpoint(**out)
        other = {k: "a propeller vehicle's [setpoint]" for k in propeller}
        out = self.read_fields(table, "setpoint", glider,
                               ("glide_angle_deg", "net_buoyancy_N", "top_depth_m", "bottom_depth_m"),
                               other_kind=other)
        self.below(out["top_depth_m"], "setpoint.top_depth_m", out["bottom_depth_m"], "setpoint.bottom_depth_m",
                   blame="b", relation="a bottom depth deeper than setpoint.top_depth_m")
        return GliderSetpoint(**out)

    def fouling(self, value: Any) -> Fouling:
        table = self.table(value, "fouling")
        fields = {
            "onset_days": lambda r, v, p: r.number(v, p, NONNEG_DAYS),
            "time_constant_days": lambda r, v, p: r.number(v, p, POSITIVE_DAYS),
            "drag_increase": lambda r, v, p: r.number(v, p, NONNEG_FRACTION),
            "lift_loss": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1),
        }
        return Fouling(**self.read_fields(table, "fouling", fields))

    def limits(self, value: Any) -> Limits:
        table = self.table(value, "limits")
        fields = {"max_duration_days": lambda r, v, p: r.number(v, p, POSITIVE_DAYS)}
        return Limits(**self.read_fields(table, "limits", fields))

    def battery_in_hull(self, vehicle: PropellerVehicle, battery: Battery) -> None:
        """The battery's energy per litre of hull must be one a pack can hold."""
        hull = vehicle.drag
        if not isinstance(hull, HullGeometry):
            return

        def ends(v: Value) -> tuple[float, float]:
            return tuple(float(x) for x in v.support) if isinstance(v, Marginal) else (float(v), float(v))

        (d_lo, d_hi), (l_lo, l_hi) = ends(hull.diameter_m), ends(hull.length_m)
        (e_lo, e_hi) = ends(battery.nominal_energy_Wh)
        litres_max = math.pi / 4.0 * d_hi**2 * l_hi * 1000.0
        litres_min = math.pi / 4.0 * d_lo**2 * l_lo * 1000.0
        low, high = _envelope.HULL_ENERGY_DENSITY_WH_PER_L
        if not (math.isfinite(litres_max) and litres_min > 0):
            return
        if e_lo / litres_min > high:
            self.fail("battery.nominal_energy_Wh", battery.nominal_energy_Wh,
                      f"at most {high:g} Wh per litre of hull (lithium packs store up to about "
                      f"700 Wh/L); the hull holds {litres_min:,.4g} L, so at most "
                      f"{high * litres_min:,.4g} Wh")
        if e_hi / litres_max < low:
            self.cautions.append(
                f"{self.file}: battery.nominal_energy_Wh = {e_hi:g}: implausible for a "
                f"{litres_max:,.4g} L hull ({e_hi / litres_max:.3g} Wh per litre; packs hold "
                f"100-700 Wh/L): was kWh written as Wh?")
