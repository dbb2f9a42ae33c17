"""P(success) with one input pinned near a quantile, by rank binning on the existing sample."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

from ._common import (
    OutOfRangeError,
    ShapeMismatchError,
    _as_bool_1d,
    _check_confidence,
    _fmt_prob,
    _fmt_prob_interval,
    _ResultMixin,
    _rows_frame,
    _wilson,
)

__all__ = ["PinnedRow", "PinnedInputProbabilities", "pinned_input_probabilities"]


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
