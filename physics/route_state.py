"""What a flight along a route keeps track of, shared by the route integrators.

:func:`physics.mission.fly_route` normalises its inputs once into :class:`RouteInputs`,
hands a fresh :class:`RouteRecord` to an integrator (the exact per-leg one of
:mod:`physics.route_exact` or the Runge-Kutta one of :mod:`physics.route_rk`), and reads the
outcome off the record. Nothing here integrates; it holds the route, the per-sample events
found so far, and the two rules every integrator needs (the track made good through the
current, and when a vehicle stops).
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from physics import currents as _currents
from physics import fouling as _fouling
from physics.states import FailureMode

__all__ = ["RouteInputs", "RouteRecord", "made_good", "stop_code", "take"]


@dataclass(frozen=True)
class RouteInputs:
    """The route of every sample, normalised to (n, J) per leg and (n,) per sample (SI)."""

    leg_length: np.ndarray  # [m], (n, J)
    current_along: np.ndarray  # [m/s], (n, J)
    current_across: np.ndarray  # [m/s], (n, J)
    growth: np.ndarray  # fouling clock rate per leg [-], (n, J)
    onset: np.ndarray  # [s], (n,)
    time_constant: np.ndarray  # [s], (n,)
    max_duration: np.ndarray  # [s], (n,)
    policy: np.ndarray  # current policy codes, (n, J)
    path: np.ndarray  # metres flown per metre made good, 1 + overhead, (n, J)
    charge: np.ndarray  # capacity factor per leg [-], (n, J)
    min_ground_speed: float  # [m/s]
    extension: float  # past the route end, as a fraction of the route [-]

    @property
    def n(self) -> int:
        return self.leg_length.shape[0]

    @property
    def n_legs(self) -> int:
        return self.leg_length.shape[1]

    @property
    def route(self) -> np.ndarray:
        """Route length of every sample [m], (n,)."""
        return self.leg_length.sum(axis=1)

    def fouling(self, clock: np.ndarray, idx=None) -> np.ndarray:
        """Fouling state at fouling clock ``clock`` of all samples (or of samples ``idx``)."""
        onset = self.onset if idx is None else self.onset[idx]
        tau = self.time_constant if idx is None else self.time_constant[idx]
        return _fouling.fouling_state(clock, onset, tau)


@dataclass
class RouteRecord:
    """Per-sample state and events of a flight in progress, shape (n,) unless noted."""

    n: int
    n_legs: int
    x: np.ndarray = None  # distance made good [m]
    t: np.ndarray = None  # elapsed time [s]
    energy: np.ndarray = None  # energy drawn, in rated-capacity joules [J]
    clock: np.ndarray = None  # fouling clock [s]
    moving: np.ndarray = None  # bool: not stopped by headway or glide
    stop_x: np.ndarray = None  # where it stopped [m] (inf: did not)
    stop_mode: np.ndarray = None  # int8 FailureMode of the stop
    stop_leg: np.ndarray = None  # int16
    range_x: np.ndarray = None  # where the drawable energy reached the reserve [m] (NaN: not yet)
    range_leg: np.ndarray = None  # int16
    time_x: np.ndarray = None  # where the duration limit passed [m] (inf: not)
    time_leg: np.ndarray = None  # int16
    leg_energy: np.ndarray = None  # (n, J) energy drawn on each leg [J]
    leg_distance: np.ndarray = None  # (n, J) distance made good on each leg [m]
    seen_events: np.ndarray = None  # int8 FlightEvent bits
    surfacings: np.ndarray = None  # [-]
    # profile columns: (position, elapsed, energy, fouling, leg) at each recorded point
    trace: list = field(default_factory=list)
    # or the whole profile, written in place by the flight ((n, K) arrays and the (K,) legs)
    columns: tuple | None = None

    def __post_init__(self):
        n, shape = self.n, (self.n, self.n_legs)
        self.x, self.t, self.energy, self.clock = (np.zeros(n) for _ in range(4))
        self.moving = np.ones(n, dtype=bool)
        self.stop_x = np.full(n, np.inf)
        self.stop_mode = np.zeros(n, dtype=np.int8)
        self.stop_leg = np.full(n, -1, dtype=np.int16)
        self.range_x = np.full(n, np.nan)
        self.range_leg = np.full(n, -1, dtype=np.int16)
        self.time_x = np.full(n, np.inf)
        self.time_leg = np.full(n, -1, dtype=np.int16)
        self.leg_energy = np.zeros(shape)
        self.leg_distance = np.zeros(shape)
        self.seen_events = np.zeros(n, dtype=np.int8)
        self.surfacings = np.zeros(n)

    def record(self, phi: np.ndarray, leg: int) -> None:
        """Append the present state of every sample as a profile column."""
        self.trace.append((self.x.copy(), self.t.copy(), self.energy.copy(), phi, leg))


def made_good(r, current_along, current_across, policy):
    """Track made good by rates ``r`` in a current, under the leg's current policy."""
    return _currents.track_made_good(r.speed_through_water, current_along + r.drift_along,
                                     current_across + r.drift_across, policy)


def stop_code(vehicle_state, track, min_ground_speed):
    """The vehicle's own stop state, else NO_HEADWAY below the ground-speed floor (int8)."""
    headway = track.headway & (track.ground_speed > min_ground_speed)
    code = np.where(vehicle_state != FailureMode.NONE, vehicle_state,
                    np.where(headway, FailureMode.NONE, FailureMode.NO_HEADWAY))
    return code.astype(np.int8)


def take(model, idx, n):
    """The same frozen dataclass restricted to samples ``idx`` (array fields: samples first)."""
    changes = {}
    for f in dataclasses.fields(model):
        value = np.asarray(getattr(model, f.name))
        if value.ndim >= 1 and value.shape[0] == n:
            changes[f.name] = value[idx]
    return dataclasses.replace(model, **changes)
