"""Fast quantile function of a beta (and so PERT) marginal: a table in the normal score and one
Newton step.

Sampling turns uniform numbers into input values through each marginal's quantile function;
for the beta family scipy's ``ppf`` (the inverse regularized incomplete beta function) is an
iterative root search per value and dominates the cost of a large plan. :class:`BetaQuantile`
gives the same values to about 1e-12 in probability for a fraction of the cost.

References
----------
.. [1] Abramowitz, M. & Stegun, I. A. (1964). Handbook of Mathematical Functions, 26.5
   (the incomplete beta function I_x(a, b)).
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = ["BetaQuantile"]


class BetaQuantile:
    """Quantile function of Beta(a, b) on [low, high] for a, b >= 1, by table and Newton.

    The inverse regularized incomplete beta function (what ``scipy.stats.beta.ppf`` runs) is an
    iterative root search per value; the forward function ``scipy.special.betainc`` costs about
    a fifth of it. So the quantile is tabulated once at ``knots`` points uniform in the normal
    score z = Phi^-1(u) (which spreads the knots into both tails down to u = 2^-53), read by a
    cubic Hermite interpolant in z (slopes dx/dz = phi(z) / f(x)), and polished by one Newton
    step on I_x(a, b) - u = 0, kept inside the bracket of the two neighbouring knots. Measured
    agreement: |I_x(a, b) - u| <= 1e-12 for PERT shapes (``tests/uq/scenario``); a and b below 1
    (infinite density at an end) are left to scipy.

    Parameters
    ----------
    a, b : float
        Shape parameters, >= 1 [-].
    low, high : float
        Support [unit of the field].
    knots : int, default 1025
    """

    _Z_MAX = 8.3  # Phi(-8.3) ~ 5e-17 < 2^-53, the sampling transform's clip

    def __init__(self, a: float, b: float, low: float, high: float, *, knots: int = 1025) -> None:
        self.a, self.b, self.low, self.span = float(a), float(b), float(low), float(high - low)
        self._log_norm = float(special.betaln(a, b))
        z = np.linspace(-self._Z_MAX, self._Z_MAX, knots)
        x = special.betaincinv(a, b, special.ndtr(z))
        self._z0, self._dz = float(z[0]), float(z[1] - z[0])
        self._x = x
        density = self._density(x)
        phi = np.exp(-0.5 * z * z) / math.sqrt(2.0 * math.pi)
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = np.where(density > 0, phi / density, 0.0)
        self._slope = slope * self._dz  # Hermite tangents in units of one knot interval

    def _density(self, x: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            log_f = ((self.a - 1.0) * np.log(x) + (self.b - 1.0) * np.log1p(-x) - self._log_norm)
        return np.where((x > 0) & (x < 1), np.exp(log_f), 0.0)

    def __call__(self, u: np.ndarray) -> np.ndarray:
        u = np.asarray(u, dtype=float)
        z = special.ndtri(np.clip(u, 0.0, 1.0))
        t = (np.clip(z, -self._Z_MAX, self._Z_MAX) - self._z0) / self._dz
        k = np.minimum(t.astype(np.intp), self._x.size - 2)
        s = t - k
        x0, x1 = self._x[k], self._x[k + 1]
        m0, m1 = self._slope[k], self._slope[k + 1]
        s2, s3 = s * s, s * s * s
        x = ((2 * s3 - 3 * s2 + 1) * x0 + (s3 - 2 * s2 + s) * m0
             + (-2 * s3 + 3 * s2) * x1 + (s3 - s2) * m1)
        # one Newton step on I_x(a, b) = u, kept inside the knots' bracket [x0, x1]
        density = self._density(x)
        residual = special.betainc(self.a, self.b, np.clip(x, 0.0, 1.0)) - u
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(density > 0, residual / density, 0.0)
        x = np.clip(x - step, x0, x1)
        x = np.where(u <= 0.0, 0.0, np.where(u >= 1.0, 1.0, x))
        x = np.where(np.isnan(u), np.nan, x)
        return self.low + self.span * x
