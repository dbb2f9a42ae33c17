"""Given rows through the streaming engine: one way for an estimator to run the model.

An estimator that chooses its own points — the rows of a Saltelli design, the states of a
subset-simulation chain — hands them to :func:`evaluate_rows`, which streams them through
:func:`uq.sampling.engine.stream` in fixed blocks. Worker processes or a Dask cluster then
share the model runs, and because every row's outputs depend on that row alone the values
come back in row order, bit for bit the same for any block size, chunking or executor.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np

from uq.sampling.engine import CollectReducer, stream
from uq.sampling.plans import BlockLayout

__all__ = ["GivenRows", "evaluate_rows"]


@dataclass(frozen=True, eq=False)
class GivenRows(BlockLayout):
    """Streaming view of given unit points, in the layout the engine walks.

    Implements the plan interface :func:`uq.sampling.engine.stream` reads (``n``,
    ``dimension``, ``block_size``, ``n_blocks``, ``block_rows``, ``unit_points``).
    """

    points: np.ndarray
    block_size: int = 4096

    @property
    def n(self) -> int:
        return int(self.points.shape[0])

    @property
    def dimension(self) -> int:
        return int(self.points.shape[1])

    def unit_points(self, start: int = 0, stop: int | None = None) -> np.ndarray:
        return np.array(self.points[start:self.n if stop is None else stop])


def evaluate_rows(points, model_fn: Callable[[np.ndarray], Any], keys: Sequence[str], *,
                  input_model=None, executor=None, chunk_blocks: int = 1,
                  block_size: int = 4096) -> dict[str, np.ndarray]:
    """Evaluate ``model_fn`` on every row of ``points`` through the streaming engine.

    Parameters
    ----------
    points : (n, d) array_like
        Unit points in [0, 1)^d, mapped by ``input_model`` (if given) block by block.
    model_fn : callable
        ``model_fn(x) -> dict of arrays`` (or an object with those fields); picklable for
        process or Dask executors.
    keys : sequence of str
        Outputs to keep, in row order.
    input_model : uq.sampling.inputs.InputModel, optional
    executor : object with an ordered ``.map``, optional
        ``ProcessPoolExecutor``, :class:`uq.sampling.backends.DaskExecutor`, ...; None runs
        in this process.
    chunk_blocks, block_size : int
        Streaming granularity only; the outputs do not depend on them.

    Returns
    -------
    dict of str to ndarray
        One array of n values per key.
    """
    rows = GivenRows(np.asarray(points, dtype=float), block_size=int(block_size))
    return stream(rows, model_fn, CollectReducer(tuple(keys), rows.n), input_model=input_model,
                  executor=executor, chunk_blocks=chunk_blocks)
