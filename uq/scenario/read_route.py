"""The route half of the scenario reader: ``[[legs]]`` (or legs built from ``[route]``
waypoints and ``[environment]`` data), each leg's water, the depth windows of the setpoint
against ice and seabed, ``[recovery]`` and ``[under_ice]``.
"""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from uq.scenario.distributions import Marginal
from uq.scenario.errors import MISSING
from uq.scenario.field_reader import FieldReader
from uq.scenario.field_table import section
from uq.scenario.fields import LEG_KEYS, LEG_NAME
from uq.scenario.types import GliderSetpoint, Leg, PropellerSetpoint, Recovery, UnderIce

__all__ = ["RouteSections"]


class RouteSections(FieldReader):
    """Readers of the legs, route, recovery and under-ice sections."""

    def legs(self, value: Any) -> tuple[Leg, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail("legs", value, "an array of tables [[legs]]")
        if not value:
            self.fail("legs", value, "at least one [[legs]] table (the route is empty)")
        keys = section("legs")
        seen: dict[str, int] = {}
        legs = []
        for i, item in enumerate(value):
            table = self.table(item, f"legs[{i}]", how="a [[legs]] table")
            name = table.get("name", MISSING)
            if name is MISSING:
                self.fail(f"legs[{i}].name", MISSING, "a leg name (letters, digits, _ and -)")
            if not isinstance(name, str) or not LEG_NAME.fullmatch(name):
                self.fail(f"legs[{i}].name", name, "a leg name of letters, digits, _ and - only")
            if name in seen:
                self.fail(f"legs[{i}].name", name, f"a unique leg name (legs[{seen[name]}] is already {name!r})")
            seen[name] = i
            path = f"legs.{name}"
            out = self.read_fields(table, path, keys.fields, keys.required)
            leg = Leg(**out)
            self.leg_water(leg, table, path)
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation=f"a seabed deeper than {path}.ice_ceiling_m")
            legs.append(leg)
        return tuple(legs)

    def leg_water(self, leg: Leg, table: Mapping[str, Any], path: str) -> None:
        """No silent environment: under ice the temperature is required; elsewhere an absent
        temperature or salinity takes the documented default (10 degC, 35) with a caution."""
        under_ice = isinstance(leg.ice_ceiling_m, Marginal) or float(leg.ice_ceiling_m) > 0.0
        if "temperature_C" not in table and under_ice:
            self.fail(f"{path}.temperature_C", MISSING,
                      "the water temperature of a leg under ice (no default: water under ice "
                      "is near its freezing point, about -1.9 degC, not the open-water default)")
        for key, default, unit in (("temperature_C", Leg.temperature_C, " degC"),
                                   ("practical_salinity", Leg.practical_salinity, "")):
            if key not in table:
                self.cautions.append(
                    f"{self.file}: {path}.{key} not given: the default {default:g}{unit} was "
                    "used; state the leg's own value (it sets density and drag)")

    def glider_windows(self, setpoint: GliderSetpoint, legs: tuple[Leg, ...]) -> None:
        """Each leg must leave room to glide between the shallow and the deep limit."""
        for leg in legs:
            path = f"legs.{leg.name}"
            self.below(setpoint.top_depth_m, "setpoint.top_depth_m", leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation="a seabed deeper than setpoint.top_depth_m (no room to glide)")
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", setpoint.bottom_depth_m,
                       "setpoint.bottom_depth_m", blame="a",
                       relation="an ice ceiling shallower than setpoint.bottom_depth_m (no room to glide)")

    def glider_policies(self, setpoint: GliderSetpoint, legs: tuple[Leg, ...]) -> None:
        """A re-trim policy needs the horizontal speed it holds."""
        if setpoint.horizontal_speed_m_s is not None:
            return
        for where, policy in [("setpoint.flight_policy", setpoint.flight_policy)] + [
                (f"legs.{leg.name}.flight_policy", leg.flight_policy) for leg in legs]:
            if policy in ("hold_speed", "efficient"):
                self.fail("setpoint.horizontal_speed_m_s", MISSING,
                          f"a horizontal speed to hold ({where} = {policy!r} re-trims for it)")
    def propeller_windows(self, setpoint: PropellerSetpoint, legs: tuple[Leg, ...]) -> None:
        """The running depth must lie below each leg's ice ceiling and above its seabed."""
        for leg in legs:
            path = f"legs.{leg.name}"
            own = getattr(leg, "depth_m", None)
            depth, where = (own, f"{path}.depth_m") if own is not None else (setpoint.depth_m, "setpoint.depth_m")
            self.below(depth, where, leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation=f"a seabed at or below {where} (the "
                       "vehicle runs at that depth)", strict=False)
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", depth,
                       where, blame="a", relation=f"an ice ceiling at or above "
                       f"{where} (the vehicle runs at that depth)", strict=False)

    def recovery(self, value: Any) -> Recovery:
        return self.plain_section(value, "recovery", Recovery)

    def under_ice(self, value: Any) -> UnderIce:
        return self.plain_section(value, "under_ice", UnderIce)

    def leg_name(self, value: Any, path: str) -> str:
        """A leg's name, already checked by :meth:`legs` (letters, digits, _ and -; unique)."""
        return value

    def leg_names(self, value: Any, path: str) -> tuple[str, ...]:
        if not isinstance(value, (list, tuple)) or not all(isinstance(v, str) for v in value):
            self.fail(path, value, "a list of leg names")
        return tuple(value)

    def route(self, doc: Mapping[str, Any], parsed: dict[str, Any], kind: str):
        """Legs from ``[route]`` waypoints, their fields from ``[environment]`` data files."""
        from uq.scenario.environment import build_route  # opens files: only when asked

        if "route" not in doc:
            self.fail("route", MISSING, "a [route] of waypoints for the [environment] data to follow")
        if "legs" in doc:
            self.fail("legs", "[[legs]]", "either [[legs]] with lengths or a [route] of waypoints, not both")
        built = build_route(doc["route"], doc.get("environment"), file=self.file,
                            setpoint=parsed["setpoint"], kind=kind, leg_keys=LEG_KEYS)
        parsed["legs"] = self.legs(list(built.legs))
        return built

    @staticmethod
    def data_correlations(route, given) -> list:
        """Data-derived rank correlations, after the file's own (a pair in the file wins)."""
        if route is None:
            return []
        stated = {frozenset(pair) for _, pair, _ in given}
        return [(len(given) + k, c.inputs, c.rank) for k, c in enumerate(route.correlations)
                if frozenset(c.inputs) not in stated]
