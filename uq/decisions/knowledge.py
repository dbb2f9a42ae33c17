"""The knowledge band: how much of the risk is what we do not know yet, and how sure the verdict is.

Every uncertain input has a nature: ``knowledge`` (a fixed property of this vehicle or this
water that a test or survey could pin down: hull drag, efficiencies, this battery's cold
capacity) or ``variability`` (changes from day to day or mission to mission: currents on the
day, hotel load). P(success | knowledge inputs) = E[success | theta_k] is a random quantity
over the knowledge inputs' distribution; its spread is the band. The P(success) interval of the
verdict measures simulation error only; the band measures what a test could still change.

Estimator: a penalised logistic regression of the success indicator on a natural cubic spline
basis of the knowledge inputs' normal scores (the same basis as the value of information), on
the existing sample. Its fitted values stay in [0, 1] and, with an unpenalised intercept, their
mean equals the sample P(success) exactly (the intercept's score equation). The choice against
a nested (outer knowledge x inner variability) design is measured in
``benchmarks/knowledge_band.py``.

References
----------
.. [1] Helton J. C. (1997) Uncertainty and sensitivity analysis in the presence of stochastic
   and subjective uncertainty. J. Stat. Comput. Simul. 57:3-76.
.. [2] Oberkampf W. L., Roy C. J. (2010) Verification and Validation in Scientific Computing.
   Cambridge University Press, ch. 12-13.
.. [3] Strong M., Oakley J. E., Brennan A. (2014) Med. Decis. Making 34(3):311-326.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from ._common import (
    DecisionInputError,
    OutOfRangeError,
    ShapeMismatchError,
    _as_bool_1d,
    _check_confidence,
    _fmt_prob,
    _normal_scores,
    _plain,
    _ResultMixin,
)
from ._regression import _design, _fitted_incremental

__all__ = ["KNOWLEDGE", "VARIABILITY", "input_natures", "KnowledgeBand", "BandAfter",
           "knowledge_band", "band_after_test", "success_given"]

KNOWLEDGE = "knowledge"
VARIABILITY = "variability"
BAND_QUANTILES = (0.05, 0.5, 0.95)
_RIDGE = 1e-6  # relative ridge on the non-intercept logistic coefficients (separation guard)


def input_natures(input_names: Sequence[str], *, knowledge: Sequence[str] = (),
                  variability: Sequence[str] = (),
                  tested: Sequence[str] = ()) -> dict[str, str]:
    """The nature of every input: what the scenario says, else the documented default.

    Default: an input that a candidate test measures is ``knowledge`` (a test can pin it
    down); every other input is ``variability``.

    Parameters
    ----------
    input_names : sequence of str
    knowledge, variability : sequence of str
        Inputs the scenario declares of each nature (disjoint); names that are not uncertain
        inputs here (fixed in this variant) are ignored.
    tested : sequence of str
        Inputs named by any candidate test.

    Returns
    -------
    dict str -> {"knowledge", "variability"}, in ``input_names`` order.
    """
    both = sorted(set(knowledge) & set(variability))
    if both:
        raise DecisionInputError(f"inputs {both} are declared both knowledge and variability")
    out = {}
    for name in input_names:
        if name in knowledge:
            out[name] = KNOWLEDGE
        elif name in variability:
            out[name] = VARIABILITY
        else:
            out[name] = KNOWLEDGE if name in tested else VARIABILITY
    return out


@dataclass(frozen=True)
class BandAfter(_ResultMixin):
    """The knowledge band expected after a test [-].

    ``sd_before``/``sd_after``: spread of P(success | knowledge) now and its expected value
    after the test (the square root of the variance the test's result leaves unexplained);
    ``share_removed`` = 1 - sd_after^2 / sd_before^2; ``low``/``high``: the expected 5 % and
    95 % points of the band once the result is in, centred on today's mean (an approximation
    that takes the unexplained part as the same for every result).
    """

    sd_before: float
    sd_after: float
    share_removed: float
    low: float
    high: float


@dataclass(frozen=True)
class KnowledgeBand(_ResultMixin):
    """Distribution of P(success | knowledge inputs) over what we do not yet know.

    Attributes
    ----------
    knowledge_inputs, variability_inputs : tuple of str
    quantiles : tuple of float
        Levels (0.05, 0.5, 0.95) [-].
    values, values_low, values_high : tuple of float
        The band's quantiles with bootstrap intervals [-].
    mean : float
        Mean of the band; equals the sample P(success) [-].
    credibility, credibility_low, credibility_high : float
        P(P(success | knowledge) >= p*) with its bootstrap interval [-].
    required_probability : float
    required_credibility : float or None
        c of the optional rule "go iff credibility >= c".
    rule_verdict : {"go", "no-go"} or None
    sd : float
        Standard deviation of the band [-].
    confidence : float
    samples : int
    method : str
    sentence : str
    sample_values : numpy.ndarray
        P(success | knowledge) at every sample row (not written to JSON).
    """

    knowledge_inputs: tuple[str, ...]
    variability_inputs: tuple[str, ...]
    quantiles: tuple[float, ...]
    values: tuple[float, ...]
    values_low: tuple[float | None, ...]
    values_high: tuple[float | None, ...]
    mean: float
    credibility: float
    credibility_low: float | None
    credibility_high: float | None
    required_probability: float
    required_credibility: float | None
    rule_verdict: str | None
    sd: float
    confidence: float
    samples: int
    method: str
    sentence: str
    sample_values: np.ndarray = field(repr=False, compare=False)

    def to_dict(self) -> dict:
        """JSON-ready builtins, without the per-sample values."""
        return {k: v for k, v in _plain(self).items() if k != "sample_values"}


class _UnitScaled(NamedTuple):
    """A design's columns over their standard deviations (the intercept column as it is), and
    its transpose in contiguous memory: computed once for all the bootstrap fits."""

    xs: np.ndarray
    xt: np.ndarray


def _unit_scaled(x) -> _UnitScaled:
    if isinstance(x, _UnitScaled):
        return x
    sd = x.std(axis=0)
    scale = np.where(sd > 0, sd, 1.0)
    scale[0] = 1.0
    xs = x / scale
    return _UnitScaled(xs, np.ascontiguousarray(xs.T))


def _logistic_fit(x: "np.ndarray | _UnitScaled", y: np.ndarray, w: np.ndarray | None = None,
                  max_iter: int = 50, start: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Fitted P(y = 1 | x) of a ridge-guarded logistic regression by Newton (IRLS) steps.

    The intercept (column 0) is not penalised, so sum_i w_i (y_i - p_i) = 0 at the optimum:
    the weighted mean of the fitted probabilities equals that of y. Returns the fitted
    probabilities and the coefficients (on unit-scaled columns; ``start`` warm-starts).
    """
    xs, xt = _unit_scaled(x)
    n, p = xs.shape
    w = np.ones(n) if w is None else w
    penalty = np.full(p, _RIDGE * float(w.sum()))
    penalty[0] = 0.0
    ybar = float(np.clip(w @ y / w.sum(), 1e-9, 1 - 1e-9))
    beta = np.zeros(p)
    beta[0] = np.log(ybar / (1.0 - ybar))
    if start is not None:
        beta = start.copy()

    def objective(b):  # penalised negative log-likelihood
        eta = xs @ b
        return float(w @ (np.logaddexp(0.0, eta) - y * eta)) + 0.5 * float(penalty @ (b * b))

    current = objective(beta)
    for _ in range(max_iter):
        eta = np.clip(xs @ beta, -35.0, 35.0)
        prob = 1.0 / (1.0 + np.exp(-eta))
        # X^T W X as one matrix product on the transposed copy (BLAS: about 5x einsum's
        # speed at n 8192, p 40 on one thread)
        grad = xt @ (w * (y - prob)) - penalty * beta
        hess = (xt * (w * prob * (1.0 - prob))) @ xs
        hess += np.diag(penalty + 1e-9 * float(w.sum()))
        step = np.linalg.solve(hess, grad)
        size, trial = 1.0, objective(beta + step)
        while trial > current:  # Newton with step halving: the objective never rises
            size *= 0.5
            if size < 1e-6:
                break
            trial = objective(beta + size * step)
        if trial > current:
            break
        beta = beta + size * step
        improvement, current = current - trial, trial
        if np.max(np.abs(size * step)) < 1e-8 or improvement < 1e-10 * max(abs(current), 1.0):
            break
    return 1.0 / (1.0 + np.exp(-np.clip(xs @ beta, -35.0, 35.0))), beta


def _summaries(values: np.ndarray, p_star: float, w: np.ndarray | None = None):
    if w is None:
        qs = np.quantile(values, BAND_QUANTILES)
        cred = float(np.mean(values >= p_star))
    else:
        order = np.argsort(values)
        cum = np.cumsum(w[order]) / w.sum()
        qs = values[order][np.minimum(np.searchsorted(cum, BAND_QUANTILES), values.size - 1)]
        cred = float(w @ (values >= p_star) / w.sum())
    return np.asarray(qs, dtype=float), cred


def knowledge_band(
    success,
    inputs: Mapping[str, np.ndarray],
    natures: Mapping[str, str],
    *,
    required_probability: float,
    required_credibility: float | None = None,
    confidence: float = 0.95,
    n_knots: int = 5,
    n_bootstrap: int = 50,
    rng=None,
) -> KnowledgeBand:
    """The knowledge band of P(success), from the existing sample.

    Parameters
    ----------
    success : array_like of bool, shape (n,)
    inputs : mapping str -> array (n,)
        Sampled inputs by name, rows matching ``success``.
    natures : mapping str -> {"knowledge", "variability"}
        Nature of every input (:func:`input_natures`).
    required_probability : float
        p* [-].
    required_credibility : float, optional
        c of the optional rule "go iff P(P(success | knowledge) >= p*) >= c" [-].
    confidence : float
        Level of the bootstrap intervals [-].
    n_knots : int
        Natural-spline knots per knowledge input [-].
    n_bootstrap : int
        Row resamples for the intervals (0: none) [-].
    rng : None, int or numpy.random.Generator

    Returns
    -------
    KnowledgeBand

    Notes
    -----
    With no knowledge input the band is the point P(success); with no variability input the
    outcome is a function of the knowledge inputs, so the band is the success indicator itself
    (0s and 1s). In between, E[success | theta_k] is the fitted probability of a logistic
    regression on additive natural splines of the knowledge inputs' normal scores plus their
    pairwise products. The fit's own sampling error widens the band slightly; the benchmark
    measures it against a nested design.
    """
    s = _as_bool_1d(success, "success")
    n = s.size
    confidence = _check_confidence(confidence)
    p_star = float(required_probability)
    if not 0.0 < p_star < 1.0:
        raise OutOfRangeError(f"required_probability={required_probability!r}: expected in (0, 1)")
    if required_credibility is not None and not 0.0 < required_credibility < 1.0:
        raise OutOfRangeError(f"required_credibility={required_credibility!r}: expected in (0, 1)")
    missing = sorted(set(natures) - set(inputs))
    if missing:
        raise DecisionInputError(f"inputs lacks {missing} named in natures")
    know = tuple(k for k, v in natures.items() if v == KNOWLEDGE)
    vary = tuple(k for k, v in natures.items() if v == VARIABILITY)
    y = s.astype(float)
    if not know:
        method = "no knowledge input: the band is the point P(success)"
        fit = lambda w: np.full(n, y.mean() if w is None else w @ y / w.sum())  # noqa: E731
    elif not vary:
        method = "no variability input: P(success | knowledge) is the outcome itself (0 or 1)"
        fit = lambda w: y  # noqa: E731
    else:
        z = _normal_scores(np.column_stack([np.asarray(inputs[k], dtype=float) for k in know]))
        if z.shape[0] != n:
            raise ShapeMismatchError(f"inputs have {z.shape[0]} rows, success {n}")
        x = _design(z, method="spline", n_knots=n_knots, degree=3)
        method = (f"logistic regression of success on natural splines ({n_knots} knots) of the "
                  f"{len(know)} knowledge inputs' normal scores, with pairwise products")
        if y.min() == y.max():
            fit = lambda w: np.full(n, y[0])  # noqa: E731
        else:
            scaled = _unit_scaled(x)
            beta0 = _logistic_fit(scaled, y)[1]
            fit = lambda w: _logistic_fit(scaled, y, w, start=beta0)[0]  # noqa: E731
    values = fit(None)
    qs, cred = _summaries(values, p_star)
    q_lo = q_hi = (None,) * len(BAND_QUANTILES)
    c_lo = c_hi = None
    if n_bootstrap:
        gen = np.random.default_rng(rng)
        reps_q, reps_c = [], []
        for _ in range(n_bootstrap):
            w = np.bincount(gen.integers(0, n, n), minlength=n).astype(float)
            keep = w > 0
            vb = fit(w)
            q, c = _summaries(vb[keep], p_star, w[keep])
            reps_q.append(q)
            reps_c.append(c)
        a = (1.0 - confidence) / 2.0
        q_lo, q_hi = (tuple(float(v) for v in row) for row in np.quantile(np.array(reps_q), [a, 1 - a], axis=0))
        c_lo, c_hi = (float(v) for v in np.quantile(reps_c, [a, 1 - a]))
    rule = None
    if required_credibility is not None:
        rule = "go" if cred >= required_credibility else "no-go"
    sentence = band_sentence(qs, cred, p_star, confidence, c_lo, c_hi, know)
    return KnowledgeBand(
        knowledge_inputs=know, variability_inputs=vary, quantiles=BAND_QUANTILES,
        values=tuple(float(v) for v in qs), values_low=q_lo, values_high=q_hi,
        mean=float(values.mean()), credibility=cred, credibility_low=c_lo, credibility_high=c_hi,
        required_probability=p_star, required_credibility=required_credibility,
        rule_verdict=rule, sd=float(values.std()), confidence=confidence, samples=n,
        method=method, sentence=sentence, sample_values=values,
    )


def band_sentence(qs, cred, p_star, confidence, c_lo, c_hi, know) -> str:
    """The band in one plain sentence."""
    if not know:
        return ("Every uncertain input varies from mission to mission (none is a knowledge input "
                "a test could pin down), so there is no knowledge band: P(success) is "
                f"{_fmt_prob(qs[1])}.")
    ci = "" if c_lo is None else f" ({confidence * 100:g} % CI {_fmt_prob(c_lo)} to {_fmt_prob(c_hi)})"
    return (
        f"P(success) is at least {_fmt_prob(p_star)} with {_fmt_prob(cred)} credibility{ci} over "
        f"what we don't yet know; over the knowledge inputs it spans {_fmt_prob(qs[0])} to "
        f"{_fmt_prob(qs[2])} (5th to 95th percentile, median {_fmt_prob(qs[1])}).")


def success_given(success, scores: np.ndarray, *, n_knots: int = 5) -> np.ndarray:
    """E[success | scores] at every sample: the logistic fit used for the band [-].

    Parameters
    ----------
    success : array_like of bool, shape (n,)
    scores : array (n, m)
        Normal scores (or a simulated test result in normal-score space).
    n_knots : int
    """
    y = _as_bool_1d(success, "success").astype(float)
    if y.min() == y.max():
        return y.copy()
    x = _design(np.asarray(scores, dtype=float), method="spline", n_knots=n_knots, degree=3)
    return _logistic_fit(x, y)[0]


def band_after_test(band_values: np.ndarray, test_scores: np.ndarray | None, *,
                    method: str = "spline", n_knots: int = 5, degree: int = 3) -> BandAfter:
    """The knowledge band expected after a test whose simulated results are ``test_scores``.

    Parameters
    ----------
    band_values : array (n,)
        P(success | knowledge) at every sample [-].
    test_scores : array (n, m) or None
        Simulated result of the test on the knowledge inputs it measures, in normal-score
        space (as for the value of information); None when it measures none of them.
    method, n_knots, degree
        Smoother, as in :func:`uq.decisions.evppi_regression`.

    Returns
    -------
    BandAfter

    Notes
    -----
    Law of total variance: Var(P_k) = E_t[Var(P_k | t)] + Var(E[P_k | t]). The expected
    variance left after the test is Var(P_k) minus the variance of the regression of P_k on
    the test result.
    """
    v = np.asarray(band_values, dtype=float)
    sd0 = float(v.std())
    mean = float(v.mean())
    if test_scores is None or sd0 == 0.0:
        lo, hi = np.quantile(v, [0.05, 0.95])
        return BandAfter(sd0, sd0, 0.0, float(lo), float(hi))
    x = _design(np.asarray(test_scores, dtype=float), method=method, n_knots=n_knots, degree=degree)
    fitted = _fitted_incremental(x, np.column_stack([np.zeros_like(v), v]))[:, 1]
    resid = v - fitted
    sd1 = float(min(resid.std(), sd0))
    lo, hi = np.quantile(resid, [0.05, 0.95])
    return BandAfter(sd0, sd1, float(1.0 - (sd1 / sd0) ** 2), float(np.clip(mean + lo, 0, 1)),
                     float(np.clip(mean + hi, 0, 1)))
