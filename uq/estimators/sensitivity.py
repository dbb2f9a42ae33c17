"""Sensitivity estimation that means what it says: grouped factors, intervals, resolved order.

* :func:`evaluate_saltelli` runs a Saltelli design through the streaming engine
  (:func:`uq.sampling.engine.stream`) with any executor, so worker processes or a Dask
  cluster speed the stage up and the outputs are identical, bit for bit, to a serial run.
* :func:`group_indices_from_coefficients` and :func:`pce_group_indices` give first and total
  Sobol indices of *groups* of variables from orthonormal polynomial chaos coefficients
  (Sudret 2008), with bootstrap intervals (:func:`pce_group_indices`).
* :func:`rank_factors` ranks factors — single inputs or correlated groups, one row each,
  naming their members — by their total index with its interval, says where neighbours'
  intervals overlap ("order not resolved at this sample size") and suggests the base N
  that would separate them.

Correlated inputs. With a Gaussian copula the physical inputs of a correlated group are
functions of the group's independent unit coordinates, and how the variance splits between
the members depends on the (arbitrary) Cholesky order. Only the group's indices are defined
(Jacques, Lavergne & Devictor 2006), so a group is one factor and its members never
inherit the group's value one by one.

References
----------
.. [1] Sudret, B. (2008). Global sensitivity analysis using polynomial chaos expansions.
   Reliab. Eng. Syst. Saf. 93(7):964-979.
.. [2] Jacques, J., Lavergne, C. & Devictor, N. (2006). Sensitivity analysis in presence of
   model uncertainty and correlated inputs. Reliab. Eng. Syst. Saf. 91:1126-1134.
.. [3] Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman &
   Hall, ch. 13 (percentile intervals).
.. [4] White, H. (1980). A heteroskedasticity-consistent covariance matrix estimator and a
   direct test for heteroskedasticity. Econometrica 48(4):817-838.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np
from scipy import stats

from uq.estimators.intervals import EstimatorError, check_confidence
from uq.estimators.streamed import GivenRows, evaluate_rows

__all__ = [
    "SaltelliRows",
    "evaluate_saltelli",
    "group_indices_from_coefficients",
    "GroupIndices",
    "pce_group_indices",
    "RankedFactor",
    "FactorRanking",
    "rank_factors",
    "ORDER_NOT_RESOLVED",
    "indicator_flips",
    "indicator_total_bounds",
    "members_show_group",
    "share_group_totals",
    "factor_label",
]

#: The sentence the ranking and the report use when neighbours' intervals overlap.
ORDER_NOT_RESOLVED = "order not resolved at this sample size"

#: Largest base N ever suggested (beyond it two indices are equal for practical purposes).
MAX_SUGGESTED_BASE_N = 2**20


# ------------------------------------------------------------------ streaming the design
#: the rows of a Saltelli design stream as any given rows do
SaltelliRows = GivenRows


def evaluate_saltelli(design, model_fn: Callable[[np.ndarray], Any], keys: Sequence[str], *,
                      input_model=None, executor=None, chunk_blocks: int = 1,
                      block_size: int = 4096) -> dict[str, np.ndarray]:
    """Evaluate ``model_fn`` on every row of a Saltelli design (a
    :class:`uq.estimators.sobol.SaltelliDesign`) through the streaming engine: the design's
    unit points go to :func:`uq.estimators.streamed.evaluate_rows` with the same options,
    and one array of ``design.n_runs`` values per key comes back, in design row order."""
    return evaluate_rows(design.unit_points, model_fn, keys, input_model=input_model,
                         executor=executor, chunk_blocks=chunk_blocks, block_size=block_size)


# ------------------------------------------------------------------ PCE group indices
def group_indices_from_coefficients(multi_indices, coefficients,
                                    groups: Sequence[Sequence[int]]) -> tuple[np.ndarray, np.ndarray]:
    """First and total Sobol indices of groups of variables from orthonormal PCE coefficients.

    Parameters
    ----------
    multi_indices : (n_terms, d) array_like of int
        Exponents of each basis term.
    coefficients : (n_terms,) or (B, n_terms) array_like
        Coefficients (one row per bootstrap refit allowed) [output units].
    groups : sequence of sequences of int
        Column indices of each group's variables.

    Returns
    -------
    first, total : ndarray, shape (G,) or (B, G)
        First = variance of the terms whose variables all lie in the group; total = of the
        terms touching the group; both over the variance of all non-constant terms
        (Sudret 2008, Eqs. 38-40 with a group in place of a variable) [-].
    """
    active = np.asarray(multi_indices) > 0
    c2 = np.asarray(coefficients, dtype=float) ** 2
    nonconstant = active.any(axis=1)
    variance = (c2 * nonconstant).sum(axis=-1)
    first, total = [], []
    for cols in groups:
        cols = list(cols)
        inside = active[:, cols].any(axis=1)
        outside = np.delete(active, cols, axis=1).any(axis=1)
        first.append((c2 * (inside & ~outside)).sum(axis=-1))
        total.append((c2 * inside).sum(axis=-1))
    with np.errstate(divide="ignore", invalid="ignore"):
        v = np.where(variance > 0, variance, np.nan)
        first = np.nan_to_num(np.stack(first, axis=-1) / np.expand_dims(v, -1))
        total = np.nan_to_num(np.stack(total, axis=-1) / np.expand_dims(v, -1))
    return first, total


@dataclass(frozen=True, eq=False)
class GroupIndices:
    """First and total indices per factor (input or correlated group) with intervals.

    Attributes
    ----------
    factors : tuple of str
        Factor labels (an input name, or the members joined by " + ").
    members : tuple of tuple of str
        Inputs of each factor.
    first, first_low, first_high, total, total_low, total_high : ndarray
        Point estimates and percentile-bootstrap bounds [-].
    confidence : float
    n_bootstrap : int
    method : str
    """

    factors: tuple[str, ...]
    members: tuple[tuple[str, ...], ...]
    first: np.ndarray
    first_low: np.ndarray
    first_high: np.ndarray
    total: np.ndarray
    total_low: np.ndarray
    total_high: np.ndarray
    confidence: float
    n_bootstrap: int
    method: str = ("polynomial chaos coefficients; percentile bootstrap from the sandwich "
                   "covariance of the least-squares fit")

    def to_rows(self) -> list[dict]:
        """One plain dict per factor."""
        return [{"factor": f, "members": list(m), "first": float(self.first[i]),
                 "first_low": float(self.first_low[i]), "first_high": float(self.first_high[i]),
                 "total": float(self.total[i]), "total_low": float(self.total_low[i]),
                 "total_high": float(self.total_high[i])}
                for i, (f, m) in enumerate(zip(self.factors, self.members))]


def factor_label(members: Sequence[str]) -> str:
    """Label of a factor: the input name, or the members joined by ' + '."""
    return " + ".join(members)


def pce_group_indices(pce, samples: np.ndarray, outputs: np.ndarray,
                      groups: Sequence[Sequence[str]], *, confidence: float = 0.95,
                      n_bootstrap: int = 200, rng=None) -> GroupIndices:
    """Group (or single-input) indices of a fitted PCE with percentile-bootstrap intervals.

    The basis the fit selected is kept; ``n_bootstrap`` coefficient vectors are drawn from
    the least-squares estimate's sandwich covariance on ``(samples, outputs)`` (a parametric
    bootstrap robust to unequal residual variance) and the indices recomputed for each.

    Parameters
    ----------
    pce : uq.estimators.pce.PolynomialChaos
    samples : (n, d) ndarray
        The inputs the surrogate was fitted on, in its own coordinates.
    outputs : (n,) ndarray
        The matching outputs [output units].
    groups : sequence of sequences of str
        Factors as lists of input names (a single input is a one-member group).
    confidence : float, default 0.95
    n_bootstrap : int, default 200
    rng : None, int or numpy.random.Generator

    Returns
    -------
    GroupIndices
        Point estimates from the fitted coefficients; bounds never exclude them.
    """
    confidence = check_confidence(confidence)
    rng = np.random.default_rng(rng)
    column = {n: i for i, n in enumerate(pce.names)}
    try:
        cols = [[column[m] for m in g] for g in groups]
    except KeyError as exc:
        raise EstimatorError(f"group member {exc.args[0]!r} is not an input of the surrogate") from exc
    first, total = group_indices_from_coefficients(pce.multi_indices, pce.coefficients, cols)
    basis = pce.basis_matrix(samples)
    y = np.asarray(outputs, dtype=float)
    # Resampling the coefficients from their heteroscedasticity-consistent (sandwich)
    # covariance (White 1980) replaces refitting the least squares on resampled rows: the
    # same first-order distribution at the cost of one fit instead of n_bootstrap.
    residual = y - basis @ np.asarray(pce.coefficients, dtype=float)
    gram_inverse = np.linalg.pinv(basis.T @ basis)
    meat = basis.T @ (basis * (residual ** 2)[:, None])
    covariance = gram_inverse @ meat @ gram_inverse
    covariance = 0.5 * (covariance + covariance.T)
    refits = rng.multivariate_normal(np.asarray(pce.coefficients, dtype=float), covariance,
                                     size=int(n_bootstrap), method="eigh")
    boot_first, boot_total = group_indices_from_coefficients(pce.multi_indices, refits, cols)
    tail = 50.0 * (1.0 - confidence)
    lo_f, hi_f = np.percentile(boot_first, [tail, 100.0 - tail], axis=0)
    lo_t, hi_t = np.percentile(boot_total, [tail, 100.0 - tail], axis=0)
    members = tuple(tuple(g) for g in groups)
    return GroupIndices(
        factors=tuple(factor_label(g) for g in members), members=members,
        first=first, first_low=np.minimum(lo_f, first), first_high=np.maximum(hi_f, first),
        total=total, total_low=np.minimum(lo_t, total), total_high=np.maximum(hi_t, total),
        confidence=confidence, n_bootstrap=int(n_bootstrap))


# ------------------------------------------------------------------ ranking
@dataclass(frozen=True)
class RankedFactor:
    """One row of a sensitivity ranking.

    Attributes
    ----------
    factor : str
        Input name or correlated group label (members joined by " + ").
    members : tuple of str
    first, first_low, first_high : float
        First-order index of the ranking output and its interval [-].
    total, total_low, total_high : float
        Total index of the ranking output and its interval [-].
    resolved_from_next : bool or None
        Whether this row's total-index interval is clear of the next row's (None on the
        last row).
    """

    factor: str
    members: tuple[str, ...]
    first: float
    first_low: float
    first_high: float
    total: float
    total_low: float
    total_high: float
    resolved_from_next: bool | None

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["members"] = list(self.members)
        return d


@dataclass(frozen=True)
class FactorRanking:
    """Factors ranked by total index, with intervals and a statement about the order.

    Attributes
    ----------
    output : str
        Output the ranking is by (e.g. the failure indicator).
    rows : tuple of RankedFactor
    base_n : int
        Saltelli base N behind the indices.
    order_resolved : bool
        Whether every influential neighbour pair is separated by its intervals.
    suggested_base_n : int or None
        Base N expected to separate the unresolved influential pairs (half-widths shrink
        as 1/sqrt(N)); None when the order is resolved or no feasible N would do.
    sentence : str
    """

    output: str
    rows: tuple[RankedFactor, ...]
    base_n: int
    order_resolved: bool
    suggested_base_n: int | None
    sentence: str

    def to_dict(self) -> dict:
        return {"output": self.output, "base_n": self.base_n,
                "order_resolved": self.order_resolved,
                "suggested_base_n": self.suggested_base_n, "sentence": self.sentence,
                "rows": [r.to_dict() for r in self.rows]}


def _power_of_two_at_least(x: float) -> int:
    return 1 << max(1, math.ceil(math.log2(max(x, 2.0))))


def rank_factors(factors: Sequence[str], members: Sequence[Sequence[str]], first, first_low,
                 first_high, total, total_low, total_high, *, base_n: int, output: str,
                 tiebreak=None, influential: float = 0.05) -> FactorRanking:
    """Rank factors by total index and say whether the order is resolved.

    Parameters
    ----------
    factors, members : sequences
        Factor labels and their member inputs.
    first, first_low, first_high, total, total_low, total_high : array_like
        Indices of the ranking output and their interval bounds [-].
    base_n : int
        Saltelli base N of the estimates.
    output : str
        Name of the ranking output.
    tiebreak : array_like, optional
        Secondary key (e.g. the total index of range) for equal totals.
    influential : float, default 0.05
        A neighbour pair is checked when either total index reaches this value; the order
        among negligible factors is of no consequence (common practice, no source).

    Returns
    -------
    FactorRanking
    """
    arrays = [np.asarray(a, dtype=float) for a in (first, first_low, first_high, total,
                                                    total_low, total_high)]
    f, fl, fh, t, tl, th = arrays
    secondary = np.zeros_like(t) if tiebreak is None else np.asarray(tiebreak, dtype=float)
    order = sorted(range(len(factors)), key=lambda i: (-t[i], -secondary[i], i))
    rows, needed, unresolved = [], [], []
    for pos, i in enumerate(order):
        resolved = None
        if pos + 1 < len(order):
            j = order[pos + 1]
            resolved = bool(tl[i] > th[j])
            if not resolved and max(t[i], t[j]) >= influential:
                unresolved.append((factors[i], factors[j]))
                gap = t[i] - t[j]
                spread = (t[i] - tl[i]) + (th[j] - t[j])
                needed.append(base_n * (spread / gap) ** 2 if gap > 0 else math.inf)
        rows.append(RankedFactor(factors[i], tuple(members[i]), float(f[i]), float(fl[i]),
                                 float(fh[i]), float(t[i]), float(tl[i]), float(th[i]),
                                 resolved))
    suggested = None
    if not unresolved:
        sentence = (f"The order of the influential factors by total index of {output} is "
                    f"resolved at base N = {base_n:,}: neighbouring intervals do not overlap.")
    else:
        pairs = "; ".join(f"{a} vs {b}" for a, b in unresolved)
        feasible = [n for n in needed if math.isfinite(n) and n <= MAX_SUGGESTED_BASE_N]
        ties = len(needed) - len(feasible)
        if feasible:
            suggested = _power_of_two_at_least(max(feasible))
            tail = (f"a base N of about {suggested:,} would be expected to resolve "
                    f"{'them' if not ties else 'the others'} (intervals shrink as 1/sqrt(N))")
            if ties:
                tail += (f"; {ties} pair{'s are' if ties > 1 else ' is'} too close for any "
                         "feasible base N: treat them as about equally important")
        else:
            tail = ("the estimates are too close for any feasible base N to separate them: "
                    "treat these factors as about equally important")
        sentence = (f"Ranking by total index of {output}: {ORDER_NOT_RESOLVED} (base N = "
                    f"{base_n:,}) for {pairs}, whose intervals overlap; {tail}.")
    return FactorRanking(output=output, rows=tuple(rows), base_n=int(base_n),
                         order_resolved=not unresolved, suggested_base_n=suggested,
                         sentence=sentence)


def indicator_total_bounds(values, n_factors: int, *,
                           confidence: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
    """Exact bounds on Jansen's total index of a 0/1 output from its flip counts.

    For an indicator, Jansen's estimator is ``m / (2 N V)`` with ``m`` the number of base
    rows whose output flips when the factor is resampled and V the variance of the A and B
    rows; Clopper-Pearson bounds on ``m / N`` give bounds that are never degenerate for a
    positive estimate (V taken as known).

    Parameters
    ----------
    values : (N (D + 2),) array_like
        The 0/1 output in Saltelli design row order (see :func:`indicator_flips`).
    n_factors : int
        Number of factors D.
    confidence : float

    Returns
    -------
    lower, upper : ndarray, shape (D,) [-]
    """
    confidence = check_confidence(confidence)
    y = np.asarray(values, dtype=float).reshape(-1, n_factors + 2)
    base_n = y.shape[0]
    variance = float(np.concatenate([y[:, 0], y[:, -1]]).var())
    m = indicator_flips(values, n_factors).astype(float)
    alpha = 1.0 - confidence
    lo = np.where(m > 0, stats.beta.ppf(alpha / 2, np.maximum(m, 1), base_n - m + 1), 0.0)
    hi = np.where(m < base_n, stats.beta.ppf(1 - alpha / 2, m + 1, np.maximum(base_n - m, 1)),
                  1.0)
    scale = 1.0 / (2.0 * variance) if variance > 0 else 0.0
    return lo * scale, hi * scale

def indicator_flips(values, n_factors: int) -> np.ndarray:
    """Flip counts of a 0/1 output between the A rows and each factor's AB rows.

    Parameters
    ----------
    values : (N (D + 2),) array_like
        Output on a Saltelli design without second order, in design row order (per base
        row: A, AB_1 .. AB_D, B — the layout of ``SALib.sample.sobol``).
    n_factors : int
        Number of factors D.

    Returns
    -------
    ndarray of int, shape (D,)
    """
    y = np.asarray(values, dtype=float).reshape(-1, n_factors + 2)
    return np.count_nonzero(y[:, 1:-1] != y[:, :1], axis=0)


def members_show_group(indices, factors: GroupIndices):
    """Per-input PCE indices where each member of a group shows its group's value.

    For display beside an input only (the ranking uses the factors themselves).
    """
    from uq.estimators.pce import PolynomialChaosIndices

    first = np.asarray(indices.first, dtype=float).copy()
    total = np.asarray(indices.total, dtype=float).copy()
    column = {n: i for i, n in enumerate(indices.names)}
    for k, group in enumerate(factors.members):
        if len(group) < 2:
            continue
        for m in group:
            first[column[m]] = factors.first[k]
            total[column[m]] = factors.total[k]
    return PolynomialChaosIndices(names=tuple(indices.names), first=first, total=total,
                                  second=np.zeros((len(first), len(first))),
                                  variance=indices.variance, status=indices.status,
                                  quality=indices.quality)


def share_group_totals(members: Sequence[Sequence[str]], totals) -> dict[str, float]:
    """A factor's total index shared out equally among its member inputs.

    So that a test pinning a whole correlated group is credited with the group's index
    once when per-input credits are added up (the test ranking's fallback basis).
    """
    out: dict[str, float] = {}
    for group, value in zip(members, np.asarray(totals, dtype=float)):
        for m in group:
            out[m] = float(value) / len(group)
    return out
