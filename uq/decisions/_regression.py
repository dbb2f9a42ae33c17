"""Regression machinery shared by the value of information and the knowledge band.

The conditional expectation E[Y | inputs] is estimated by least squares of Y on a smooth basis
of the inputs' rank-based normal scores (Strong & Oakley 2013; Strong, Oakley & Brennan 2014),
on the existing sample: no model is re-run. A test's noisy result is simulated in normal-score
space (Strong, Oakley, Brennan & Breeze 2015).
"""

from __future__ import annotations

import itertools
import math
from typing import NamedTuple

import numpy as np
from scipy import special

from ._common import (
    DecisionInputError,
    OutOfRangeError,
    ShapeMismatchError,
    _normal_scores,
)

__all__: list[str] = []

_CROSS_PRODUCT_LIMIT = 20_000_000  # bootstrap cross-products kept in memory (<= 160 MB)
_REPLICATES_PER_PRODUCT = 16  # bootstrap replicates whose weighted sums are one product


class NetBenefit(NamedTuple):
    """Per-sample net benefit of each option and the option names."""

    values: np.ndarray  # (n, k) [currency]
    option_names: tuple[str, ...]


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
    # normal equations on unit-scaled columns, products by einsum (single-threaded: tall-skinny
    # BLAS calls thrash when the cores are busy)
    scale = np.where(x.std(axis=0) > 0, x.std(axis=0), 1.0)
    xs = x / scale
    gram = np.einsum("ij,ik->jk", xs, xs)
    coef = np.linalg.lstsq(gram, np.einsum("ij,ik->jk", xs, inc), rcond=None)[0]
    fitted = _within_range(np.einsum("ij,jk->ik", xs, coef), inc)
    return np.column_stack([np.zeros(nb.shape[0]), fitted])


def _within_range(fitted: np.ndarray, inc: np.ndarray) -> np.ndarray:
    """Clip fitted conditional means to the range of the values they average.

    E[Y | t] always lies between min Y and max Y; a spline extrapolated past its end knots
    can leave that range in the tails (e.g. promise a gain where every sample loses), which
    would show up as a small spurious value of information. Clipping is the projection onto
    the admissible set.
    """
    return np.clip(fitted, inc.min(axis=0), inc.max(axis=0))


def _bootstrap_values(x: np.ndarray, nb: np.ndarray, n_bootstrap: int, gen: np.random.Generator) -> np.ndarray:
    """Value of information on ``n_bootstrap`` row resamples (with replacement).

    A resample is represented by its multinomial row counts w, so each replicate is a
    weighted least-squares fit through the p x p normal equations (X' W X) c = X' W y on
    unit-scaled columns, without copying the design. The cross-products x_a x_b and
    x_a y are formed once, so the weighted column sums of a batch of replicates are one
    matrix product.
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
    # the resamples' row counts, drawn one replicate after another (a batch at a time, so at
    # most one batch of n-row weights is held); a batch's weighted column sums are one product
    for lo in range(0, n_bootstrap, _REPLICATES_PER_PRODUCT):
        weights = np.array([np.bincount(gen.integers(0, n, n), minlength=n)
                            for _ in range(min(_REPLICATES_PER_PRODUCT, n_bootstrap - lo))],
                           dtype=float)
        batch_sums = weights @ cross if precompute else None
        for b, w in enumerate(weights, start=lo):  # loop over replicates, not samples
            if precompute:
                sums = batch_sums[b - lo]
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
            f = _within_range(xs @ coef, inc)  # fitted NB_j - NB_0
            current = int(np.argmax(np.concatenate([[0.0], w @ inc])))
            reps[b] = _value_from_fitted(np.column_stack([np.zeros(n), f]), weights=w,
                                         current=current)
    return reps


def _value_from_fitted(g: np.ndarray, weights: np.ndarray | None = None,
                       current: int | None = None) -> float:
    """mean_i max_k (g_ik - g_i,c), c = ``current`` (default: largest (weighted) mean of g).

    Equal to mean_i max_k g_ik - max_k mean_i g_ik (least squares with an intercept keeps the
    fitted means equal to the sample means), but written as a mean of non-negative gains, so
    it is exactly 0 when no row would change the choice, instead of rounding noise.
    """
    n = g.shape[0]
    w = np.ones(n) if weights is None else weights
    if current is None:
        current = int(np.argmax(w @ g))
    # the row maximum column by column: exact, and several times faster than a reduction
    # along rows of a few columns
    base = g[:, current]
    gain = g[:, 0] - base
    for k in range(1, g.shape[1]):
        np.maximum(gain, g[:, k] - base, out=gain)
    return float(w @ gain) / float(np.sum(w))


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

