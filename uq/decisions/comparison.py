"""Setpoint sweeps (e.g. cruise speed) and paired comparisons of two vehicle configurations."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any
from dataclasses import dataclass

import numpy as np
from scipy import stats

from uq import estimators as _estimators

from ._common import (
    DecisionInputError,
    ShapeMismatchError,
    _as_bool_1d,
    _as_float_1d,
    _check_confidence,
    _check_probability_open,
    _fmt_num,
    _fmt_prob,
    _fmt_prob_interval,
    _mean_t_interval,
    _quantile_with_interval,
    _ResultMixin,
    _rows_frame,
    _same_length,
    _wilson,
)
from .verdict import Verdict, verdict_for

__all__ = [
    "SweepRow",
    "SweepSummary",
    "sweep_summary",
    "replicate_success",
    "replicate_mean",
    "RatioQuantile",
    "PairedComparison",
    "paired_comparison",
    "mcnemar_exact_p_value",
    "format_points",
    "robust_choice",
]


# =========================================================================== sweep
@dataclass(frozen=True)
class SweepRow:
    """Outcome at one setpoint.

    ``setpoint`` [setpoint unit]; ``successes`` and ``reached_recovery`` are counts of
    samples (a sample that reached the recovery point on its reserve counts as reached, not
    as a success); ``p_success`` [-] with the interval of the one P(success) rule
    (:func:`uq.estimators.success_probability`); duration quantile [d] over the samples that
    reached recovery, with an order-statistic interval (``None`` where none did or too few
    for the bound); mean margin [Wh] with the interval of the one mean rule.
    """

    setpoint: float
    samples: int
    successes: int
    p_success: float
    p_success_low: float
    p_success_high: float
    meets_requirement: bool  # lower bound >= required probability
    reached_recovery: int
    duration_quantile_days: float | None
    duration_quantile_days_low: float | None
    duration_quantile_days_high: float | None
    mean_margin_Wh: float
    mean_margin_Wh_low: float | None
    mean_margin_Wh_high: float | None


@dataclass(frozen=True)
class SweepSummary(_ResultMixin):
    """Sweep table and recommendation.

    ``robust_setpoint`` maximises the lower confidence bound of P(success) (ties to the
    larger mean margin, then the shorter duration quantile). ``recommended_setpoint`` is the
    same value when its lower bound meets the requirement, else ``None``: nothing is
    recommended when no swept value meets it.
    """

    setpoint_name: str
    unit: str
    margin_unit: str
    required_probability: float
    duration_quantile: float
    confidence: float
    rows: tuple[SweepRow, ...]
    robust_setpoint: float
    robust_index: int
    recommended_setpoint: float | None
    deterministic_optimum: float | None
    sentence: str

    def to_frame(self):
        """One row per setpoint (pandas DataFrame)."""
        return _rows_frame(self.rows)


def sweep_summary(
    setpoints,
    success,
    duration_days,
    arrived,
    margin,
    *,
    required_probability: float,
    confidence: float,
    setpoint_name: str,
    unit: str,
    deterministic_optimum: float | None = None,
    duration_quantile: float = 0.9,
    margin_unit: str = "Wh",
    replicates: int = 1,
    randomised: bool = False,
    reference: tuple[int, Any] | None = None,
) -> SweepSummary:
    """Summarise a sweep over a mission setpoint and recommend a robust choice.

    Parameters
    ----------
    setpoints : array_like, shape (m,)
        Setpoint values [unit].
    success, arrived : array_like of bool, shape (m, n)
        Success and "reached the recovery point" per setpoint and sample.
    duration_days : array_like, shape (m, n)
        Transit duration [d] (only samples that reached recovery are used).
    margin : array_like, shape (m, n)
        Energy margin at arrival or at the end of range [margin_unit].
    required_probability : float
        Requirement on P(success) [-].
    confidence : float
    setpoint_name, unit : str
        E.g. "cruise speed", "m/s".
    deterministic_optimum : float, optional
        Setpoint a deterministic (nominal-input) optimisation picks [unit], shown beside.
    duration_quantile : float
        Quantile of arrival duration to tabulate (default 0.9, "P90") [-].
    margin_unit : str
        Unit of ``margin``.
    replicates : int, default 1
        The n samples are ``replicates`` equal consecutive plans (plan order).
    randomised : bool, default False
        True when those plans are independent randomised-QMC replicates; P(success) and the
        mean margin then use the replicate rules of :mod:`uq.estimators.replicates`, the
        same as an assessment of the same samples.
    reference : (index, estimate), optional
        The row that is the assessed configuration itself and the assessment's P(success)
        estimate (e.g. from its rare-event stage): that row states the verdict's number.

    Returns
    -------
    SweepSummary
    """
    confidence = _check_confidence(confidence)
    p_star = _check_probability_open(required_probability, "required_probability")
    dq = _check_probability_open(duration_quantile, "duration_quantile")
    sp = np.asarray(setpoints, dtype=float)
    if sp.ndim != 1 or sp.size == 0:
        raise ShapeMismatchError(f"setpoints has shape {sp.shape}: expected a non-empty 1-D array")
    s = np.asarray(success)
    a = np.asarray(arrived)
    d = np.asarray(duration_days, dtype=float)
    mg = np.asarray(margin, dtype=float)
    shapes = {"success": s.shape, "duration_days": d.shape, "arrived": a.shape, "margin": mg.shape}
    if s.ndim != 2 or s.shape[0] != sp.size or s.shape[1] == 0 or len(set(shapes.values())) != 1:
        raise ShapeMismatchError(f"expected all of shape (m={sp.size} setpoints, n samples); got {shapes}")
    _check_replicates(replicates, s.shape[1])
    s, a = s.astype(bool), a.astype(bool)
    given = dict([reference]) if reference is not None else {}
    rows = [_sweep_row(sp[i], s[i], d[i], a[i], mg[i], p_star=p_star, dq=dq,
                       confidence=confidence, replicates=replicates, randomised=randomised,
                       estimate=given.get(i))
            for i in range(sp.size)]  # setpoints, not samples
    best = _robust_index(rows)
    sentence = _sweep_sentence(rows, best, setpoint_name=setpoint_name, unit=unit, p_star=p_star,
                               dq=dq, confidence=confidence,
                               deterministic_optimum=deterministic_optimum)
    r = rows[best]
    return SweepSummary(
        setpoint_name=setpoint_name,
        unit=unit,
        margin_unit=margin_unit,
        required_probability=p_star,
        duration_quantile=dq,
        confidence=confidence,
        rows=tuple(rows),
        robust_setpoint=r.setpoint,
        robust_index=int(best),
        recommended_setpoint=r.setpoint if r.meets_requirement else None,
        deterministic_optimum=None if deterministic_optimum is None else float(deterministic_optimum),
        sentence=sentence,
    )


def _check_replicates(replicates: int, n: int) -> None:
    if int(replicates) < 1 or n % int(replicates):
        raise ShapeMismatchError(
            f"replicates={replicates}: expected a whole number of equal plans in {n} samples")


def replicate_success(success, *, replicates: int = 1, randomised: bool = False,
                      confidence: float = 0.95) -> _estimators.ProbabilityEstimate:
    """P(success) of per-sample outcomes laid out as ``replicates`` equal consecutive plans,
    by the one rule (:func:`uq.estimators.success_probability`)."""
    s = np.asarray(success, dtype=bool)
    _check_replicates(replicates, s.size)
    counts = [(int(np.count_nonzero(part)), part.size)
              for part in np.split(s, int(replicates))]
    return _estimators.success_probability(counts, randomised=randomised,
                                           confidence=confidence)


def replicate_mean(values, *, replicates: int = 1, randomised: bool = False,
                   confidence: float = 0.95):
    """Mean of per-sample values over ``replicates`` equal consecutive plans, by the one mean
    rule (:func:`uq.estimators.replicated_mean`); bounds ``None`` with too few values."""
    x = np.asarray(values, dtype=float)
    _check_replicates(replicates, x.size)
    parts = np.split(x, int(replicates))
    if not randomised and replicates > 1:
        parts = [x]
    if (len(parts) == 1 and x.size < 2):
        return float(np.mean(x)), None, None
    est = _estimators.replicated_mean(parts, randomised=randomised and replicates > 1,
                                      confidence=confidence)
    return est.estimate, est.lower, est.upper


def _sweep_row(setpoint: float, success, duration_days, arrived, margin, *, p_star: float,
               dq: float, confidence: float, replicates: int, randomised: bool,
               estimate=None) -> SweepRow:
    """P(success), the duration quantile of those that reached recovery and the mean margin
    at one setpoint."""
    counted = replicate_success(success, replicates=replicates, randomised=randomised,
                                confidence=confidence)
    p = counted if estimate is None else estimate
    t = np.sort(duration_days[arrived])
    if t.size:
        if not np.all(np.isfinite(t)):
            raise DecisionInputError(
                f"duration_days at setpoint {setpoint}: arrived samples must be finite")
        dq_est, dq_lo, dq_hi = _quantile_with_interval(t, dq, confidence)
    else:
        dq_est = dq_lo = dq_hi = None
    mm, mm_lo, mm_hi = replicate_mean(margin, replicates=replicates, randomised=randomised,
                                      confidence=confidence)
    return SweepRow(
        setpoint=float(setpoint),
        samples=int(success.size),
        successes=int(counted.count),
        p_success=float(p.estimate),
        p_success_low=float(p.lower),
        p_success_high=float(p.upper),
        meets_requirement=bool(p.lower >= p_star),
        reached_recovery=int(t.size),
        duration_quantile_days=dq_est,
        duration_quantile_days_low=dq_lo,
        duration_quantile_days_high=dq_hi,
        mean_margin_Wh=mm,
        mean_margin_Wh_low=mm_lo,
        mean_margin_Wh_high=mm_hi,
    )


def robust_choice(p_success_low, mean_margin=None, duration=None) -> int:
    """Index of the robust choice among configurations: the highest lower bound of
    P(success); ties (equal to 12 significant digits, e.g. all 1.0 when uncertainty is
    small) go to the larger mean energy margin, then to the shorter duration. ``None``
    entries rank last. The one rule for sweeps and studies."""
    m = len(p_success_low)

    def value(seq, i, sign):
        v = None if seq is None else seq[i]
        return np.inf if v is None or not np.isfinite(v) else sign * float(f"{v:.12g}")

    key = [(value(p_success_low, i, -1), value(mean_margin, i, -1), value(duration, i, 1))
           for i in range(m)]
    return min(range(m), key=lambda i: key[i])


def _robust_index(rows) -> int:
    return robust_choice([r.p_success_low for r in rows], [r.mean_margin_Wh for r in rows],
                         [r.duration_quantile_days for r in rows])


def _sweep_sentence(rows, best: int, *, setpoint_name: str, unit: str, p_star: float, dq: float,
                    confidence: float, deterministic_optimum) -> str:
    """The recommendation (none when no value meets the requirement), with the
    deterministic optimum beside it when given."""
    r = rows[best]
    pct = f"{confidence * 100:g} %"
    u = f" {unit}" if unit else ""
    pq = f"P{dq * 100:g}"
    figures = (f"P(success) {_fmt_prob(r.p_success)} ({pct} CI "
               f"{_fmt_prob_interval(r.p_success_low, r.p_success_high)})")
    if r.meets_requirement:
        sentence = (
            f"Set {setpoint_name} to {r.setpoint:g}{u} (robust choice: highest lower bound of "
            f"P(success), ties to the larger mean margin): {figures}, which meets the required "
            f"{_fmt_prob(p_star)}; {pq} duration {_fmt_num(r.duration_quantile_days)} d.")
    else:
        sentence = (
            f"No swept value of {setpoint_name} meets the required {_fmt_prob(p_star)} on the "
            f"lower bound, so none is recommended; the highest lower bound is at "
            f"{r.setpoint:g}{u}: {figures}.")
    if deterministic_optimum is None:
        return sentence
    det = float(deterministic_optimum)
    match = [q for q in rows if np.isclose(q.setpoint, det, rtol=1e-9, atol=0.0)]
    if not match:
        return sentence + f" The deterministic optimum is {det:g}{u} (not among the swept setpoints)."
    q = match[0]
    return sentence + (
        f" The deterministic optimum {det:g}{u} gives P(success) {_fmt_prob(q.p_success)} "
        f"({pct} CI {_fmt_prob_interval(q.p_success_low, q.p_success_high)}), {pq} duration "
        f"{_fmt_num(q.duration_quantile_days)} d."
    )


# =========================================================================== paired
def mcnemar_exact_p_value(a_only: int, b_only: int) -> float:
    """Two-sided exact McNemar p-value of discordant pair counts.

    Under H0 (both configurations equally likely to succeed) each discordant pair is
    A-only with probability 1/2, so the test is a two-sided binomial test of
    min(a_only, b_only) in a_only + b_only trials at p = 1/2:
    p = min(1, 2 F(min; n_d, 1/2)). No discordant pairs gives p = 1.
    """
    nd = int(a_only) + int(b_only)
    if nd == 0:
        return 1.0
    return float(min(1.0, 2.0 * stats.binom.cdf(min(a_only, b_only), nd, 0.5)))


@dataclass(frozen=True)
class RatioQuantile:
    """Quantile of the per-sample ratio of energy per km A / B [-] with its order-statistic interval."""

    quantile: float
    ratio: float
    ratio_low: float | None
    ratio_high: float | None


@dataclass(frozen=True)
class PairedComparison(_ResultMixin):
    """Comparison of configurations A and B on the same input samples.

    ``p_success_a`` / ``p_success_b`` [-] come from the one P(success) rule, each with its
    verdict against the requirement; ``difference`` = P(success of A) - P(success of B) [-]
    with the paired interval (the one mean rule on the per-sample difference of the success
    indicators, :func:`uq.estimators.replicated_mean`). Discordant pairs: shares with Wilson
    intervals and the exact two-sided McNemar p-value [-]. Ratios of energy per distance
    A / B [-] over samples where both are finite and B's is positive.
    """

    names: tuple[str, str]
    samples: int
    successes_a: int
    successes_b: int
    p_success_a: float
    p_success_a_low: float
    p_success_a_high: float
    p_success_b: float
    p_success_b_low: float
    p_success_b_high: float
    verdict_a: str | None
    verdict_b: str | None
    required_probability: float | None
    difference: float
    difference_low: float | None
    difference_high: float | None
    better: str | None  # the name of the better configuration; None when the interval spans 0
    a_only: int
    b_only: int
    probability_a_only: float
    probability_a_only_low: float
    probability_a_only_high: float
    probability_b_only: float
    probability_b_only_low: float
    probability_b_only_high: float
    mcnemar_p_value: float
    probability_a_less_energy: float
    probability_a_less_energy_low: float
    probability_a_less_energy_high: float
    energy_ratio_samples: int
    energy_ratio_quantiles: tuple[RatioQuantile, ...]
    confidence: float
    sentence: str
    cautions: tuple[str, ...] = ()

    def to_frame(self):
        """Quantiles of the energy-per-km ratio A / B (pandas DataFrame)."""
        return _rows_frame(self.energy_ratio_quantiles)

    def verdicts(self) -> dict[str, str | None]:
        return {self.names[0]: self.verdict_a, self.names[1]: self.verdict_b}


def format_points(x: float) -> str:
    """A difference of probabilities in percentage points, signed: '+3.2' / '-0.40'."""
    v = 100.0 * x
    digits = 1 if abs(v) >= 1 or v == 0 else 2
    return f"{v:+.{digits}f}".replace("-", "\u2212")


def paired_comparison(
    success_a,
    success_b,
    energy_per_km_a,
    energy_per_km_b,
    *,
    names: tuple[str, str],
    confidence: float,
    quantiles: Sequence[float] = (0.05, 0.5, 0.95),
    energy_unit: str = "Wh/km",
    replicates: int = 1,
    randomised: bool = False,
    required_probability: float | None = None,
    cautions: Sequence[str] = (),
    reference_a=None,
) -> PairedComparison:
    """Compare two configurations run on the same input samples.

    Parameters
    ----------
    success_a, success_b : array_like of bool, shape (n,)
    energy_per_km_a, energy_per_km_b : array_like, shape (n,)
        Energy per horizontal distance [energy_unit]; +inf where a configuration makes no
        headway (it then never uses less energy).
    names : (str, str)
    confidence : float
    quantiles : sequence of float
        Quantiles of the ratio A / B to report [-].
    energy_unit : str
    replicates, randomised :
        Layout of the samples (see :func:`sweep_summary`): the same rules as an assessment.
    required_probability : float, optional
        Requirement on P(success) [-]: each configuration then gets its verdict.
    cautions : sequence of str
        Cautions carried with the result (e.g. a pair compared with ``force``).
    reference_a : estimate, optional
        A's own assessment's P(success) (e.g. from its rare-event stage): A then states the
        verdict's number and verdict.

    Returns
    -------
    PairedComparison
    """
    confidence = _check_confidence(confidence)
    sa, sb, ea, eb, n = _checked_pair(success_a, success_b, energy_per_km_a, energy_per_km_b)
    if len(names) != 2:
        raise ShapeMismatchError(f"names={names!r}: expected two names")
    na, nb_ = (str(x) for x in names)
    layout = {"replicates": replicates, "randomised": randomised, "confidence": confidence}
    counted_a = replicate_success(sa, **layout)
    pa = counted_a if reference_a is None else reference_a
    pb = replicate_success(sb, **layout)
    diff, diff_lo, diff_hi = replicate_mean(sa.astype(float) - sb.astype(float), **layout)
    verdict_a = verdict_b = None
    if required_probability is not None:
        verdict_a = verdict_for(pa, required_probability=required_probability).verdict
        verdict_b = verdict_for(pb, required_probability=required_probability).verdict
    better = None
    if diff_lo is not None and diff_lo > 0:
        better = na
    elif diff_hi is not None and diff_hi < 0:
        better = nb_
    a_only = int(np.count_nonzero(sa & ~sb))
    b_only = int(np.count_nonzero(sb & ~sa))
    lo_a, hi_a = _wilson(a_only, n, confidence)
    lo_b, hi_b = _wilson(b_only, n, confidence)
    p_value = mcnemar_exact_p_value(a_only, b_only)
    k_less = int(np.count_nonzero(ea < eb))
    lo_l, hi_l = _wilson(k_less, n, confidence)
    ratio, rq = _energy_ratio_quantiles(ea, eb, quantiles, confidence)
    sentence = _paired_sentence(na, nb_, pa, pb, diff, diff_lo, diff_hi, better, n, confidence)
    return PairedComparison(
        names=(na, nb_),
        samples=n,
        successes_a=int(counted_a.count),
        successes_b=int(pb.count),
        p_success_a=float(pa.estimate),
        p_success_a_low=float(pa.lower),
        p_success_a_high=float(pa.upper),
        p_success_b=float(pb.estimate),
        p_success_b_low=float(pb.lower),
        p_success_b_high=float(pb.upper),
        verdict_a=verdict_a,
        verdict_b=verdict_b,
        required_probability=None if required_probability is None else float(required_probability),
        difference=float(diff),
        difference_low=None if diff_lo is None else float(diff_lo),
        difference_high=None if diff_hi is None else float(diff_hi),
        better=better,
        a_only=a_only,
        b_only=b_only,
        probability_a_only=a_only / n,
        probability_a_only_low=float(lo_a),
        probability_a_only_high=float(hi_a),
        probability_b_only=b_only / n,
        probability_b_only_low=float(lo_b),
        probability_b_only_high=float(hi_b),
        mcnemar_p_value=p_value,
        probability_a_less_energy=k_less / n,
        probability_a_less_energy_low=float(lo_l),
        probability_a_less_energy_high=float(hi_l),
        energy_ratio_samples=int(ratio.size),
        energy_ratio_quantiles=rq,
        confidence=confidence,
        sentence=sentence,
        cautions=tuple(str(c) for c in cautions),
    )


def _checked_pair(success_a, success_b, energy_per_km_a, energy_per_km_b):
    """The two configurations' per-sample arrays, checked: (sa, sb, ea, eb, n)."""
    sa = _as_bool_1d(success_a, "success_a")
    sb = _as_bool_1d(success_b, "success_b")
    ea = _as_float_1d(energy_per_km_a, "energy_per_km_a")
    eb = _as_float_1d(energy_per_km_b, "energy_per_km_b")
    n = _same_length(success_a=sa, success_b=sb, energy_per_km_a=ea, energy_per_km_b=eb)
    if n == 0:
        raise ShapeMismatchError("no samples: expected at least one")
    if np.any(np.isnan(ea)) or np.any(np.isnan(eb)):
        raise DecisionInputError("energy per km contains NaN: expected numbers (+inf for no headway)")
    return sa, sb, ea, eb, n


def _energy_ratio_quantiles(ea, eb, quantiles, confidence):
    """The sorted ratios A / B where both made headway, and their requested quantiles."""
    ok = np.isfinite(ea) & np.isfinite(eb) & (eb > 0)
    ratio = np.sort(ea[ok] / eb[ok])
    rq = []
    for q in quantiles:
        q = _check_probability_open(q, "quantiles entry")
        if ratio.size:
            est, lo, hi = _quantile_with_interval(ratio, q, confidence)
            rq.append(RatioQuantile(q, est, lo, hi))
    return ratio, tuple(rq)


def _paired_sentence(na, nb, pa, pb, diff, lo, hi, better, n, confidence) -> str:
    """Which configuration is better, by how much, with the paired interval: one sentence."""
    pct = f"{confidence * 100:g} %"
    both = (f"P(success) {_fmt_prob(pa.estimate)} for {na} against {_fmt_prob(pb.estimate)} "
            f"for {nb}")
    if lo is None or hi is None:
        band = "no interval (too few samples)"
    else:
        band = f"{pct} CI {format_points(lo)} to {format_points(hi)}"
    if better is None:
        return (f"Neither configuration is clearly better: {both}, a paired difference of "
                f"{format_points(diff)} percentage points ({band}) on {n:,} shared samples.")
    worse = nb if better == na else na
    gap = diff if better == na else -diff
    band_b = band if better == na else (
        f"{pct} CI {format_points(-hi)} to {format_points(-lo)}")
    return (f"{better} is better than {worse} by {format_points(gap)[1:]} percentage points of "
            f"P(success) ({band_b}, paired over {n:,} shared samples): {both}.")
