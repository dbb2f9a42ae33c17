"""Point estimates with confidence intervals, for probabilities and means.

Every estimator returns a frozen :class:`IntervalEstimate` (estimate, lower, upper,
confidence, method, n); exceedance curves and quantiles of an output live in
:mod:`uq.estimators.quantiles`. Nothing here knows what the numbers mean physically.

References
----------
.. [1] Wilson, E. B. (1927). Probable inference, the law of succession, and statistical
   inference. JASA 22:209-212.
.. [2] Clopper, C. J. & Pearson, E. S. (1934). The use of confidence or fiducial limits
   illustrated in the case of the binomial. Biometrika 26:404-413.
.. [3] Brown, L. D., Cai, T. T. & DasGupta, A. (2001). Interval estimation for a binomial
   proportion. Statistical Science 16:101-133.
.. [4] Dvoretzky, A., Kiefer, J. & Wolfowitz, J. (1956). Ann. Math. Stat. 27:642-669;
   Massart, P. (1990). The tight constant in the DKW inequality. Ann. Probab. 18:1269-1283.
.. [5] Hahn, G. J., Meeker, W. Q. & Escobar, L. A. (2017). Statistical Intervals, 2nd ed.,
   ch. 5 (distribution-free intervals for quantiles from order statistics).
.. [6] Owen, A. B. (1997). Scrambled net variance for integrals of smooth functions.
   Annals of Statistics 25(4):1541-1562.
"""

from __future__ import annotations

from uq.errors import InputError

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
from scipy import special, stats

__all__ = [
    "EstimatorError",
    "InsufficientSamplesError",
    "IntervalEstimate",
    "check_confidence",
    "proportion_interval",
    "clopper_pearson_bounds",
    "wilson_bounds",
    "replicate_interval",
    "mean_interval",
    "mean_interval_from_moments",
]


class EstimatorError(InputError):
    """Invalid input to an estimator (counts, confidence level, sample)."""


class InsufficientSamplesError(EstimatorError):
    """The sample is too small for the requested interval (say so rather than guess)."""


def check_confidence(confidence: float, *, error: type[Exception] | None = None) -> float:
    """The one confidence-level check: a number strictly between 0 and 1.

    Parameters
    ----------
    confidence : float
        Two-sided confidence level [-].
    error : exception class, optional
        Raised on a bad value (default :class:`EstimatorError`); callers in other layers
        pass their own input-error class so their users see one error family.

    Returns
    -------
    float
    """
    try:
        c = float(confidence)
    except (TypeError, ValueError):
        c = float("nan")
    if isinstance(confidence, bool) or not 0.0 < c < 1.0:
        raise (error or EstimatorError)(
            f"confidence must be strictly between 0 and 1; got {confidence!r}")
    return c


_check_confidence = check_confidence


def _z(confidence: float) -> float:
    return float(special.ndtri(0.5 + confidence / 2.0))


@dataclass(frozen=True)
class IntervalEstimate:
    """A point estimate with a two-sided confidence interval.

    Attributes
    ----------
    estimate, lower, upper : float
        Point estimate and interval bounds (units of the estimated quantity).
    confidence : float
        Nominal two-sided confidence level [-].
    method : str
        How the interval was computed.
    n : int
        Sample size the estimate rests on (number of replicates for
        :func:`replicate_interval`).
    """

    estimate: float
    lower: float
    upper: float
    confidence: float
    method: str
    n: int

    @property
    def half_width(self) -> float:
        """Half the interval width, ``(upper - lower) / 2``."""
        return 0.5 * (self.upper - self.lower)

    def to_dict(self) -> dict:
        """Plain dict of the fields plus ``half_width``."""
        d = dataclasses.asdict(self)
        d["half_width"] = self.half_width
        return d


# ---------------------------------------------------------------------- proportions
def wilson_bounds(successes, n, *, confidence: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
    """Vectorized Wilson score bounds for ``successes`` out of ``n``.

    Parameters
    ----------
    successes, n : array_like of int
        Counts; broadcast together.
    confidence : float
        Two-sided confidence level.

    Returns
    -------
    lower, upper : ndarray
        Bounds in [0, 1]; exactly 0 at ``successes = 0`` and 1 at ``successes = n``.
    """
    confidence = _check_confidence(confidence)
    k = np.asarray(successes, dtype=float)
    m = np.asarray(n, dtype=float)
    z = _z(confidence)
    z2 = z * z
    denom = m + z2
    center = (k + z2 / 2.0) / denom
    half = z / denom * np.sqrt(k * (m - k) / m + z2 / 4.0)
    lower = np.clip(center - half, 0.0, 1.0)
    upper = np.clip(center + half, 0.0, 1.0)
    lower = np.where(k == 0, 0.0, lower)
    upper = np.where(k == m, 1.0, upper)
    return lower, upper


def _check_counts(successes, n) -> tuple[int, int]:
    for value, name in ((successes, "successes"), (n, "n")):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            raise EstimatorError(f"{name} must be an integer; got {value!r}")
    k, m = int(successes), int(n)
    if m < 1:
        raise EstimatorError(f"n must be >= 1; got {m}")
    if not 0 <= k <= m:
        raise EstimatorError(f"successes must be in [0, n={m}]; got {k}")
    return k, m


def proportion_interval(successes: int, n: int, *, confidence: float = 0.95,
                        method: str = "wilson") -> IntervalEstimate:
    """Confidence interval for a binomial proportion.

    Parameters
    ----------
    successes : int
        Number of successes ``k``.
    n : int
        Number of trials.
    confidence : float, default 0.95
        Two-sided confidence level.
    method : {"wilson", "clopper-pearson"}
        Wilson score interval (Wilson 1927; recommended by Brown et al. 2001) or the
        exact Clopper-Pearson interval (1934; conservative).

    Returns
    -------
    IntervalEstimate
        ``estimate = k / n``.
    """
    k, m = _check_counts(successes, n)
    confidence = _check_confidence(confidence)
    if method == "wilson":
        lo, hi = wilson_bounds(k, m, confidence=confidence)
        lower, upper = float(lo), float(hi)
    elif method == "clopper-pearson":
        lower, upper = clopper_pearson_bounds(k, m, confidence=confidence)
    else:
        raise EstimatorError(
            f"method must be 'wilson' or 'clopper-pearson'; got {method!r}"
        )
    return IntervalEstimate(k / m, lower, upper, confidence, method, m)


def clopper_pearson_bounds(successes: float, n: float, *,
                           confidence: float = 0.95) -> tuple[float, float]:
    """Clopper-Pearson (1934) bounds as beta quantiles; ``successes`` and ``n`` may be
    non-integer (an effective count and sample size, Korn & Graubard 1998).

    Returns
    -------
    lower, upper : float
        ``Beta(alpha/2; x, n - x + 1)`` and ``Beta(1 - alpha/2; x + 1, n - x)``; exactly 0
        at ``x = 0`` and 1 at ``x = n``.
    """
    confidence = check_confidence(confidence)
    x, m = float(successes), float(n)
    if not (m > 0 and 0.0 <= x <= m):
        raise EstimatorError(f"need 0 <= successes <= n and n > 0; got {successes!r}, {n!r}")
    alpha = 1.0 - confidence
    lower = 0.0 if x <= 0 else float(stats.beta.ppf(alpha / 2.0, x, m - x + 1.0))
    upper = 1.0 if x >= m else float(stats.beta.ppf(1.0 - alpha / 2.0, x + 1.0, m - x))
    return lower, upper


# ---------------------------------------------------------------------- means
def _finite_sample(values, name: str, minimum: int) -> np.ndarray:
    x = np.asarray(values, dtype=float).ravel()
    if x.size < minimum:
        raise InsufficientSamplesError(f"{name} needs at least {minimum} values; got {x.size}")
    if not np.all(np.isfinite(x)):
        raise EstimatorError(f"{name} contains non-finite values")
    return x


def _t_interval(x: np.ndarray, confidence: float, method: str) -> IntervalEstimate:
    return mean_interval_from_moments(x.size, float(np.mean(x)), float(np.std(x, ddof=1)),
                                      confidence=confidence, method=method)


def mean_interval_from_moments(n: int, mean: float, sd: float, *, confidence: float = 0.95,
                               method: str | None = None) -> IntervalEstimate:
    """Student-t interval ``mean +- t_{n-1} sd / sqrt(n)`` from a count, a mean and a sample sd.

    The one Student-t rule: :func:`mean_interval`, :func:`replicate_interval` and the streamed
    sums of a study (:class:`uq.sampling.engine.SumTotal`) all end here.
    """
    confidence = _check_confidence(confidence)
    if n < 2:
        raise InsufficientSamplesError(f"a Student-t interval needs at least 2 values; got {n}")
    se = float(sd) / math.sqrt(n)
    t = float(stats.t.ppf(0.5 + confidence / 2.0, n - 1))
    return IntervalEstimate(float(mean), mean - t * se, mean + t * se, confidence,
                            method or f"student-t over {n} samples", int(n))


def replicate_interval(replicate_estimates, *, confidence: float = 0.95) -> IntervalEstimate:
    """Student-t interval over K independent randomized-QMC replicates.

    Parameters
    ----------
    replicate_estimates : (K,) array_like
        One estimate per independent scrambling (:meth:`SampleDesign.with_replicate`).
    confidence : float, default 0.95

    Returns
    -------
    IntervalEstimate
        Mean of the replicates, ``mean ± t_{K-1} s / sqrt(K)``; ``n = K``.

    Raises
    ------
    InsufficientSamplesError
        Fewer than 2 replicates (no spread to estimate).

    Notes
    -----
    Independent random scramblings make the replicate estimates i.i.d. and unbiased
    (Owen 1997), so their spread is an honest error estimate.
    """
    confidence = _check_confidence(confidence)
    x = _finite_sample(replicate_estimates, "replicate_interval", 2)
    return _t_interval(x, confidence, f"student-t over {x.size} RQMC replicates")


def mean_interval(values, *, confidence: float = 0.95) -> IntervalEstimate:
    """Student-t interval for the mean of i.i.d. values (n >= 2)."""
    confidence = _check_confidence(confidence)
    x = _finite_sample(values, "mean_interval", 2)
    return _t_interval(x, confidence, f"student-t over {x.size} samples")
