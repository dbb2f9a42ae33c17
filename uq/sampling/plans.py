"""Sample plans on the unit hypercube, carried with their design metadata.

A :class:`SampleDesign` is a small frozen record (scheme, n, dimension, seed, replicate,
block size). It does not hold the points: :meth:`SampleDesign.unit_points` generates any
row range ``[start, stop)`` on demand, and the rows are identical whatever ranges they
are requested in, so a plan of 10^8 rows can be streamed block by block
(:func:`uq.sampling.engine.stream`) and still be reproduced exactly from its metadata.

Random streams (exact scheme, so a plan can be regenerated from its record alone)
---------------------------------------------------------------------------------
All streams descend from ``root = numpy.random.SeedSequence(seed)``:

* replicate stream: ``SeedSequence(seed, spawn_key=(replicate,))``, i.e. the same as
  ``root.spawn(replicate + 1)[replicate]``;
* Monte Carlo block ``k`` (rows ``[k*block_size, (k+1)*block_size)``):
  ``numpy.random.default_rng(SeedSequence(seed, spawn_key=(replicate, k)))``, i.e. child
  ``k`` of the replicate stream; the block is drawn as one ``rng.random((rows, d))`` call
  with ``rows`` the block's row count (``block_size`` except possibly for the last block);
* scrambled Sobol': ``scipy.stats.qmc.Sobol(d, scramble=True, rng=default_rng(replicate
  stream))``, advanced with ``fast_forward(start)``; the first point is kept (Owen 2020);
* Latin hypercube: ``scipy.stats.qmc.LatinHypercube(d, rng=default_rng(replicate
  stream)).random(n)`` for the whole plan, then sliced.

References
----------
.. [1] Owen, A. B. (1997). Scrambled net variance for integrals of smooth functions.
   Annals of Statistics 25(4):1541-1562.
.. [2] Owen, A. B. (2020). On dropping the first Sobol' point. arXiv:2008.08051.
.. [3] McKay, Beckman & Conover (1979). A comparison of three methods for selecting values
   of input variables in the analysis of output from a computer code. Technometrics 21:239.
"""

from __future__ import annotations

from uq.errors import InputError

import dataclasses
import functools
import inspect
import threading
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.stats import qmc

__all__ = [
    "BlockLayout",
    "DEFAULT_BLOCK_SIZE",
    "SCHEMES",
    "SampleDesign",
    "SampleDesignError",
    "StackedDesigns",
    "PowerOfTwoError",
    "RowRangeError",
    "monte_carlo",
    "scrambled_sobol",
    "latin_hypercube",
    "fresh_seed",
    "plan_size",
]

#: Supported plan schemes.
SCHEMES = ("monte-carlo", "sobol", "latin-hypercube")

#: Largest n for which the Latin hypercube plan is generated whole (memory n*d*8 bytes).
LATIN_HYPERCUBE_MAX_N = 10**8


#: Rows per streaming block unless a caller says otherwise. A Monte Carlo plan's rows depend
#: on it (each block has its own child stream), so every stage and every command that wants
#: the same plan from the same seed uses this one value.
DEFAULT_BLOCK_SIZE = 2**15


class SampleDesignError(InputError):
    """A sample design has an invalid scheme, size, seed or block size."""


class PowerOfTwoError(SampleDesignError):
    """A scrambled Sobol' plan was asked for with n not a power of two."""


class RowRangeError(SampleDesignError):
    """A row range outside ``[0, n]`` or with ``start > stop`` was requested."""


def fresh_seed() -> int:
    """Draw a new 128-bit seed from operating-system entropy (to be recorded)."""
    return int(np.random.SeedSequence().entropy)


def _check_int(value, name: str, *, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise SampleDesignError(f"{name} must be an integer >= {minimum}; got {value!r}")
    if value < minimum:
        raise SampleDesignError(f"{name} must be >= {minimum}; got {value}")
    return int(value)


# scipy >= 1.15 names the qmc randomness argument `rng`; older releases call it `seed`.
_QMC_RNG_KEYWORD = "rng" if "rng" in inspect.signature(qmc.Sobol.__init__).parameters else "seed"


class BlockLayout:
    """The streaming block arithmetic of a plan with ``n`` rows and ``block_size``: one rule
    for every plan kind the engine walks (:class:`SampleDesign`, :class:`StackedDesigns`,
    :class:`uq.estimators.streamed.GivenRows`)."""

    @property
    def n_blocks(self) -> int:
        """Number of streaming blocks, ``ceil(n / block_size)``."""
        return -(-self.n // self.block_size)

    def block_rows(self, block_index: int) -> tuple[int, int]:
        """Row range ``(start, stop)`` of streaming block ``block_index``."""
        if not 0 <= block_index < self.n_blocks:
            raise RowRangeError(
                f"block_index must be in [0, {self.n_blocks}); got {block_index}"
            )
        start = block_index * self.block_size
        return start, min(start + self.block_size, self.n)


@dataclass(frozen=True)
class SampleDesign(BlockLayout):
    """Metadata of a sample plan on ``[0, 1)^dimension``; generates rows on demand.

    Parameters
    ----------
    scheme : {"monte-carlo", "sobol", "latin-hypercube"}
        Sampling scheme. "sobol" is scrambled Sobol' (randomized QMC).
    n : int
        Number of rows (samples). For "sobol", a power of two.
    dimension : int
        Number of columns (inputs) ``d``.
    seed : int
        Root seed (non-negative). Use the helper constructors with ``seed=None`` to draw
        and record a fresh one.
    replicate : int, default 0
        Index of an independent randomisation (RQMC replicate) of the same plan.
    block_size : int, default DEFAULT_BLOCK_SIZE (2**15)
        Rows per block for streaming. For "monte-carlo" it is part of the plan's
        definition (each block has its own random stream); for the other schemes it only
        sets the streaming granularity.

    Raises
    ------
    SampleDesignError
        Unknown scheme, non-positive n / dimension / block_size, negative seed/replicate.
    PowerOfTwoError
        "sobol" with n not a power of two (the message suggests the nearest powers).
    """

    scheme: str
    n: int
    dimension: int
    seed: int
    replicate: int = 0
    block_size: int = DEFAULT_BLOCK_SIZE

    def __post_init__(self) -> None:
        if self.scheme not in SCHEMES:
            raise SampleDesignError(f"scheme must be one of {SCHEMES}; got {self.scheme!r}")
        object.__setattr__(self, "n", _check_int(self.n, "n", minimum=1))
        object.__setattr__(self, "dimension", _check_int(self.dimension, "dimension", minimum=1))
        object.__setattr__(self, "seed", _check_int(self.seed, "seed", minimum=0))
        object.__setattr__(self, "replicate", _check_int(self.replicate, "replicate", minimum=0))
        object.__setattr__(self, "block_size", _check_int(self.block_size, "block_size", minimum=1))
        if self.scheme == "sobol" and self.n & (self.n - 1):
            below = 1 << (self.n.bit_length() - 1)
            raise PowerOfTwoError(
                f"scrambled Sobol' plans need n = 2^m to keep their balance properties; got "
                f"n={self.n}. Nearest powers of two: {below} (2^{below.bit_length() - 1}) or "
                f"{2 * below} (2^{below.bit_length()})"
            )
        if self.scheme == "latin-hypercube" and self.n > LATIN_HYPERCUBE_MAX_N:
            raise SampleDesignError(
                f"latin-hypercube plans are generated whole; n={self.n} exceeds "
                f"{LATIN_HYPERCUBE_MAX_N}. Use 'monte-carlo' or 'sobol' for larger runs"
            )

    # ------------------------------------------------------------------ metadata

    def with_replicate(self, replicate: int) -> "SampleDesign":
        """The same plan with another independent randomisation."""
        return dataclasses.replace(self, replicate=replicate)

    def replicates(self, count: int) -> list["SampleDesign"]:
        """Designs for replicates ``0 .. count-1`` (for RQMC error estimates)."""
        count = _check_int(count, "count", minimum=1)
        return [self.with_replicate(r) for r in range(count)]

    def to_dict(self) -> dict:
        """Machine-readable record sufficient to regenerate the plan."""
        return dataclasses.asdict(self)

    # ------------------------------------------------------------------ points
    def _replicate_generator(self) -> np.random.Generator:
        return np.random.default_rng(np.random.SeedSequence(self.seed, spawn_key=(self.replicate,)))

    def unit_points(self, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Rows ``[start, stop)`` of the plan.

        Parameters
        ----------
        start, stop : int
            Row range, ``0 <= start <= stop <= n``; ``stop=None`` means ``n``.

        Returns
        -------
        (stop - start, dimension) ndarray
            Points in [0, 1) [-]. Identical, bit for bit, however the plan is split into
            ranges.

        Raises
        ------
        RowRangeError
            Range outside ``[0, n]`` or reversed.
        """
        stop = self.n if stop is None else stop
        if isinstance(start, bool) or isinstance(stop, bool) or not (
            isinstance(start, (int, np.integer)) and isinstance(stop, (int, np.integer))
        ):
            raise RowRangeError(f"start and stop must be integers; got {start!r}, {stop!r}")
        start, stop = int(start), int(stop)
        if not 0 <= start <= stop <= self.n:
            raise RowRangeError(
                f"row range [{start}, {stop}) must satisfy 0 <= start <= stop <= n={self.n}"
            )
        if start == stop:
            return np.empty((0, self.dimension))
        if self.scheme == "monte-carlo":
            return self._monte_carlo_rows(start, stop)
        if self.scheme == "sobol":
            return self._sobol_rows(start, stop)
        return _latin_hypercube_plan(self.n, self.dimension, self.seed, self.replicate)[start:stop].copy()

    def _monte_carlo_rows(self, start: int, stop: int) -> np.ndarray:
        bs = self.block_size
        first, last = start // bs, (stop - 1) // bs
        blocks = []
        for k in range(first, last + 1):
            rows = min(bs, self.n - k * bs)
            seq = np.random.SeedSequence(self.seed, spawn_key=(self.replicate, k))
            blocks.append(np.random.default_rng(seq).random((rows, self.dimension)))
        covering = blocks[0] if len(blocks) == 1 else np.concatenate(blocks)
        offset = first * bs
        return covering[start - offset : stop - offset]

    def _sobol_rows(self, start: int, stop: int) -> np.ndarray:
        # scipy's fast_forward costs O(skipped points), so a fresh engine per block would
        # make streaming O(n^2 / block_size). Keep one engine per thread and design and
        # move it forward only; a backward request starts a fresh engine. The points are
        # the same either way (deterministic Gray-code sequence).
        cursor = getattr(_SOBOL_CURSOR, "state", None)
        if cursor is not None and cursor[0] == self and cursor[1].num_generated <= start:
            engine = cursor[1]
        else:
            bits = None if self.n <= 2**30 else 64
            engine = qmc.Sobol(
                self.dimension, scramble=True, bits=bits,
                **{_QMC_RNG_KEYWORD: self._replicate_generator()},
            )
            _SOBOL_CURSOR.state = (self, engine)
        skip = start - engine.num_generated
        if skip:
            engine.fast_forward(skip)
        with warnings.catch_warnings():
            # The plan as a whole has n = 2^m points; a chunk need not be a power of two.
            warnings.filterwarnings("ignore", message="The balance properties of Sobol")
            return engine.random(stop - start)


@dataclasses.dataclass(frozen=True, eq=False)
class StackedDesigns(BlockLayout):
    """Several plans streamed as one: their rows end to end, in blocks that span plans.

    Independent replicates of a few hundred rows each cost the model one small call apiece;
    stacked, the model sees blocks of ``block_size`` rows whatever the replicate size. Each
    plan's rows are its own :meth:`SampleDesign.unit_points` (so they do not depend on the
    blocks), and the rows of plan ``i`` are ``[offsets[i], offsets[i + 1])``. Implements the
    plan interface that :func:`uq.sampling.engine.stream` reads.
    """

    designs: tuple
    block_size: int = 4096

    @property
    def offsets(self) -> np.ndarray:
        """First row of each plan, and the total, ``(len(designs) + 1,)``."""
        return np.concatenate([[0], np.cumsum([d.n for d in self.designs])]).astype(int)

    @property
    def n(self) -> int:
        return int(sum(d.n for d in self.designs))

    @property
    def dimension(self) -> int:
        return int(self.designs[0].dimension)

    def unit_points(self, start: int = 0, stop: int | None = None) -> np.ndarray:
        stop = self.n if stop is None else stop
        offsets = self.offsets
        pieces = [d.unit_points(max(start, lo) - lo, min(stop, hi) - lo)
                  for d, lo, hi in zip(self.designs, offsets[:-1], offsets[1:])
                  if lo < stop and hi > start]
        return pieces[0] if len(pieces) == 1 else np.concatenate(pieces)


#: Per-thread Sobol' engine left where the last request stopped: (design, engine).
_SOBOL_CURSOR = threading.local()


@functools.lru_cache(maxsize=1)
def _latin_hypercube_plan(n: int, dimension: int, seed: int, replicate: int) -> np.ndarray:
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(replicate,)))
    engine = qmc.LatinHypercube(dimension, **{_QMC_RNG_KEYWORD: rng})
    plan = engine.random(n)
    plan.setflags(write=False)
    return plan


def _resolve_seed(seed) -> int:
    if seed is None:
        return fresh_seed()
    return _check_int(seed, "seed", minimum=0)


def monte_carlo(n: int, d: int, *, seed: int | None = None, replicate: int = 0,
                block_size: int = DEFAULT_BLOCK_SIZE) -> SampleDesign:
    """Plain Monte Carlo plan of ``n`` rows in ``d`` dimensions.

    ``seed=None`` draws a fresh seed and records it in the returned design.
    """
    return SampleDesign("monte-carlo", n, d, _resolve_seed(seed), replicate, block_size)


def scrambled_sobol(n: int, d: int, *, seed: int | None = None, replicate: int = 0,
                    block_size: int = DEFAULT_BLOCK_SIZE) -> SampleDesign:
    """Scrambled Sobol' (randomized QMC) plan; ``n`` must be a power of two.

    Independent replicates (``replicate=0, 1, ...``) give an error estimate via
    :func:`uq.estimators.replicate_interval` (Owen 1997). ``seed=None`` draws a fresh
    seed and records it in the returned design.
    """
    return SampleDesign("sobol", n, d, _resolve_seed(seed), replicate, block_size)


def latin_hypercube(n: int, d: int, *, seed: int | None = None, replicate: int = 0,
                    block_size: int = DEFAULT_BLOCK_SIZE) -> SampleDesign:
    """Latin hypercube plan (McKay et al. 1979), generated whole then sliced.

    Meant for n up to about 10^7 (the whole plan, n*d*8 bytes, is held in memory once
    per process, cached for the most recent plan). ``seed=None`` draws a fresh seed and
    records it in the returned design.
    """
    return SampleDesign("latin-hypercube", n, d, _resolve_seed(seed), replicate, block_size)


def plan_size(samples: int, *, scheme: str, replicates: int = 1) -> tuple[int, int]:
    """The one sample-size rule: samples per replicate and in total for a requested size.

    Scrambled Sobol' replicates need ``n = 2^m`` points each, so for ``scheme="sobol"``
    the per-replicate size is ``samples / replicates`` rounded to the nearest power of
    two (at least 2); other schemes take ``samples`` as given in one plan.

    Parameters
    ----------
    samples : int
        Requested total number of samples [-].
    scheme : str
        One of :data:`SCHEMES`.
    replicates : int, default 1
        Independent scramblings (Sobol' only; other schemes run one plan).

    Returns
    -------
    per_replicate, total : int
    """
    samples = _check_int(samples, "samples", minimum=1)
    replicates = _check_int(replicates, "replicates", minimum=1) if scheme == "sobol" else 1
    if scheme != "sobol":
        return samples, samples
    per = max(samples / replicates, 2.0)
    per = 1 << max(1, int(round(np.log2(per))))
    return per, per * replicates
