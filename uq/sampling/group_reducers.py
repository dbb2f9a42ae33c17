"""Reducers that summarise each consecutive group of rows apart (e.g. each replicate).

The stacked replicates of a propagation are one plan whose rows ``[offsets[r],
offsets[r + 1])`` belong to replicate ``r``. These reducers give, in one pass and with memory
that does not grow with the number of rows:

* :class:`GroupMomentsReducer` — count, sum, sum of squared deviations, minimum and maximum
  of real values per group (the per-replicate moments of a mean);
* :class:`GroupTallyReducer` — the per-group sum of an integer tally that a function computes
  from a run of rows (e.g. outcome classes, failure modes by leg).

Both follow the reducer protocol of :mod:`uq.sampling.engine` (``prepare``, ``map``,
``reduce`` and an exact ``fold``), so their results do not depend on the block size, the
chunking or the executor.
"""
from __future__ import annotations

from typing import Any, Callable, NamedTuple

import numpy as np

from uq.sampling.engine import EngineError, OutputKeyError, _output, merge_moments

__all__ = ["GroupMoments", "GroupMomentsReducer", "GroupTallyReducer", "group_slices"]


def group_slices(offsets: np.ndarray, first: int, rows: int) -> list[tuple[int, int, int]]:
    """``(group, start, stop)`` of each group met by rows ``[first, first + rows)`` of the
    plan, with ``start, stop`` relative to ``first`` (groups are consecutive row ranges)."""
    last = first + rows
    out = []
    for g in range(offsets.size - 1):
        lo, hi = int(offsets[g]), int(offsets[g + 1])
        if lo < last and hi > first:
            out.append((g, max(lo, first) - first, min(hi, last) - first))
    return out


class GroupMoments(NamedTuple):
    """Streamed moments of one group's values (one column)."""

    n: int
    total: float
    sum_of_squared_deviations: float
    minimum: float
    maximum: float

    @property
    def mean(self) -> float:
        return self.total / self.n if self.n else float("nan")

    @property
    def sd(self) -> float:
        """Sample standard deviation (ddof = 1)."""
        if self.n < 2:
            return float("nan")
        return float(np.sqrt(self.sum_of_squared_deviations / (self.n - 1)))


class _Bound:
    """Shared ``prepare``: bind to the plan's block size, which places rows in groups."""

    offsets: np.ndarray
    block_size: int | None

    def _slices(self, block_index: int, rows: int):
        if self.block_size is None:
            raise EngineError(f"{type(self).__name__} must be prepared with the plan "
                              "(stream does)")
        return group_slices(self.offsets, block_index * self.block_size, rows)


class GroupMomentsReducer(_Bound):
    """Count, sum, spread, minimum and maximum of real values per group of rows.

    Parameters
    ----------
    values : str or callable
        Output name, or a picklable function ``outputs -> (rows,) or (rows, m) array``.
    offsets : sequence of int
        First row of each group and the total.

    Returns (from :func:`uq.sampling.engine.stream`) a list, one entry per group, of a
    list of :class:`GroupMoments`, one per column. Blocks merge left to right with the
    pairwise update (:func:`uq.sampling.engine.merge_moments`). Non-finite values raise
    :class:`uq.sampling.engine.OutputKeyError`.
    """

    def __init__(self, values: str | Callable[[Any], np.ndarray], offsets, *,
                 block_size: int | None = None) -> None:
        self.values = values
        self.offsets = np.asarray(offsets, dtype=np.int64)
        self.block_size = block_size

    def prepare(self, design) -> "GroupMomentsReducer":
        return GroupMomentsReducer(self.values, self.offsets, block_size=design.block_size)

    def _array(self, outputs) -> np.ndarray:
        x = (_output(outputs, self.values) if isinstance(self.values, str)
             else np.asarray(self.values(outputs)))
        x = np.asarray(x, dtype=float)
        return x[:, None] if x.ndim == 1 else x

    def map(self, block_index: int, outputs: Any) -> list:
        x = self._array(outputs)
        if not np.all(np.isfinite(x)):
            raise OutputKeyError(f"GroupMomentsReducer found non-finite values "
                                 f"(block {block_index})")
        part = []
        for g, a, b in self._slices(block_index, x.shape[0]):
            v = x[a:b]
            total = v.sum(axis=0)
            dev = v - total / v.shape[0]
            part.append((g, v.shape[0], total, np.einsum("ij,ij->j", dev, dev),
                         v.min(axis=0), v.max(axis=0)))
        return part

    def reduce(self, partials: list) -> list[list[GroupMoments]]:
        groups = self.offsets.size - 1
        state: list = [None] * groups
        for part in partials:
            for g, n, total, m2, lo, hi in part:
                if state[g] is None:
                    state[g] = [(n, float(total[j]), float(m2[j]), float(lo[j]), float(hi[j]))
                                for j in range(total.size)]
                    continue
                state[g] = [(*merge_moments(s[:3], (n, float(total[j]), float(m2[j]))),
                             min(s[3], float(lo[j])), max(s[4], float(hi[j])))
                            for j, s in enumerate(state[g])]
        return [[GroupMoments(*s) for s in cols] if cols is not None else []
                for cols in state]

    def fold(self, partials: list) -> list:
        out = []
        for g, cols in enumerate(self.reduce(partials)):
            if cols:
                arr = np.array([tuple(c) for c in cols], dtype=float)
                out.append((g, cols[0].n, arr[:, 1], arr[:, 2], arr[:, 3], arr[:, 4]))
        return out


class GroupTallyReducer(_Bound):
    """Per-group sum of an integer tally of the rows.

    Parameters
    ----------
    tally : callable
        Picklable ``tally(outputs) -> (m,) int array`` of a run of rows (``outputs`` is the
        model's dict of arrays cut to the run); sums over runs must equal the tally of
        their union (counts).
    offsets : sequence of int
        First row of each group and the total.
    size : int
        ``m``, the length of the tally.

    Returns (from :func:`uq.sampling.engine.stream`) an ``(groups, m)`` int64 array.
    """

    def __init__(self, tally: Callable[[Any], np.ndarray], offsets, size: int, *,
                 block_size: int | None = None) -> None:
        self.tally = tally
        self.offsets = np.asarray(offsets, dtype=np.int64)
        self.size = int(size)
        self.block_size = block_size

    def prepare(self, design) -> "GroupTallyReducer":
        return GroupTallyReducer(self.tally, self.offsets, self.size,
                                 block_size=design.block_size)

    def map(self, block_index: int, outputs: Any) -> np.ndarray:
        if not hasattr(outputs, "items"):
            raise OutputKeyError("GroupTallyReducer needs a model that returns a dict of arrays")
        rows = len(next(iter(outputs.values())))
        out = np.zeros((self.offsets.size - 1, self.size), dtype=np.int64)
        for g, a, b in self._slices(block_index, rows):
            out[g] = self.tally({k: v[a:b] for k, v in outputs.items()})
        return out

    def reduce(self, partials: list) -> np.ndarray:
        if not partials:
            return np.zeros((self.offsets.size - 1, self.size), dtype=np.int64)
        return np.sum(partials, axis=0)

    def fold(self, partials: list) -> np.ndarray:
        return self.reduce(partials)  # integer counts: exact in any grouping
