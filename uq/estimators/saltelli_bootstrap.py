"""First- and total-order Sobol' estimates with their bootstrap, for all factors at once.

The estimators are those of ``SALib.analyze.sobol`` (version 1.5/1.6), written out so that
the bootstrap does not redo per factor what is common to every factor:

* output normalised as ``Y = (y - mean y) / std y``;
* rows split into A, B and the D columns AB_j of the Saltelli (2010) layout (row i of the
  design is ``[A_i, AB_i1 ... AB_iD, B_i]`` when there are no second-order rows);
* first order ``S_j = mean(B (AB_j - A)) / var([A; B])`` (Saltelli et al. 2010, eq. (b) of
  table 2), total order ``T_j = mean((A - AB_j)^2) / 2 / var([A; B])`` (Jansen 1999);
* ``R`` resamples of the N base rows drawn as ``rng.integers(N, size=(N, R))`` (the same
  draw SALib makes from the same generator), the half width ``z_{(1+c)/2}`` times the
  resamples' standard deviation (ddof 1).

SALib evaluates the bootstrap factor by factor on gathered ``(N, R)`` copies of A, B and
AB_j, and recomputes the pooled variance of A and B for every factor and both orders. Here a
resample is a row of counts ``C[k, i]`` (how often base row i is drawn in resample k), so the
means of every resample and every factor are one matrix product ``C @ F / N`` with
``F[:, j] = B (AB_j - A)`` (or ``(A - AB_j)^2 / 2``), and the pooled variance is computed
once per resample. Same estimates and intervals as SALib to rounding
(``tests/uq/estimators/test_saltelli_bootstrap.py`` compares them with SALib directly).
"""
from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy.stats import norm

__all__ = ["SaltelliEstimates", "first_total_with_bootstrap"]

_EPS = np.finfo(float).eps
_RESAMPLES_PER_BLOCK = 64  # count matrix of 64 x N doubles per product: cache-sized


class SaltelliEstimates(NamedTuple):
    """Point estimates and bootstrap half widths, one entry per factor (or group)."""

    first: np.ndarray
    first_half_width: np.ndarray
    total: np.ndarray
    total_half_width: np.ndarray


def first_total_with_bootstrap(y: np.ndarray, n_factors: int, *, n_resamples: int,
                               confidence: float, rng: np.random.Generator
                               ) -> SaltelliEstimates:
    """First/total-order indices of one output on a Saltelli design without second-order rows.

    ``y`` is the output in design row order, length ``N (D + 2)``; ``rng`` draws the
    resamples (consumed exactly as SALib consumes the generator it is given).
    """
    d = int(n_factors)
    step = d + 2
    y = np.asarray(y, dtype=float)
    n = y.size // step
    std = y.std()
    z = (y - y.mean()) / std
    table = z.reshape(n, step)
    a, b, ab = table[:, 0], table[:, -1], table[:, 1:-1]
    # the indices on the full sample, with SALib's guard against a zero pooled variance
    pooled = np.concatenate([a, b])
    var = pooled.var()
    constant = np.ptp(pooled) <= _EPS
    first_terms = b[:, None] * (ab - a[:, None])
    total_terms = 0.5 * (a[:, None] - ab) ** 2
    first = _ratio(first_terms.mean(axis=0), var, constant)
    total = _ratio(total_terms.mean(axis=0), var, constant)

    draws = rng.integers(n, size=(n, n_resamples))
    first_boot = np.empty((n_resamples, d))
    total_boot = np.empty((n_resamples, d))
    moments = np.column_stack([a, b, a * a, b * b])
    for lo in range(0, n_resamples, _RESAMPLES_PER_BLOCK):
        hi = min(lo + _RESAMPLES_PER_BLOCK, n_resamples)
        counts = _counts(draws[:, lo:hi], n)
        m = counts @ moments / n  # mean a, mean b, mean a^2, mean b^2 of each resample
        mean = 0.5 * (m[:, 0] + m[:, 1])
        boot_var = 0.5 * (m[:, 2] + m[:, 3]) - mean * mean  # var([A; B]) of the resample
        ok = (boot_var > _EPS)[:, None]
        scale = np.where(ok, 1.0 / np.where(ok, boot_var[:, None], 1.0), 0.0)
        first_boot[lo:hi] = counts @ first_terms / n * scale
        total_boot[lo:hi] = counts @ total_terms / n * scale
    # SALib's guards on the bootstrap: the spread of A and B over every row drawn (zero
    # estimates when it is within machine epsilon, zero half widths when it is exactly 0)
    drawn = np.bincount(draws.ravel(), minlength=n) > 0
    spread = np.ptp(np.concatenate([a[drawn], b[drawn]]))
    z_c = norm.ppf(0.5 + confidence / 2.0)
    if spread <= _EPS:
        first_boot[:] = total_boot[:] = 0.0
    first_half = z_c * first_boot.std(axis=0, ddof=1) if spread != 0.0 else np.zeros(d)
    total_half = z_c * total_boot.std(axis=0, ddof=1) if spread != 0.0 else np.zeros(d)
    return SaltelliEstimates(first, first_half, total, total_half)


def _ratio(numerator: np.ndarray, var: float, constant: bool) -> np.ndarray:
    if constant or not var > _EPS:
        return np.zeros_like(numerator)
    return numerator / var


def _counts(draws: np.ndarray, n: int) -> np.ndarray:
    """``C[k, i]``: how many times base row i is drawn in resample k (columns of draws)."""
    n_res = draws.shape[1]
    keys = draws.T + (np.arange(n_res) * n)[:, None]
    return np.bincount(keys.ravel(), minlength=n_res * n).reshape(n_res, n).astype(float)
