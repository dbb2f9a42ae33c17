"""Streaming map/reduce over a sample plan, with results independent of chunking.

:func:`stream` walks the plan in blocks of ``design.block_size`` rows. For each block it
generates the unit points, maps them through the input model (optional), calls the model
once, and lets a *reducer* summarise the block's outputs into a small *partial*. Partials
are combined in block order at the end. Because every block is computed the same way
whichever task or worker handles it, the result is bit-for-bit identical for any
``chunk_blocks`` and any executor; and at most ``chunk_blocks`` blocks of rows exist at
once in a worker, so 10^8 samples run in bounded memory.

Reducer protocol
----------------
``reducer.map(block_index, outputs) -> partial``
    ``outputs`` is whatever ``model_fn`` returned for that block (a dict of arrays, a
    NamedTuple of arrays or an array). The partial must be small and picklable.
``reducer.reduce(partials) -> result``
    ``partials`` is the list of all partials in block order.
Optionally ``reducer.prepare(design) -> reducer`` is called once before streaming, so a
reducer can learn the plan's layout (block size, n) — :class:`CollectReducer` uses it.
Optionally ``reducer.fold(partials) -> partial`` merges a run of consecutive partials into
one, such that ``reduce([fold(partials[:k])] + partials[k:]) == reduce(partials)`` bit for
bit (integer sums, the left-to-right pairwise update, concatenation). :func:`stream` then
folds every :data:`FOLD_BLOCKS` partials as they arrive, so the partials held at once do not
grow with the number of blocks (a reducer with ``fold`` keeps memory flat in ``n``).

The per-task function is a top-level function taking one picklable tuple, so
``concurrent.futures.ProcessPoolExecutor`` (or any object with ``.map(fn, iterable)``
that preserves order) can run the tasks.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Callable, Iterable, NamedTuple, Protocol, runtime_checkable

import numpy as np

from uq.errors import InputError
from uq.sampling.plans import SampleDesign

__all__ = [
    "Reducer",
    "EngineError",
    "OutputKeyError",
    "stream",
    "CountReducer",
    "CountTotal",
    "GroupCountReducer",
    "SumReducer",
    "SumTotal",
    "HistogramReducer",
    "HistogramCounts",
    "CollectReducer",
    "MultiReducer",
    "FOLD_BLOCKS",
    "can_fold",
    "merge_moments",
]

#: :func:`stream` folds the partials it holds whenever this many have arrived (reducers
#: with ``fold``): a few hundred kB of partials at most, whatever the number of blocks
FOLD_BLOCKS = 64


class EngineError(InputError):
    """Invalid options passed to :func:`stream` or a reducer."""


class OutputKeyError(EngineError):
    """A reducer asked for an output that the model did not return (or of the wrong shape)."""


@runtime_checkable
class Reducer(Protocol):
    """Summarises per-block model outputs and combines the summaries in block order."""

    def map(self, block_index: int, outputs: Any) -> Any:  # pragma: no cover - protocol
        ...

    def reduce(self, partials: list) -> Any:  # pragma: no cover - protocol
        ...


#: What :func:`stream` reads from a plan: a :class:`SampleDesign`, or any object with these
#: (e.g. the rows of a Saltelli design, :class:`uq.estimators.sensitivity.SaltelliRows`).
_PLAN_ATTRIBUTES = ("n", "dimension", "block_size", "n_blocks", "block_rows", "unit_points")


def _output(outputs: Any, key: str | None) -> np.ndarray:
    """Fetch one output array from a dict / NamedTuple / array returned by the model."""
    if key is None:
        return np.asarray(outputs)
    if isinstance(outputs, Mapping):
        if key not in outputs:
            raise OutputKeyError(f"model output has no key {key!r}; keys: {sorted(outputs)}")
        return np.asarray(outputs[key])
    if hasattr(outputs, key):
        return np.asarray(getattr(outputs, key))
    raise OutputKeyError(
        f"model output of type {type(outputs).__name__} has no field {key!r}"
    )


def _run_task(task: tuple) -> list:
    """Evaluate consecutive blocks ``[first, last)``; returns their partials in order.

    Top-level (picklable) so that process pools can run it.
    """
    design, model_fn, reducer, input_model, first, last = task
    partials = []
    for k in range(first, last):
        start, stop = design.block_rows(k)
        x = design.unit_points(start, stop)
        if input_model is not None:
            x = input_model.transform(x)
        outputs = model_fn(x)
        partials.append(reducer.map(k, outputs))
    return partials


def stream(
    design: SampleDesign,
    model_fn: Callable[[np.ndarray], Any],
    reducer: Reducer,
    *,
    input_model=None,
    chunk_blocks: int = 1,
    executor=None,
    progress: Callable[[int], None] | None = None,
):
    """Run ``model_fn`` over a whole plan block by block and reduce the outputs.

    Parameters
    ----------
    design : SampleDesign
        The plan; its ``block_size`` sets the block layout. Any object with the same
        ``n``, ``dimension``, ``block_size``, ``n_blocks``, ``block_rows(k)`` and
        ``unit_points(start, stop)`` streams too (a plan whose rows are given).
    model_fn : callable
        ``model_fn(x) -> outputs`` with ``x`` an (rows, d) array (physical values if
        ``input_model`` is given, else unit points). Called exactly once per block.
        Must be picklable (a top-level function) for process executors.
    reducer : Reducer
        See the module docstring.
    input_model : uq.sampling.inputs.InputModel, optional
        Maps unit points to physical values before ``model_fn``.
    chunk_blocks : int, default 1
        Blocks per task (tasks are the unit of work handed to ``executor``).
    executor : object with ``.map(fn, iterable)``, optional
        E.g. ``concurrent.futures.ProcessPoolExecutor``; must return results in
        submission order. None runs in this process with the builtin ``map``.
    progress : callable, optional
        Called as ``progress(rows_done)`` [samples] after each task completes.

    Returns
    -------
    object
        ``reducer.reduce(partials)`` — identical for any ``chunk_blocks`` and executor.
    """
    if not isinstance(design, SampleDesign) and not all(
            hasattr(design, a) for a in _PLAN_ATTRIBUTES):
        raise EngineError(
            f"design must be a SampleDesign or provide {', '.join(_PLAN_ATTRIBUTES)}; got "
            f"{type(design).__name__}")
    if isinstance(chunk_blocks, bool) or not isinstance(chunk_blocks, (int, np.integer)) or chunk_blocks < 1:
        raise EngineError(f"chunk_blocks must be an integer >= 1; got {chunk_blocks!r}")
    if input_model is not None and input_model.dimension != design.dimension:
        raise EngineError(
            f"input model has {input_model.dimension} inputs but the design has "
            f"dimension {design.dimension}"
        )
    if hasattr(reducer, "prepare"):
        reducer = reducer.prepare(design)

    n_blocks = design.n_blocks
    step = int(chunk_blocks)

    def tasks() -> Iterable[tuple]:
        for first in range(0, n_blocks, step):
            yield (design, model_fn, reducer, input_model, first, min(first + step, n_blocks))

    mapper = map if executor is None else executor.map
    partials: list = []
    folds = can_fold(reducer)
    done = 0
    for task_partials in mapper(_run_task, tasks()):
        partials.extend(task_partials)
        done += len(task_partials)
        if folds and len(partials) >= FOLD_BLOCKS:
            partials = [reducer.fold(partials)]  # exact: see the module docstring
        if progress is not None:
            progress(design.n if done == n_blocks else done * design.block_size)
    if done != n_blocks:
        raise EngineError(
            f"executor returned {done} block results for {n_blocks} blocks"
        )
    return reducer.reduce(partials)


def can_fold(reducer) -> bool:
    """Whether ``reducer`` merges runs of partials (``fold``; a MultiReducer when all do)."""
    return bool(getattr(reducer, "foldable", hasattr(reducer, "fold")))


# ---------------------------------------------------------------------- reducers
class CountTotal(NamedTuple):
    """Exact count of true values among ``n`` samples."""

    count: int
    n: int

    @property
    def fraction(self) -> float:
        """``count / n`` [-]."""
        return self.count / self.n if self.n else float("nan")


class CountReducer:
    """Exact integer count of ``True`` in a boolean output.

    Parameters
    ----------
    key : str or None
        Output name (dict key or NamedTuple field); None when the model returns the
        boolean array itself.
    """

    def __init__(self, key: str | None) -> None:
        self.key = key

    def map(self, block_index: int, outputs: Any) -> tuple[int, int]:
        values = _output(outputs, self.key)
        if values.dtype != bool:
            raise OutputKeyError(
                f"CountReducer needs a boolean output for {self.key!r}; got dtype {values.dtype}"
            )
        return int(np.count_nonzero(values)), int(values.size)

    def reduce(self, partials: list) -> CountTotal:
        return CountTotal(sum(p[0] for p in partials), sum(p[1] for p in partials))

    def fold(self, partials: list) -> tuple[int, int]:
        return tuple(self.reduce(partials))


class GroupCountReducer:
    """Exact counts of ``True`` in a boolean output, one per consecutive group of rows.

    Parameters
    ----------
    key : str or None
        Output name.
    offsets : sequence of int
        First row of each group and the total (e.g. :attr:`uq.sampling.plans.StackedDesigns
        .offsets`), so one pass over stacked plans counts each plan apart.

    Returns (from :func:`stream`) a list of :class:`CountTotal`, one per group.
    """

    def __init__(self, key: str | None, offsets, *, block_size: int | None = None) -> None:
        self.key = key
        self.offsets = np.asarray(offsets, dtype=np.int64)
        self.block_size = block_size

    def prepare(self, design) -> "GroupCountReducer":
        """Bind to the plan's block size, which places each block's rows in the groups."""
        return GroupCountReducer(self.key, self.offsets, block_size=design.block_size)

    def map(self, block_index: int, outputs: Any) -> np.ndarray:
        if self.block_size is None:
            raise EngineError("GroupCountReducer must be prepared with the plan (stream does)")
        values = _output(outputs, self.key)
        if values.dtype != bool:
            raise OutputKeyError(f"GroupCountReducer needs a boolean output for {self.key!r}; "
                                 f"got dtype {values.dtype}")
        rows = block_index * self.block_size + np.arange(values.size)
        group = np.searchsorted(self.offsets, rows, side="right") - 1
        groups = self.offsets.size - 1
        return np.stack([np.bincount(group, weights=values, minlength=groups),
                         np.bincount(group, minlength=groups)]).astype(np.int64)

    def reduce(self, partials: list) -> list[CountTotal]:
        total = np.sum(partials, axis=0) if partials else np.zeros((2, self.offsets.size - 1))
        return [CountTotal(int(c), int(m)) for c, m in zip(total[0], total[1])]

    def fold(self, partials: list) -> np.ndarray:
        return np.sum(partials, axis=0)  # integer counts: exact in any grouping


class SumTotal(NamedTuple):
    """Streamed sum and spread of a real output.

    ``sum_of_squared_deviations`` is about the overall mean (Chan et al. pairwise update,
    numerically stable, unlike a raw sum of squares).
    """

    n: int
    total: float
    sum_of_squared_deviations: float

    @property
    def mean(self) -> float:
        """Sample mean."""
        return self.total / self.n if self.n else float("nan")

    @property
    def sum_of_squares(self) -> float:
        """Raw sum of squares, ``sum x^2``."""
        return self.sum_of_squared_deviations + self.n * self.mean**2

    @property
    def variance(self) -> float:
        """Unbiased sample variance (ddof = 1)."""
        return self.sum_of_squared_deviations / (self.n - 1) if self.n > 1 else float("nan")

    @property
    def sd(self) -> float:
        """Sample standard deviation (ddof = 1)."""
        return float(np.sqrt(self.variance))


class SumReducer:
    """Sum, mean and SD of a real output, combined in block order.

    Each block contributes ``(count, sum, sum of squared deviations about the block
    mean)``; blocks are merged left to right with the pairwise update of Chan, Golub &
    LeVeque (1979), which is exact in exact arithmetic and stable in floating point.
    Non-finite values raise :class:`OutputKeyError` (a failure mode must be encoded by
    the model, not as NaN).
    """

    def __init__(self, key: str | None) -> None:
        self.key = key

    def map(self, block_index: int, outputs: Any) -> tuple[int, float, float]:
        values = _output(outputs, self.key).astype(float, copy=False).ravel()
        if not np.all(np.isfinite(values)):
            raise OutputKeyError(
                f"SumReducer found non-finite values in output {self.key!r} (block {block_index})"
            )
        count = values.size
        if count == 0:
            return 0, 0.0, 0.0
        total = float(values.sum())
        deviations = values - total / count
        return count, total, float(np.dot(deviations, deviations))

    def reduce(self, partials: list) -> SumTotal:
        n, total, m2 = 0, 0.0, 0.0
        for part in partials:
            n, total, m2 = merge_moments((n, total, m2), part)
        return SumTotal(n, total, m2)

    def fold(self, partials: list) -> tuple[int, float, float]:
        return tuple(self.reduce(partials))  # the left-to-right state: replayed exactly


def merge_moments(left, right):
    """``(n, sum, sum of squared deviations)`` of two runs of values, left then right.

    The pairwise update of Chan, Golub & LeVeque (1979); an empty side returns the other
    unchanged, so merging left to right from ``(0, 0, 0)`` is the one order of operations
    that every streamed sum (:class:`SumReducer`, the per-group moments) uses.
    """
    n, total, m2 = left
    nb, tb, m2b = right
    if nb == 0:
        return n, total, m2
    if n == 0:
        return nb, tb, m2b
    delta = tb / nb - total / n
    return n + nb, total + tb, m2 + m2b + delta * delta * n * nb / (n + nb)


class HistogramCounts(NamedTuple):
    """Exact counts of a streamed output on fixed bin edges.

    ``counts[i]`` counts ``edges[i] <= v < edges[i+1]`` (every bin half-open, including
    the last); ``below`` counts ``v < edges[0]``, ``above`` counts ``v >= edges[-1]``,
    ``nonfinite`` counts NaN. ``n`` is the number of samples seen.
    """

    edges: np.ndarray
    counts: np.ndarray
    below: int
    above: int
    nonfinite: int
    n: int

    def count_at_least(self) -> np.ndarray:
        """Number of samples with ``v >= edges[j]``, for each edge ``j``."""
        tail = np.concatenate([np.cumsum(self.counts[::-1])[::-1], [0]])
        return tail + self.above


class HistogramReducer:
    """Exact integer histogram of a real output on fixed bin edges.

    Parameters
    ----------
    key : str or None
        Output name; None when the model returns the array itself.
    edges : (m + 1,) array_like
        Strictly increasing bin edges, in the output's units.
    """

    def __init__(self, key: str | None, edges) -> None:
        e = np.asarray(edges, dtype=float)
        if e.ndim != 1 or e.size < 2 or not np.all(np.isfinite(e)) or np.any(np.diff(e) <= 0):
            raise EngineError(
                "HistogramReducer edges must be a 1-D, finite, strictly increasing array of "
                f"at least 2 values; got {edges!r}"
            )
        e.setflags(write=False)
        self.key = key
        self.edges = e

    def map(self, block_index: int, outputs: Any) -> np.ndarray:
        values = _output(outputs, self.key).astype(float, copy=False).ravel()
        nan = np.isnan(values)
        slot = np.searchsorted(self.edges, values[~nan], side="right")
        # slot 0: below; 1..m: bins; m+1: at or above the last edge
        counts = np.bincount(slot, minlength=self.edges.size + 1).astype(np.int64)
        return np.concatenate([counts, [np.count_nonzero(nan)]])

    def reduce(self, partials: list) -> HistogramCounts:
        m = self.edges.size + 2
        totals = np.zeros(m, dtype=np.int64)
        for p in partials:
            totals += p
        return HistogramCounts(
            edges=self.edges,
            counts=totals[1:-2].copy(),
            below=int(totals[0]),
            above=int(totals[-2]),
            nonfinite=int(totals[-1]),
            n=int(totals.sum()),
        )

    def fold(self, partials: list) -> np.ndarray:
        return np.sum(partials, axis=0)  # integer counts: exact in any grouping


class CollectReducer:
    """Keep the per-sample outputs of the first ``limit`` rows of the plan.

    Parameters
    ----------
    keys : sequence of str
        Output names to keep.
    limit : int
        Maximum number of rows kept (the first rows of the plan, in plan order).
    ranges : sequence of (start, stop), optional
        The plan rows to keep instead of the first ``limit``: increasing, non-overlapping
        row ranges (e.g. the first rows of each replicate of stacked plans); ``limit`` is
        then their total.

    Returns (from :func:`stream`) a dict ``{key: array}`` with up to ``limit`` rows. Blocks
    past the limit (or outside the ranges) contribute nothing, so memory stays bounded by
    ``limit``.
    """

    def __init__(self, keys, limit: int, *, ranges=None, block_size: int | None = None) -> None:
        if isinstance(keys, str):
            keys = [keys]
        self.keys = tuple(keys)
        if not self.keys:
            raise EngineError("CollectReducer needs at least one output key")
        if isinstance(limit, bool) or not isinstance(limit, (int, np.integer)) or limit < 0:
            raise EngineError(f"CollectReducer limit must be an integer >= 0; got {limit!r}")
        self.limit = int(limit)
        if ranges is not None:
            ranges = tuple((int(lo), int(hi)) for lo, hi in ranges)
            ends = [v for r in ranges for v in r]
            if any(b < a for a, b in zip(ends, ends[1:])) or sum(
                    hi - lo for lo, hi in ranges) != self.limit:
                raise EngineError(f"CollectReducer ranges must be increasing, non-overlapping "
                                  f"row ranges totalling limit={self.limit}; got {ranges!r}")
        self.ranges = ranges
        self.block_size = block_size

    def prepare(self, design: SampleDesign) -> "CollectReducer":
        """Bind to the plan's block size so blocks past ``limit`` are skipped."""
        return CollectReducer(self.keys, self.limit, ranges=self.ranges,
                              block_size=design.block_size)

    def map(self, block_index: int, outputs: Any) -> dict | None:
        if self.ranges is not None and self.block_size is not None:
            return self._map_ranges(block_index * self.block_size, outputs)
        if self.block_size is None:
            offset, keep = 0, self.limit  # unbound: keep up to limit per block
        else:
            offset = block_index * self.block_size
            keep = max(0, self.limit - offset)
        if keep == 0:
            return None
        return {key: _output(outputs, key)[:keep].copy() for key in self.keys}

    def _map_ranges(self, first: int, outputs: Any) -> dict | None:
        last = first + self.block_size
        parts = [(max(lo, first) - first, min(hi, last) - first)
                 for lo, hi in self.ranges if lo < last and hi > first]
        if not parts:
            return None
        out = {}
        for key in self.keys:
            values = _output(outputs, key)
            out[key] = np.concatenate([values[a:b] for a, b in parts])
        return out

    def reduce(self, partials: list) -> dict:
        kept = self._kept(partials)
        result = {}
        for key in self.keys:
            if kept:
                result[key] = np.concatenate([p[key] for p in kept])[: self.limit]
            else:
                result[key] = np.empty(0)
        return result

    @staticmethod
    def _kept(partials: list) -> list:
        """The blocks' kept rows in order (a folded partial holds several blocks')."""
        out = []
        for p in partials:
            if isinstance(p, _KeptBlocks):
                out.extend(p)
            elif p is not None:
                out.append(p)
        return out

    def fold(self, partials: list) -> "_KeptBlocks":
        """The kept rows of the blocks so far, as they are (no copy; concatenated once, at
        the end)."""
        return _KeptBlocks(self._kept(partials))


class _KeptBlocks(list):
    """Several blocks' kept rows: a folded partial of :class:`CollectReducer`."""


class MultiReducer:
    """Several reducers over one pass: ``MultiReducer({"name": reducer, ...})``.

    The result is a dict with the same names.
    """

    def __init__(self, reducers: Mapping[str, Any]) -> None:
        if not reducers:
            raise EngineError("MultiReducer needs at least one reducer")
        self.reducers = dict(reducers)

    def prepare(self, design: SampleDesign) -> "MultiReducer":
        return MultiReducer({
            name: r.prepare(design) if hasattr(r, "prepare") else r
            for name, r in self.reducers.items()
        })

    def map(self, block_index: int, outputs: Any) -> dict:
        return {name: r.map(block_index, outputs) for name, r in self.reducers.items()}

    def reduce(self, partials: list) -> dict:
        return {
            name: r.reduce([p[name] for p in partials]) for name, r in self.reducers.items()
        }

    @property
    def foldable(self) -> bool:
        return all(can_fold(r) for r in self.reducers.values())

    def fold(self, partials: list) -> dict:
        return {name: r.fold([p[name] for p in partials]) for name, r in self.reducers.items()}
