"""Many looks, one error rate: growing a sample until an interval is narrow or decisive.

Looking at an interval after every doubling of the sample and stopping when it is narrow
enough (or when it settles a go/no-go question) is several tests of one question. With a
95 % interval at each look, the chance that *some* look's interval misses the truth — and
so the chance of a false GO when the truth sits on the requirement — grows with the number
of looks. :func:`grow_until` therefore declares the maximum number of looks before the
first one (from ``n_start``, ``n_max`` and the growth factor) and spends the error rate
over them.

The rule used is a Bonferroni split (the simplest alpha-spending schedule; Lan & DeMets
1983 for the general form): with L predeclared looks and overall confidence ``1 - alpha``,
every look's interval is computed at ``1 - alpha / L``. By the union bound the interval at
whatever look the procedure stops at covers the truth with probability at least
``1 - alpha``, whatever the stopping rule, so the false-GO and false-NO-GO rates stay at
their nominal ``alpha / 2`` each.

References
----------
.. [1] Lan, K. K. G. & DeMets, D. L. (1983). Discrete sequential boundaries for clinical
   trials. Biometrika 70(3):659-663.
.. [2] Jennison, C. & Turnbull, B. W. (2000). Group Sequential Methods with Applications to
   Clinical Trials. Chapman & Hall/CRC, ch. 7 (error spending).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from uq.estimators.intervals import EstimatorError, IntervalEstimate, check_confidence

__all__ = ["SequentialRule", "ConvergenceResult", "planned_looks", "grow_until"]


def _check_int(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise EstimatorError(f"{name} must be an integer; got {value!r}")
    return int(value)


def planned_looks(n_start: int, n_max: int, growth: int = 2) -> int:
    """Number of looks ``n_start, n_start*growth, ... <= n_max`` (the predeclared maximum).

    Returns
    -------
    int
        ``1 + floor(log_growth(n_max / n_start))`` [-].
    """
    n_start, n_max, growth = (_check_int(v, k) for v, k in
                              ((n_start, "n_start"), (n_max, "n_max"), (growth, "growth")))
    if n_start < 1 or n_max < n_start:
        raise EstimatorError(f"need 1 <= n_start <= n_max; got n_start={n_start}, n_max={n_max}")
    if growth < 2:
        raise EstimatorError(f"growth must be an integer >= 2; got {growth}")
    looks, n = 1, n_start
    while n * growth <= n_max:
        n *= growth
        looks += 1
    return looks


@dataclass(frozen=True)
class SequentialRule:
    """Bonferroni split of the error rate over a predeclared maximum number of looks.

    Attributes
    ----------
    confidence : float
        Overall two-sided confidence level across all looks [-].
    max_looks : int
        Predeclared maximum number of looks L [-].
    """

    confidence: float
    max_looks: int

    def __post_init__(self) -> None:
        check_confidence(self.confidence)
        if _check_int(self.max_looks, "max_looks") < 1:
            raise EstimatorError(f"max_looks must be >= 1; got {self.max_looks}")

    @property
    def per_look_confidence(self) -> float:
        """Confidence of each look's interval, ``1 - alpha / L`` [-]."""
        return 1.0 - (1.0 - self.confidence) / self.max_looks

    @property
    def name(self) -> str:
        """Short name of the rule, for reports and JSON."""
        return f"bonferroni split over {self.max_looks} predeclared looks"

    def describe(self, looks_taken: int) -> str:
        """One sentence for the report: the rule, the looks taken and the per-look level."""
        if self.max_looks == 1:
            return "One look at the sample; no correction for repeated looks is needed."
        return (f"Sequential rule: the {self.confidence:.0%} error budget is split equally "
                f"(Bonferroni) over {self.max_looks} predeclared looks, so each "
                f"look's interval is at {self.per_look_confidence:.3%}; {looks_taken} "
                f"look{'s' if looks_taken != 1 else ''} taken.")

    def to_dict(self, looks_taken: int | None = None) -> dict:
        """JSON-ready description."""
        out = {"rule": self.name, "confidence": self.confidence, "max_looks": self.max_looks,
               "per_look_confidence": self.per_look_confidence}
        if looks_taken is not None:
            out["looks_taken"] = int(looks_taken)
        return out


@dataclass(frozen=True)
class ConvergenceResult:
    """Outcome of :func:`grow_until`.

    Attributes
    ----------
    estimate : IntervalEstimate
        The last estimate computed (at the rule's per-look confidence).
    n : int
        Sample size of that estimate.
    converged : bool
        Whether the stopping condition held at the last look.
    history : tuple of (int, IntervalEstimate)
        Every ``(n, estimate)`` tried, in order.
    target_half_width : float
    rule : SequentialRule
        The error-spending rule the looks followed.
    """

    estimate: IntervalEstimate
    n: int
    converged: bool
    history: tuple = field(default=())
    target_half_width: float = float("nan")
    rule: SequentialRule | None = None

    @property
    def looks(self) -> int:
        """Number of looks taken."""
        return len(self.history)


def grow_until(run_fn: Callable[[int, float], IntervalEstimate], *,
               target_half_width: float | None = None, n_start: int, n_max: int,
               growth: int = 2, confidence: float = 0.95,
               stop_when: Callable[[IntervalEstimate], bool] | None = None) -> ConvergenceResult:
    """Grow the sample size until the interval is narrow enough or decisive.

    Calls ``run_fn(n, per_look_confidence)`` for ``n = n_start, n_start*growth, ...``
    (never above ``n_max``; with a power-of-two ``n_start`` and ``growth=2`` every n is a
    power of two, as scrambled Sobol' plans need) until the estimate's half width is at
    most ``target_half_width`` or ``stop_when(estimate)`` is true.

    Parameters
    ----------
    run_fn : callable
        ``run_fn(n, confidence) -> IntervalEstimate`` for a sample of size n; must compute
        its interval at the confidence it is given.
    target_half_width : float, optional
        Stop when ``half_width <= target_half_width`` (units of the estimate).
    n_start, n_max : int
        First and largest sample size.
    growth : int, default 2
    confidence : float, default 0.95
        Overall confidence across all looks; each look uses
        ``SequentialRule.per_look_confidence``.
    stop_when : callable, optional
        Extra stopping condition, e.g. "the interval settles the verdict".

    Returns
    -------
    ConvergenceResult
        ``converged=False`` when ``n_max`` stopped the growth first.
    """
    if target_half_width is None and stop_when is None:
        raise EstimatorError("grow_until needs target_half_width or stop_when")
    target = float("nan") if target_half_width is None else float(target_half_width)
    if target_half_width is not None and not target > 0.0:
        raise EstimatorError(f"target_half_width must be > 0; got {target_half_width!r}")
    rule = SequentialRule(check_confidence(confidence), planned_looks(n_start, n_max, growth))

    def done(est: IntervalEstimate) -> bool:
        narrow = target_half_width is not None and est.half_width <= target
        return bool(narrow or (stop_when is not None and stop_when(est)))

    n = int(n_start)
    history = []
    while True:
        estimate = run_fn(n, rule.per_look_confidence)
        history.append((n, estimate))
        if done(estimate) or n * growth > n_max:
            break
        n *= growth
    return ConvergenceResult(estimate=estimate, n=n, converged=done(estimate),
                             history=tuple(history), target_half_width=target, rule=rule)

