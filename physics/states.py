"""Named outcome states of a simulated transit.

A physically impossible state (current stronger than the vehicle, glide angle below the
polar's minimum, no room between ice and seabed for a dive) is an outcome, never a NaN.
"""
from __future__ import annotations

from enum import IntEnum

__all__ = ["FailureMode", "FAILURE_MODE_NAMES"]


class FailureMode(IntEnum):
    """Why a sample does not count as a successful transit (0 = it does)."""

    NONE = 0
    #: usable energy falls to the reserve before the recovery point
    ENERGY = 1
    #: current across/against track at least as strong as the vehicle: no ground speed
    NO_HEADWAY = 2
    #: commanded glide angle below the (fouled) polar's minimum, stall, or no depth band
    INFEASIBLE_GLIDE = 3
    #: arrives, but later than the mission's duration limit
    TIME_LIMIT = 4
    # 5 and 6 are taken by the glider's trim and flight limits
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
    FailureMode.TURNED_BACK: "turned back to a safe exit",
}
