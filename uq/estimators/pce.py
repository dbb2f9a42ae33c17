"""Least-squares polynomial chaos surrogate and Sobol' indices from its coefficients.

A response ``y = f(x)`` of independent inputs ``x_1 .. x_d`` is expanded in
products of 1-D orthonormal polynomials, one family per marginal:

    f(x) ~ sum_a c_a Psi_a(x),   Psi_a(x) = prod_j p^{(j)}_{a_j}(x_j),

with ``E[p^{(j)}_k p^{(j)}_l] = delta_kl`` under marginal j.  The 1-D
families come from the three-term recurrence coefficients chaospy computes
for each marginal (``chaospy.stieltjes``: analytic where the distribution
has them, discretised Stieltjes otherwise) and are evaluated by the
orthonormal recurrence, which is better conditioned than expanded monomials
(the basis and the least-squares solver live in :mod:`uq.estimators.pce_basis`).

Multi-indices follow the hyperbolic (q-norm) truncation
``(sum_j a_j^q)^(1/q) <= p`` of Blatman & Sudret (2011) [2]_.  For each
candidate degree p the coefficients are fitted by ordinary least squares
(``numpy.linalg.lstsq``) provided the oversampling ratio n / n_terms is at
least `min_oversampling`; the degree with the smallest closed-form
leave-one-out error is kept.

Because the basis is orthonormal, mean, variance and Sobol' indices are
sums of squared coefficients (Sudret 2008 [1]_): no sampling needed.

Independence
------------
The basis is a tensor product of marginal families, so the inputs MUST be
independent.  For correlated physical inputs, fit the surrogate in the
independent space the input model maps from (e.g. the unit hypercube or
standard-normal coordinates of a copula) and pass the matching independent
distributions (``chaospy.Uniform(0, 1)`` or ``chaospy.Normal(0, 1)``).
The indices then refer to those independent coordinates.

References
----------
.. [1] Sudret, B. (2008). Global sensitivity analysis using polynomial chaos
   expansions. Reliab. Eng. Syst. Saf. 93(7):964-979.
.. [2] Blatman, G. & Sudret, B. (2011). Adaptive sparse polynomial chaos
   expansion based on least angle regression. J. Comput. Phys.
   230:2345-2367.
.. [3] Gautschi, W. (2004). Orthogonal Polynomials: Computation and
   Approximation. Oxford University Press (three-term recurrence).
"""

from __future__ import annotations

from uq.errors import InputError
from uq.estimators.intervals import InsufficientSamplesError
from uq.estimators.pce_basis import (LeastSquaresFit, PolynomialChaosInputError, _as_outputs,
                                     _as_samples, _check_distributions, _design_matrix,
                                     _orthonormal_values, _recurrence, hyperbolic_multi_indices,
                                     least_squares_with_loo)

import dataclasses
import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import NamedTuple

import chaospy
import numpoly
import numpy as np
import pandas as pd

__all__ = [
    "DegreeTrial",
    "InsufficientSamplesError",
    "LeastSquaresFit",
    "PolynomialChaos",
    "PolynomialChaosIndices",
    "PolynomialChaosInputError",
    "PolynomialChaosQualityError",
    "PolynomialChaosQualityWarning",
    "chaospy_reference_indices",
    "fit_polynomial_chaos",
    "hyperbolic_multi_indices",
    "least_squares_with_loo",
]

QUALITY_GOOD = "good"
QUALITY_POOR = "poor"


# --------------------------------------------------------------------------
# Errors and warnings
# --------------------------------------------------------------------------
class PolynomialChaosQualityError(InputError):
    """A caller refused a surrogate whose quality is "poor"."""


class PolynomialChaosQualityWarning(UserWarning):
    """A surrogate of "poor" quality is being used."""


# --------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------
class DegreeTrial(NamedTuple):
    """One candidate degree of the degree scan."""

    degree: int
    n_terms: int
    loo_error: float  #: normalised LOO error, NaN if not fitted
    outcome: str  #: "fitted", "too few samples" or "rank deficient"


def _readonly(a: np.ndarray, dtype=float) -> np.ndarray:
    a = np.array(a, dtype=dtype)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, eq=False)
class PolynomialChaosIndices:
    """Sobol' indices computed from PCE coefficients (Sudret 2008).

    Attributes
    ----------
    names : tuple of str
        Input names.
    first, total : ndarray, shape (d,)
        First-order and total indices [-].
    second : ndarray, shape (d, d)
        Second-order (pure pair interaction) indices, symmetric, zero diagonal.
    variance : float
        Surrogate variance [output units^2].
    status : str
        ``"ok"`` or ``"zero variance"`` (all indices reported as 0).
    quality : str
        Quality flag of the surrogate they come from.
    """

    names: tuple[str, ...]
    first: np.ndarray
    total: np.ndarray
    second: np.ndarray
    variance: float
    status: str
    quality: str

    def to_frame(self) -> pd.DataFrame:
        """First and total indices, one row per input."""
        frame = pd.DataFrame(
            {"first": self.first, "total": self.total},
            index=pd.Index(self.names, name="factor"),
        )
        frame.attrs.update(status=self.status, quality=self.quality, method="polynomial chaos")
        return frame


@dataclass(frozen=True, eq=False)
class PolynomialChaos:
    """A fitted orthonormal polynomial chaos surrogate.

    Attributes
    ----------
    names : tuple of str
        Input names.
    distributions : tuple of chaospy.Distribution
        Independent marginals the basis is orthonormal under.
    multi_indices : ndarray of int, shape (n_terms, d)
        Exponents of each basis term; row 0 is the constant.
    coefficients : ndarray, shape (n_terms,)
        Coefficients of the orthonormal basis [output units].
    degree : int
        Selected maximal degree p.
    q_norm : float
        Hyperbolic truncation parameter.
    loo_error : float
        Leave-one-out error ``mean(e_i^2) / var(y_train)`` [-].
    q2_holdout : float or None
        ``1 - mean((y - yhat)^2) / var(y)`` on the held-out samples; None
        without a holdout.
    quality : str
        ``"poor"`` if ``loo_error > loo_threshold`` or
        ``q2_holdout < q2_threshold``, else ``"good"``.
    loo_threshold, q2_threshold : float
        Thresholds used for `quality`.
    n_train, n_holdout : int
        Samples used for fitting and for Q^2.
    degree_scan : tuple of DegreeTrial
        Every degree tried and its outcome.
    seed : int
        Entropy of the holdout split seed.
    recurrence_coefficients : tuple of ndarray, each shape (2, degree + 1)
        Per input, the three-term recurrence coefficients (alpha_k, beta_k)
        that define its orthonormal family (together with `multi_indices`
        and `coefficients` they fully define the surrogate).
    """

    names: tuple[str, ...]
    distributions: tuple
    multi_indices: np.ndarray = field(repr=False)
    coefficients: np.ndarray = field(repr=False)
    degree: int
    q_norm: float
    loo_error: float
    q2_holdout: float | None
    quality: str
    loo_threshold: float
    q2_threshold: float
    n_train: int
    n_holdout: int
    degree_scan: tuple = field(repr=False)
    seed: object = field(repr=False, default=None)
    recurrence_coefficients: tuple = field(repr=False, default=())

    @property
    def n_terms(self) -> int:
        """Number of basis terms."""
        return int(self.multi_indices.shape[0])

    @property
    def mean(self) -> float:
        """Surrogate mean = coefficient of the constant term [output units]."""
        return float(self.coefficients[0])

    @property
    def variance(self) -> float:
        """Surrogate variance = sum of squared non-constant coefficients [units^2]."""
        return float(np.sum(self.coefficients[1:] ** 2))

    def basis_matrix(self, samples: np.ndarray) -> np.ndarray:
        """Basis terms at `samples` (n, d) [physical units] -> (n, n_terms)."""
        x = _as_samples(samples, len(self.names), "samples")
        values = [
            _orthonormal_values(x[:, j], self.recurrence_coefficients[j], self.degree)
            for j in range(x.shape[1])
        ]
        return _design_matrix(values, self.multi_indices)

    def predict(self, samples: np.ndarray) -> np.ndarray:
        """Surrogate output at `samples` (n, d) [physical units] -> (n,)."""
        return self.basis_matrix(samples) @ self.coefficients

    def sobol_indices(self) -> PolynomialChaosIndices:
        """First, total and second-order Sobol' indices from the coefficients.

        Notes
        -----
        With ``D = sum_{a != 0} c_a^2``: ``S_i = sum_{a in A_i} c_a^2 / D``
        where ``A_i`` holds the terms with a_i > 0 and all other exponents
        0; ``ST_i`` sums over all terms with a_i > 0; ``S_ij`` over terms
        whose non-zero exponents are exactly {i, j} (Sudret 2008, Eqs. 38-40).
        """
        active = self.multi_indices > 0
        c2 = self.coefficients ** 2
        n_active = active.sum(axis=1)
        d = len(self.names)
        variance = float(c2[n_active > 0].sum())
        if variance <= 0.0 or not np.isfinite(variance):
            zeros = np.zeros(d)
            return PolynomialChaosIndices(
                self.names, _readonly(zeros), _readonly(zeros), _readonly(np.zeros((d, d))),
                max(variance, 0.0), "zero variance", self.quality,
            )
        only = active & (n_active == 1)[:, None]
        first = (c2[:, None] * only).sum(axis=0) / variance
        total = (c2[:, None] * active).sum(axis=0) / variance
        pairs = active & (n_active == 2)[:, None]
        second = np.einsum("t,ti,tj->ij", c2, pairs.astype(float), pairs.astype(float)) / variance
        np.fill_diagonal(second, 0.0)
        return PolynomialChaosIndices(
            self.names, _readonly(first), _readonly(total), _readonly(second),
            variance, "ok", self.quality,
        )

    def check_quality(self, *, on_poor: str = "warn") -> "PolynomialChaos":
        """Warn about, refuse, or ignore a poor surrogate; returns self.

        Parameters
        ----------
        on_poor : {"warn", "raise", "ignore"}
            ``"warn"`` issues :class:`PolynomialChaosQualityWarning`,
            ``"raise"`` raises :class:`PolynomialChaosQualityError`.
        """
        if on_poor not in ("warn", "raise", "ignore"):
            raise PolynomialChaosInputError(
                f"on_poor must be 'warn', 'raise' or 'ignore', got {on_poor!r}"
            )
        if self.quality == QUALITY_POOR and on_poor != "ignore":
            q2 = "n/a" if self.q2_holdout is None else f"{self.q2_holdout:.3f}"
            msg = (
                f"polynomial chaos surrogate is poor: LOO error {self.loo_error:.3g} "
                f"(threshold {self.loo_threshold}), holdout Q2 {q2} "
                f"(threshold {self.q2_threshold}), degree {self.degree}, "
                f"{self.n_train} training samples"
            )
            if on_poor == "raise":
                raise PolynomialChaosQualityError(msg)
            warnings.warn(msg, PolynomialChaosQualityWarning, stacklevel=2)
        return self


# --------------------------------------------------------------------------
# Fitting
# --------------------------------------------------------------------------
def _q2(y: np.ndarray, yhat: np.ndarray) -> float:
    var = float(np.var(y))
    mse = float(np.mean((y - yhat) ** 2))
    if var == 0.0:
        return 1.0 if mse == 0.0 else -math.inf
    return 1.0 - mse / var


def fit_polynomial_chaos(
    distributions: Sequence[chaospy.Distribution],
    samples: np.ndarray,
    outputs: np.ndarray,
    *,
    max_degree: int = 8,
    q_norm: float = 0.75,
    min_oversampling: float = 2.0,
    holdout_fraction: float = 0.2,
    holdout: tuple[np.ndarray, np.ndarray] | None = None,
    seed: int | np.random.Generator | None,
    names: Sequence[str] | None = None,
    loo_threshold: float = 0.05,
    q2_threshold: float = 0.9,
    patience: int = 2,
) -> PolynomialChaos:
    """Fit an orthonormal polynomial chaos expansion by least squares.

    Parameters
    ----------
    distributions : sequence of chaospy.Distribution
        Independent 1-D marginals, one per column of `samples`.
    samples : array_like, shape (n, d)
        Inputs in the marginals' own (physical) units.
    outputs : array_like, shape (n,)
        Model responses [any units].  0/1 indicators are accepted but are
        usually poorly represented by polynomials (expect "poor").
    max_degree : int, optional
        Largest total degree tried (degrees 1..max_degree).
    q_norm : float, optional
        Hyperbolic truncation q in (0, 1].
    min_oversampling : float, optional
        Degrees with ``n_train < min_oversampling * n_terms`` are skipped.
    holdout_fraction : float, optional
        Fraction of `samples` held out (random split) for Q^2; 0 for none.
        Ignored when `holdout` is given.
    holdout : (array_like (m, d), array_like (m,)), optional
        Separate validation set; all of `samples` is then used for fitting.
    seed : int, Generator or None
        Seed of the holdout split.
    names : sequence of str, optional
        Input names (default ``x0 .. x{d-1}``).
    loo_threshold, q2_threshold : float, optional
        ``quality = "poor"`` if LOO error > `loo_threshold` or holdout Q^2 <
        `q2_threshold`.  Defaults 0.05 / 0.9: common practice, no source.
    patience : int, optional
        Stop the degree scan after this many fitted degrees in a row that do
        not improve the LOO error.

    Returns
    -------
    PolynomialChaos

    Raises
    ------
    PolynomialChaosInputError
        Malformed inputs or options.
    InsufficientSamplesError
        If no degree >= 1 satisfies the oversampling rule.

    Notes
    -----
    The LOO error is ``mean_i e_i^2 / var(y_train)`` (ddof = 0) with
    ``e_i = r_i / (1 - h_ii)`` (Blatman & Sudret 2011); no small-sample
    correction factor is applied.  The inputs must be independent (see the
    module notes for correlated inputs).
    """
    dists, x, y, names_t, seed_seq = _fit_inputs(
        distributions, samples, outputs, names=names, max_degree=max_degree,
        min_oversampling=min_oversampling, patience=patience,
        holdout_fraction=holdout_fraction, seed=seed)
    d = len(dists)
    max_degree = int(max_degree)
    x_train, y_train, x_hold, y_hold = _holdout_split(x, y, holdout, holdout_fraction, seed_seq)
    n_train = x_train.shape[0]
    recurrences = tuple(_recurrence(dist, max_degree) for dist in dists)
    var_train = float(np.var(y_train))
    common = dict(
        names=names_t,
        distributions=dists,
        q_norm=float(q_norm),
        loo_threshold=float(loo_threshold),
        q2_threshold=float(q2_threshold),
        n_train=n_train,
        n_holdout=0 if x_hold is None else x_hold.shape[0],
        seed=seed_seq.entropy,
    )
    if var_train == 0.0:
        # Constant response: the expansion is its constant term.
        model = PolynomialChaos(
            multi_indices=_readonly(np.zeros((1, d), dtype=int), int),
            coefficients=_readonly([y_train[0]]), degree=0, loo_error=0.0, q2_holdout=None,
            quality=QUALITY_GOOD, degree_scan=(),
            recurrence_coefficients=tuple(r[:, :1] for r in recurrences), **common)
        return _finish(model, x_hold, y_hold)

    values = [_orthonormal_values(x_train[:, j], recurrences[j], max_degree) for j in range(d)]
    trials, best = _scan_degrees(values, y_train, max_degree=max_degree, q_norm=q_norm,
                                 min_oversampling=min_oversampling, patience=patience)
    loo, p, mi, coefficients = best
    model = PolynomialChaos(
        multi_indices=_readonly(mi, int), coefficients=_readonly(coefficients), degree=p,
        loo_error=loo, q2_holdout=None, quality=QUALITY_GOOD, degree_scan=tuple(trials),
        recurrence_coefficients=tuple(r[:, : p + 1] for r in recurrences), **common)
    return _finish(model, x_hold, y_hold)


def _fit_inputs(distributions, samples, outputs, *, names, max_degree, min_oversampling,
                patience, holdout_fraction, seed):
    """Checked inputs and options of :func:`fit_polynomial_chaos`:
    ``(distributions, x, y, names, seed sequence)``."""
    dists = _check_distributions(distributions)
    d = len(dists)
    x = _as_samples(samples, d, "samples")
    y = _as_outputs(outputs, x.shape[0], "outputs")
    if names is None:
        names_t = tuple(f"x{j}" for j in range(d))
    else:
        names_t = tuple(str(n) for n in names)
        if len(names_t) != d or len(set(names_t)) != d:
            raise PolynomialChaosInputError(
                f"names must be {d} unique strings (one per distribution), got {list(names_t)}"
            )
    if isinstance(max_degree, bool) or not isinstance(max_degree, (int, np.integer)) or max_degree < 1:
        raise PolynomialChaosInputError(f"max_degree must be an integer >= 1, got {max_degree!r}")
    if not (isinstance(min_oversampling, (int, float)) and min_oversampling >= 1.0):
        raise PolynomialChaosInputError(f"min_oversampling must be >= 1, got {min_oversampling!r}")
    if isinstance(patience, bool) or not isinstance(patience, (int, np.integer)) or patience < 1:
        raise PolynomialChaosInputError(f"patience must be an integer >= 1, got {patience!r}")
    if not (0.0 <= float(holdout_fraction) < 1.0):
        raise PolynomialChaosInputError(
            f"holdout_fraction must be in [0, 1), got {holdout_fraction!r}"
        )
    if isinstance(seed, np.random.Generator):
        seed_seq = np.random.SeedSequence(int(seed.integers(2**63)))
    elif seed is None or (isinstance(seed, (int, np.integer)) and not isinstance(seed, bool) and seed >= 0):
        seed_seq = np.random.SeedSequence(seed)
    else:
        raise PolynomialChaosInputError(
            f"seed must be None, a non-negative integer or a numpy Generator, got {seed!r}"
        )
    return dists, x, y, names_t, seed_seq


def _holdout_split(x, y, holdout, holdout_fraction, seed_seq):
    """``(x_train, y_train, x_hold, y_hold)``: a given validation set, a random held-out
    fraction, or no holdout (``None`` for the held-out pair)."""
    d = x.shape[1]
    if holdout is not None:
        try:
            xh_raw, yh_raw = holdout
        except (TypeError, ValueError) as exc:
            raise PolynomialChaosInputError(
                "holdout must be a pair (samples (m, d), outputs (m,))"
            ) from exc
        x_hold = _as_samples(xh_raw, d, "holdout samples")
        return x, y, x_hold, _as_outputs(yh_raw, x_hold.shape[0], "holdout outputs")
    if holdout_fraction > 0.0:
        n_hold = int(round(holdout_fraction * x.shape[0]))
        if n_hold < 2 or x.shape[0] - n_hold < 2:
            raise PolynomialChaosInputError(
                f"holdout_fraction={holdout_fraction} of {x.shape[0]} samples leaves "
                f"{n_hold} held-out samples; need >= 2 on each side (or pass holdout_fraction=0)"
            )
        perm = np.random.default_rng(seed_seq).permutation(x.shape[0])
        hold, train = perm[:n_hold], perm[n_hold:]
        return x[train], y[train], x[hold], y[hold]
    return x, y, None, None


def _scan_degrees(values, y_train, *, max_degree, q_norm, min_oversampling, patience):
    """Fit degrees 1, 2, ... by least squares and keep the smallest LOO error.

    Returns ``(trials, (loo, degree, multi-indices, coefficients))``; raises
    :class:`InsufficientSamplesError` when no degree can be fitted.
    """
    d, n_train = len(values), y_train.shape[0]
    var_train = float(np.var(y_train))
    trials: list[DegreeTrial] = []
    best: tuple[float, int, np.ndarray, np.ndarray] | None = None
    since_best = 0
    for p in range(1, max_degree + 1):
        mi = hyperbolic_multi_indices(d, p, q_norm=q_norm)
        n_terms = mi.shape[0]
        if n_train < min_oversampling * n_terms:
            trials.append(DegreeTrial(p, n_terms, math.nan, "too few samples"))
            break  # higher degrees have at least as many terms
        fit = least_squares_with_loo(_design_matrix(values, mi), y_train)
        if fit.rank < n_terms:
            trials.append(DegreeTrial(p, n_terms, math.nan, "rank deficient"))
            continue
        loo = float(np.mean(fit.loo_residuals ** 2) / var_train)
        trials.append(DegreeTrial(p, n_terms, loo, "fitted"))
        if best is None or loo < best[0]:
            best = (loo, p, mi, fit.coefficients)
            since_best = 0
        else:
            since_best += 1
            if since_best >= patience:
                break
    if best is None:
        n_needed = math.ceil(min_oversampling * hyperbolic_multi_indices(d, 1).shape[0])
        raise InsufficientSamplesError(
            f"{n_train} training samples are too few for a full-rank degree-1 expansion "
            f"in {d} inputs with min_oversampling={min_oversampling}: need at least "
            f"{n_needed} (after the holdout split); scan: {trials}"
        )
    return trials, best


def _finish(model: PolynomialChaos, x_hold, y_hold) -> PolynomialChaos:
    """Attach holdout Q^2 and the quality flag."""
    q2 = None if x_hold is None else _q2(y_hold, model.predict(x_hold))
    poor = model.loo_error > model.loo_threshold or (q2 is not None and q2 < model.q2_threshold)
    return dataclasses.replace(model, q2_holdout=q2, quality=QUALITY_POOR if poor else QUALITY_GOOD)


# --------------------------------------------------------------------------
# Cross-check with chaospy (tests / benchmarks only)
# --------------------------------------------------------------------------
def chaospy_reference_indices(pce: PolynomialChaos) -> tuple[np.ndarray, np.ndarray]:
    """First and total indices of the same expansion by chaospy's Sens_m / Sens_t.

    The surrogate is rebuilt as a numpoly polynomial from its own recurrence
    coefficients, multi-indices and coefficients; chaospy then computes the
    indices by conditional-expectation algebra.  Slow (tens of seconds at
    3 inputs, degree 8): meant for small cross-checks only.

    Returns
    -------
    first, total : ndarray, shape (d,)
    """
    d = len(pce.names)
    try:
        joint = chaospy.J(*pce.distributions)
    except chaospy.StochasticallyDependentError as exc:
        raise PolynomialChaosInputError(
            "chaospy cannot join these marginals as independent (is the same "
            "distribution object used twice? pass distinct objects)"
        ) from exc
    q = chaospy.variable(d) if d > 1 else [chaospy.variable(1)]
    families = []
    for j in range(d):
        alpha, beta = pce.recurrence_coefficients[j]
        fam = [numpoly.polynomial(1.0 / math.sqrt(beta[0]))]
        if pce.degree >= 1:
            fam.append((q[j] - alpha[0]) * fam[0] / math.sqrt(beta[1]))
        for k in range(1, pce.degree):
            fam.append(((q[j] - alpha[k]) * fam[k] - math.sqrt(beta[k]) * fam[k - 1]) / math.sqrt(beta[k + 1]))
        families.append(fam)
    terms = []
    for row in pce.multi_indices:
        term = families[0][row[0]]
        for j in range(1, d):
            term = term * families[j][row[j]]
        terms.append(term)
    coefficients = np.array(pce.coefficients, dtype=float)  # numpoly needs writeable
    poly = numpoly.sum(numpoly.polynomial(terms) * coefficients, axis=0)
    first = np.asarray(chaospy.Sens_m(poly, joint), dtype=float)
    total = np.asarray(chaospy.Sens_t(poly, joint), dtype=float)
    return first, total
