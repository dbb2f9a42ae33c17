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
from uq.scenario.field_table import section
from uq.scenario.fields import Range, join_key
from uq.scenario.types import (
    Battery, DragCoefficient, Fouling, GliderPolar, GliderSetpoint, GliderVehicle,
    HullGeometry, Limits, PropellerSetpoint, PropellerVehicle, Value,
)

__all__ = ["VehicleSections"]


class VehicleSections(FieldReader):
    """Readers of the vehicle, battery, setpoint, fouling and limits sections."""

    def vehicle(self, table: Mapping[str, Any], kind: str) -> PropellerVehicle | GliderVehicle:
        keys = section("vehicle", kind, skip=("kind",))
        out = self.read_fields(table, "vehicle", keys.fields, keys.required,
                               other_kind=keys.other_kind, skip=("kind",))
        if kind == "propeller":
            given = [k for k in table if k in ("hull", "drag")]
            if not given:
                self.fail("vehicle.hull", MISSING,
                          "exactly one of [vehicle.hull] (geometry) or [vehicle.drag] (C_D with its reference area)")
            if len(given) > 1:
                self.fail(f"vehicle.{given[1]}", table[given[1]],
                          "exactly one of [vehicle.hull] or [vehicle.drag], not both")
            drag = out.pop(given[0])
            return PropellerVehicle(drag=drag, **out)
        engine = [k for k in ("max_pumped_volume_L", "hull_volume_L") if k in out]
        if len(engine) == 1:
            missing = ({"max_pumped_volume_L", "hull_volume_L"} - set(engine)).pop()
            self.fail(f"vehicle.{missing}", MISSING,
                      f"vehicle.{missing} together with vehicle.{engine[0]} (the trim check "
                      "needs the engine's swing and the hull's displaced volume)")
        return GliderVehicle(**out)

    def hull(self, value: Any, path: str) -> HullGeometry:
        table = self.table(value, path)
        out = self.read_section(table, path)
        self.below(out["diameter_m"], f"{path}.diameter_m", out["length_m"], f"{path}.length_m",
                   blame="a", relation=f"a diameter smaller than {path}.length_m")
        return HullGeometry(**out)

    def drag(self, value: Any, path: str) -> DragCoefficient:
        table = self.table(value, path)
        out = self.read_section(table, path)
        return DragCoefficient(**out)

    def polar(self, value: Any, path: str) -> GliderPolar:
        table = self.table(value, path)
        out = self.read_section(table, path)
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
        return self.plain_section(value, "battery", Battery)

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
        keys = section("setpoint", kind)
        other = ("a glider's [setpoint]" if kind == "propeller"
                 else "a propeller vehicle's [setpoint]")
        out = self.read_fields(table, "setpoint", keys.fields, keys.required,
                               other_kind={k: other for k in keys.other_kind})
        if kind == "propeller":
            return PropellerSetpoint(**out)
        self.below(out["top_depth_m"], "setpoint.top_depth_m", out["bottom_depth_m"], "setpoint.bottom_depth_m",
                   blame="b", relation="a bottom depth deeper than setpoint.top_depth_m")
        return GliderSetpoint(**out)

    def fouling(self, value: Any) -> Fouling:
        return self.plain_section(value, "fouling", Fouling)

    def limits(self, value: Any) -> Limits:
        return self.plain_section(value, "limits", Limits)

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
