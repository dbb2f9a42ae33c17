"""Typed, immutable scenario: what a planner wrote in the scenario file, validated once.

A scenario keeps the file's own units (km, days, Wh, degrees) in field names that say them;
conversion to SI happens in :mod:`uq.simulate`, at the boundary to :mod:`physics`.

Any numeric field holds either a ``float`` (a fixed value) or a marginal distribution
(:class:`uq.scenario.distributions.Marginal`) whose ``name`` is the dotted key path of the
field, e.g. ``legs.shelf_crossing.current_along_m_s``. ``Scenario.inputs`` lists every
uncertain field in file order; that order is the column order of every sample array.
Instances come from :func:`uq.scenario.load_scenario` / :func:`uq.scenario.parse_scenario`.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass, field
from typing import Union

from uq.scenario.distributions import Marginal

__all__ = [
    "Value", "HullGeometry", "DragCoefficient", "PropellerVehicle", "GliderPolar",
    "GliderVehicle", "Battery", "PropellerSetpoint", "GliderSetpoint", "Fouling", "Leg",
    "Limits", "TestCandidate", "Decision", "RankCorrelation", "Analysis", "Scenario",
    "CapacityCurve", "EfficiencyCurve", "Recovery", "UnderIce", "Subsystem", "Hardware",
]


#: A numeric field: a fixed number or a named marginal distribution.
Value = Union[float, "Marginal"]


@dataclass(frozen=True)
class HullGeometry:
    """Hull drag from geometry: ITTC-1957 friction x Hoerner form factor x appendage factor.

    The drag coefficient is referenced to the wetted area; when ``wetted_area_m2`` is None the
    prolate-spheroid area of the same length and diameter is used (a low estimate).
    """

    length_m: Value
    diameter_m: Value
    appendage_factor: Value = 1.0
    wetted_area_m2: Value | None = None


@dataclass(frozen=True)
class DragCoefficient:
    """Hull drag given directly (e.g. from a tow-tank test): C_D with its reference area."""

    coefficient: Value
    reference_area_m2: Value
    reference: str  # "frontal" | "wetted" | "volume^(2/3)" - kept for the report


@dataclass(frozen=True)
class EfficiencyCurve:
    """Propulsive efficiency over speed through water; only its shape is used: the vehicle's
    ``propulsive_efficiency`` holds at the [setpoint] speed and is scaled along the curve."""

    speed_m_s: tuple[float, ...]
    efficiency: tuple[float, ...]


@dataclass(frozen=True)
class PropellerVehicle:
    name: str
    hotel_load_W: Value
    propulsive_efficiency: Value
    drag: HullGeometry | DragCoefficient
    efficiency_curve: EfficiencyCurve | None = None
    max_speed_m_s: Value | None = None  # ceiling of the hold-ground-speed policy
    kind: str = field(default="propeller", init=False)


@dataclass(frozen=True)
class GliderPolar:
    """Quadratic glide polar C_D = C_D0 + K C_L^2 on ``reference_area_m2``.

    Exactly one of ``induced_drag_factor`` (K) or ``aspect_ratio`` (with ``span_efficiency``,
    K = 1/(pi e AR)) is given.
    """

    reference_area_m2: Value
    zero_lift_drag: Value
    max_lift_coefficient: Value
    induced_drag_factor: Value | None = None
    aspect_ratio: Value | None = None
    span_efficiency: Value = 1.0


@dataclass(frozen=True)
class GliderVehicle:
    name: str
    hotel_load_W: Value
    pump_efficiency: Value
    polar: GliderPolar
    inflection_energy_J: Value = 0.0
    inflection_time_s: Value = 0.0
    # buoyancy engine: full swing of pumped oil and displaced hull volume (both or neither;
    # without them there is no engine limit and no trim check)
    max_pumped_volume_L: Value | None = None
    hull_volume_L: Value | None = None
    pump_stroke_fixed_energy_J: Value = 0.0  # fixed cost per stroke (motor start, valves)
    # at each surfacing: position fix and satellite link
    surface_time_s: Value = 0.0
    surface_power_W: Value = 0.0  # on top of the hotel load
    kind: str = field(default="glider", init=False)


@dataclass(frozen=True)
class CapacityCurve:
    """Deliverable capacity against cell temperature (fraction of the rated capacity)."""

    temperature_C: tuple[float, ...]
    fraction: tuple[float, ...]
    source: str = "scenario file"


@dataclass(frozen=True)
class Battery:
    nominal_energy_Wh: Value
    #: with a capacity curve: the cell-to-cell / pack uncertainty on top of it; without one:
    #: the fraction of nominal kept in cold water (0, 1]
    cold_derating: Value = 1.0
    fade_per_day: Value = 0.0  # fraction of capacity lost per day [1/day]
    usable_fraction: Value = 1.0  # depth-of-discharge / usable share (0, 1]
    reserve_fraction: Value = 0.0  # policy: share of usable energy to arrive with [0, 1)
    chemistry: str | None = None  # "lithium-ion" | "lithium-primary": default curve
    capacity_curve: CapacityCurve | None = None  # applied per leg at the leg's temperature
    self_discharge_per_month: Value | None = None  # None: the chemistry's default, else 0


@dataclass(frozen=True)
class PropellerSetpoint:
    speed_m_s: Value  # speed through water
    depth_m: Value = 50.0  # operating depth, for seawater pressure only
    min_ground_speed_m_s: Value | None = None  # policy: speed up against head currents


@dataclass(frozen=True)
class GliderSetpoint:
    glide_angle_deg: Value
    net_buoyancy_N: Value
    top_depth_m: Value
    bottom_depth_m: Value
    # "hold_angle" (angle and net buoyancy fixed), "hold_speed" (angle fixed, net buoyancy
    # re-trimmed for the speed) or "efficient" (speed held at the least-energy angle);
    # a leg may override it
    flight_policy: str = "hold_angle"
    horizontal_speed_m_s: Value | None = None  # through water, held by the re-trim policies


@dataclass(frozen=True)
class Fouling:
    onset_days: Value = 0.0
    time_constant_days: Value = float("inf")  # inf = never fouls
    drag_increase: Value = 0.0  # fractional drag increase at full fouling
    lift_loss: Value = 0.0  # fractional lift-slope loss at full fouling [0, 1)


@dataclass(frozen=True)
class Leg:
    name: str
    length_km: Value
    current_along_m_s: Value = 0.0  # + following
    current_across_m_s: Value = 0.0
    temperature_C: Value = 10.0  # in-situ
    practical_salinity: Value = 35.0  # PSS-78
    ice_ceiling_m: Value = 0.0  # shallowest allowed depth (ice keel clearance)
    seabed_m: Value = float("inf")  # deepest allowed depth (seabed less clearance)
    fouling_growth_factor: Value = 1.0  # fouling clock rate on this leg
    hotel_load_W: Value | None = None  # override of the vehicle hotel load
    # "crab" (hold the track), "drift" (make the offset good later) or "crab_or_drift"
    current_policy: str = "crab"
    # two-layer current profile: the surface value holds from 0 to surface_layer_m, the
    # current_*_m_s values below it (None: the same current at every depth)
    surface_current_along_m_s: Value | None = None
    surface_current_across_m_s: Value | None = None
    surface_layer_m: Value = 0.0
    flight_policy: str | None = None  # glider: override of setpoint.flight_policy
    dives_per_surfacing: Value | None = None  # glider: None = never (always under an ice ceiling)
    payload_power_W: Value = 0.0  # glider sensor payload power while sampling
    payload_duty_cycle: Value = 1.0  # share of the time the payload samples
    speed_m_s: Value | None = None  # override of the setpoint speed (propeller)
    depth_m: Value | None = None  # override of the setpoint depth (propeller)

    @property
    def under_ice(self) -> bool:
        """True if the leg has an ice ceiling (median ceiling below the surface)."""
        return _median(self.ice_ceiling_m) > 0.0


@dataclass(frozen=True)
class Recovery:
    """What the vehicle spends at the recovery point before it is recovered."""

    loiter_time_h: Value = 0.0  # waiting for the ship or an open hole
    loiter_power_W: Value = 0.0
    homing_distance_km: Value = 0.0  # homing / search at the recovery point


@dataclass(frozen=True)
class UnderIce:
    """The turn-back policy under an ice ceiling."""

    policy: str = "continue"  # "continue" | "turn-back"
    safe_exits_after: tuple[str, ...] = ()  # legs whose end is a safe exit (an ice edge)
    dead_reckoning_overhead: Value = 0.0  # extra distance flown under ice, fraction of leg


@dataclass(frozen=True)
class Subsystem:
    """Hazard of one subsystem per day of operation (Weibull shape 1 = constant hazard)."""

    name: str
    rate_per_day: float
    weibull_shape: float = 1.0


@dataclass(frozen=True)
class Hardware:
    subsystems: tuple[Subsystem, ...] = ()


@dataclass(frozen=True)
class Limits:
    max_duration_days: Value = float("inf")


@dataclass(frozen=True)
class TestCandidate:
    """A laboratory or field test that could be funded before deployment.

    ``cost`` in the scenario's currency (>= 0); ``inputs`` are the dotted names of the inputs
    the test pins down; ``residual_fraction`` is the posterior sd / prior sd of each measured
    input after the test (0 = exact, < 1).
    """

    __test__ = False  # not a pytest test class

    name: str
    cost: float
    inputs: tuple[str, ...]  # dotted names of the inputs the test pins down
    residual_fraction: float = 0.0  # share of prior spread left after the test [0, 1)


@dataclass(frozen=True)
class Decision:
    required_probability: float = 0.9
    confidence: float = 0.95
    currency: str = "EUR"
    ship_day_rate: float = 0.0
    booking_quantile: float = 0.9
    value_of_success: float | None = None
    cost_of_failure: float | None = None
    cost_of_no_go: float | None = None
    tests: tuple[TestCandidate, ...] = ()
    # "on_station": the ship stays with the vehicle for the whole transit (book a quantile of
    # the arrival time); "recovery_window": the ship comes only for the recovery (book the
    # window between two arrival quantiles plus its own transit days)
    ship_booking: str = "on_station"
    deployment_date: datetime.date | None = None
    recovery_window: tuple[float, float] = (0.05, 0.95)  # arrival quantiles bounding the window
    ship_transit_days: float = 0.0  # the ship's own passage to and from the recovery point
    #: net loss when a go ends with the vehicle at the recovery point but on its reserve, and
    #: when it ends there after the duration limit; None = ``cost_of_failure``
    cost_of_reserve_breach: float | None = None
    cost_of_late_arrival: float | None = None
    #: inputs declared knowledge (a test could pin them) or variability (vary by the day);
    #: an input in neither list is knowledge when a test names it, variability otherwise
    knowledge: tuple[str, ...] = ()
    variability: tuple[str, ...] = ()
    #: optional rule beside p*: go iff P(P(success | knowledge) >= p*) >= this
    required_credibility: float | None = None


@dataclass(frozen=True)
class RankCorrelation:
    inputs: tuple[str, str]
    coefficient: float  # Spearman rank correlation in (-1, 1)


#: Default row limit of a propagation (``[analysis] kept_rows``): up to this many samples every
#: row is kept; beyond it only the first ``kept_rows / replicates`` rows of each replicate, and
#: counts and means stream over every sample (why 2^17: :data:`uq.studies.propagation.KEPT_ROWS`).
DEFAULT_KEPT_ROWS = 2**17


@dataclass(frozen=True)
class Analysis:
    """Default numerical settings of an assessment (the CLI may override them)."""

    samples: int = 4096
    seed: int = 20261201
    scheme: str = "sobol"  # "sobol" | "monte-carlo" | "latin-hypercube"
    replicates: int = 16  # independent scramblings for the RQMC interval (coverage: uq.estimators.replicates)
    sensitivity_base_n: int = 512
    rare_events: str = "auto"  # "auto" | "always" | "off" (uq.studies.rare)
    max_looks: int = 1  # looks at P(success) the run may take (uq.studies.extension)
    kept_rows: int = DEFAULT_KEPT_ROWS  # row limit of the propagation (uq.studies.propagation)


@dataclass(frozen=True)
class Scenario:
    name: str
    description: str
    vehicle: PropellerVehicle | GliderVehicle
    battery: Battery
    setpoint: PropellerSetpoint | GliderSetpoint
    fouling: Fouling
    legs: tuple[Leg, ...]
    limits: Limits
    decision: Decision
    analysis: Analysis
    correlations: tuple[RankCorrelation, ...] = ()
    recovery: Recovery = Recovery()
    under_ice: UnderIce = UnderIce()
    hardware: Hardware = Hardware()
    inputs: tuple["Marginal", ...] = ()  # every uncertain field, file order
    source_path: str | None = None
    source_sha256: str | None = None
    # implausible values and defaults taken for absent fields, one sentence each
    cautions: tuple[str, ...] = ()
    # a waypoint route and the data behind its leg fields (uq.scenario.environment):
    route: tuple = ()  # RouteLeg per leg (geodesic geometry), empty for leg-length routes
    environment: tuple = ()  # FieldSource per data-derived leg field: file, window, method
    data_correlations: tuple = ()  # DataCorrelation: rank correlations estimated from data

    @property
    def input_names(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.inputs)

    @property
    def route_length_km(self) -> float:
        """Route length at the median of each leg length [km]."""
        return float(sum(_median(leg.length_km) for leg in self.legs))


def _median(value: Value) -> float:
    return float(value) if isinstance(value, (int, float)) else float(value.median)
