"""Where and why samples fail: shares per failure mode and per leg, with Wilson intervals."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .outcome_counts import MODE_CODES, mode_leg_counts
from ._common import (
    ShapeMismatchError,
    UnknownCodeError,
    _check_confidence,
    _fmt_prob,
    _fmt_prob_interval,
    _ResultMixin,
    _rows_frame,
    _same_length,
    _wilson,
)

__all__ = ["BreakdownRow", "FailureBreakdown", "failure_breakdown",
           "failure_breakdown_from_counts"]

NO_LEG = -1  # failing-leg index of a sample that did not fail in any leg


@dataclass(frozen=True)
class BreakdownRow:
    """One failure mode or one leg.

    ``share_of_samples*`` are fractions of all samples [-]; ``share_of_failures*`` are
    fractions of the failed samples [-] (``None`` when nothing failed).
    """

    kind: str  # "mode" or "leg"
    code: int  # failure-mode code, or leg index (-1: no leg)
    name: str
    count: int
    share_of_samples: float
    share_of_samples_low: float
    share_of_samples_high: float
    share_of_failures: float | None
    share_of_failures_low: float | None
    share_of_failures_high: float | None


@dataclass(frozen=True)
class FailureBreakdown(_ResultMixin):
    """Failure shares per mode and per leg.

    Attributes
    ----------
    samples, failures : int
        Number of samples and of failed samples [-].
    failure_probability, failure_probability_low, failure_probability_high : float
        Share of samples that failed and its Wilson interval [-].
    confidence : float
    modes, legs : tuple of BreakdownRow
        Failure modes (the no-failure code excluded) and legs (failed samples only; a
        "no leg" row when failures carry leg index -1).
    dominant_mode, dominant_leg : str or None
    sentence : str
    """

    samples: int
    failures: int
    failure_probability: float
    failure_probability_low: float
    failure_probability_high: float
    confidence: float
    modes: tuple[BreakdownRow, ...]
    legs: tuple[BreakdownRow, ...]
    dominant_mode: str | None
    dominant_leg: str | None
    sentence: str

    def to_frame(self):
        """Table with one row per failure mode, then one per leg (pandas DataFrame)."""
        return _rows_frame(self.modes + self.legs)


def _rows(kind, codes, names, counts, n, n_fail, confidence):
    lo_s, hi_s = _wilson(counts, n, confidence)
    lo_f, hi_f = _wilson(counts, n_fail, confidence)
    rows = []
    for i, (code, name) in enumerate(zip(codes, names)):
        c = int(counts[i])
        rows.append(
            BreakdownRow(
                kind=kind,
                code=int(code),
                name=name,
                count=c,
                share_of_samples=c / n,
                share_of_samples_low=float(lo_s[i]),
                share_of_samples_high=float(hi_s[i]),
                share_of_failures=(c / n_fail) if n_fail else None,
                share_of_failures_low=float(lo_f[i]) if n_fail else None,
                share_of_failures_high=float(hi_f[i]) if n_fail else None,
            )
        )
    return tuple(rows)


def failure_breakdown(
    failure_mode,
    failing_leg,
    *,
    mode_names: Mapping[int, str],
    leg_names: Sequence[str],
    confidence: float,
    no_failure_code: int = 0,
    failure_probability: tuple[float, float, float] | None = None,
) -> FailureBreakdown:
    """Shares of all samples and of failures per failure mode and per leg.

    Parameters
    ----------
    failure_mode : array_like of int, shape (n,)
        Failure-mode code per sample [-]; ``no_failure_code`` marks success.
    failing_leg : array_like of int, shape (n,)
        Index of the leg in which the sample failed [-]; -1 for none.
    mode_names : mapping int -> str
        Name of every code that occurs (the no-failure code may be omitted).
    leg_names : sequence of str
        Leg names, indexed by leg.
    confidence : float
        Two-sided confidence level of the Wilson intervals [-].
    no_failure_code : int
        Code of a sample that did not fail (default 0).
    failure_probability : (estimate, low, high), optional
        P(failure) with its interval when the caller has it from the one P(success) rule
        (1 - P(success), bounds swapped), so the page states one number; by default the
        Wilson interval on the count.

    Returns
    -------
    FailureBreakdown
    """
    confidence = _check_confidence(confidence)
    mode = np.asarray(failure_mode)
    leg = np.asarray(failing_leg)
    if mode.ndim != 1 or leg.ndim != 1:
        raise ShapeMismatchError(
            f"failure_mode {mode.shape} and failing_leg {leg.shape}: expected 1-D arrays"
        )
    n = _same_length(failure_mode=mode, failing_leg=leg)
    if n == 0:
        raise ShapeMismatchError("failure_mode is empty: expected at least one sample")
    if not (np.issubdtype(mode.dtype, np.integer) and np.issubdtype(leg.dtype, np.integer)):
        raise ShapeMismatchError("failure_mode and failing_leg must be integer arrays")
    failed = mode != no_failure_code
    codes_present = set(np.unique(mode[failed]).tolist())
    missing = codes_present - set(int(k) for k in mode_names)
    if missing:
        raise UnknownCodeError(f"failure-mode codes {sorted(missing)} have no entry in mode_names")
    n_legs = len(leg_names)
    bad = (leg < NO_LEG) | (leg >= n_legs)
    if np.any(bad):
        raise UnknownCodeError(
            f"failing_leg values {sorted(set(leg[bad].tolist()))[:5]} outside -1..{n_legs - 1} (len(leg_names) = {n_legs})"
        )
    if mode.min() < 0:
        raise UnknownCodeError(f"failure-mode codes {sorted(set(mode[mode < 0].tolist()))[:5]} "
                               "are negative: expected codes >= 0")
    codes = max(MODE_CODES, int(mode.max()) + 1, int(no_failure_code) + 1)
    counts = mode_leg_counts(mode, leg, np.zeros(n, bool), n_legs, codes=codes).sum(axis=2)
    return failure_breakdown_from_counts(
        counts, mode_names=mode_names, leg_names=leg_names, confidence=confidence,
        no_failure_code=no_failure_code, failure_probability=failure_probability)


def failure_breakdown_from_counts(
    mode_leg,
    *,
    mode_names: Mapping[int, str],
    leg_names: Sequence[str],
    confidence: float,
    no_failure_code: int = 0,
    failure_probability: tuple[float, float, float] | None = None,
) -> FailureBreakdown:
    """:func:`failure_breakdown` from counts by failure mode and failing leg.

    Parameters
    ----------
    mode_leg : (codes, len(leg_names) + 1) array_like of int
        Samples by failure-mode code (row) and failing leg + 1 (column 0: no leg), e.g.
        :meth:`uq.decisions.outcome_counts.OutcomeCounts.mode_leg` over every sample streamed.
    mode_names, leg_names, confidence, no_failure_code, failure_probability
        As for :func:`failure_breakdown`.
    """
    confidence = _check_confidence(confidence)
    cells = np.asarray(mode_leg, dtype=np.int64)
    n_legs = len(leg_names)
    n = int(cells.sum())
    failed_rows = np.arange(cells.shape[0]) != no_failure_code
    n_fail = int(cells[failed_rows].sum())
    if n == 0:
        raise ShapeMismatchError("no sample counted: expected at least one")
    present = set(np.flatnonzero((cells.sum(axis=1) > 0) & failed_rows).tolist())
    missing = present - set(int(k) for k in mode_names)
    if missing:
        raise UnknownCodeError(f"failure-mode codes {sorted(missing)} have no entry in mode_names")

    mode_codes = sorted(int(k) for k in mode_names if int(k) != no_failure_code)
    mode_counts = np.array([cells[c].sum() if 0 <= c < cells.shape[0] else 0
                            for c in mode_codes], dtype=float)
    modes = _rows("mode", mode_codes, [mode_names[c] for c in mode_codes], mode_counts, n, n_fail, confidence)

    leg_counts_all = cells[failed_rows].sum(axis=0).astype(float)
    leg_codes = list(range(n_legs))
    names = list(leg_names)
    counts = leg_counts_all[1:]
    if leg_counts_all[0] > 0:  # failures not attributed to a leg
        leg_codes = [NO_LEG] + leg_codes
        names = ["no leg"] + names
        counts = leg_counts_all
    legs = _rows("leg", leg_codes, names, counts, n, n_fail, confidence)

    if failure_probability is None:
        p_est = n_fail / n
        p_lo, p_hi = _wilson(n_fail, n, confidence)
    else:
        p_est, p_lo, p_hi = (float(v) for v in failure_probability)
    pct = f"{confidence * 100:g} %"
    head = (
        f"{n_fail:,} of {n:,} samples failed ({_fmt_prob(p_est)}, "
        f"{pct} CI {_fmt_prob_interval(float(p_lo), float(p_hi))})"
    )
    dominant_mode = dominant_leg = None
    if n_fail == 0:
        sentence = f"{head}; no failure mode to attribute."
    else:
        m = max(modes, key=lambda r: r.count)
        g = max(legs, key=lambda r: r.count)
        dominant_mode, dominant_leg = m.name, g.name
        sentence = (
            f"{head}. Dominant failure mode: {m.name}, {_fmt_prob(m.share_of_failures)} of failures "
            f"({pct} CI {_fmt_prob_interval(m.share_of_failures_low, m.share_of_failures_high)}); "
            f"dominant leg: {g.name}, {_fmt_prob(g.share_of_failures)} of failures "
            f"({pct} CI {_fmt_prob_interval(g.share_of_failures_low, g.share_of_failures_high)})."
        )
    return FailureBreakdown(
        samples=n,
        failures=n_fail,
        failure_probability=p_est,
        failure_probability_low=float(p_lo),
        failure_probability_high=float(p_hi),
        confidence=confidence,
        modes=modes,
        legs=legs,
        dominant_mode=dominant_mode,
        dominant_leg=dominant_leg,
        sentence=sentence,
    )
