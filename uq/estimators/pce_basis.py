"""The orthonormal basis of a polynomial chaos expansion and its least-squares solver.

One family of 1-D orthonormal polynomials per independent marginal, from the three-term
recurrence coefficients chaospy computes (``chaospy.stieltjes``) and evaluated by the
orthonormal recurrence (Gautschi 2004), multi-indices by hyperbolic truncation (Blatman &
Sudret 2011), and ordinary least squares with the closed-form leave-one-out residuals.
:mod:`uq.estimators.pce` builds the degree scan, the surrogate and its indices on these.

References
----------
.. [1] Blatman, G. & Sudret, B. (2011). Adaptive sparse polynomial chaos expansion based on
   least angle regression. J. Comput. Phys. 230:2345-2367.
.. [2] Gautschi, W. (2004). Orthogonal Polynomials: Computation and Approximation. Oxford
   University Press (three-term recurrence).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import NamedTuple

import chaospy
import numpoly
import numpy as np

from uq.errors import InputError

__all__ = ["PolynomialChaosInputError", "LeastSquaresFit", "hyperbolic_multi_indices",
           "least_squares_with_loo"]


class PolynomialChaosInputError(InputError):
    """Distributions, samples, outputs or options are malformed."""


# --------------------------------------------------------------------------
# Basis
# --------------------------------------------------------------------------
def hyperbolic_multi_indices(dimensions: int, degree: int, *, q_norm: float = 1.0) -> np.ndarray:
    """Multi-indices of a hyperbolic-truncated total-degree basis.

    Parameters
    ----------
    dimensions : int
        Number of inputs d (>= 1).
    degree : int
        Maximal total degree p (>= 0).
    q_norm : float, optional
        q in (0, 1]; keeps a with ``(sum_j a_j^q)^(1/q) <= p``.  q = 1 is the
        full total-degree set.

    Returns
    -------
    ndarray of int, shape (n_terms, d)
        Graded order; the first row is all zeros (the constant term).
    """
    if isinstance(dimensions, bool) or not isinstance(dimensions, (int, np.integer)) or dimensions < 1:
        raise PolynomialChaosInputError(f"dimensions must be an integer >= 1, got {dimensions!r}")
    if isinstance(degree, bool) or not isinstance(degree, (int, np.integer)) or degree < 0:
        raise PolynomialChaosInputError(f"degree must be an integer >= 0, got {degree!r}")
    if not (isinstance(q_norm, (int, float)) and 0.0 < float(q_norm) <= 1.0):
        raise PolynomialChaosInputError(f"q_norm must be in (0, 1], got {q_norm!r}")
    if degree == 0:
        return np.zeros((1, int(dimensions)), dtype=int)
    idx = numpoly.glexindex(
        start=0,
        stop=int(degree) + 1,
        dimensions=int(dimensions),
        cross_truncation=float(q_norm),
        graded=True,
    )
    return np.ascontiguousarray(idx, dtype=int)


_RECURRENCES: dict[tuple[str, str, int], np.ndarray] = {}
_RECURRENCES_KEPT = 256


def _recurrence(distribution: chaospy.Distribution, degree: int) -> np.ndarray:
    """Three-term recurrence coefficients (alpha_k, beta_k), k = 0..degree.

    Kept per distribution (its class and repr, which spells every parameter in full) and
    degree: chaospy takes 20-40 ms per call, and an assessment on unit variables asks for the
    same uniform marginal once per input (sweeps and studies, once per variant).
    """
    key = (type(distribution).__qualname__, repr(distribution), int(degree))
    coeffs = _RECURRENCES.get(key)
    if coeffs is None:
        coeffs = _new_recurrence(distribution, int(degree))
        if len(_RECURRENCES) >= _RECURRENCES_KEPT:
            _RECURRENCES.clear()
        _RECURRENCES[key] = coeffs
    return coeffs


def _new_recurrence(distribution: chaospy.Distribution, degree: int) -> np.ndarray:
    (alpha, beta), _, _ = chaospy.stieltjes(int(degree), distribution)
    coeffs = np.stack([np.asarray(alpha, float)[0], np.asarray(beta, float)[0]])
    if not np.all(np.isfinite(coeffs)) or np.any(coeffs[1, 1:] <= 0):
        raise PolynomialChaosInputError(
            f"could not build orthonormal polynomials up to degree {degree} for "
            f"{distribution}: recurrence coefficients are not finite/positive"
        )
    coeffs.setflags(write=False)
    return coeffs


def _orthonormal_values(x: np.ndarray, coeffs: np.ndarray, degree: int) -> np.ndarray:
    """Orthonormal polynomials p_0..p_degree at x, shape (degree + 1, n).

    sqrt(b_{k+1}) p_{k+1} = (x - a_k) p_k - sqrt(b_k) p_{k-1}, p_0 = 1/sqrt(b_0).
    """
    alpha, beta = coeffs
    out = np.empty((degree + 1, x.shape[0]))
    out[0] = 1.0 / math.sqrt(beta[0])
    if degree >= 1:
        out[1] = (x - alpha[0]) * out[0] / math.sqrt(beta[1])
    for k in range(1, degree):
        out[k + 1] = ((x - alpha[k]) * out[k] - math.sqrt(beta[k]) * out[k - 1]) / math.sqrt(
            beta[k + 1]
        )
    return out


def _design_matrix(values: Sequence[np.ndarray], multi_indices: np.ndarray) -> np.ndarray:
    """Psi[i, t] = prod_j values[j][a_tj, i], shape (n, n_terms)."""
    psi = values[0][multi_indices[:, 0]]
    for j in range(1, len(values)):
        psi = psi * values[j][multi_indices[:, j]]
    return psi.T


# --------------------------------------------------------------------------
# Least squares with closed-form leave-one-out
# --------------------------------------------------------------------------
class LeastSquaresFit(NamedTuple):
    """Ordinary least-squares fit with leave-one-out residuals."""

    coefficients: np.ndarray  #: (n_terms,)
    residuals: np.ndarray  #: y - Psi c, (n,)
    loo_residuals: np.ndarray  #: r_i / (1 - h_ii), (n,); inf where h_ii ~ 1
    leverage: np.ndarray  #: hat-matrix diagonal h_ii, (n,)
    rank: int  #: numerical rank of Psi


def least_squares_with_loo(design_matrix: np.ndarray, outputs: np.ndarray) -> LeastSquaresFit:
    """Least-squares coefficients and closed-form leave-one-out residuals.

    Parameters
    ----------
    design_matrix : array_like, shape (n, m)
        Regressors Psi evaluated at the n samples.
    outputs : array_like, shape (n,)
        Responses y.

    Returns
    -------
    LeastSquaresFit

    Notes
    -----
    For the least-squares fit, the prediction error at sample i of the model
    refitted without sample i is ``e_i = r_i / (1 - h_ii)``, with ``r`` the
    full-fit residuals and ``h = diag(Psi (Psi^T Psi)^-1 Psi^T)`` (Blatman &
    Sudret 2011, Eq. 12; a classical regression identity).  The leverage is
    computed from a thin QR factorisation, ``h_ii = sum_k Q_ik^2``.  Valid
    when Psi has full column rank; check ``rank``.
    """
    psi = np.asarray(design_matrix, dtype=float)
    y = np.asarray(outputs, dtype=float)
    if psi.ndim != 2 or y.ndim != 1 or psi.shape[0] != y.shape[0]:
        raise PolynomialChaosInputError(
            f"design_matrix must be (n, m) and outputs (n,), got {psi.shape} and {y.shape}"
        )
    coefficients, _, rank, _ = np.linalg.lstsq(psi, y, rcond=None)
    residuals = y - psi @ coefficients
    q, _ = np.linalg.qr(psi, mode="reduced")
    leverage = np.einsum("ij,ij->i", q, q)
    denom = 1.0 - leverage
    with np.errstate(divide="ignore", invalid="ignore"):
        loo = np.where(denom > 1e-12, residuals / np.where(denom > 1e-12, denom, 1.0), np.inf)
    return LeastSquaresFit(coefficients, residuals, loo, leverage, int(rank))


# --------------------------------------------------------------------------
# Samples, outputs and marginals the basis is evaluated on
# --------------------------------------------------------------------------
def _as_samples(samples, d: int, what: str) -> np.ndarray:
    x = np.asarray(samples, dtype=float)
    if x.ndim == 1 and d == 1:
        x = x[:, None]
    if x.ndim != 2 or x.shape[1] != d:
        raise PolynomialChaosInputError(
            f"{what} must have shape (n, {d}) (one column per distribution), got {x.shape}"
        )
    if not np.all(np.isfinite(x)):
        raise PolynomialChaosInputError(f"{what} contains NaN or inf")
    return x


def _as_outputs(outputs, n: int, what: str) -> np.ndarray:
    y = np.asarray(outputs)
    if y.dtype == bool:
        y = y.astype(float)
    y = np.asarray(y, dtype=float)
    if y.ndim != 1 or y.shape[0] != n:
        raise PolynomialChaosInputError(f"{what} must have shape ({n},), got {y.shape}")
    if not np.all(np.isfinite(y)):
        raise PolynomialChaosInputError(
            f"{what} contains NaN or inf; map failure modes to finite values or fit "
            "the surrogate on the finite subset"
        )
    return y


def _check_distributions(distributions) -> tuple:
    if isinstance(distributions, chaospy.Distribution):
        raise PolynomialChaosInputError(
            "distributions must be a sequence of 1-D chaospy marginals (one per input), "
            f"got a single distribution {distributions}"
        )
    dists = tuple(distributions)
    if not dists:
        raise PolynomialChaosInputError("distributions must contain at least one marginal")
    for j, dist in enumerate(dists):
        if not isinstance(dist, chaospy.Distribution) or len(dist) != 1:
            raise PolynomialChaosInputError(
                f"distributions[{j}] must be a 1-D chaospy.Distribution, got {dist!r}"
            )
    return dists
