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

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from scipy import special, stats

from uq.scenario.types import TestCandidate

from ._common import (
    DecisionInputError,
    OutOfRangeError,
    ShapeMismatchError,
    UnknownCodeError,
    _as_bool_1d,
    _check_confidence,
    _fmt_money,
    _fmt_prob,
    _fmt_prob_interval,
    _normal_scores,
    _ResultMixin,
    _rows_frame,
    _wilson,
    _z,
)

__all__ = [
    "NetBenefit",
    "ValueOfInformation",
    "FlipProbability",
    "TestCandidate",
    "TestRankingRow",
    "TestRanking",
    "PinnedRow",
    "PinnedInputProbabilities",
    "go_no_go_net_benefit",
    "evpi",
    "evppi_regression",
    "evsi_regression",
    "decision_flip_probability",
    "rank_tests",
    "pinned_input_probabilities",
    "VOI_BASIS",
    "SOBOL_BASIS",
]

VOI_BASIS = "expected value of information"
SOBOL_BASIS = "variance-based (no costs given): total Sobol index — not a monetary value"
_DEFAULT_UNIT = "net-benefit units"
_CROSS_PRODUCT_LIMIT = 20_000_000  # bootstrap cross-products kept in memory (<= 160 MB)


# =========================================================================== inputs
class NetBenefit(NamedTuple):
    """Per-sample net benefit of each option and the option names."""

    values: np.ndarray  # (n, k) [currency]
    option_names: tuple[str, ...]


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


def _as_net_benefit(net_benefit) -> np.ndarray:
    if isinstance(net_benefit, NetBenefit):
        net_benefit = net_benefit.values
    nb = np.asarray(net_benefit, dtype=float)
    if nb.ndim != 2 or nb.shape[1] < 2 or nb.shape[0] < 2:
        raise ShapeMismatchError(
            f"net_benefit has shape {nb.shape}: expected (n samples, k >= 2 options) with n >= 2"
        )
    if not np.all(np.isfinite(nb)):
        raise DecisionInputError("net_benefit contains non-finite values: expected finite amounts")
    return nb


def _option_names(option_names, k: int, net_benefit) -> tuple[str, ...]:
    if option_names is None and isinstance(net_benefit, NetBenefit):
        option_names = net_benefit.option_names
    if option_names is None:
        return tuple(f"option {j}" for j in range(k))
    names = tuple(str(x) for x in option_names)
    if len(names) != k:
        raise ShapeMismatchError(f"{len(names)} option_names for {k} options")
    return names


def _as_parameters(parameter, n: int) -> np.ndarray:
    p = np.asarray(parameter, dtype=float)
    if p.ndim == 1:
        p = p[:, None]
    if p.ndim != 2 or p.shape[0] != n:
        raise ShapeMismatchError(
            f"parameter has shape {np.shape(parameter)}: expected ({n},) or ({n}, d) to match net_benefit"
        )
    if not np.all(np.isfinite(p)):
        raise DecisionInputError("parameter contains non-finite values")
    return p


def _check_residual(r: float) -> float:
    r = float(r)
    if not 0.0 <= r <= 1.0:
        raise OutOfRangeError(
            f"residual_fraction={r!r}: expected posterior sd / prior sd in [0, 1] (0 = perfect test)"
        )
    return r


def _seed_of(rng) -> int | None:
    return int(rng) if isinstance(rng, (int, np.integer)) else None


# =========================================================================== regression
def _natural_spline_columns(x: np.ndarray, n_knots: int) -> np.ndarray:
    """Non-constant columns of a natural cubic spline basis on quantile knots.

    Truncated-power form (Hastie, Tibshirani & Friedman, Elements of Statistical Learning,
    2nd ed., Eqs. 5.4-5.5): N_1 = x, N_{k+1} = d_k - d_{K-1}, with
    d_k = [(x - xi_k)_+^3 - (x - xi_K)_+^3] / (xi_K - xi_k). Knots sit at the 5 %...95 %
    quantiles of x in equal probability steps; the fit is linear beyond the end knots.
    """
    knots = np.unique(np.quantile(x, np.linspace(0.05, 0.95, n_knots)))
    if knots.size < 2:
        return x[:, None] if np.ptp(x) > 0 else np.empty((x.size, 0))
    if knots.size == 2:
        return x[:, None]

    def d(k):
        return (np.maximum(x - knots[k], 0.0) ** 3 - np.maximum(x - knots[-1], 0.0) ** 3) / (
            knots[-1] - knots[k]
        )

    d_last = d(knots.size - 2)
    cols = [x] + [d(k) - d_last for k in range(knots.size - 2)]
    return np.column_stack(cols)


def _design(t: np.ndarray, *, method: str, n_knots: int, degree: int) -> np.ndarray:
    """Design matrix (intercept first) for the regression of net benefit on scores t (n, d)."""
    n, dim = t.shape
    if method == "spline":
        if n_knots < 3:
            raise OutOfRangeError(f"n_knots={n_knots!r}: expected at least 3")
        cols = [np.ones((n, 1))] + [_natural_spline_columns(t[:, j], n_knots) for j in range(dim)]
        if dim > 1:  # linear-by-linear interactions between the pinned inputs
            cols += [(t[:, i] * t[:, j])[:, None] for i, j in itertools.combinations(range(dim), 2)]
        return np.column_stack(cols)
    if method == "polynomial":
        if degree < 1:
            raise OutOfRangeError(f"degree={degree!r}: expected at least 1")
        # probabilists' Hermite polynomials He_0..He_degree of each score
        he = [[special.eval_hermitenorm(a, t[:, j]) for a in range(degree + 1)] for j in range(dim)]
        cols = []
        for alpha in itertools.product(range(degree + 1), repeat=dim):
            if sum(alpha) <= degree:
                c = np.ones(n)
                for j, a in enumerate(alpha):
                    if a:
                        c = c * he[j][a]
                cols.append(c)
        return np.column_stack(cols)
    raise DecisionInputError(f"method={method!r}: expected 'spline' or 'polynomial'")


def _fitted_incremental(x: np.ndarray, nb: np.ndarray) -> np.ndarray:
    """Least-squares fit of NB_j - NB_0 on the design; returns (n, k) with column 0 = 0."""
    inc = nb[:, 1:] - nb[:, :1]
    coef, *_ = np.linalg.lstsq(x, inc, rcond=None)
    return np.column_stack([np.zeros(nb.shape[0]), x @ coef])


def _bootstrap_values(x: np.ndarray, nb: np.ndarray, n_bootstrap: int, gen: np.random.Generator) -> np.ndarray:
    """Value of information on ``n_bootstrap`` row resamples (with replacement).

    A resample is represented by its multinomial row counts w, so each replicate is a
    weighted least-squares fit through the p x p normal equations (X' W X) c = X' W y on
    unit-scaled columns, without copying the design. The cross-products x_a x_b and
    x_a y are formed once, so a replicate costs one weighted column sum (``einsum``,
    single-threaded: tall-skinny BLAS calls thrash when the cores are busy).
    """
    n, p = x.shape
    scale = np.where(x.std(axis=0) > 0, x.std(axis=0), 1.0)
    xs = x / scale
    inc = nb[:, 1:] - nb[:, :1]
    ia, ib = np.triu_indices(p)
    n_cross = ia.size + p * inc.shape[1]
    precompute = n * n_cross <= _CROSS_PRODUCT_LIMIT
    if precompute:
        cross = np.concatenate(
            [xs[:, ia] * xs[:, ib], (xs[:, :, None] * inc[:, None, :]).reshape(n, -1)], axis=1
        )
    reps = np.empty(n_bootstrap)
    for b in range(n_bootstrap):  # loop over replicates, not samples
        w = np.bincount(gen.integers(0, n, n), minlength=n).astype(float)
        if precompute:
            sums = np.einsum("i,ij->j", w, cross)
            gram = np.empty((p, p))
            gram[ia, ib] = sums[: ia.size]
            gram[ib, ia] = sums[: ia.size]
            rhs = sums[ia.size :].reshape(p, -1)
        else:
            xw = xs * w[:, None]
            gram, rhs = xw.T @ xs, xw.T @ inc
        try:
            coef = np.linalg.solve(gram, rhs)
        except np.linalg.LinAlgError:
            coef = np.linalg.lstsq(gram, rhs, rcond=None)[0]
        f = np.einsum("ij,jk->ik", xs, coef)  # fitted NB_j - NB_0, j = 1..k-1
        best = np.maximum(f[:, 0] if f.shape[1] == 1 else f.max(axis=1), 0.0)
        reps[b] = float(np.einsum("i,i->", w, best)) / n - max(float(np.max(np.einsum("i,ij->j", w, f))) / n, 0.0)
    return reps


def _value_from_fitted(g: np.ndarray) -> float:
    return float(np.mean(np.max(g, axis=1)) - np.max(np.mean(g, axis=0)))


def _scores_for_test(params: np.ndarray, r: float, rng: np.random.Generator) -> np.ndarray:
    """Scores of the simulated test result: t = z + eps, eps ~ N(0, s^2), s^2 = r^2/(1-r^2).

    z is the rank-based normal score of each input (prior N(0, 1)). Normal-normal
    conjugacy: posterior variance of z given t is s^2 / (1 + s^2) = r^2, so the posterior
    sd is r times the prior sd. The result is re-scored by rank (a monotone map, which
    leaves E[NB | t] unchanged).
    """
    z = _normal_scores(params)
    if r == 0.0:
        return z
    s = r / math.sqrt(1.0 - r * r)
    return _normal_scores(z + s * rng.standard_normal(z.shape))


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
    ci = "" if lo is None else f", {confidence * 100:g} % CI {_fmt_money(lo)}–{_fmt_money(hi)} {currency}"
    clip = "" if raw >= 0 else f"; the regression estimate {_fmt_money(raw)} {currency} is reported as 0"
    return (
        f"{what} is worth {_fmt_money(value)} {currency} per decision ({kind}{ci}{clip}); "
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
) -> ValueOfInformation:
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
        t = _scores_for_test(params, r, gen)
        x = _design(t, method=method, n_knots=n_knots, degree=degree)
        g = _fitted_incremental(x, nb)
        raw = _value_from_fitted(g)
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
    n_knots: int = 5,
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
        Knots of the natural cubic spline (its degrees of freedom per input) [-].
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
    n_knots: int = 5,
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
    n_knots: int = 5,
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


# =========================================================================== test ranking
@dataclass(frozen=True)
class TestRankingRow:
    """One candidate test in the ranking. Money in [currency]; ``None`` where not computed."""

    __test__ = False

    rank: int
    name: str
    inputs: tuple[str, ...]
    residual_fraction: float
    cost: float
    value_kind: str | None  # "EVPPI", "EVSI" or None (variance-based fallback)
    value: float | None
    value_low: float | None
    value_high: float | None
    net_value: float | None
    net_value_low: float | None
    net_value_high: float | None
    flip_probability: float | None
    total_index: float | None  # sum of the inputs' total Sobol indices [-]


@dataclass(frozen=True)
class TestRanking(_ResultMixin):
    """Ranking of candidate tests.

    ``ranking_basis`` is :data:`VOI_BASIS` (rank by net value = value - cost, descending)
    or :data:`SOBOL_BASIS` (rank by the sum of the total Sobol indices of the inputs each
    test pins, descending; ties by lower cost). The Sobol fallback is an upper bound of
    the group's total index, a share of output variance, not money.
    """

    __test__ = False

    rows: tuple[TestRankingRow, ...]
    ranking_basis: str
    currency: str
    current_option: str | None
    confidence: float
    seed: int | None
    sentence: str

    def to_frame(self):
        """Ranking table, best first (pandas DataFrame)."""
        return _rows_frame(self.rows)


def rank_tests(
    tests: Sequence[TestCandidate],
    *,
    net_benefit,
    inputs: Mapping[str, np.ndarray],
    total_indices: Mapping[str, float] | None = None,
    currency: str = _DEFAULT_UNIT,
    option_names: Sequence[str] | None = None,
    method: str = "spline",
    n_knots: int = 5,
    degree: int = 3,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
    rng=None,
) -> TestRanking:
    """Rank candidate tests by expected net value of information (or, without money, by Sobol).

    Parameters
    ----------
    tests : sequence of TestCandidate
    net_benefit : array_like (n, k), NetBenefit or None
        Net benefit per sample and option [currency]; ``None`` when the scenario gives no
        values or costs (then ``total_indices`` is required).
    inputs : mapping str -> array (n,)
        Sampled inputs by name, rows matching ``net_benefit``.
    total_indices : mapping str -> float, optional
        Total Sobol index of each input [-]; shown beside the value, and the ranking key
        when ``net_benefit`` is None.
    currency : str
    option_names : sequence of str, optional
    method, n_knots, degree, n_bootstrap, confidence
        As in :func:`evppi_regression`. A test that measures several inputs is valued
        by one joint regression on all of them.
    rng : None, int or numpy.random.Generator
        Each test gets its own child stream (``Generator.spawn``, in list order) for its
        simulated test results and bootstrap.

    Returns
    -------
    TestRanking
    """
    confidence = _check_confidence(confidence)
    if not tests:
        raise DecisionInputError("tests is empty: expected at least one TestCandidate")
    for tc in tests:
        if not tc.cost >= 0:
            raise OutOfRangeError(f"test {tc.name!r}: cost={tc.cost!r}, expected >= 0")
        _check_residual(tc.residual_fraction)
        if not tc.inputs:
            raise DecisionInputError(f"test {tc.name!r} measures no inputs")
        unknown = [i for i in tc.inputs if i not in inputs]
        if net_benefit is not None and unknown:
            raise UnknownCodeError(f"test {tc.name!r} measures {unknown}, not in inputs {sorted(inputs)}")
    if total_indices is not None:
        missing = sorted({i for tc in tests for i in tc.inputs} - set(total_indices))
        if missing:
            raise UnknownCodeError(f"total_indices lacks {missing}")

    def st(tc):
        return None if total_indices is None else float(sum(total_indices[i] for i in tc.inputs))

    seed = _seed_of(rng)
    if net_benefit is None:
        if total_indices is None:
            raise DecisionInputError(
                "net_benefit is None and total_indices is None: expected money (net_benefit) or Sobol total indices to rank by"
            )
        order = sorted(tests, key=lambda tc: (-st(tc), tc.cost))
        rows = tuple(
            TestRankingRow(
                rank=i + 1, name=tc.name, inputs=tuple(tc.inputs), residual_fraction=float(tc.residual_fraction),
                cost=float(tc.cost), value_kind=None, value=None, value_low=None, value_high=None,
                net_value=None, net_value_low=None, net_value_high=None, flip_probability=None,
                total_index=st(tc),
            )
            for i, tc in enumerate(order)
        )
        best = rows[0]
        sentence = (
            f"No values or costs were given, so tests are ranked by the total Sobol index of the "
            f"inputs they measure (a share of output variance, not a monetary value): fund "
            f"'{best.name}' first (sum of total indices {best.total_index:.2f})."
        )
        return TestRanking(rows, SOBOL_BASIS, currency, None, confidence, seed, sentence)

    nb = _as_net_benefit(net_benefit)
    n = nb.shape[0]
    names = _option_names(option_names, nb.shape[1], net_benefit)
    children = np.random.default_rng(rng).spawn(len(tests))
    scored = []
    for tc, child in zip(tests, children):
        params = np.column_stack([np.asarray(inputs[i], dtype=float) for i in tc.inputs])
        if params.shape[0] != n:
            raise ShapeMismatchError(f"inputs for test {tc.name!r} have {params.shape[0]} rows, net_benefit {n}")
        v = _regression_voi(
            nb, params, residual_fraction=tc.residual_fraction, method=method, n_knots=n_knots,
            degree=degree, n_bootstrap=n_bootstrap, confidence=confidence, currency=currency,
            option_names=names, parameter_names=tc.inputs, rng=child,
        )
        scored.append((tc, v))
    scored.sort(key=lambda p: (-(p[1].value - p[0].cost), p[0].cost))
    rows = tuple(
        TestRankingRow(
            rank=i + 1, name=tc.name, inputs=tuple(tc.inputs), residual_fraction=float(tc.residual_fraction),
            cost=float(tc.cost), value_kind=v.kind, value=v.value, value_low=v.value_low,
            value_high=v.value_high, net_value=v.value - tc.cost,
            net_value_low=None if v.value_low is None else v.value_low - tc.cost,
            net_value_high=None if v.value_high is None else v.value_high - tc.cost,
            flip_probability=v.flip_probability, total_index=st(tc),
        )
        for i, (tc, v) in enumerate(scored)
    )
    best = rows[0]
    current = scored[0][1].current_option
    ci = "" if best.value_low is None else (
        f" ({confidence * 100:g} % CI {_fmt_money(best.value_low)}–{_fmt_money(best.value_high)} {currency})"
    )
    if best.net_value > 0:
        sentence = (
            f"Fund '{best.name}' first: its {best.value_kind} is {_fmt_money(best.value)} {currency} per "
            f"decision{ci} against a cost of {_fmt_money(best.cost)} {currency}, a net value of "
            f"{_fmt_money(best.net_value)} {currency}; it would change the current choice "
            f"'{current}' with probability {_fmt_prob(best.flip_probability)}."
        )
    else:
        sentence = (
            f"No candidate test is worth its cost: the best, '{best.name}', is worth "
            f"{_fmt_money(best.value)} {currency}{ci} against {_fmt_money(best.cost)} {currency}; "
            f"decide now ('{current}')."
        )
    return TestRanking(rows, VOI_BASIS, currency, current, confidence, seed, sentence)


# =========================================================================== pinned inputs
@dataclass(frozen=True)
class PinnedRow:
    """P(success) among samples whose input lies near one of its quantiles.

    ``parameter_low``/``parameter_high`` are the input values bounding the bin [input unit];
    probabilities [-] with Wilson intervals.
    """

    quantile: float
    parameter_low: float
    parameter_high: float
    samples_in_bin: int
    probability_of_success: float
    probability_low: float
    probability_high: float


@dataclass(frozen=True)
class PinnedInputProbabilities(_ResultMixin):
    """How much pinning one input moves P(success).

    Estimated by binning on rank: the samples whose input lies between its
    (q - half_width) and (q + half_width) sample quantiles (equivalently, a bin in the
    normal score), P(success) in the bin with a Wilson interval.
    """

    parameter_name: str
    unit: str
    half_width: float
    rows: tuple[PinnedRow, ...]
    probability_of_success: float
    probability_low: float
    probability_high: float
    confidence: float
    sentence: str

    def to_frame(self):
        """One row per pinned quantile (pandas DataFrame)."""
        return _rows_frame(self.rows)


def pinned_input_probabilities(
    success,
    parameter,
    *,
    quantiles: Sequence[float] = (0.1, 0.9),
    confidence: float = 0.95,
    half_width: float = 0.05,
    parameter_name: str = "the input",
    unit: str = "",
) -> PinnedInputProbabilities:
    """P(success | input near its q-quantile), for each q, by rank binning.

    Parameters
    ----------
    success : array_like of bool, shape (n,)
    parameter : array_like, shape (n,)
        Sampled input [unit].
    quantiles : sequence of float
        Quantiles of the input to pin it at [-].
    confidence : float
    half_width : float
        Half-width of each bin in probability [-] (0.05: a bin holding 10 % of samples).
    parameter_name, unit : str
        For the sentence.

    Returns
    -------
    PinnedInputProbabilities
    """
    confidence = _check_confidence(confidence)
    s = _as_bool_1d(success, "success")
    x = np.asarray(parameter, dtype=float)
    if x.shape != s.shape:
        raise ShapeMismatchError(f"parameter {x.shape} and success {s.shape}: expected the same shape")
    if not 0.0 < half_width <= 0.5:
        raise OutOfRangeError(f"half_width={half_width!r}: expected in (0, 0.5]")
    n = s.size
    u = (stats.rankdata(x, method="average") - 0.5) / n  # rank probability of each sample
    rows = []
    for q in quantiles:
        q = float(q)
        if not 0.0 < q < 1.0:
            raise OutOfRangeError(f"quantiles entry {q!r}: expected in (0, 1)")
        in_bin = (u >= q - half_width) & (u <= q + half_width)
        m = int(np.count_nonzero(in_bin))
        k = int(np.count_nonzero(s & in_bin))
        lo, hi = _wilson(k, m, confidence)
        rows.append(
            PinnedRow(
                quantile=q,
                parameter_low=float(x[in_bin].min()) if m else math.nan,
                parameter_high=float(x[in_bin].max()) if m else math.nan,
                samples_in_bin=m,
                probability_of_success=k / m if m else math.nan,
                probability_low=float(lo),
                probability_high=float(hi),
            )
        )
    k_all = int(np.count_nonzero(s))
    lo_all, hi_all = _wilson(k_all, n, confidence)
    pct = f"{confidence * 100:g} %"
    u_txt = f" {unit}" if unit else ""
    parts = [
        f"near its {r.quantile * 100:g}th percentile ({r.parameter_low:.4g} to {r.parameter_high:.4g}{u_txt}) "
        f"P(success) is {_fmt_prob(r.probability_of_success)} ({pct} CI "
        f"{_fmt_prob_interval(r.probability_low, r.probability_high)}, {r.samples_in_bin:,} samples)"
        for r in rows
    ]
    sentence = (
        f"Pinning {parameter_name}: " + "; ".join(parts)
        + f"; unpinned it is {_fmt_prob(k_all / n)} ({pct} CI {_fmt_prob_interval(float(lo_all), float(hi_all))})."
    )
    return PinnedInputProbabilities(
        parameter_name=parameter_name,
        unit=unit,
        half_width=float(half_width),
        rows=tuple(rows),
        probability_of_success=k_all / n,
        probability_low=float(lo_all),
        probability_high=float(hi_all),
        confidence=confidence,
        sentence=sentence,
    )
