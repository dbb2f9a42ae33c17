"""Value of information: which uncertainty is worth paying to reduce, and which test to fund.

Net benefit arrives as an (n, k) array: one row per input sample, one column per decision
option (e.g. go / no-go), in a currency. Everything here is linear algebra on that array
and on the sampled inputs; no model is re-run.

References
----------
.. [1] Strong M., Oakley J. E. (2013) An efficient method for computing single-parameter
   partial expected value of perfect information. Med. Decis. Making 33(6):755-766.
.. [2] Strong M., Oakley J. E., Brennan A. (2014) Estimating multiparameter partial expected
   value of perfect information from a probabilistic sensitivity analysis sample: a
   nonparametric regression approach. Med. Decis. Making 34(3):311-326.
.. [3] Strong M., Oakley J. E., Brennan A., Breeze P. (2015) Estimating the expected value of
   sample information using the probabilistic sensitivity analysis sample: a fast,
   nonparametric regression-based method. Med. Decis. Making 35(5):570-583.
.. [4] Raiffa H., Schlaifer R. (1961) Applied Statistical Decision Theory. Harvard.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ._common import (
    DecisionInputError,
    ShapeMismatchError,
    OutOfRangeError,
    _as_bool_1d,
    _check_confidence,
    _fmt_prob,
    _fmt_prob_interval,
    _ResultMixin,
    _wilson,
    _z,
    format_money,
    format_money_interval,
)
from ._regression import (
    NetBenefit,
    _as_net_benefit,
    _as_parameters,
    _bootstrap_values,
    _check_residual,
    _design,
    _fitted_incremental,
    _option_names,
    _scores_for_test,
    _seed_of,
    _value_from_fitted,
)
from .outcomes import OutcomeClass

__all__ = [
    "NetBenefit",
    "ValueOfInformation",
    "FlipProbability",
    "go_no_go_net_benefit",
    "money_net_benefit",
    "evpi",
    "evppi_regression",
    "evsi_regression",
    "decision_flip_probability",
]

_DEFAULT_UNIT = "net-benefit units"


# =========================================================================== inputs
def go_no_go_net_benefit(
    success, *, value_of_success: float, cost_of_failure: float, cost_of_no_go: float
) -> NetBenefit:
    """Net benefit of deploying versus not deploying, per sample.

    Parameters
    ----------
    success : array_like of bool, shape (n,)
        Mission outcome per sample.
    value_of_success : float
        Value of a successful deployment [currency].
    cost_of_failure : float
        Loss when a deployment fails (vehicle, data, recovery) [currency].
    cost_of_no_go : float
        Cost of standing down (lost season, ship time) [currency].

    Returns
    -------
    NetBenefit
        ``values[:, 0] = value * s - cost_of_failure * (1 - s)`` (go) and
        ``values[:, 1] = -cost_of_no_go`` (no-go) [currency]; names ("go", "no-go").
    """
    s = _as_bool_1d(success, "success").astype(float)
    for name, v in (
        ("value_of_success", value_of_success),
        ("cost_of_failure", cost_of_failure),
        ("cost_of_no_go", cost_of_no_go),
    ):
        if not math.isfinite(float(v)):
            raise OutOfRangeError(f"{name}={v!r}: expected a finite amount")
    go = value_of_success * s - cost_of_failure * (1.0 - s)
    no_go = np.full_like(go, -float(cost_of_no_go))
    return NetBenefit(np.column_stack([go, no_go]), ("go", "no-go"))



def money_net_benefit(
    outcome_class,
    *,
    value_of_success: float,
    class_costs: Mapping[int, float],
    cost_of_no_go: float,
) -> NetBenefit:
    """Net benefit of go and no-go per sample in the scenario's own money, by outcome class.

    Parameters
    ----------
    outcome_class : array_like of int, shape (n,)
        :class:`uq.decisions.outcomes.OutcomeClass` code of each sample
        (from :func:`uq.decisions.outcomes.classify_outcomes`).
    value_of_success : float
        What a successful deployment is worth [currency].
    class_costs : mapping int -> float
        Net loss of a deployment that ends in each failure class [currency]; every failure
        class present in ``outcome_class`` must have one.
    cost_of_no_go : float
        Cost of standing down [currency].

    Returns
    -------
    NetBenefit
        ``values[:, 0]`` (go) = value of success for a success, minus the cost of the sample's
        class otherwise; ``values[:, 1]`` (no-go) = -cost_of_no_go. Names ("go", "no-go").
    """
    cls = np.asarray(outcome_class)
    if cls.ndim != 1 or cls.size < 1:
        raise DecisionInputError(f"outcome_class has shape {cls.shape}: expected a 1-D array of samples")
    amounts = {int(OutcomeClass.SUCCESS): float(value_of_success)}
    for code, cost in class_costs.items():
        if int(code) == OutcomeClass.SUCCESS:
            continue
        amounts[int(code)] = -float(cost)
    for name, v in [("value_of_success", value_of_success), ("cost_of_no_go", cost_of_no_go),
                    *((f"class_costs[{k}]", c) for k, c in class_costs.items())]:
        if not math.isfinite(float(v)):
            raise OutOfRangeError(f"{name}={v!r}: expected a finite amount")
    present = {int(c) for c in np.unique(cls)}
    missing = sorted(present - set(amounts))
    if missing:
        raise DecisionInputError(f"class_costs lacks outcome classes {missing}: expected a cost for each failure class")
    table = np.zeros(max(amounts) + 1)
    for code, amount in amounts.items():
        table[code] = amount
    go = table[cls.astype(int)]
    no_go = np.full_like(go, -float(cost_of_no_go))
    return NetBenefit(np.column_stack([go, no_go]), ("go", "no-go"))


# =========================================================================== results
@dataclass(frozen=True)
class ValueOfInformation(_ResultMixin):
    """EVPI, EVPPI or EVSI of a decision.

    Attributes
    ----------
    kind : {"EVPI", "EVPPI", "EVSI"}
    value : float
        Expected value of information per decision, clipped at 0 [currency].
    value_raw : float
        The estimate before clipping (a regression estimate can dip below 0) [currency].
    value_low, value_high : float or None
        Interval bounds [currency] (EVPI: normal approximation; EVPPI/EVSI: bootstrap
        percentile over rows, ``None`` when ``n_bootstrap == 0``).
    confidence : float
    currency : str
    inputs : tuple of str
        Inputs learnt about (empty for EVPI: all of them).
    residual_fraction : float
        Posterior sd / prior sd in normal-score space after the test [-] (0 = perfect).
    samples : int
    current_option : str
        Option with the highest expected net benefit now.
    expected_net_benefit : tuple of float
        E[NB] per option [currency].
    flip_probability : float
        P(the option chosen after learning differs from ``current_option``) [-].
    method : str
    seed : int or None
    sentence : str
    """

    kind: str
    value: float
    value_raw: float
    value_low: float | None
    value_high: float | None
    confidence: float
    currency: str
    inputs: tuple[str, ...]
    residual_fraction: float
    samples: int
    current_option: str
    expected_net_benefit: tuple[float, ...]
    flip_probability: float
    method: str
    seed: int | None
    sentence: str


@dataclass(frozen=True)
class FlipProbability(_ResultMixin):
    """Probability that learning the inputs changes the optimal option.

    ``probability`` [-] with an approximate Wilson interval (it treats the per-sample
    indicators as independent and the regression fit as exact).
    """

    probability: float
    probability_low: float
    probability_high: float
    confidence: float
    current_option: str
    inputs: tuple[str, ...]
    residual_fraction: float
    sentence: str


def _voi_sentence(kind, value, raw, lo, hi, confidence, currency, inputs, r, current, flip):
    what = {
        "EVPI": "Perfect knowledge of all inputs",
        "EVPPI": f"Perfect knowledge of {', '.join(inputs)}",
        "EVSI": f"A test on {', '.join(inputs)} leaving {r * 100:g} % of the prior sd",
    }[kind]
    ci = "" if lo is None else f", {confidence * 100:g} % CI {format_money_interval(lo, hi, currency)}"
    clip = "" if raw >= 0 else f"; the regression estimate {format_money(raw, currency)} is reported as 0"
    return (
        f"{what} is worth {format_money(value, currency)} per decision ({kind}{ci}{clip}); "
        f"it would change the current choice '{current}' in {_fmt_prob(flip)} of cases."
    )


def _regression_voi(
    net_benefit,
    parameter,
    *,
    residual_fraction,
    method,
    n_knots,
    degree,
    n_bootstrap,
    confidence,
    currency,
    option_names,
    parameter_names,
    rng,
    scores: np.ndarray | None = None,
) -> ValueOfInformation:
    """EVPPI/EVSI by regression; ``scores`` (n, d) reuses an already simulated test result."""
    nb = _as_net_benefit(net_benefit)
    n, k = nb.shape
    names = _option_names(option_names, k, net_benefit)
    params = _as_parameters(parameter, n)
    r = _check_residual(residual_fraction)
    confidence = _check_confidence(confidence)
    if n_bootstrap < 0:
        raise OutOfRangeError(f"n_bootstrap={n_bootstrap!r}: expected >= 0")
    if parameter_names is None:
        parameter_names = tuple(f"input {j}" for j in range(params.shape[1]))
    inputs = tuple(str(s) for s in parameter_names)
    if len(inputs) != params.shape[1]:
        raise ShapeMismatchError(f"{len(inputs)} parameter_names for {params.shape[1]} parameter columns")
    seed = _seed_of(rng)
    gen = np.random.default_rng(rng)
    kind = "EVPPI" if r == 0.0 else "EVSI"
    means = nb.mean(axis=0)
    current = int(np.argmax(means))
    desc = f"{method} regression on normal scores" + (
        f" ({n_knots} knots)" if method == "spline" else f" (degree {degree})"
    )

    if r == 1.0:  # the test result carries no information
        raw, lo, hi, flip = 0.0, (0.0 if n_bootstrap else None), (0.0 if n_bootstrap else None), 0.0
    else:
        t = _scores_for_test(params, r, gen) if scores is None else scores
        x = _design(t, method=method, n_knots=n_knots, degree=degree)
        g = _fitted_incremental(x, nb)
        raw = _value_from_fitted(g, current=current)
        flip = float(np.mean(np.argmax(g, axis=1) != current))
        lo = hi = None
        if n_bootstrap:
            reps = _bootstrap_values(x, nb, n_bootstrap, gen)
            alpha = 1.0 - confidence
            lo, hi = (float(v) for v in np.quantile(reps, [alpha / 2.0, 1.0 - alpha / 2.0]))
    value = max(raw, 0.0)
    sentence = _voi_sentence(kind, value, raw, lo, hi, confidence, currency, inputs, r, names[current], flip)
    return ValueOfInformation(
        kind=kind,
        value=value,
        value_raw=raw,
        value_low=lo,
        value_high=hi,
        confidence=confidence,
        currency=currency,
        inputs=inputs,
        residual_fraction=r,
        samples=n,
        current_option=names[current],
        expected_net_benefit=tuple(float(m) for m in means),
        flip_probability=flip,
        method=desc,
        seed=seed,
        sentence=sentence,
    )


# =========================================================================== public
def evpi(
    net_benefit,
    *,
    confidence: float = 0.95,
    currency: str = _DEFAULT_UNIT,
    option_names: Sequence[str] | None = None,
) -> ValueOfInformation:
    """Expected value of perfect information, E[max_k NB] - max_k E[NB].

    Parameters
    ----------
    net_benefit : array_like, shape (n, k), or NetBenefit
        Net benefit per sample and option [currency].
    confidence : float
        Two-sided confidence level [-].
    currency : str
    option_names : sequence of str, optional

    Returns
    -------
    ValueOfInformation
        ``kind == "EVPI"``. The interval is the normal (delta-method) interval of the mean
        of the per-sample regret ``max_k NB_i - NB_i,k*`` with k* the current optimum; it
        treats k* as known.
    """
    nb = _as_net_benefit(net_benefit)
    n, k = nb.shape
    names = _option_names(option_names, k, net_benefit)
    confidence = _check_confidence(confidence)
    means = nb.mean(axis=0)
    current = int(np.argmax(means))
    regret = nb.max(axis=1) - nb[:, current]
    value = float(regret.mean())
    half = _z(confidence) * float(regret.std(ddof=1)) / math.sqrt(n)
    lo, hi = value - half, value + half
    flip = float(np.mean(np.argmax(nb, axis=1) != current))
    sentence = _voi_sentence("EVPI", value, value, lo, hi, confidence, currency, (), 0.0, names[current], flip)
    return ValueOfInformation(
        kind="EVPI",
        value=value,
        value_raw=value,
        value_low=lo,
        value_high=hi,
        confidence=confidence,
        currency=currency,
        inputs=(),
        residual_fraction=0.0,
        samples=n,
        current_option=names[current],
        expected_net_benefit=tuple(float(m) for m in means),
        flip_probability=flip,
        method="sample mean of per-sample regret",
        seed=None,
        sentence=sentence,
    )


def evppi_regression(
    net_benefit,
    parameter,
    *,
    method: str = "spline",
    n_knots: int = 7,
    degree: int = 3,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
    currency: str = _DEFAULT_UNIT,
    option_names: Sequence[str] | None = None,
    parameter_names: Sequence[str] | None = None,
    rng=None,
) -> ValueOfInformation:
    """Expected value of partial perfect information by regression ([1]_, [2]_).

    Parameters
    ----------
    net_benefit : array_like, shape (n, k), or NetBenefit
        Net benefit per sample and option [currency].
    parameter : array_like, shape (n,) or (n, d)
        The sampled input(s) learnt perfectly, same rows as ``net_benefit`` [their units].
    method : {"spline", "polynomial"}
        Smoother, see Notes.
    n_knots : int
        Knots of the natural cubic spline (its degrees of freedom per input) [-]. 7 by
        default: on a steep two-action probit case (tests/uq/decisions) 5 knots came out
        10 % low against quadrature, 7 knots within 1 %.
    degree : int
        Total degree of the Hermite polynomial for ``method="polynomial"`` [-].
    n_bootstrap : int
        Bootstrap replicates over rows for the interval (0: no interval) [-].
    confidence : float
    currency : str
    option_names, parameter_names : sequence of str, optional
    rng : None, int or numpy.random.Generator
        Seeds the bootstrap.

    Returns
    -------
    ValueOfInformation
        ``kind == "EVPPI"``; ``value_raw`` is the unclipped estimate.

    Notes
    -----
    EVPPI = E_theta[max_k E(NB_k | theta)] - max_k E[NB_k]. The incremental net benefit of
    each option against option 0 is regressed on the parameter, giving fitted
    g_k(theta_i) ~ E(NB_k - NB_0 | theta_i), and EVPPI ~ mean_i max_k g_k - max_k mean_i g_k
    (Eq. 5 of [1]_, with the regression in place of the inner expectation).

    Smoother: the parameter is replaced by its rank-based normal score, then a natural
    cubic regression spline with ``n_knots`` knots at equal-probability quantiles is fitted
    by ordinary least squares. Normal scores make the fit independent of the parameter's
    units or any monotone re-parametrisation (log pump efficiency gives the same answer)
    and spread the knots evenly in probability; the natural spline is linear beyond its end
    knots, so the few tail samples cannot swing the fit. Unpenalised least squares with a
    fixed, small number of degrees of freedom is deterministic and costs one ``lstsq``; its
    optimism (noise fitted as signal inflates EVPPI) grows like dof / n and is small for
    n >= a few thousand. [2]_ use a penalised GAM; this is its fixed-dof relative. For
    several parameters the basis is additive splines plus pairwise products of the
    scores; ``method="polynomial"`` uses a total-degree Hermite polynomial in the scores
    instead (a tensor basis that captures interactions of any order up to ``degree``).
    """
    return _regression_voi(
        net_benefit,
        parameter,
        residual_fraction=0.0,
        method=method,
        n_knots=n_knots,
        degree=degree,
        n_bootstrap=n_bootstrap,
        confidence=confidence,
        currency=currency,
        option_names=option_names,
        parameter_names=parameter_names,
        rng=rng,
    )


def evsi_regression(
    net_benefit,
    parameter,
    *,
    residual_fraction: float,
    rng=None,
    method: str = "spline",
    n_knots: int = 7,
    degree: int = 3,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
    currency: str = _DEFAULT_UNIT,
    option_names: Sequence[str] | None = None,
    parameter_names: Sequence[str] | None = None,
) -> ValueOfInformation:
    """Expected value of sample information of an imperfect test, by regression ([3]_).

    Parameters
    ----------
    net_benefit : array_like, shape (n, k), or NetBenefit
        Net benefit per sample and option [currency].
    parameter : array_like, shape (n,) or (n, d)
        Sampled input(s) the test measures [their units].
    residual_fraction : float
        r = posterior sd / prior sd of the input in normal-score space after the test [-];
        0 gives EVPPI, 1 gives 0.
    rng : None, int or numpy.random.Generator
        Seeds the simulated test results and the bootstrap.
    method, n_knots, degree, n_bootstrap, confidence, currency, option_names, parameter_names
        As in :func:`evppi_regression`.

    Returns
    -------
    ValueOfInformation
        ``kind == "EVSI"`` (or "EVPPI" when r = 0).

    Notes
    -----
    Pre-posterior analysis: each input's normal score z (prior N(0, 1)) is observed with
    noise, t = z + eps, eps ~ N(0, s^2), one simulated result per sample row. With
    s^2 = r^2 / (1 - r^2) the posterior variance is s^2 / (1 + s^2) = r^2 (normal-normal
    conjugacy). E[NB | t] is then estimated by regressing NB on t, and
    EVSI ~ mean_i max_k fitted - max_k mean_i fitted, exactly as for EVPPI.
    For NB linear in z the preposterior mean E[z | t] = t / (1 + s^2) has sd
    sqrt(1 - r^2), which is what the tests check against.
    """
    return _regression_voi(
        net_benefit,
        parameter,
        residual_fraction=residual_fraction,
        method=method,
        n_knots=n_knots,
        degree=degree,
        n_bootstrap=n_bootstrap,
        confidence=confidence,
        currency=currency,
        option_names=option_names,
        parameter_names=parameter_names,
        rng=rng,
    )


def decision_flip_probability(
    net_benefit,
    parameter,
    *,
    residual_fraction: float = 0.0,
    method: str = "spline",
    n_knots: int = 7,
    degree: int = 3,
    confidence: float = 0.95,
    option_names: Sequence[str] | None = None,
    parameter_names: Sequence[str] | None = None,
    rng=None,
) -> FlipProbability:
    """P(the optimal option after learning the input(s) differs from the current one).

    The fitted conditional expected net benefits (as in :func:`evsi_regression`) are
    compared per sample: mean_i [argmax_k fitted_ik != argmax_k mean NB_k].

    Parameters
    ----------
    net_benefit : array_like, shape (n, k), or NetBenefit [currency]
    parameter : array_like, shape (n,) or (n, d) [their units]
    residual_fraction : float
        Posterior sd / prior sd after the test [-] (0: perfect knowledge).
    method, n_knots, degree, confidence, option_names, parameter_names, rng
        As in :func:`evsi_regression`.

    Returns
    -------
    FlipProbability
    """
    res = _regression_voi(
        net_benefit,
        parameter,
        residual_fraction=residual_fraction,
        method=method,
        n_knots=n_knots,
        degree=degree,
        n_bootstrap=0,
        confidence=confidence,
        currency=_DEFAULT_UNIT,
        option_names=option_names,
        parameter_names=parameter_names,
        rng=rng,
    )
    n = res.samples
    lo, hi = _wilson(res.flip_probability * n, n, res.confidence)
    sentence = (
        f"Learning {', '.join(res.inputs)} would change the current choice '{res.current_option}' "
        f"with probability {_fmt_prob(res.flip_probability)} ({res.confidence * 100:g} % CI "
        f"{_fmt_prob_interval(float(lo), float(hi))})."
    )
    return FlipProbability(
        probability=res.flip_probability,
        probability_low=float(lo),
        probability_high=float(hi),
        confidence=res.confidence,
        current_option=res.current_option,
        inputs=res.inputs,
        residual_fraction=res.residual_fraction,
        sentence=sentence,
    )


