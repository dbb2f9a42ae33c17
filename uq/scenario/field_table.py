"""Every key of a scenario file, in one table: what it means, what it accepts, for which vehicle
kind, whether it is required — and how the reader reads it.

The reader takes its key lists from here (:func:`section`): the keys it knows in a section,
the required ones, the keys that belong to the other vehicle kind, and the function that
parses each value. The README's scenario reference is printed from the same rows
(``python -m uq.scenario.field_table``, a test compares it with the README), so the
documentation cannot drift from what the validator accepts.

To add a key: add a :class:`Field` row here (in the order the reader should list it) and the
field to its dataclass in :mod:`uq.scenario.types`; then regenerate the README section.
"""
from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from uq.scenario import types as _types
from uq.scenario.fields import (
    APPENDAGE, CHEMISTRY_NAMES, CORRELATION, CURRENT, CURRENT_POLICIES, DIVES, DRAG_REFERENCES,
    DUTY, EFFICIENCY, FADE, FLIGHT_POLICIES, FRACTION_CLOSED0_OPEN1, FRACTION_OPEN0_CLOSED1,
    GLIDE_ANGLE, GROWTH, HAZARD, MONEY, NONNEG_DAYS, NONNEG_DEPTH, NONNEG_FRACTION, NONNEG_H,
    NONNEG_J, NONNEG_KM, NONNEG_S, NONNEG_SPEED, NONNEG_W, OVERHEAD, POSITIVE_DAYS,
    POSITIVE_DEPTH, POSITIVE_KM, POSITIVE_L, POSITIVE_M, POSITIVE_M2, POSITIVE_N,
    POSITIVE_SPEED, POSITIVE_WH, PROBABILITY, SALINITY, SCHEMES, SELF_DISCHARGE, SHIP_BOOKINGS,
    SHIP_DAYS, TEMPERATURE, UNDER_ICE_POLICIES, VEHICLE_KINDS, WEIBULL_SHAPE, Range,
)

__all__ = ["Field", "FIELDS", "SectionKeys", "section", "keys_of", "markdown_reference"]

BOTH = VEHICLE_KINDS
PROPELLER = ("propeller",)
GLIDER = ("glider",)


# =============================================================================== value specs
@dataclass(frozen=True)
class Number:
    """A number (or, where ``uncertain``, a distribution table) within ``rng``."""

    rng: Range
    uncertain: bool = True

    def __call__(self, reader, value, path):
        return reader.number(value, path, self.rng, uncertain=self.uncertain)

    def accepts(self) -> str:
        head = "number or distribution" if self.uncertain else "number"
        never = "; `inf` allowed" if self.rng.allow_inf else ""
        return f"{head}: {self.rng.what} in {self.rng.interval()}{never}"


@dataclass(frozen=True)
class Choice:
    options: tuple[str, ...]
    what: str

    def __call__(self, reader, value, path):
        return reader.choice(value, path, self.options, what=self.what)

    def accepts(self) -> str:
        return "one of " + ", ".join(f'`"{o}"`' for o in self.options)


@dataclass(frozen=True)
class Integer:
    minimum: int
    what: str

    def __call__(self, reader, value, path):
        return reader.integer(value, path, minimum=self.minimum, what=self.what)

    def accepts(self) -> str:
        return f"integer >= {self.minimum}"


@dataclass(frozen=True)
class Text:
    what: str
    nonempty: bool = True

    def __call__(self, reader, value, path):
        return reader.text(value, path, what=self.what, nonempty=self.nonempty)

    def accepts(self) -> str:
        return "text" + (" (not empty)" if self.nonempty else "")


@dataclass(frozen=True)
class Method:
    """Read by the reader's method ``name(value, path)``; ``text`` says what it accepts."""

    name: str
    text: str

    def __call__(self, reader, value, path):
        return getattr(reader, self.name)(value, path)

    def accepts(self) -> str:
        return self.text


@dataclass(frozen=True)
class Curve:
    """A table of two equal-length number lists, the first strictly increasing."""

    keys: tuple[str, str]
    x: Range
    y: Range
    build: Callable[..., Any]

    def __call__(self, reader, value, path):
        return self.build(*reader.curve(value, path, self.keys, self.x, self.y))

    def accepts(self) -> str:
        return (f"table `{{{self.keys[0]} = [...], {self.keys[1]} = [...]}}`: {self.x.what} "
                f"(increasing) and {self.y.what} in {self.y.interval()}")


@dataclass(frozen=True)
class Elsewhere:
    """Read by its own module (route and environment data open files)."""

    text: str
    module: str

    def __call__(self, reader, value, path):  # pragma: no cover - never called
        raise TypeError(f"{path} is read by {self.module}")

    def accepts(self) -> str:
        return self.text


@dataclass(frozen=True)
class Field:
    """One key of a scenario file.

    ``section`` is the table it sits in (``legs`` for every ``[[legs]]`` table), ``kinds`` the
    vehicle kinds it applies to, ``required`` the kinds for which it must be given.
    """

    section: str
    key: str
    read: Any
    meaning: str
    kinds: tuple[str, ...] = BOTH
    required: tuple[str, ...] = ()


def _f(section: str, key: str, read: Any, meaning: str, kinds=BOTH, required=()) -> Field:
    return Field(section, key, read, meaning, tuple(kinds), tuple(required))


_DRAG_COEFFICIENT = Range("a drag coefficient", 0.0)
_CELL_TEMPERATURE = Range("a cell temperature [degC]", -60.0, 80.0, False, False)
_CAPACITY_FRACTION = Range("a capacity fraction", 0.0, 1.5, True, False)
_ENVIRONMENT = "uq.scenario.environment"

# The order of rows is the order the reader lists known keys in its messages.
FIELDS: tuple[Field, ...] = (
    _f("scenario", "name", Text("the scenario name"), "the scenario's name; names the default report folder", required=BOTH),
    _f("scenario", "description", Text("a description", nonempty=False), "free text shown in the report"),
    # ------------------------------------------------------------------ vehicle
    _f("vehicle", "kind", Choice(VEHICLE_KINDS, "the vehicle kind"), "the vehicle kind, stated explicitly (never guessed from the keys)", required=BOTH),
    _f("vehicle", "name", Text("the vehicle name"), "the vehicle's name", required=BOTH),
    _f("vehicle", "hotel_load_W", Number(NONNEG_W), "power of everything but propulsion or the pump (computers, sensors, navigation) [W]", required=BOTH),
    _f("vehicle", "propulsive_efficiency", Number(EFFICIENCY), "overall efficiency from battery to thrust power (motor, gearbox, propeller) at the setpoint speed", PROPELLER, PROPELLER),
    _f("vehicle", "hull", Method("hull", "table `[vehicle.hull]`"), "drag from hull geometry (give this or `[vehicle.drag]`, exactly one)", PROPELLER),
    _f("vehicle", "drag", Method("drag", "table `[vehicle.drag]`"), "drag from a measured or quoted C_D with its reference area (give this or `[vehicle.hull]`, exactly one)", PROPELLER),
    _f("vehicle", "efficiency_curve", Curve(("speed_m_s", "efficiency"), POSITIVE_SPEED, EFFICIENCY, _types.EfficiencyCurve), "shape of the propulsive efficiency over speed; scaled so that `propulsive_efficiency` holds at the setpoint speed", PROPELLER),
    _f("vehicle", "max_speed_m_s", Number(POSITIVE_SPEED), "the fastest the vehicle can go, the ceiling of `setpoint.min_ground_speed_m_s` [m/s]", PROPELLER),
    _f("vehicle", "pump_efficiency", Number(EFFICIENCY), "efficiency of the buoyancy pump (battery to hydraulic work)", GLIDER, GLIDER),
    _f("vehicle", "inflection_energy_J", Number(NONNEG_J), "extra energy of each dive-to-climb inflection (valves, pitch moves) [J]", GLIDER),
    _f("vehicle", "inflection_time_s", Number(NONNEG_S), "time spent at each inflection [s]", GLIDER),
    _f("vehicle", "polar", Method("polar", "table `[vehicle.polar]`"), "the glide polar", GLIDER, GLIDER),
    _f("vehicle", "max_pumped_volume_L", Number(POSITIVE_L), "full swing of the buoyancy engine [L] (with `hull_volume_L`: the trim check)", GLIDER),
    _f("vehicle", "hull_volume_L", Number(POSITIVE_L), "displaced hull volume [L] (with `max_pumped_volume_L`)", GLIDER),
    _f("vehicle", "pump_stroke_fixed_energy_J", Number(NONNEG_J), "fixed cost of each pump stroke (motor start, valves) [J]", GLIDER),
    _f("vehicle", "surface_time_s", Number(NONNEG_S), "time at the surface per surfacing (position fix, satellite link) [s]", GLIDER),
    _f("vehicle", "surface_power_W", Number(NONNEG_W), "power at the surface on top of the hotel load [W]", GLIDER),
    _f("vehicle.hull", "length_m", Number(POSITIVE_M), "overall hull length [m]", PROPELLER, PROPELLER),
    _f("vehicle.hull", "diameter_m", Number(POSITIVE_M), "hull diameter [m] (smaller than the length)", PROPELLER, PROPELLER),
    _f("vehicle.hull", "appendage_factor", Number(APPENDAGE), "multiplier on the bare-hull drag for fins, sensors and thrusters (>= 1)", PROPELLER),
    _f("vehicle.hull", "wetted_area_m2", Number(POSITIVE_M2), "wetted area [m^2]; without it the prolate spheroid of the same length and diameter (a low estimate)", PROPELLER),
    _f("vehicle.drag", "coefficient", Number(_DRAG_COEFFICIENT), "drag coefficient C_D (e.g. from a tow-tank test), on `reference_area_m2`", PROPELLER, PROPELLER),
    _f("vehicle.drag", "reference_area_m2", Number(POSITIVE_M2), "the area C_D refers to [m^2]", PROPELLER, PROPELLER),
    _f("vehicle.drag", "reference", Choice(DRAG_REFERENCES, "the area the coefficient refers to"), "which area that is (shown in the report)", PROPELLER, PROPELLER),
    _f("vehicle.polar", "reference_area_m2", Number(POSITIVE_M2), "area the polar's coefficients refer to (usually the wing) [m^2]", GLIDER, GLIDER),
    _f("vehicle.polar", "zero_lift_drag", Number(Range("a zero-lift drag coefficient", 0.0)), "C_D0 of the polar C_D = C_D0 + K C_L^2", GLIDER, GLIDER),
    _f("vehicle.polar", "max_lift_coefficient", Number(Range("a maximum lift coefficient", 0.0)), "largest usable C_L (stall)", GLIDER, GLIDER),
    _f("vehicle.polar", "induced_drag_factor", Number(Range("an induced-drag factor K", 0.0)), "K of the polar (give this or `aspect_ratio`, exactly one)", GLIDER),
    _f("vehicle.polar", "aspect_ratio", Number(Range("an aspect ratio", 0.0)), "wing aspect ratio AR; K = 1/(pi e AR) (give this or `induced_drag_factor`)", GLIDER),
    _f("vehicle.polar", "span_efficiency", Number(EFFICIENCY), "span efficiency e, only with `aspect_ratio`", GLIDER),
    # ------------------------------------------------------------------ battery
    _f("battery", "nominal_energy_Wh", Number(POSITIVE_WH), "rated energy of the pack [Wh]", required=BOTH),
    _f("battery", "cold_derating", Number(FRACTION_OPEN0_CLOSED1), "fraction of nominal delivered in the mission's water; with a capacity curve, the pack-to-pack spread on top of it"),
    _f("battery", "fade_per_day", Number(FADE), "capacity lost per day of mission [1/day]"),
    _f("battery", "usable_fraction", Number(FRACTION_OPEN0_CLOSED1), "share of the delivered energy the vehicle may use (depth of discharge)"),
    _f("battery", "reserve_fraction", Number(FRACTION_CLOSED0_OPEN1), "policy: share of usable energy to arrive with; arriving on it is a reserve breach"),
    _f("battery", "chemistry", Choice(CHEMISTRY_NAMES, "the cell chemistry"), "selects a default capacity-against-temperature curve and self-discharge"),
    _f("battery", "capacity_curve", Curve(("temperature_C", "fraction"), _CELL_TEMPERATURE, _CAPACITY_FRACTION, _types.CapacityCurve), "deliverable capacity against cell temperature, applied per leg at the leg's water temperature (from the cell maker's datasheet)"),
    _f("battery", "self_discharge_per_month", Number(SELF_DISCHARGE), "self-discharge [fraction per month]; default: the chemistry's, else 0"),
    # ------------------------------------------------------------------ setpoint
    _f("setpoint", "speed_m_s", Number(POSITIVE_SPEED), "speed through water [m/s]", PROPELLER, PROPELLER),
    _f("setpoint", "depth_m", Number(NONNEG_DEPTH), "running depth [m] (below every ice ceiling, above every seabed)", PROPELLER),
    _f("setpoint", "min_ground_speed_m_s", Number(POSITIVE_SPEED), "policy: speed up against head currents to make at least this over ground, up to `vehicle.max_speed_m_s` [m/s]", PROPELLER),
    _f("setpoint", "glide_angle_deg", Number(GLIDE_ANGLE), "glide path angle below the horizontal [deg]", GLIDER, GLIDER),
    _f("setpoint", "net_buoyancy_N", Number(POSITIVE_N), "net buoyancy at each inflection, the glide's driving force [N]", GLIDER, GLIDER),
    _f("setpoint", "top_depth_m", Number(NONNEG_DEPTH), "shallow end of the dive band [m]", GLIDER, GLIDER),
    _f("setpoint", "bottom_depth_m", Number(Range("a depth [m]", 0.0)), "deep end of the dive band [m]", GLIDER, GLIDER),
    _f("setpoint", "flight_policy", Choice(FLIGHT_POLICIES, "the flight policy"), "`hold_angle` (angle and buoyancy fixed), `hold_speed` (buoyancy re-trimmed for the speed) or `efficient` (speed held at the least-energy angle)", GLIDER),
    _f("setpoint", "horizontal_speed_m_s", Number(NONNEG_SPEED), "horizontal speed through water held by `hold_speed` and `efficient` [m/s]", GLIDER),
    # ------------------------------------------------------------------ fouling, limits
    _f("fouling", "onset_days", Number(NONNEG_DAYS), "days before fouling starts"),
    _f("fouling", "time_constant_days", Number(POSITIVE_DAYS), "time constant of the growth towards full fouling [days] (`inf`: never)"),
    _f("fouling", "drag_increase", Number(NONNEG_FRACTION), "fractional drag increase at full fouling"),
    _f("fouling", "lift_loss", Number(FRACTION_CLOSED0_OPEN1), "fractional loss of lift slope at full fouling (gliders)"),
    _f("limits", "max_duration_days", Number(POSITIVE_DAYS), "longest allowed transit; arriving later is a late arrival [days] (`inf`: no limit)"),
    # ------------------------------------------------------------------ legs
    _f("legs", "name", Method("leg_name", "letters, digits, `_` and `-`; unique"), "the leg's name; names its inputs (`legs.<name>.<key>`)", required=BOTH),
    _f("legs", "length_km", Number(POSITIVE_KM), "length of the leg over ground [km]", required=BOTH),
    _f("legs", "current_along_m_s", Number(CURRENT), "current along the track at the running depth (below `surface_layer_m` where one is given), + following [m/s]"),
    _f("legs", "current_across_m_s", Number(CURRENT), "current across the track, likewise [m/s]"),
    _f("legs", "temperature_C", Number(TEMPERATURE), "in-situ water temperature [degC]; required under ice, else 10 with a caution"),
    _f("legs", "practical_salinity", Number(SALINITY), "practical salinity (PSS-78); absent: 35 with a caution"),
    _f("legs", "ice_ceiling_m", Number(NONNEG_DEPTH), "shallowest allowed depth under ice (keel plus clearance) [m]; 0: open water"),
    _f("legs", "seabed_m", Number(POSITIVE_DEPTH), "deepest allowed depth (seabed less clearance) [m]; absent: no limit"),
    _f("legs", "fouling_growth_factor", Number(GROWTH), "rate of the fouling clock on this leg (1: the `[fouling]` rate)"),
    _f("legs", "hotel_load_W", Number(NONNEG_W), "this leg's hotel load instead of the vehicle's [W]"),
    _f("legs", "current_policy", Choice(CURRENT_POLICIES, "the current policy"), "how a cross current is met: `crab` (hold the track), `drift` (make the offset good later), `crab_or_drift`"),
    _f("legs", "surface_current_along_m_s", Number(CURRENT), "along-track current from the surface to `surface_layer_m` [m/s]"),
    _f("legs", "surface_current_across_m_s", Number(CURRENT), "cross-track current in that surface layer [m/s]"),
    _f("legs", "surface_layer_m", Number(NONNEG_DEPTH), "thickness of the surface layer of a two-layer current [m]"),
    _f("legs", "flight_policy", Choice(FLIGHT_POLICIES, "the flight policy"), "this leg's glider flight policy instead of the setpoint's", GLIDER),
    _f("legs", "dives_per_surfacing", Number(DIVES), "dives between surfacings (`inf`: never surfaces, e.g. under ice)", GLIDER),
    _f("legs", "payload_power_W", Number(NONNEG_W), "sensor payload power while sampling [W]", GLIDER),
    _f("legs", "payload_duty_cycle", Number(DUTY), "share of the time the payload samples", GLIDER),
    _f("legs", "speed_m_s", Number(POSITIVE_SPEED), "this leg's speed through water instead of the setpoint's [m/s]", PROPELLER),
    _f("legs", "depth_m", Number(NONNEG_DEPTH), "this leg's running depth instead of the setpoint's [m]", PROPELLER),
    # ------------------------------------------------------------------ route and environment
    _f("route", "waypoints", Elsewhere("array of tables `{lat = ..., lon = ..., leg = ..., <leg keys>}`", "uq.scenario.route"), "waypoints (instead of `[[legs]]`); keys of a leg written on the waypoint that ends it, `leg` names it, `window_start`/`window_end` time it"),
    _f("route", "csv", Elsewhere("file name", "uq.scenario.route"), "a CSV file of waypoints beside the scenario (instead of `waypoints`)"),
    _f("route", "sample_spacing_km", Elsewhere("positive number [km]", _ENVIRONMENT), "along-track spacing of the points where data are sampled (default 10)"),
    _f("environment", "start", Elsewhere("TOML datetime", _ENVIRONMENT), "deployment time, UTC (needed with time-dependent data)"),
    _f("environment", "progress_m_s", Elsewhere("positive number [m/s]", _ENVIRONMENT), "nominal speed made good that times the legs in the data (default: a propeller vehicle's setpoint speed)"),
    _f("environment", "launch_window_days", Elsewhere("number >= 0 [days]", _ENVIRONMENT), "launch times spread over this window, in the data's time steps (default 0)"),
    _f("environment", "seabed_clearance_m", Elsewhere("number >= 0 [m]", _ENVIRONMENT), "clearance kept above the data's seabed (default 0)"),
    _f("environment", "correlate", Elsewhere("true or false", _ENVIRONMENT), "feed the data's rank correlations of currents into the copula (default true)"),
    _f("environment", "current", Elsewhere("table `{file, eastward, northward}`", _ENVIRONMENT), "current data (CF eastward/northward sea water velocity)"),
    _f("environment", "temperature", Elsewhere("table `{file, variable}`", _ENVIRONMENT), "temperature data"),
    _f("environment", "salinity", Elsewhere("table `{file, variable}`", _ENVIRONMENT), "salinity data"),
    _f("environment", "bathymetry", Elsewhere("table `{file, variable}`", _ENVIRONMENT), "seabed depth data"),
    _f("environment", "ice", Elsewhere("table `{file, variable, draft_m, threshold}`", _ENVIRONMENT), "ice-fraction data; a leg is under a `draft_m` ceiling where the fraction reaches `threshold` (default 0.15)"),
    # ------------------------------------------------------------------ recovery, under ice, hardware
    _f("recovery", "loiter_time_h", Number(NONNEG_H), "time waiting at the recovery point (ship, open hole) [h]"),
    _f("recovery", "loiter_power_W", Number(NONNEG_W), "power while waiting [W]"),
    _f("recovery", "homing_distance_km", Number(NONNEG_KM), "extra distance homing or searching at the recovery point [km]"),
    _f("under_ice", "policy", Choice(UNDER_ICE_POLICIES, "what to do at the point of no return"), "at the point of no return under ice: `continue` or `turn-back` when the goal looks out of reach"),
    _f("under_ice", "safe_exits_after", Method("leg_names", "list of leg names"), "legs whose end is a safe exit (an ice edge)"),
    _f("under_ice", "dead_reckoning_overhead", Number(OVERHEAD), "extra distance flown under ice, as a fraction of the leg"),
    _f("hardware", "subsystems", Method("subsystems", "array of tables `[[hardware.subsystems]]`"), "subsystems that may fail in service"),
    _f("hardware.subsystems", "name", Text("the subsystem's name"), "the subsystem's name", required=BOTH),
    _f("hardware.subsystems", "rate_per_day", Number(HAZARD, uncertain=False), "failure rate per day of operation [1/day]", required=BOTH),
    _f("hardware.subsystems", "weibull_shape", Number(WEIBULL_SHAPE, uncertain=False), "Weibull shape of the hazard (1: constant)"),
    # ------------------------------------------------------------------ correlations
    _f("correlations", "inputs", Method("input_pair", "list of two input names"), "two uncertain inputs by their key paths", required=BOTH),
    _f("correlations", "rank", Number(CORRELATION, uncertain=False), "their Spearman rank correlation (the set must form a positive-definite matrix)", required=BOTH),
    # ------------------------------------------------------------------ decision
    _f("decision", "required_probability", Number(PROBABILITY, uncertain=False), "p*: the P(success) the mission must reach (default 0.9)"),
    _f("decision", "confidence", Number(PROBABILITY, uncertain=False), "confidence of the bound the verdict uses (default 0.95)"),
    _f("decision", "currency", Method("currency", "ISO 4217 code, e.g. `\"EUR\"`"), "currency of every amount of money"),
    _f("decision", "ship_day_rate", Number(MONEY, uncertain=False), "cost of one ship day [currency/day]"),
    _f("decision", "booking_quantile", Number(PROBABILITY, uncertain=False), "arrival-time quantile the ship is booked for (default 0.9)"),
    _f("decision", "value_of_success", Number(MONEY, uncertain=False), "value of a successful mission [currency]"),
    _f("decision", "cost_of_failure", Number(MONEY, uncertain=False), "net loss when the vehicle does not reach the recovery point [currency]"),
    _f("decision", "cost_of_no_go", Number(MONEY, uncertain=False), "net loss of not going [currency]"),
    _f("decision", "tests", Method("tests", "array of tables `[[decision.tests]]`"), "tests that could be funded before deployment"),
    _f("decision", "ship_booking", Choice(SHIP_BOOKINGS, "how the ship is booked"), "`on_station` (the ship stays for the transit) or `recovery_window` (it comes for the recovery)"),
    _f("decision", "deployment_date", Method("date", "TOML local date, e.g. 2027-04-12"), "deployment date (required for `recovery_window`)"),
    _f("decision", "recovery_window", Method("quantile_pair", "two quantiles in (0, 1), earliest first"), "arrival quantiles bounding the recovery window (default [0.05, 0.95])"),
    _f("decision", "ship_transit_days", Number(SHIP_DAYS, uncertain=False), "the ship's own passage to and from the recovery point [days]"),
    _f("decision", "cost_of_reserve_breach", Number(MONEY, uncertain=False), "net loss when the vehicle arrives on its reserve [currency] (default `cost_of_failure`)"),
    _f("decision", "cost_of_late_arrival", Number(MONEY, uncertain=False), "net loss when it arrives after `max_duration_days` [currency] (default `cost_of_failure`)"),
    _f("decision", "knowledge", Method("name_list", "list of input names"), "inputs a test could pin down (knowledge band)"),
    _f("decision", "variability", Method("name_list", "list of input names"), "inputs that vary by the day (knowledge band)"),
    _f("decision", "required_credibility", Number(PROBABILITY, uncertain=False), "adds the rule go iff P(P(success) >= p*) >= this"),
    _f("decision.tests", "name", Text("the test's name"), "the test's name (unique)", required=BOTH),
    _f("decision.tests", "cost", Number(MONEY, uncertain=False), "its cost [currency]", required=BOTH),
    _f("decision.tests", "inputs", Method("name_list", "list of input names"), "the uncertain inputs it measures", required=BOTH),
    _f("decision.tests", "residual_fraction", Number(FRACTION_CLOSED0_OPEN1, uncertain=False), "posterior sd / prior sd of each measured input after the test (0: exact)"),
    # ------------------------------------------------------------------ analysis
    _f("analysis", "samples", Integer(1, "number of samples"), "samples of the uncertain inputs (a power of two for `sobol`)"),
    _f("analysis", "seed", Integer(0, "random seed"), "seed of every random stream of the run"),
    _f("analysis", "scheme", Choice(SCHEMES, "the sampling scheme"), "sampling scheme"),
    _f("analysis", "replicates", Integer(1, "independent replicates"), "independent scramblings for the P(success) interval"),
    _f("analysis", "sensitivity_base_n", Integer(2, "Sobol' base sample size"), "base sample size of the Sobol'-index design (a power of two)"),
    _f("analysis", "rare_events", Choice(("auto", "always", "off"), "when to use the rare-event estimator"), "when to use the rare-event estimator"),
    _f("analysis", "max_looks", Integer(1, "looks at P(success)"), "looks at P(success) a run may take (sequential extension)"),
    _f("analysis", "kept_rows", Integer(2, "rows kept"), "row limit: above it only the first `kept_rows / replicates` rows of each replicate are kept (quantiles, contingency, knowledge band, test ranking, per-sample files); counts and means use every sample"),
)

#: Sections in the order the reader lists them; the table's own sections first.
SECTIONS = ("scenario", "vehicle", "battery", "setpoint", "fouling", "limits", "legs", "route",
            "environment", "correlations", "recovery", "under_ice", "hardware", "decision",
            "analysis")


@dataclass(frozen=True)
class SectionKeys:
    """What the reader needs of one section for one vehicle kind."""

    fields: dict[str, Any]  # key -> reader function (reader, value, path) -> value
    required: tuple[str, ...]
    other_kind: dict[str, str]  # key of the other kind -> which kind it belongs to


def section(name: str, kind: str | None = None, *, skip: tuple[str, ...] = ()) -> SectionKeys:
    """The keys of section ``name`` for vehicle ``kind`` (None: every key of the section)."""
    rows = [f for f in FIELDS if f.section == name and f.key not in skip]
    mine = [f for f in rows if kind is None or kind in f.kinds]
    return SectionKeys(
        fields={f.key: f.read for f in mine},
        required=tuple(f.key for f in mine if kind in f.required or (kind is None and f.required)),
        other_kind={f.key: f"kind = {f.kinds[0]!r}" for f in rows if f not in mine},
    )


def keys_of(name: str) -> tuple[str, ...]:
    """Every key of section ``name``, in table order."""
    return tuple(f.key for f in FIELDS if f.section == name)


# =============================================================================== README
_DATACLASSES: Mapping[str, tuple[type, ...]] = {
    "vehicle": (_types.PropellerVehicle, _types.GliderVehicle),
    "vehicle.hull": (_types.HullGeometry,), "vehicle.drag": (_types.DragCoefficient,),
    "vehicle.polar": (_types.GliderPolar,), "battery": (_types.Battery,),
    "setpoint": (_types.PropellerSetpoint, _types.GliderSetpoint), "fouling": (_types.Fouling,),
    "limits": (_types.Limits,), "legs": (_types.Leg,), "recovery": (_types.Recovery,),
    "under_ice": (_types.UnderIce,), "hardware.subsystems": (_types.Subsystem,),
    "decision": (_types.Decision,), "decision.tests": (_types.TestCandidate,),
    "analysis": (_types.Analysis,),
}


def _default(row: Field) -> str:
    if row.required and set(row.required) == set(row.kinds):
        return "required"
    for cls in _DATACLASSES.get(row.section, ()):
        for f in dataclasses.fields(cls):
            if f.name == row.key and f.default is not dataclasses.MISSING:
                value = f.default
                if value is None or value == ():
                    return "—"
                if isinstance(value, float) and math.isinf(value):
                    return "`inf`"
                if isinstance(value, str):
                    return f'`"{value}"`'
                if isinstance(value, tuple):
                    return "`[" + ", ".join(f"{v:g}" for v in value) + "]`"
                return f"`{value:g}`" if isinstance(value, float) else f"`{value}`"
    return "required" if row.required else "—"


def _kinds(row: Field) -> str:
    return "both" if set(row.kinds) == set(BOTH) else row.kinds[0]


def markdown_reference() -> str:
    """Every scenario key as Markdown tables, one per section (for the README)."""
    out = []
    for name in dict.fromkeys(f.section for f in FIELDS):
        header = f"[[{name}]]" if name in ("legs", "correlations", "decision.tests",
                                            "hardware.subsystems") else f"[{name}]"
        out += ["", f"`{header}`", "", "| key | vehicle | default | accepts | meaning |",
                "|---|---|---|---|---|"]
        for row in (f for f in FIELDS if f.section == name):
            out.append(f"| `{row.key}` | {_kinds(row)} | {_default(row)} | "
                       f"{row.read.accepts()} | {row.meaning} |")
    return "\n".join(out[1:])


if __name__ == "__main__":  # pragma: no cover - prints the README reference
    print(markdown_reference())
