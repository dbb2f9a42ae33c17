"""Input model: named marginal distributions, optionally tied by a rank correlation.

The input model maps points of the unit hypercube ``[0, 1)^d`` (the output of a sample
plan, see :mod:`uq.sampling.plans`) to physical input values, column by column through each
marginal's inverse distribution function (``ppf``). Dependence between inputs is
expressed as a Spearman rank-correlation matrix and imposed with a Gaussian copula.

This module is generic: it knows nothing about vehicles or scenarios. A marginal is any
object with a ``name`` attribute and a vectorized ``ppf(u)`` method; the scenario layer
provides its own, and :class:`ScipyMarginal` wraps a frozen ``scipy.stats`` distribution.
"""

from __future__ import annotations

from uq.errors import InputError

from dataclasses import dataclass, field
from typing import Any, Protocol, Sequence, runtime_checkable

import numpy as np
from scipy import special

__all__ = [
    "QuantileMarginal",
    "ScipyMarginal",
    "InputModel",
    "InputModelError",
    "CorrelationMatrixError",
    "UnitPointsError",
    "spearman_to_pearson",
    "UNIT_CLIP",
]

#: Unit points are clipped to ``[UNIT_CLIP, 1 - UNIT_CLIP]`` before any inverse
#: distribution function, so that marginals with infinite support never return
#: ``inf``. ``2**-53`` is the largest value for which ``1 - UNIT_CLIP`` is still
#: below 1 in double precision; for a standard normal it caps samples at about ±8.2 sd.
UNIT_CLIP = 2.0**-53


class InputModelError(InputError):
    """An input model was built from inconsistent marginals or options."""


class CorrelationMatrixError(InputModelError):
    """A rank-correlation matrix is not a valid correlation matrix."""


class UnitPointsError(InputModelError):
    """Points passed to :meth:`InputModel.transform` are not an (n, d) array in [0, 1]."""


@runtime_checkable
class QuantileMarginal(Protocol):
    """What the input model needs from a marginal distribution."""

    name: str

    def ppf(self, u: np.ndarray) -> np.ndarray:  # pragma: no cover - protocol
        """Inverse distribution function, vectorized over ``u`` in (0, 1)."""
        ...


@dataclass(frozen=True)
class ScipyMarginal:
    """A named marginal backed by a frozen ``scipy.stats`` distribution.

    Parameters
    ----------
    name : str
        Input name, unique within an :class:`InputModel`.
    frozen : scipy.stats frozen distribution
        E.g. ``scipy.stats.norm(loc=1.0, scale=0.1)``.

    Examples
    --------
    >>> from scipy import stats
    >>> m = ScipyMarginal("pump_efficiency", stats.uniform(0.2, 0.15))
    >>> float(m.ppf(0.5))
    0.275
    """

    name: str
    frozen: Any

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Inverse distribution function of the wrapped distribution."""
        return self.frozen.ppf(np.asarray(u, dtype=float))

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """Distribution function of the wrapped distribution."""
        return self.frozen.cdf(np.asarray(x, dtype=float))


def spearman_to_pearson(rank_correlation: np.ndarray) -> np.ndarray:
    """Convert a Spearman rank correlation to the Pearson correlation of a Gaussian copula.

    Parameters
    ----------
    rank_correlation : array_like
        Spearman rank correlation(s) [-].

    Returns
    -------
    ndarray
        Pearson correlation(s) of the underlying bivariate normal [-].

    Notes
    -----
    For a bivariate normal with Pearson correlation r, Spearman's rho is
    ``(6/pi) arcsin(r/2)``; inverted, ``r = 2 sin(pi rho_S / 6)``.

    References
    ----------
    .. [1] Kruskal, W. H. (1958). Ordinal measures of association. JASA 53:814-861.
    """
    rho = np.asarray(rank_correlation, dtype=float)
    return 2.0 * np.sin(np.pi * rho / 6.0)


def _validate_rank_correlation(matrix: Any, dimension: int, names: tuple[str, ...]) -> np.ndarray:
    try:
        r = np.array(matrix, dtype=float)
    except (TypeError, ValueError) as exc:
        raise CorrelationMatrixError(
            f"rank_correlation must be a numeric {dimension}x{dimension} matrix; got {matrix!r}"
        ) from exc
    if r.shape != (dimension, dimension):
        raise CorrelationMatrixError(
            f"rank_correlation has shape {r.shape}; expected ({dimension}, {dimension}) "
            f"for inputs {list(names)}"
        )
    if not np.all(np.isfinite(r)):
        raise CorrelationMatrixError("rank_correlation contains non-finite entries")
    asym = np.abs(r - r.T)
    if np.any(asym > 1e-12):
        i, j = np.unravel_index(np.argmax(asym), asym.shape)
        raise CorrelationMatrixError(
            f"rank_correlation is not symmetric: entry ({names[i]}, {names[j]}) = {r[i, j]} "
            f"but ({names[j]}, {names[i]}) = {r[j, i]}"
        )
    diag = np.diag(r)
    if np.any(np.abs(diag - 1.0) > 1e-12):
        k = int(np.argmax(np.abs(diag - 1.0)))
        raise CorrelationMatrixError(
            f"rank_correlation must have a unit diagonal; entry ({names[k]}, {names[k]}) = {diag[k]}"
        )
    if np.any(np.abs(r) > 1.0):
        i, j = np.unravel_index(np.argmax(np.abs(r)), r.shape)
        raise CorrelationMatrixError(
            f"rank correlations must lie in [-1, 1]; entry ({names[i]}, {names[j]}) = {r[i, j]}"
        )
    r = 0.5 * (r + r.T)
    np.fill_diagonal(r, 1.0)
    return r


def _lower_triangular_rows(g: np.ndarray, lower: np.ndarray) -> np.ndarray:
    """``g @ lower.T`` for a lower-triangular ``lower``, as explicit column sums.

    Elementwise numpy instead of BLAS: the result does not depend on BLAS threading or
    kernel choice (streamed results stay bit-identical across workers), BLAS threads
    do not oversubscribe the cores of a process pool, and zero entries (independent
    groups) are skipped.
    """
    z = np.empty_like(g)
    for j in range(lower.shape[0]):  # loops over inputs, not samples
        acc = lower[j, j] * g[:, j]
        for k in np.flatnonzero(lower[j, :j]):
            acc += lower[j, k] * g[:, k]
        z[:, j] = acc
    return z


@dataclass(frozen=True, eq=False)
class InputModel:
    """Named marginals plus an optional Spearman rank correlation (Gaussian copula).

    Parameters
    ----------
    marginals : sequence of QuantileMarginal
        One object per input, each with ``.name`` and a vectorized ``.ppf(u)``.
    rank_correlation : (d, d) array_like, optional
        Spearman rank-correlation matrix, in the order of ``marginals``. ``None`` means
        independent inputs.

    Raises
    ------
    InputModelError
        Empty marginals, duplicate names, or a marginal without ``name``/``ppf``.
    CorrelationMatrixError
        Wrong shape, non-symmetric, non-unit diagonal, entries outside [-1, 1], or a
        matrix that is not positive definite after conversion to Pearson correlation.

    Notes
    -----
    Correlated inputs: ``z = Phi^-1(u) @ L.T`` with ``L`` the Cholesky factor of
    ``R_P = 2 sin(pi R_S / 6)`` (Kruskal 1958), then ``u' = Phi(z)`` and each
    column is passed through its marginal's ``ppf``. A Gaussian copula preserves the
    marginals exactly and the Spearman correlation in expectation.
    """

    marginals: Sequence
    rank_correlation: np.ndarray | None = field(default=None, kw_only=True)
    _cholesky: np.ndarray | None = field(init=False, repr=False, default=None)

    def __post_init__(self) -> None:
        marginals = tuple(self.marginals)
        if not marginals:
            raise InputModelError("an input model needs at least one marginal; got none")
        for k, m in enumerate(marginals):
            if not isinstance(getattr(m, "name", None), str) or not callable(getattr(m, "ppf", None)):
                raise InputModelError(
                    f"marginal #{k} ({m!r}) must have a str 'name' attribute and a 'ppf' method"
                )
        names = tuple(m.name for m in marginals)
        seen: set[str] = set()
        duplicates = sorted({n for n in names if n in seen or seen.add(n)})
        if duplicates:
            raise InputModelError(f"input names must be unique; repeated: {duplicates}")
        object.__setattr__(self, "marginals", marginals)

        if self.rank_correlation is None:
            return
        r = _validate_rank_correlation(self.rank_correlation, len(marginals), names)
        pearson = spearman_to_pearson(r)
        np.fill_diagonal(pearson, 1.0)
        try:
            chol = np.linalg.cholesky(pearson)
        except np.linalg.LinAlgError as exc:
            eig = float(np.linalg.eigvalsh(pearson).min())
            raise CorrelationMatrixError(
                "rank_correlation is not positive definite after conversion to the Gaussian "
                f"copula's Pearson correlation 2 sin(pi r / 6) (smallest eigenvalue {eig:.3g}); "
                "the requested rank correlations are mutually inconsistent"
            ) from exc
        r.setflags(write=False)
        chol.setflags(write=False)
        object.__setattr__(self, "rank_correlation", r)
        object.__setattr__(self, "_cholesky", chol)

    @property
    def names(self) -> tuple[str, ...]:
        """Input names, in column order."""
        return tuple(m.name for m in self.marginals)

    @property
    def dimension(self) -> int:
        """Number of inputs ``d``."""
        return len(self.marginals)

    @property
    def is_independent(self) -> bool:
        """True when no correlation is imposed."""
        return self._cholesky is None

    @property
    def pearson_correlation(self) -> np.ndarray | None:
        """Pearson correlation of the Gaussian copula, or None when independent."""
        if self.rank_correlation is None:
            return None
        p = spearman_to_pearson(self.rank_correlation)
        np.fill_diagonal(p, 1.0)
        return p

    def transform(self, unit_points: np.ndarray) -> np.ndarray:
        """Map unit-hypercube points to physical input values.

        Parameters
        ----------
        unit_points : (n, d) array_like
            Points in [0, 1] [-], e.g. from :meth:`uq.sampling.plans.SampleDesign.unit_points`.

        Returns
        -------
        (n, d) ndarray
            Input values in the marginals' units, columns in :attr:`names` order.

        Raises
        ------
        UnitPointsError
            Wrong shape, or values outside [0, 1] / non-finite.
        """
        u = np.asarray(unit_points, dtype=float)
        if u.ndim != 2 or u.shape[1] != self.dimension:
            raise UnitPointsError(
                f"unit_points must have shape (n, {self.dimension}); got {u.shape}"
            )
        if u.size and not (np.all(u >= 0.0) and np.all(u <= 1.0)):
            raise UnitPointsError("unit_points must lie in [0, 1] (and be finite)")
        u = np.clip(u, UNIT_CLIP, 1.0 - UNIT_CLIP)
        if self._cholesky is not None:
            z = _lower_triangular_rows(special.ndtri(u), self._cholesky)
            u = np.clip(special.ndtr(z), UNIT_CLIP, 1.0 - UNIT_CLIP)
        out = np.empty_like(u)
        for j, marginal in enumerate(self.marginals):  # loop over inputs, not samples
            out[:, j] = marginal.ppf(u[:, j])
        return out

    def groups(self) -> list[list[str]]:
        """Groups of input names connected by nonzero rank correlation.

        Returns
        -------
        list of list of str
            Connected components of the graph whose edges are the nonzero off-diagonal
            correlations (transitively: a-b and b-c put a, b, c in one group). Independent
            inputs form singleton groups. Groups are ordered by their first member, members
            by column order. Used for grouped Sobol indices of dependent inputs.
        """
        d = self.dimension
        names = self.names
        parent = list(range(d))

        def find(i: int) -> int:
            while parent[i] != i:
                parent[i] = parent[parent[i]]
                i = parent[i]
            return i

        if self.rank_correlation is not None:
            rows, cols = np.nonzero(np.triu(self.rank_correlation, k=1))
            for i, j in zip(rows.tolist(), cols.tolist()):
                ri, rj = find(i), find(j)
                if ri != rj:
                    parent[max(ri, rj)] = min(ri, rj)
        by_root: dict[int, list[str]] = {}
        for i in range(d):
            by_root.setdefault(find(i), []).append(names[i])
        return [by_root[root] for root in sorted(by_root)]

    def to_dict(self) -> dict:
        """Machine-readable summary (names and rank correlation)."""
        return {
            "names": list(self.names),
            "rank_correlation": None
            if self.rank_correlation is None
            else self.rank_correlation.tolist(),
        }
