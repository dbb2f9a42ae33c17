"""The physical ranges and choices of scenario fields, and the small helpers every section
reader shares (key paths, number tests).

A :class:`Range` is a field's hard type-level range (a length is positive, an efficiency lies
in (0, 1]); the plausibility envelope (:mod:`uq.scenario.envelope`) narrows it per vehicle
kind. Choices made here: ``appendage_factor`` >= 1 (appendages only add drag); in-situ
temperature in [-3, 40] degC; practical salinity in (0, 42].
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass
from dataclasses import fields as _dataclass_fields
from typing import Any

import numpy as np

from uq.scenario.types import Leg

@dataclass(frozen=True)
class Range:
    """Physical range of a numeric field and how to word it."""

    what: str
    lo: float = -math.inf
    hi: float = math.inf
    lo_open: bool = True
    hi_open: bool = True
    allow_inf: bool = False  # a fixed +inf is accepted ("never", "no limit")

    def interval(self) -> str:
        return (("(" if self.lo_open else "[") + fmt_bound(self.lo) + ", " + fmt_bound(self.hi)
                + (")" if self.hi_open else "]"))

    def holds(self, x: float) -> bool:
        above = x > self.lo if self.lo_open else x >= self.lo
        below = x < self.hi if self.hi_open else x <= self.hi
        return above and below

    def holds_support(self, lo: float, hi: float) -> bool:
        # A continuous distribution has no mass at a single point, so its support may touch an
        # open end of the range.
        return lo >= self.lo and hi <= self.hi

    def suggestion(self) -> str:
        if math.isfinite(self.lo) and math.isfinite(self.hi):
            return (f'a bounded distribution, e.g. {{dist = "truncnormal", mean = ..., sd = ..., '
                    f'low = {fmt_bound(self.lo)}, high = {fmt_bound(self.hi)}}} or {{dist = "pert", min = ..., mode = ..., max = ...}}')
        if math.isfinite(self.lo):
            alt = '{dist = "lognormal", median = ..., log_sd = ...} or ' if self.lo == 0 else ""
            return f'{alt}{{dist = "truncnormal", mean = ..., sd = ..., low = {fmt_bound(self.lo)}}}'
        return f'{{dist = "truncnormal", mean = ..., sd = ..., high = {fmt_bound(self.hi)}}}'


def fmt_bound(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:g}"


INF = math.inf
EFFICIENCY = Range("an efficiency", 0.0, 1.0, True, False)
NONNEG_W = Range("a power [W]", 0.0, lo_open=False)  # 0 W: e.g. a sensor-free ferry leg
POSITIVE_M = Range("a length [m]", 0.0)
POSITIVE_M2 = Range("an area [m^2]", 0.0)
POSITIVE_COEFF = Range("a coefficient", 0.0)
POSITIVE_KM = Range("a length [km]", 0.0)
POSITIVE_WH = Range("an energy [Wh]", 0.0)
POSITIVE_N = Range("a net buoyancy [N]", 0.0)
POSITIVE_SPEED = Range("a speed through water [m/s]", 0.0)
NONNEG_J = Range("an energy [J]", 0.0, lo_open=False)
NONNEG_S = Range("a time [s]", 0.0, lo_open=False)
NONNEG_DAYS = Range("a time [days]", 0.0, lo_open=False)
NONNEG_DEPTH = Range("a depth [m]", 0.0, lo_open=False)
POSITIVE_DEPTH = Range("a depth [m]", 0.0, allow_inf=True)
POSITIVE_DAYS = Range("a duration [days]", 0.0, allow_inf=True)
APPENDAGE = Range("an appendage factor (appendages only add drag; to calibrate below the bare-hull estimate give [vehicle.drag])",
                   1.0, lo_open=False)
FRACTION_OPEN0_CLOSED1 = Range("a fraction", 0.0, 1.0, True, False)
FRACTION_CLOSED0_OPEN1 = Range("a fraction", 0.0, 1.0, False, True)
FADE = Range("a capacity fade [1/day]", 0.0, 0.05, False, True)
NONNEG_FRACTION = Range("a fractional increase", 0.0, lo_open=False)
GROWTH = Range("a fouling clock rate", 0.0, lo_open=False)
GLIDE_ANGLE = Range("a glide angle [deg]", 0.0, 90.0)
CURRENT = Range("a current component [m/s]")
TEMPERATURE = Range("an in-situ seawater temperature [degC]", -3.0, 40.0, False, False)
SALINITY = Range("a practical salinity (PSS-78)", 0.0, 42.0, True, False)
PROBABILITY = Range("a probability", 0.0, 1.0)
SELF_DISCHARGE = Range("a self-discharge [fraction per month]", 0.0, 0.5, False, True)
OVERHEAD = Range("a distance overhead (fraction of the leg length)", 0.0, 1.0, False, True)
NONNEG_H = Range("a time [h]", 0.0, lo_open=False)
NONNEG_KM = Range("a distance [km]", 0.0, lo_open=False)
HAZARD = Range("a hazard rate [1/day]", 0.0, 10.0, False, True)
WEIBULL_SHAPE = Range("a Weibull shape", 0.0, 20.0, True, False)
CHEMISTRY_NAMES = ("lithium-ion", "lithium-primary")
UNDER_ICE_POLICIES = ("continue", "turn-back")
MONEY = Range("an amount of money", 0.0, lo_open=False)
CORRELATION = Range("a rank correlation", -1.0, 1.0)
POSITIVE_L = Range("a volume [L]", 0.0)
DIVES = Range("a number of dives per surfacing", 0.0, allow_inf=True)
DUTY = Range("a duty cycle", 0.0, 1.0, False, False)
NONNEG_SPEED = Range("a speed through water [m/s]", 0.0)
SHIP_DAYS = Range("a number of days", 0.0, lo_open=False)
FLIGHT_POLICIES = ("hold_angle", "hold_speed", "efficient")
CURRENT_POLICIES = ("crab", "drift", "crab_or_drift")
SHIP_BOOKINGS = ("on_station", "recovery_window")

LEG_NAME = re.compile(r"[A-Za-z0-9_-]+")
LEG_KEYS = tuple(f.name for f in _dataclass_fields(Leg) if f.name != "name")  # per-leg keys of a waypoint
_PLAIN_KEY = re.compile(r"[A-Za-z0-9_-]+")
CURRENCY_CODE = re.compile(r"[A-Z]{3}")
SCHEMES = ("sobol", "monte-carlo", "latin-hypercube")
DRAG_REFERENCES = ("frontal", "wetted", "volume^(2/3)")
VEHICLE_KINDS = ("propeller", "glider")


def join_key(path: str, key: Any) -> str:
    key = str(key)
    part = key if _PLAIN_KEY.fullmatch(key) else repr(key)
    return f"{path}.{part}" if path else part


def is_number(x: Any) -> bool:
    return isinstance(x, (int, float, np.integer, np.floating)) and not isinstance(x, (bool, np.bool_))
