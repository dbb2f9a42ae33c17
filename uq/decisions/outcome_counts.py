"""Counts of how the sampled deployments end: the one tally behind every count table.

The outcome table's classes, the failure breakdown by mode and leg, the dominant failure of
the verdict panel and the censored share of the range all read counts, and counts add up:
the tally of a run of rows plus the tally of the next run is the tally of both. So one
function, :class:`OutcomeTally`, counts a run of rows; an assessment that keeps every row
applies it to the rows of each replicate, and one that streams more samples than it keeps
applies it block by block inside the sampling engine
(:class:`uq.sampling.group_reducers.GroupTallyReducer`) — the same integers either way.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from physics.states import FailureMode

from .outcomes import OutcomeClass, classify_outcomes

__all__ = ["OutcomeTally", "OutcomeCounts", "MODE_CODES", "mode_leg_counts", "class_counts"]

#: failure-mode codes the tally counts (every :class:`physics.states.FailureMode`)
MODE_CODES = max(int(m) for m in FailureMode) + 1
_CLASSES = max(int(c) for c in OutcomeClass) + 1


def class_counts(outcomes: Any) -> np.ndarray:
    """Samples in each outcome class (:class:`uq.decisions.outcomes.OutcomeClass` order)."""
    return np.bincount(classify_outcomes(outcomes), minlength=_CLASSES).astype(np.int64)


def mode_leg_counts(failure_mode, failing_leg, success, legs: int, *,
                    codes: int = MODE_CODES) -> np.ndarray:
    """Counts by (failure-mode code, failing leg + 1, success): a ``(codes, legs + 1, 2)``
    int64 array (leg column 0: no leg; success slot 1: the successful samples)."""
    mode = np.asarray(failure_mode).astype(np.int64).ravel()
    leg = np.asarray(failing_leg).astype(np.int64).ravel()
    ok = np.asarray(success, dtype=bool).ravel()
    if mode.size and (mode.min() < 0 or mode.max() >= codes):
        raise ValueError(f"failure-mode codes outside 0..{codes - 1}")
    if leg.size and (leg.min() < -1 or leg.max() >= legs):
        raise ValueError(f"failing-leg indices outside -1..{legs - 1}")
    cells = (mode * (legs + 1) + leg + 1) * 2 + ok
    return np.bincount(cells, minlength=codes * (legs + 1) * 2).astype(np.int64).reshape(
        codes, legs + 1, 2)


@dataclass(frozen=True)
class OutcomeTally:
    """Integer tally of a run of rows (picklable: the engine's workers call it).

    Layout of the returned ``(size,)`` int64 vector: the count of each outcome class
    (:class:`uq.decisions.outcomes.OutcomeClass` order); the count of each
    (failure mode, failing leg + 1, success) triple, ``MODE_CODES x (legs + 1) x 2``; the
    number of censored ranges; the number of rows.
    """

    legs: int

    @property
    def size(self) -> int:
        return _CLASSES + MODE_CODES * (self.legs + 1) * 2 + 2

    def __call__(self, outcomes: Any) -> np.ndarray:
        cube = mode_leg_counts(outcomes["failure_mode"], outcomes["failing_leg"],
                               outcomes["success"], self.legs)
        return np.concatenate([
            class_counts(outcomes), cube.ravel(),
            [np.count_nonzero(np.asarray(outcomes["range_censored"], dtype=bool)),
             np.size(outcomes["success"])]]).astype(np.int64)


@dataclass(frozen=True)
class OutcomeCounts:
    """Per-replicate tallies of one propagation (:class:`OutcomeTally` layout).

    Attributes
    ----------
    by_replicate : (K, size) int64 array
        One tally per replicate, plan order.
    legs : int
        Number of legs of the route.
    """

    by_replicate: np.ndarray
    legs: int

    @classmethod
    def of_rows(cls, outcomes: Any, replicate_sizes: Sequence[int], legs: int) -> "OutcomeCounts":
        """The tallies of rows held in memory, replicate by replicate (plan order)."""
        tally = OutcomeTally(int(legs))
        ends = np.cumsum(replicate_sizes)
        rows = [{k: np.asarray(outcomes[k])[hi - m:hi] for k in _TALLY_KEYS if k in outcomes}
                for m, hi in zip(replicate_sizes, ends)]
        return cls(np.stack([tally(r) for r in rows]), int(legs))

    @property
    def total(self) -> np.ndarray:
        return self.by_replicate.sum(axis=0)

    @property
    def samples(self) -> int:
        return int(self.total[-1])

    @property
    def censored(self) -> int:
        """Samples whose range is still open at the extension's end."""
        return int(self.total[-2])

    def of_class(self, code: int) -> list[tuple[int, int]]:
        """``(count, replicate size)`` of one outcome class in each replicate."""
        return [(int(t[code]), int(t[-1])) for t in self.by_replicate]

    def mode_leg(self, *, success: bool | None = None) -> np.ndarray:
        """``(MODE_CODES, legs + 1)`` counts by failure mode and failing leg + 1 (column 0:
        no leg); ``success`` False / True keeps the failed / successful samples only."""
        cube = self.total[_CLASSES:_CLASSES + MODE_CODES * (self.legs + 1) * 2].reshape(
            MODE_CODES, self.legs + 1, 2)
        return cube.sum(axis=2) if success is None else cube[:, :, int(success)]

    def present_modes(self) -> list[int]:
        """Failure-mode codes that occur in at least one sample."""
        return [int(c) for c in np.flatnonzero(self.mode_leg().sum(axis=1))]


#: the outcome fields the tally reads (classify_outcomes' fields and the range's censoring)
_TALLY_KEYS = ("success", "reaches_recovery", "failure_mode", "failing_leg", "turned_back",
               "lost_under_ice", "range_censored")
