"""The distribution of an output: exceedance curves and quantiles, with intervals.

:func:`exceedance_curve` gives ``P(V >= r)`` on a grid with pointwise Wilson intervals and
the simultaneous DKW band; :func:`quantile_interval` a distribution-free interval for a
quantile from order statistics; the ``*_from_counts`` and ``histogram_*`` forms do the same
from a streamed histogram, so 10^8 samples need no memory for their values.

References
----------
.. [1] Dvoretzky, A., Kiefer, J. & Wolfowitz, J. (1956). Ann. Math. Stat. 27:642-669;
   Massart, P. (1990). The tight constant in the DKW inequality. Ann. Probab. 18:1269-1283.
.. [2] Hahn, G. J., Meeker, W. Q. & Escobar, L. A. (2017). Statistical Intervals, 2nd ed.,
   ch. 5 (distribution-free intervals for quantiles from order statistics).
.. [3] Wilson, E. B. (1927). Probable inference, the law of succession, and statistical
   inference. JASA 22:209-212.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from uq.estimators.intervals import (EstimatorError, InsufficientSamplesError, IntervalEstimate,
                                     check_confidence, wilson_bounds)

__all__ = [
    "QuantileInterval",
    "ExceedanceCurve",
    "exceedance_curve",
    "exceedance_curve_at",
    "exceedance_curve_from_counts",
    "dkw_half_width",
    "quantile_interval",
    "quantile_interval_from_counts",
    "quantile_ranks",
    "minimum_samples_for_quantile",
    "histogram_exceedance_curve",
    "histogram_quantile_interval",
]


@dataclass(frozen=True)
class QuantileInterval(IntervalEstimate):
    """Order-statistic interval for a quantile.

    Attributes
    ----------
    q : float
        Probability level of the quantile [-].
    lower_rank, upper_rank : int
        1-based ranks of the order statistics used as bounds.
    coverage : float
        Exact coverage ``P(X_(l) <= xi_q < X_(u))`` for a continuous distribution [-];
        at least ``confidence``.
    """

    q: float = float("nan")
    lower_rank: int = 0
    upper_rank: int = 0
    coverage: float = float("nan")


# ---------------------------------------------------------------------- exceedance
def dkw_half_width(n: int, *, confidence: float = 0.95) -> float:
    """Half width of the DKW simultaneous band, ``sqrt(ln(2/alpha) / (2 n))``.

    With Massart's (1990) constant, ``P(sup |F_n - F| > eps) <= 2 exp(-2 n eps^2)`` for
    every continuous or discrete F, so ``F_n ± eps`` covers F everywhere with
    probability at least ``confidence``.
    """
    confidence = check_confidence(confidence)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise EstimatorError(f"n must be an integer >= 1; got {n!r}")
    return math.sqrt(math.log(2.0 / (1.0 - confidence)) / (2.0 * n))


@dataclass(frozen=True, eq=False)
class ExceedanceCurve:
    """Exceedance probability ``P(V >= r)`` on a grid, with confidence bands.

    Attributes
    ----------
    grid : ndarray
        Thresholds r (units of V).
    count : ndarray of int
        Number of samples with ``V >= r``.
    probability : ndarray
        ``count / n``.
    lower, upper : ndarray
        Pointwise Wilson bounds at each threshold.
    band_lower, band_upper : ndarray
        Simultaneous DKW band, valid for all thresholds at once, clipped to [0, 1].
    confidence : float
    n : int
    """

    grid: np.ndarray
    count: np.ndarray
    probability: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    band_lower: np.ndarray
    band_upper: np.ndarray
    confidence: float
    n: int
    method: str = "pointwise wilson; simultaneous DKW (Massart constant)"

    @property
    def band_half_width(self) -> float:
        """DKW half width ``eps`` before clipping."""
        return dkw_half_width(self.n, confidence=self.confidence)

    def to_frame(self):
        """pandas DataFrame, one row per threshold."""
        import pandas as pd

        return pd.DataFrame({
            "threshold": self.grid,
            "count_at_least": self.count,
            "probability": self.probability,
            "lower": self.lower,
            "upper": self.upper,
            "band_lower": self.band_lower,
            "band_upper": self.band_upper,
        })

    def to_dict(self) -> dict:
        """Plain dict (lists) for JSON output."""
        out = {k: v.tolist() for k, v in self.to_frame().items()}
        out.update(confidence=self.confidence, n=self.n, method=self.method)
        return out


def _curve(grid: np.ndarray, count: np.ndarray, n: int, confidence: float) -> ExceedanceCurve:
    probability = count / n
    lower, upper = wilson_bounds(count, n, confidence=confidence)
    eps = dkw_half_width(n, confidence=confidence)
    arrays = dict(
        grid=grid,
        count=count,
        probability=probability,
        lower=lower,
        upper=upper,
        band_lower=np.clip(probability - eps, 0.0, 1.0),
        band_upper=np.clip(probability + eps, 0.0, 1.0),
    )
    for a in arrays.values():
        a.setflags(write=False)
    return ExceedanceCurve(confidence=confidence, n=n, **arrays)


def exceedance_curve_at(grid, count_at_least, n: int, *,
                        confidence: float = 0.95) -> ExceedanceCurve:
    """The one rule of the exceedance curve, from counts: ``count_at_least[j]`` of ``n``
    samples have ``V >= grid[j]``.

    Pointwise Wilson bounds and the simultaneous DKW band. :func:`exceedance_curve` (values
    held in memory) and :func:`exceedance_curve_from_counts` (counts streamed into fixed
    bins, e.g. above an assessment's row limit) both count and end here.
    """
    confidence = check_confidence(confidence)
    count = np.asarray(count_at_least, dtype=np.int64)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1 or (
            count.size and (count.min() < 0 or count.max() > n)):
        raise EstimatorError(f"n must be an integer >= 1 and >= every count; got {n!r}")
    return _curve(np.asarray(grid, dtype=float), count, int(n), confidence)


def exceedance_curve(values, grid, *, confidence: float = 0.95) -> ExceedanceCurve:
    """Empirical exceedance curve ``P(V >= r)`` with pointwise and simultaneous bands.

    Parameters
    ----------
    values : (n,) array_like
        Samples of V (may contain ±inf; not NaN).
    grid : (m,) array_like
        Thresholds r, any order.
    confidence : float, default 0.95

    Returns
    -------
    ExceedanceCurve
    """
    confidence = check_confidence(confidence)
    v = np.asarray(values, dtype=float).ravel()
    if v.size == 0:
        raise InsufficientSamplesError("exceedance_curve needs at least one value")
    if np.any(np.isnan(v)):
        raise EstimatorError("exceedance_curve values contain NaN")
    r = np.array(grid, dtype=float).ravel()
    if np.any(np.isnan(r)):
        raise EstimatorError("exceedance_curve grid contains NaN")
    v_sorted = np.sort(v)
    count = v.size - np.searchsorted(v_sorted, r, side="left")
    return exceedance_curve_at(r, count, int(v.size), confidence=confidence)


def exceedance_curve_from_counts(edges, counts, n: int, *, above: int = 0,
                                 confidence: float = 0.95) -> ExceedanceCurve:
    """Exceedance curve at histogram bin edges, from exact streamed counts.

    Parameters
    ----------
    edges : (m + 1,) array_like
        Increasing bin edges.
    counts : (m,) array_like of int
        ``counts[i]`` = number of samples with ``edges[i] <= V < edges[i+1]``.
    n : int
        Total number of samples (including those outside the edges).
    above : int, default 0
        Number of samples with ``V >= edges[-1]``.
    confidence : float, default 0.95

    Returns
    -------
    ExceedanceCurve
        On ``grid = edges``; identical to :func:`exceedance_curve` of the raw values.
    """
    confidence = check_confidence(confidence)
    e = np.array(edges, dtype=float).ravel()
    c = np.asarray(counts)
    if c.ndim != 1 or c.size != e.size - 1:
        raise EstimatorError(
            f"counts must have len(edges) - 1 = {e.size - 1} entries; got shape {c.shape}"
        )
    if c.size and (not np.issubdtype(c.dtype, np.integer) or np.any(c < 0)):
        raise EstimatorError("counts must be non-negative integers")
    if np.any(np.diff(e) <= 0):
        raise EstimatorError("edges must be strictly increasing")
    c = c.astype(np.int64)
    tail = np.concatenate([np.cumsum(c[::-1])[::-1], [0]]) + int(above)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < max(1, int(tail[0])):
        raise EstimatorError(
            f"n must be an integer >= the number of counted samples ({int(tail[0])}); got {n!r}"
        )
    return exceedance_curve_at(e, tail, int(n), confidence=confidence)


# ---------------------------------------------------------------------- quantiles
def minimum_samples_for_quantile(q: float, *, confidence: float = 0.95) -> int:
    """Smallest n for which a two-sided order-statistic interval exists.

    Needs ``(1 - q)^n < alpha/2`` and ``q^n <= alpha/2`` (so that ranks 1 <= l < u <= n
    exist), i.e. ``n >= ln(alpha/2) / ln(max(q, 1 - q))``.
    """
    confidence = check_confidence(confidence)
    q = _check_q(q)
    half_alpha = (1.0 - confidence) / 2.0
    n = max(1, math.ceil(math.log(half_alpha) / math.log(max(q, 1.0 - q))))
    while not _ranks_exist(n, q, half_alpha):  # guard the boundary against rounding
        n += 1
    return n


def _check_q(q: float) -> float:
    q = float(q)
    if not 0.0 < q < 1.0:
        raise EstimatorError(f"q must be strictly between 0 and 1; got {q!r}")
    return q


def _ranks_exist(n: int, q: float, half_alpha: float) -> bool:
    return bool(stats.binom.cdf(0, n, q) < half_alpha and stats.binom.sf(n - 1, n, q) <= half_alpha)


def quantile_ranks(n: int, q: float, *, confidence: float = 0.95) -> tuple[int, int, float]:
    """1-based ranks ``(l, u)`` of a distribution-free interval for the q-quantile.

    Chooses ``l`` largest with ``P(B <= l - 1) < alpha/2`` and ``u`` smallest with
    ``P(B <= u - 1) >= 1 - alpha/2``, ``B ~ Binomial(n, q)``; the coverage
    ``P(X_(l) <= xi_q < X_(u)) = P(l <= B <= u - 1)`` is then at least ``confidence``
    (equal tails of at most alpha/2 each; Hahn, Meeker & Escobar 2017, ch. 5).

    Returns
    -------
    lower_rank, upper_rank : int
    coverage : float
        Exact coverage for a continuous distribution.

    Raises
    ------
    InsufficientSamplesError
        When n is too small for any such pair of ranks.
    """
    confidence = check_confidence(confidence)
    q = _check_q(q)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise EstimatorError(f"n must be an integer >= 1; got {n!r}")
    n = int(n)
    half_alpha = (1.0 - confidence) / 2.0
    if not _ranks_exist(n, q, half_alpha):
        raise InsufficientSamplesError(
            f"n={n} samples are too few for a two-sided {confidence:.0%} distribution-free "
            f"interval of the {q:g}-quantile; need n >= "
            f"{minimum_samples_for_quantile(q, confidence=confidence)}"
        )
    cdf = stats.binom.cdf
    # l = smallest k with cdf(k) >= alpha/2 (then cdf(l - 1) < alpha/2); adjust for ppf rounding
    lo = int(stats.binom.ppf(half_alpha, n, q))
    while lo > 0 and cdf(lo - 1, n, q) >= half_alpha:
        lo -= 1
    while cdf(lo, n, q) < half_alpha:
        lo += 1
    # u - 1 = smallest k with cdf(k) >= 1 - alpha/2
    hi = int(stats.binom.ppf(1.0 - half_alpha, n, q))
    while hi > 0 and cdf(hi - 1, n, q) >= 1.0 - half_alpha:
        hi -= 1
    while cdf(hi, n, q) < 1.0 - half_alpha:
        hi += 1
    lower_rank, upper_rank = max(lo, 1), min(hi + 1, n)
    coverage = float(cdf(upper_rank - 1, n, q) - cdf(lower_rank - 1, n, q))
    return lower_rank, upper_rank, coverage


def quantile_interval(values, q: float, *, confidence: float = 0.95) -> QuantileInterval:
    """Distribution-free confidence interval for the q-quantile from order statistics.

    Parameters
    ----------
    values : (n,) array_like
        i.i.d. sample (not NaN).
    q : float
        Probability level in (0, 1).
    confidence : float, default 0.95

    Returns
    -------
    QuantileInterval
        ``estimate`` = sample quantile (numpy's default linear interpolation);
        bounds = order statistics ``X_(l)``, ``X_(u)`` from :func:`quantile_ranks`.

    Raises
    ------
    InsufficientSamplesError
        n too small for the requested confidence (the message gives the minimum n).
    """
    confidence = check_confidence(confidence)
    q = _check_q(q)
    x = np.asarray(values, dtype=float).ravel()
    if x.size == 0:
        raise InsufficientSamplesError("quantile_interval needs at least one value")
    if np.any(np.isnan(x)):
        raise EstimatorError("quantile_interval values contain NaN")
    lower_rank, upper_rank, coverage = quantile_ranks(x.size, q, confidence=confidence)
    order = np.partition(x, [lower_rank - 1, upper_rank - 1])
    return QuantileInterval(
        estimate=float(np.quantile(x, q)),
        lower=float(order[lower_rank - 1]),
        upper=float(order[upper_rank - 1]),
        confidence=confidence,
        method="order statistics (distribution-free)",
        n=int(x.size),
        q=q,
        lower_rank=lower_rank,
        upper_rank=upper_rank,
        coverage=coverage,
    )


def quantile_interval_from_counts(edges, counts, q: float, *, below: int = 0, above: int = 0,
                                  confidence: float = 0.95) -> QuantileInterval:
    """Approximate quantile and a conservative interval from streamed histogram counts.

    Parameters
    ----------
    edges : (m + 1,) array_like
        Increasing bin edges.
    counts : (m,) array_like of int
        ``counts[i]`` = number of samples with ``edges[i] <= V < edges[i+1]``.
    q : float
        Probability level in (0, 1).
    below, above : int, default 0
        Samples below ``edges[0]`` and at or above ``edges[-1]``; ``n = below +
        sum(counts) + above``.
    confidence : float, default 0.95

    Returns
    -------
    QuantileInterval
        ``estimate``: linear interpolation of rank ``q n`` inside its bin (error at most
        one bin width). ``lower``/``upper``: the lower edge of the bin holding the
        order statistic ``X_(l)`` and the upper edge of the bin holding ``X_(u)``, with
        ``(l, u)`` from :func:`quantile_ranks`; the interval contains the exact
        order-statistic interval, so its coverage is at least ``coverage``. A bound that
        falls outside the edges is ``-inf`` / ``+inf``.
    """
    confidence = check_confidence(confidence)
    q = _check_q(q)
    e = np.array(edges, dtype=float).ravel()
    c = np.asarray(counts)
    if c.ndim != 1 or c.size != e.size - 1 or np.any(np.diff(e) <= 0):
        raise EstimatorError(
            f"need strictly increasing edges and len(edges) - 1 = {e.size - 1} counts; "
            f"got counts of shape {c.shape}"
        )
    if c.size and (not np.issubdtype(c.dtype, np.integer) or np.any(c < 0)) or below < 0 or above < 0:
        raise EstimatorError("counts, below and above must be non-negative integers")
    c = c.astype(np.int64)
    cumulative = int(below) + np.cumsum(c)  # samples < edges[i + 1]
    n = int(cumulative[-1]) + int(above)
    if n == 0:
        raise InsufficientSamplesError("quantile_interval_from_counts needs at least one sample")
    lower_rank, upper_rank, coverage = quantile_ranks(n, q, confidence=confidence)

    def bin_of(rank: float) -> int:
        """-1: below edges[0]; m: at or above edges[-1]; else the bin index."""
        if rank <= below:
            return -1
        return int(np.searchsorted(cumulative, rank, side="left"))

    i_lo, i_hi = bin_of(lower_rank), bin_of(upper_rank)
    lower = -np.inf if i_lo < 0 else (float(e[-1]) if i_lo >= c.size else float(e[i_lo]))
    upper = float(e[0]) if i_hi < 0 else (np.inf if i_hi >= c.size else float(e[i_hi + 1]))
    rank = q * n
    i = bin_of(rank)
    if i < 0:
        estimate = -np.inf if rank < below else float(e[0])
    elif i >= c.size:
        estimate = np.inf
    else:
        before = int(below) if i == 0 else int(cumulative[i - 1])
        estimate = float(e[i] + (rank - before) / c[i] * (e[i + 1] - e[i]))
    return QuantileInterval(
        estimate=estimate, lower=lower, upper=upper, confidence=confidence,
        method="histogram order statistics (conservative, bin-rounded)", n=n,
        q=q, lower_rank=lower_rank, upper_rank=upper_rank, coverage=coverage,
    )


def histogram_exceedance_curve(histogram, *, confidence: float = 0.95) -> ExceedanceCurve:
    """``P(V >= r)`` at the edges of a streamed histogram, with pointwise and simultaneous bands.

    ``histogram`` is a :class:`uq.sampling.engine.HistogramCounts` (edges, counts, above, n).
    """
    return exceedance_curve_from_counts(histogram.edges, histogram.counts, histogram.n,
                                        above=histogram.above, confidence=confidence)


def histogram_quantile_interval(histogram, q: float, *, confidence: float = 0.95) -> QuantileInterval:
    """Approximate q-quantile of a streamed histogram with a conservative order-statistic interval."""
    return quantile_interval_from_counts(histogram.edges, histogram.counts, q, below=histogram.below,
                                         above=histogram.above, confidence=confidence)
