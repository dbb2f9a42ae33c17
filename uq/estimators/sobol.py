"""Variance-based (Sobol') sensitivity indices from a Saltelli design.

The design (:mod:`uq.estimators.sobol_design`) lives on the unit hypercube ``[0, 1]^d``;
the caller maps the unit
points to physical inputs (inverse CDFs, copulas, ...) and evaluates the model
on every row *in the order of the design*.  The estimator then reads the
design's own metadata (base size, number of factors or groups, second-order
flag) instead of inferring them from the length of the output array.

The design's rows are SALib's (``SALib.sample.sobol``, built with array operations
and tested equal); the estimators are SALib's
(``SALib.analyze.sobol``): the Saltelli (2010) first-order and Jansen (1999)
total-order estimators with bootstrap confidence intervals. Without
second-order rows they run for all factors at once in
:mod:`uq.estimators.saltelli_bootstrap` (SALib's numbers to rounding, tested
against SALib); with them SALib is called.  This module adds the guards that SALib leaves to the
caller: power-of-two base sizes, an exact run-count check, a consistent
second-order flag, and an explicit status for constant or non-finite outputs.

Notes
-----
Independence.  Sobol' indices in this form assume independent inputs.  With
a copula-based input model, the indices refer to the independent unit
coordinates the caller maps from, not to the correlated physical inputs.

References
----------
.. [1] Saltelli, A. et al. (2010). Variance based sensitivity analysis of
   model output. Design and estimator for the total sensitivity index.
   Comput. Phys. Commun. 181(2):259-270.
.. [2] Jansen, M. J. W. (1999). Analysis of variance designs for model
   output. Comput. Phys. Commun. 117:35-43.
.. [3] Saltelli, A. (2002). Making best use of model evaluations to compute
   sensitivity indices. Comput. Phys. Commun. 145(2):280-297.
.. [4] Owen, A. B. (2020). On dropping the first Sobol' point.
   arXiv:2008.08051.
"""

from __future__ import annotations

from uq.estimators.intervals import check_confidence
from uq.estimators.saltelli_bootstrap import first_total_with_bootstrap
from uq.estimators.sobol_design import (BaseSizeError, FactorNamesError, OutputLengthError,
                                        SaltelliDesign, SensitivityOptionError, _seed_entropy,
                                        saltelli_design)

import math
import numbers
import zlib
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import pandas as pd
from SALib.analyze import sobol as _salib_analyze

__all__ = [
    "BaseSizeError",
    "FactorNamesError",
    "Interval",
    "OutputLengthError",
    "SaltelliDesign",
    "SensitivityOptionError",
    "SobolIndices",
    "SobolResults",
    "saltelli_design",
    "sobol_indices",
]

#: Status strings of :class:`SobolIndices`.
STATUS_OK = "ok"
STATUS_ZERO_VARIANCE = "zero variance"
STATUS_NON_FINITE = "non-finite"


# --------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------
class Interval(NamedTuple):
    """Lower and upper ends of a confidence interval, one entry per factor."""

    low: np.ndarray
    high: np.ndarray


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, eq=False)
class SobolIndices:
    """Sobol' indices of one output.

    Attributes
    ----------
    output : str
        Output name.
    factors : tuple of str
        Factor (or group) labels, in the order of the arrays.
    first, total : ndarray, shape (D,)
        First-order (Saltelli 2010) and total (Jansen 1999) indices [-].
    first_interval, total_interval : Interval
        ``(estimate - h, estimate + h)`` with h the bootstrap half-width
        ``z_{(1+c)/2} · sd_boot`` reported by SALib (normal approximation).
        Not clipped to [0, 1]: sampling error can push either end outside.
    second, second_interval : ndarray (D, D) / Interval or None
        Second-order indices (symmetric, NaN on the diagonal) when the
        design carries second order.
    status : str
        ``"ok"``, ``"zero variance"`` (constant output: every index is 0,
        nothing was divided) or ``"non-finite"`` (NaN/inf in the output:
        every index is NaN, nothing was estimated).
    confidence : float
        Confidence level of the intervals.
    n_bootstrap : int
        Number of bootstrap resamples.
    base_n : int
        Base size N of the design.
    output_mean, output_variance : float
        Sample mean and variance (ddof=0) of the output [output units, ^2].
    """

    output: str
    factors: tuple[str, ...]
    first: np.ndarray
    first_interval: Interval
    total: np.ndarray
    total_interval: Interval
    status: str
    confidence: float
    n_bootstrap: int
    base_n: int
    output_mean: float
    output_variance: float
    second: np.ndarray | None = None
    second_interval: Interval | None = None

    def to_frame(self) -> pd.DataFrame:
        """First and total indices with interval ends, one row per factor."""
        frame = pd.DataFrame(
            {
                "first": self.first,
                "first_low": self.first_interval.low,
                "first_high": self.first_interval.high,
                "total": self.total,
                "total_low": self.total_interval.low,
                "total_high": self.total_interval.high,
            },
            index=pd.Index(self.factors, name="factor"),
        )
        frame.attrs.update(output=self.output, status=self.status, confidence=self.confidence)
        return frame

    def second_order_frame(self) -> pd.DataFrame:
        """Second-order indices, one row per factor pair (i < j)."""
        if self.second is None or self.second_interval is None:
            raise SensitivityOptionError(
                f"output {self.output!r} has no second-order indices: the design "
                "was built with second_order=False"
            )
        i, j = np.triu_indices(len(self.factors), k=1)
        frame = pd.DataFrame(
            {
                "second": self.second[i, j],
                "second_low": self.second_interval.low[i, j],
                "second_high": self.second_interval.high[i, j],
            },
            index=pd.MultiIndex.from_arrays(
                [np.asarray(self.factors)[i], np.asarray(self.factors)[j]],
                names=["factor", "other"],
            ),
        )
        frame.attrs.update(output=self.output, status=self.status, confidence=self.confidence)
        return frame


class SobolResults(Mapping):
    """Read-only mapping ``output name -> SobolIndices`` with a joint table."""

    def __init__(self, results: Mapping[str, SobolIndices], design: SaltelliDesign, seed):
        self._results = dict(results)
        self.design = design
        self.seed = seed

    def __getitem__(self, key: str) -> SobolIndices:
        return self._results[key]

    def __iter__(self) -> Iterator[str]:
        return iter(self._results)

    def __len__(self) -> int:
        return len(self._results)

    def __repr__(self) -> str:
        status = {k: v.status for k, v in self._results.items()}
        return f"SobolResults({status})"

    def to_frame(self) -> pd.DataFrame:
        """All outputs stacked, indexed by (output, factor), with a status column."""
        frames = []
        for name, res in self._results.items():
            f = res.to_frame()
            f.insert(0, "status", res.status)
            f.index = pd.MultiIndex.from_product([[name], f.index], names=["output", "factor"])
            frames.append(f)
        return pd.concat(frames)


# --------------------------------------------------------------------------
# Estimation
# --------------------------------------------------------------------------
def _output_stream(
    root: np.random.SeedSequence, name: str
) -> np.random.Generator:
    """Bootstrap stream for one output, keyed by the output's name.

    Keying by name (not position) keeps an output's intervals unchanged when
    other outputs are added to or removed from the call.
    """
    key = zlib.crc32(name.encode("utf-8"))
    child = np.random.SeedSequence(root.entropy, spawn_key=(*root.spawn_key, key))
    return np.random.default_rng(child)


def _constant_result(
    name: str, design: SaltelliDesign, fill: float, status: str, confidence: float,
    n_bootstrap: int, mean: float, var: float,
) -> SobolIndices:
    d = design.n_factors
    v = np.full(d, fill)
    second = second_iv = None
    if design.second_order:
        s = np.full((d, d), fill)
        np.fill_diagonal(s, np.nan)
        second = _readonly(s)
        second_iv = Interval(second, second)
    return _indices(name, design, (v, v, v), (v, v, v), status=status, confidence=confidence,
                    n_bootstrap=n_bootstrap, mean=mean, var=var, second=second,
                    second_interval=second_iv)


def _indices(name: str, design: SaltelliDesign, first, total, **fields) -> SobolIndices:
    """:class:`SobolIndices` from ``(estimate, low, high)`` of the first and total indices."""
    return SobolIndices(
        output=name,
        factors=design.factor_labels,
        first=_readonly(first[0]),
        first_interval=Interval(_readonly(first[1]), _readonly(first[2])),
        total=_readonly(total[0]),
        total_interval=Interval(_readonly(total[1]), _readonly(total[2])),
        status=fields["status"],
        confidence=fields["confidence"],
        n_bootstrap=fields["n_bootstrap"],
        base_n=design.base_n,
        output_mean=fields["mean"],
        output_variance=fields["var"],
        second=fields["second"],
        second_interval=fields["second_interval"],
    )


def sobol_indices(
    design: SaltelliDesign,
    outputs: Mapping[str, np.ndarray],
    *,
    confidence: float = 0.95,
    n_bootstrap: int = 200,
    seed: int | np.random.SeedSequence | np.random.Generator | None,
    variance_rtol: float = 1e-10,
) -> SobolResults:
    """First, total (and second) order Sobol' indices of each output.

    Parameters
    ----------
    design : SaltelliDesign
        The design the outputs were evaluated on, row for row.
    outputs : mapping of str to array_like, each shape (design.n_runs,)
        Model outputs in design row order [any units].  Boolean / 0-1
        indicator outputs (e.g. failure) are allowed.
    confidence : float, optional
        Confidence level of the bootstrap intervals, in (0, 1).
    n_bootstrap : int, optional
        Bootstrap resamples (SALib ``num_resamples``), >= 2.
    seed : int, SeedSequence, Generator or None
        Bootstrap seed.  Each output gets its own stream keyed by its name.
    variance_rtol : float, optional
        An output whose standard deviation is <= ``variance_rtol · |mean|``
        (or exactly zero) is treated as constant [-].

    Returns
    -------
    SobolResults
        Mapping ``output name -> SobolIndices`` (plus ``.to_frame()``).

    Raises
    ------
    OutputLengthError
        If an output is not 1-D of length ``design.n_runs``.
    SensitivityOptionError
        If `confidence` or `n_bootstrap` is invalid.

    Notes
    -----
    SALib is called with the design's own problem dict and second-order
    flag, so N, D and the group structure are never inferred from the data.
    SALib cannot check the row order: evaluate the outputs on
    ``design.unit_points`` (mapped) without reordering.

    The intervals are ``estimate ± h``, h = SALib's bootstrap half-width,
    i.e. a normal approximation centred on the full-sample estimate, not a
    percentile interval.  The bootstrap resamples rows as if they were
    i.i.d., so on a scrambled Sobol' design it reports Monte Carlo-sized
    uncertainty: typically several times wider than the actual (randomised
    QMC) error, i.e. conservative.  For an RQMC error bar, repeat the design
    with independent seeds and take the spread.

    A constant output is reported with status ``"zero variance"`` and all
    indices 0; an output with NaN or inf with status ``"non-finite"`` and all
    indices NaN.  Neither is passed to SALib.
    """
    root = _check_options(design, outputs, confidence=confidence, n_bootstrap=n_bootstrap,
                          variance_rtol=variance_rtol, seed=seed)
    confidence = float(confidence)
    n_bootstrap = int(n_bootstrap)
    results: dict[str, SobolIndices] = {}
    for name, values in outputs.items():
        y = _checked_output(name, values, design)
        if not np.all(np.isfinite(y)):
            results[name] = _constant_result(
                name, design, np.nan, STATUS_NON_FINITE, confidence, n_bootstrap,
                float("nan"), float("nan"),
            )
            continue
        mean = float(y.mean())
        var = float(y.var())
        if np.ptp(y) == 0.0 or math.sqrt(var) <= variance_rtol * abs(mean):
            results[name] = _constant_result(
                name, design, 0.0, STATUS_ZERO_VARIANCE, confidence, n_bootstrap, mean, var
            )
            continue
        results[name] = _salib_indices(name, y, design, confidence=confidence,
                                       n_bootstrap=n_bootstrap,
                                       rng=_output_stream(root, name), mean=mean, var=var)
    return SobolResults(results, design, root.entropy)


def _check_options(design, outputs, *, confidence, n_bootstrap, variance_rtol,
                   seed) -> np.random.SeedSequence:
    """Refuse a malformed call of :func:`sobol_indices`; returns the bootstrap root seed."""
    if not isinstance(design, SaltelliDesign):
        raise OutputLengthError(
            f"design must be a SaltelliDesign (it carries N, D and the second-order "
            f"flag), got {type(design).__name__}"
        )
    if not isinstance(confidence, numbers.Real):
        raise SensitivityOptionError(f"confidence must be in (0, 1), got {confidence!r}")
    check_confidence(confidence, error=SensitivityOptionError)
    if isinstance(n_bootstrap, bool) or not isinstance(n_bootstrap, (int, np.integer)) or n_bootstrap < 2:
        raise SensitivityOptionError(f"n_bootstrap must be an integer >= 2, got {n_bootstrap!r}")
    if not (np.isfinite(variance_rtol) and variance_rtol >= 0):
        raise SensitivityOptionError(f"variance_rtol must be finite and >= 0, got {variance_rtol!r}")
    if not isinstance(outputs, Mapping) or len(outputs) == 0:
        raise OutputLengthError("outputs must be a non-empty mapping of output name to array")
    if isinstance(seed, np.random.Generator):
        return np.random.SeedSequence(int(seed.integers(2**63)))
    if isinstance(seed, np.random.SeedSequence):
        return seed
    return np.random.SeedSequence(_seed_entropy(seed))


def _checked_output(name: str, values, design: SaltelliDesign) -> np.ndarray:
    """One output as floats of the design's run count, in design row order."""
    y = np.asarray(values)
    if y.dtype == bool:
        y = y.astype(float)
    try:
        y = np.asarray(y, dtype=float)
    except (TypeError, ValueError) as exc:
        raise OutputLengthError(f"output {name!r} is not numeric: {exc}") from exc
    if y.ndim != 1 or y.shape[0] != design.n_runs:
        raise OutputLengthError(
            f"output {name!r} has shape {y.shape}, expected ({design.n_runs},) = "
            f"base_n {design.base_n} x ({'2D+2' if design.second_order else 'D+2'}) "
            f"with D={design.n_factors}; evaluate the model on every row of the design, in order"
        )
    return y


def _salib_indices(name: str, y: np.ndarray, design: SaltelliDesign, *, confidence: float,
                   n_bootstrap: int, rng, mean: float, var: float) -> SobolIndices:
    """SALib's Saltelli/Jansen estimates of one varying output, with the design's own
    problem and second-order flag, as :class:`SobolIndices`.

    Without second-order rows the same estimators and bootstrap run for all factors at once
    (:mod:`uq.estimators.saltelli_bootstrap`, equal to SALib's to rounding and ~50x faster
    at base N 1024); with them SALib itself is called.
    """
    d = design.n_factors
    if not design.second_order:
        est = first_total_with_bootstrap(y, d, n_resamples=n_bootstrap, confidence=confidence,
                                         rng=rng)
        s1, s1h, st, sth = est
        return _indices(name, design, (s1, s1 - s1h, s1 + s1h), (st, st - sth, st + sth),
                        status=STATUS_OK, confidence=confidence, n_bootstrap=n_bootstrap,
                        mean=mean, var=var, second=None, second_interval=None)
    raw = _salib_analyze.analyze(
        design.problem(),
        y,
        calc_second_order=design.second_order,
        num_resamples=n_bootstrap,
        conf_level=confidence,
        print_to_console=False,
        seed=rng,
    )
    s1, s1h = np.asarray(raw["S1"], float), np.asarray(raw["S1_conf"], float)
    st, sth = np.asarray(raw["ST"], float), np.asarray(raw["ST_conf"], float)
    second = second_iv = None
    if design.second_order:
        s2 = np.asarray(raw["S2"], float)
        s2h = np.asarray(raw["S2_conf"], float)
        iu = np.triu_indices(d, k=1)
        sym = np.full((d, d), np.nan)
        symh = np.full((d, d), np.nan)
        sym[iu] = s2[iu]
        symh[iu] = s2h[iu]
        sym.T[iu] = s2[iu]
        symh.T[iu] = s2h[iu]
        second = _readonly(sym)
        second_iv = Interval(_readonly(sym - symh), _readonly(sym + symh))
    return _indices(name, design, (s1, s1 - s1h, s1 + s1h), (st, st - sth, st + sth),
                    status=STATUS_OK, confidence=confidence, n_bootstrap=n_bootstrap, mean=mean,
                    var=var, second=second, second_interval=second_iv)
