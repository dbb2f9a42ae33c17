"""Outcome classes of a deployment: the one rule that sorts each sample into what it costs.

A go decision ends, sample by sample, in one outcome class: success, or one of the failure
classes that cost different amounts (a lost vehicle is not a vehicle recovered on its reserve).
Every place that needs the classes — the money net benefit of the test ranking, the report's
tables — calls :func:`classify_outcomes`; nothing else re-derives them from the failure modes.
"""
from __future__ import annotations

from enum import IntEnum
from typing import Any

import numpy as np

from physics.states import FailureMode

from ._common import ShapeMismatchError

__all__ = ["OutcomeClass", "OUTCOME_CLASS_NAMES", "classify_outcomes"]


class OutcomeClass(IntEnum):
    """How one sampled deployment ends (0 = success)."""

    SUCCESS = 0
    #: did not reach the recovery point with energy left (stopped, or the pack ran empty)
    LOST = 1
    #: reached the recovery point, but only by drawing on the reserve
    RESERVE_BREACH = 2
    #: reached the recovery point later than the mission's duration limit
    LATE = 3
    #: aborted under ice at the point of no return and flew back to a safe exit: vehicle safe
    TURNED_BACK_TO_SAFE_EXIT = 4
    #: neither recovered nor returned: the vehicle ends under the ice
    LOST_UNDER_ICE = 5


#: plain-language names for sentences, tables and JSON
OUTCOME_CLASS_NAMES = {
    OutcomeClass.SUCCESS: "success",
    OutcomeClass.LOST: "lost in open water (stopped short of the recovery point)",
    OutcomeClass.RESERVE_BREACH: "reached recovery on the reserve",
    OutcomeClass.LATE: "late beyond the time limit",
    OutcomeClass.TURNED_BACK_TO_SAFE_EXIT: "turned back to a safe exit (aborted, vehicle safe)",
    OutcomeClass.LOST_UNDER_ICE: "lost under ice",
}


def _field(outcomes: Any, name: str) -> np.ndarray:
    if isinstance(outcomes, dict) or hasattr(outcomes, "keys"):
        return np.asarray(outcomes[name])
    return np.asarray(getattr(outcomes, name))


def _optional(outcomes: Any, name: str, like: np.ndarray) -> np.ndarray:
    """A boolean field if the outcomes carry it, else all False."""
    present = (name in outcomes) if hasattr(outcomes, "keys") else hasattr(outcomes, name)
    return _field(outcomes, name).astype(bool) if present else np.zeros(like.shape, bool)


def classify_outcomes(outcomes: Any) -> np.ndarray:
    """Outcome class of every sample.

    Parameters
    ----------
    outcomes : mapping or object with attributes
        Per-sample outcomes with at least ``success`` (bool), ``reaches_recovery`` (bool:
        arrived before the pack is truly empty, possibly on its reserve) and
        ``failure_mode`` (int codes of :class:`physics.states.FailureMode`), all shape (n,);
        optionally ``turned_back`` and ``lost_under_ice`` (bool, under-ice operations).

    Returns
    -------
    numpy.ndarray of int8, shape (n,)
        :class:`OutcomeClass` codes. The rule, in order: a success is SUCCESS; a sample that
        does not reach the recovery point is LOST (whatever stopped it: energy, no headway,
        an infeasible glide, or a pack that ran empty after the time limit passed); one that
        reaches it after the duration limit is LATE; one that reaches it on its reserve is
        RESERVE_BREACH. Under ice, a vehicle that turned back to a safe exit is
        TURNED_BACK_TO_SAFE_EXIT, and a lost one that ends under the ice is LOST_UNDER_ICE.
    """
    success = _field(outcomes, "success").astype(bool)
    reaches = _field(outcomes, "reaches_recovery").astype(bool)
    mode = _field(outcomes, "failure_mode")
    if not (success.shape == reaches.shape == mode.shape) or success.ndim != 1:
        raise ShapeMismatchError(
            f"success {success.shape}, reaches_recovery {reaches.shape} and failure_mode "
            f"{mode.shape}: expected 1-D arrays of one length")
    out = np.full(success.shape, OutcomeClass.RESERVE_BREACH, dtype=np.int8)
    out[reaches & (mode == FailureMode.TIME_LIMIT)] = OutcomeClass.LATE
    out[~reaches] = OutcomeClass.LOST
    out[~reaches & _optional(outcomes, "lost_under_ice", success)] = OutcomeClass.LOST_UNDER_ICE
    out[_optional(outcomes, "turned_back", success)] = OutcomeClass.TURNED_BACK_TO_SAFE_EXIT
    out[success] = OutcomeClass.SUCCESS
    return out
