"""Named outcome states of a simulated transit.

A physically impossible state (current stronger than the vehicle, glide angle below the
polar's minimum, no room between ice and seabed for a dive) is an outcome, never a NaN.
"""
from __future__ import annotations

from enum import IntEnum, IntFlag

__all__ = ["FailureMode", "FAILURE_MODE_NAMES", "FlightEvent", "FLIGHT_EVENT_NAMES"]


class FailureMode(IntEnum):
    """Why a sample does not count as a successful transit (0 = it does)."""

    NONE = 0
    #: usable energy falls to the reserve before the recovery point
    ENERGY = 1
    #: current across/against track at least as strong as the vehicle: no ground speed
    NO_HEADWAY = 2
    #: no steady glide at all (no depth band between the ice/surface and the seabed)
    INFEASIBLE_GLIDE = 3
    #: arrives, but later than the mission's duration limit
    TIME_LIMIT = 4
    #: the buoyancy engine's swing cannot cover the route's density range (plus the net
    #: buoyancy the policy needs at the least)
    CANNOT_TRIM = 5
    #: the flight policy needs a net buoyancy beyond the engine's limit and may not fall back
    CANNOT_HOLD_FLIGHT = 6
    #: turned back under ice at the point of no return (or where a current stopped it) and
    #: flew back to a safe exit: the vehicle is safe, the mission aborted
    TURNED_BACK = 7


#: plain-language names for tables and the report
FAILURE_MODE_NAMES = {
    FailureMode.NONE: "success",
    FailureMode.ENERGY: "energy below reserve",
    FailureMode.NO_HEADWAY: "no headway against current",
    FailureMode.INFEASIBLE_GLIDE: "infeasible glide",
    FailureMode.TIME_LIMIT: "over the duration limit",
    FailureMode.CANNOT_TRIM: "cannot trim",
    FailureMode.CANNOT_HOLD_FLIGHT: "cannot hold flight",
    FailureMode.TURNED_BACK: "turned back to a safe exit",
}


class FlightEvent(IntFlag):
    """What a pilot did along the route (bits, OR-ed over the transit of one sample)."""

    NONE = 0
    #: re-trimmed for fouling: at least 10 % more net buoyancy, or a glide at least 0.5 deg
    #: steeper, than the clean vehicle's trim on that leg
    RETRIMMED = 1
    #: the engine's limit capped the net buoyancy (the commanded speed was not held)
    AT_ENGINE_LIMIT = 2
    #: drifted across the track and made the offset good later
    DRIFTED = 4


#: plain-language names for tables and the report
FLIGHT_EVENT_NAMES = {
    FlightEvent.RETRIMMED: "re-trimmed for fouling",
    FlightEvent.AT_ENGINE_LIMIT: "flew at the engine's limit",
    FlightEvent.DRIFTED: "drifted across the track",
}
