"""Go / no-go verdict from an estimated probability of success and its interval."""

from __future__ import annotations

import math
from dataclasses import dataclass

from uq import estimators as _estimators

from ._common import (
    DecisionInputError,
    OutOfRangeError,
    _check_confidence,
    _check_probability_open,
    _fmt_prob,
    _fmt_prob_interval,
    _ResultMixin,
    _wilson,
    _z,
)

__all__ = ["Verdict", "go_no_go", "samples_to_settle", "verdict_for"]

_SETTLE_TOLERANCE = 1e-12  # |p_hat - p*| below this: the estimate sits on the requirement
_NO_SAMPLES_WILL_DO = (
    "the estimate sits at the requirement, so no feasible sample size settles it; narrowing "
    "the inputs (a test from the ranking) can"
)


@dataclass(frozen=True)
class Verdict(_ResultMixin):
    """Go / no-go verdict.

    Attributes
    ----------
    verdict : {"go", "no-go", "undecided"}
    probability_estimate, probability_low, probability_high : float
        Estimated probability of success and its interval bounds [-].
    required_probability : float
        Requirement p* [-].
    confidence : float
        Confidence level of the interval [-].
    samples : int
        Samples behind the estimate [-].
    samples_to_settle : int or None
        Undecided only: smallest sample count [-] at which the verdict's own interval
        method (Wilson, or Clopper-Pearson at the effective sample size) around the
        current estimate would exclude p*; ``None`` when no feasible count exists.
    additional_samples : int or None
        ``max(samples_to_settle - samples, 0)`` [-].
    sentence : str
    """

    verdict: str
    probability_estimate: float
    probability_low: float
    probability_high: float
    required_probability: float
    confidence: float
    samples: int
    samples_to_settle: int | None
    additional_samples: int | None
    sentence: str


def samples_to_settle(
    p_estimate: float, required_probability: float, *, confidence: float, max_samples: int = 10**8,
    interval: str = "wilson", design_effect: float = 1.0,
) -> int | None:
    """Smallest n at which the verdict's own interval around ``p_estimate`` excludes p*.

    Parameters
    ----------
    p_estimate : float
        Current estimate of the probability of success [-].
    required_probability : float
        Requirement p* in (0, 1) [-].
    confidence : float
        Two-sided confidence level [-] (the per-look level under a sequential rule).
    max_samples : int
        Largest sample count considered feasible [-].
    interval : {"wilson", "clopper-pearson"}
        The interval the verdict was judged on: Wilson for one Monte Carlo / Latin
        hypercube plan, Clopper-Pearson at the effective sample size for randomised QMC
        (:func:`uq.estimators.success_probability`).
    design_effect : float, default 1
        ``n / n_eff`` of the estimator (below 1 when randomised QMC beats independent
        sampling); assumed to hold as the sample grows.

    Returns
    -------
    int or None
        ``None`` when the estimate is within 1e-12 of p* or n would exceed ``max_samples``.

    Notes
    -----
    The Wilson interval is the set of p with |p_hat - p| <= z sqrt(p (1 - p) / m), so p*
    lies on a bound at m = z^2 p* (1 - p*) / (p_hat - p*)^2; that (or the next integer,
    for a strict NO-GO) starts the search, which then steps to the smallest effective size
    m whose interval settles the question, and returns ``ceil(m * design_effect)``.
    """
    p_hat = float(p_estimate)
    p_star = _check_probability_open(required_probability, "required_probability")
    confidence = _check_confidence(confidence)
    if interval not in ("wilson", "clopper-pearson"):
        raise DecisionInputError(
            f"interval={interval!r}: expected 'wilson' or 'clopper-pearson'")
    if not design_effect > 0:
        raise OutOfRangeError(f"design_effect={design_effect!r}: expected a positive number")
    gap = p_hat - p_star
    if abs(gap) <= _SETTLE_TOLERANCE:
        return None
    z = _z(confidence)
    m_boundary = z * z * p_star * (1.0 - p_star) / (gap * gap)
    if m_boundary * design_effect > max_samples:
        return None

    def bounds(m: float) -> tuple[float, float]:
        if interval == "wilson":
            low, high = _wilson(p_hat * m, m, confidence)
            return float(low), float(high)
        return _estimators.clopper_pearson_bounds(p_hat * m, m, confidence=confidence)

    def settled(m: float) -> bool:
        low, high = bounds(m)
        return bool(low >= p_star) if gap > 0 else bool(high < p_star)

    m = max(1, math.ceil(m_boundary) if gap > 0 else math.floor(m_boundary) + 1)
    step = max(1, m // 1000)
    while not settled(m):
        m += step
        if m * design_effect > max_samples:
            return None
    while m > 1 and settled(m - step):
        m -= step
    while step > 1 and m > 1 and settled(m - 1):
        m -= 1
    n = max(1, math.ceil(m * design_effect))
    return n if n <= max_samples else None


def go_no_go(
    p_lower: float,
    p_upper: float,
    p_estimate: float,
    *,
    required_probability: float,
    confidence: float,
    samples: int,
    max_samples: int = 10**8,
    interval: str = "wilson",
    design_effect: float = 1.0,
) -> Verdict:
    """Decide GO / NO-GO / UNDECIDED from an interval for the probability of success.

    Parameters
    ----------
    p_lower, p_upper, p_estimate : float
        Interval bounds and point estimate of P(success) [-], from any estimator.
    required_probability : float
        Requirement p* in (0, 1) [-].
    confidence : float
        Confidence level of the supplied interval [-].
    samples : int
        Samples behind the estimate [-].
    max_samples : int
        Largest sample count considered feasible when planning more runs [-].
    interval, design_effect
        The interval method behind the estimate and its design effect, so that
        :func:`samples_to_settle` plans with the same method (see there).

    Returns
    -------
    Verdict
        GO when ``p_lower >= p*``; NO-GO when ``p_upper < p*``; otherwise UNDECIDED with
        :func:`samples_to_settle` (a Wilson-interval plan around the current estimate; an
        estimator with a narrower interval, e.g. randomised QMC, needs fewer).
    """
    p_star = _check_probability_open(required_probability, "required_probability")
    confidence = _check_confidence(confidence)
    lo, hi, est = float(p_lower), float(p_upper), float(p_estimate)
    for name, v in (("p_lower", lo), ("p_upper", hi), ("p_estimate", est)):
        if not 0.0 <= v <= 1.0:
            raise OutOfRangeError(f"{name}={v!r}: expected a probability in [0, 1]")
    if not lo <= est <= hi:
        raise DecisionInputError(
            f"interval ({lo!r}, {hi!r}) does not contain the estimate {est!r}: expected p_lower <= p_estimate <= p_upper"
        )
    if int(samples) != samples or samples < 1:
        raise OutOfRangeError(f"samples={samples!r}: expected a positive integer")
    samples = int(samples)

    ci = f"{confidence * 100:g} % CI {_fmt_prob_interval(lo, hi)}"
    head = f"P(success) {_fmt_prob(est)} ({ci}, {samples:,} samples)"
    req = f"the required {_fmt_prob(p_star)}"
    n_settle: int | None = None
    extra: int | None = None
    if lo >= p_star:
        verdict = "go"
        sentence = f"GO: {head} meets {req} even at the lower bound."
    elif hi < p_star:
        verdict = "no-go"
        sentence = f"NO-GO: {head} falls short of {req} even at the upper bound."
    else:
        verdict = "undecided"
        n_settle = samples_to_settle(est, p_star, confidence=confidence, max_samples=max_samples,
                                     interval=interval, design_effect=design_effect)
        base = f"UNDECIDED: {head} straddles {req}"
        if n_settle is None:
            sentence = f"{base}; {_NO_SAMPLES_WILL_DO}."
        else:
            extra = max(n_settle - samples, 0)
            side = "GO" if est > p_star else "NO-GO"
            if extra > 0:
                sentence = (
                    f"{base}; if the estimate holds, a {side} would be settled at about {n_settle:,} "
                    f"samples ({extra:,} more than the {samples:,} run)."
                )
            else:
                sentence = (
                    f"{base}; the interval method of the estimate would already give {side} at {n_settle:,} "
                    f"samples, so the supplied interval is wider than binomial sampling error alone: "
                    f"check the estimator's interval before running more samples."
                )
    return Verdict(
        verdict=verdict,
        probability_estimate=est,
        probability_low=lo,
        probability_high=hi,
        required_probability=p_star,
        confidence=confidence,
        samples=samples,
        samples_to_settle=n_settle,
        additional_samples=extra,
        sentence=sentence,
    )


def verdict_for(estimate, *, required_probability: float, max_samples: int = 10**8) -> Verdict:
    """:func:`go_no_go` on a :class:`uq.estimators.ProbabilityEstimate`, planning more samples
    with the same interval method and design effect as the estimate."""
    return go_no_go(estimate.lower, estimate.upper, estimate.estimate,
                    required_probability=required_probability,
                    confidence=estimate.confidence, samples=estimate.n, max_samples=max_samples,
                    interval=getattr(estimate, "interval_kind", "wilson"),
                    design_effect=getattr(estimate, "design_effect", 1.0))
