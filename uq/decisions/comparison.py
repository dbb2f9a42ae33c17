"""Setpoint sweeps (e.g. cruise speed) and paired comparisons of two vehicle configurations."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

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

__all__ = [
    "SweepRow",
    "SweepSummary",
    "sweep_summary",
    "RatioQuantile",
    "PairedComparison",
    "paired_comparison",
    "mcnemar_exact_p_value",
]


# =========================================================================== sweep
@dataclass(frozen=True)
class SweepRow:
    """Outcome at one setpoint.

    ``setpoint`` [setpoint unit]; probabilities [-] with Wilson intervals; duration
    quantile [d] over arrived samples with an order-statistic interval (``None`` where no
    sample arrived or too few for the bound); mean margin [margin unit] with a t-interval.
    """

    setpoint: float
    probability_of_success: float
    probability_low: float
    probability_high: float
    meets_requirement: bool  # lower bound >= required probability
    arrived: int
    duration_quantile_days: float | None
    duration_quantile_days_low: float | None
    duration_quantile_days_high: float | None
    mean_margin: float
    mean_margin_low: float | None
    mean_margin_high: float | None


@dataclass(frozen=True)
class SweepSummary(_ResultMixin):
    """Sweep table and robust recommendation.

    The robust setpoint maximises the lower confidence bound of P(success); ties (equal to
    12 significant digits) go to the shortest duration quantile.
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
) -> SweepSummary:
    """Summarise a sweep over a mission setpoint and recommend a robust choice.

    Parameters
    ----------
    setpoints : array_like, shape (m,)
        Setpoint values [unit].
    success, arrived : array_like of bool, shape (m, n)
        Outcome per setpoint and sample.
    duration_days : array_like, shape (m, n)
        Transit duration [d] (only arrived samples are used).
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
    s, a = s.astype(bool), a.astype(bool)
    rows = [_sweep_row(sp[i], s[i], d[i], a[i], mg[i], p_star=p_star, dq=dq,
                       confidence=confidence) for i in range(sp.size)]  # setpoints, not samples
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
        deterministic_optimum=None if deterministic_optimum is None else float(deterministic_optimum),
        sentence=sentence,
    )


def _sweep_row(setpoint: float, success, duration_days, arrived, margin, *, p_star: float,
               dq: float, confidence: float) -> SweepRow:
    """P(success), the duration quantile of the arrived and the mean margin at one setpoint."""
    n = success.size
    k = int(np.count_nonzero(success))
    lo, hi = _wilson(k, n, confidence)
    t = np.sort(duration_days[arrived])
    if t.size:
        if not np.all(np.isfinite(t)):
            raise DecisionInputError(
                f"duration_days at setpoint {setpoint}: arrived samples must be finite")
        dq_est, dq_lo, dq_hi = _quantile_with_interval(t, dq, confidence)
    else:
        dq_est = dq_lo = dq_hi = None
    mm, mm_lo, mm_hi = _mean_t_interval(margin, confidence)
    return SweepRow(
        setpoint=float(setpoint),
        probability_of_success=k / n,
        probability_low=float(lo),
        probability_high=float(hi),
        meets_requirement=bool(lo >= p_star),
        arrived=int(t.size),
        duration_quantile_days=dq_est,
        duration_quantile_days_low=dq_lo,
        duration_quantile_days_high=dq_hi,
        mean_margin=mm,
        mean_margin_low=mm_lo,
        mean_margin_high=mm_hi,
    )


def _robust_index(rows) -> int:
    """The robust choice: the highest lower bound of P(success); ties (e.g. all 1.0 when
    uncertainty is small) go to the larger mean energy margin, then to the shorter duration
    quantile."""
    key = [
        (-float(f"{r.probability_low:.12g}"),
         -float(f"{r.mean_margin:.12g}") if r.mean_margin is not None else np.inf,
         np.inf if r.duration_quantile_days is None else r.duration_quantile_days)
        for r in rows
    ]
    return min(range(len(rows)), key=lambda i: key[i])


def _sweep_sentence(rows, best: int, *, setpoint_name: str, unit: str, p_star: float, dq: float,
                    confidence: float, deterministic_optimum) -> str:
    """The recommendation, with the deterministic optimum beside it when given."""
    r = rows[best]
    pct = f"{confidence * 100:g} %"
    u = f" {unit}" if unit else ""
    pq = f"P{dq * 100:g}"
    meets = "meets" if r.meets_requirement else "does NOT meet"
    sentence = (
        f"Set {setpoint_name} to {r.setpoint:g}{u} (robust choice: highest lower bound of P(success), ties to the larger mean margin): "
        f"P(success) {_fmt_prob(r.probability_of_success)} ({pct} CI "
        f"{_fmt_prob_interval(r.probability_low, r.probability_high)}), which {meets} the required "
        f"{_fmt_prob(p_star)}; {pq} duration {_fmt_num(r.duration_quantile_days)} d."
    )
    if deterministic_optimum is None:
        return sentence
    det = float(deterministic_optimum)
    match = [q for q in rows if np.isclose(q.setpoint, det, rtol=1e-9, atol=0.0)]
    if not match:
        return sentence + f" The deterministic optimum is {det:g}{u} (not among the swept setpoints)."
    q = match[0]
    return sentence + (
        f" The deterministic optimum {det:g}{u} gives P(success) {_fmt_prob(q.probability_of_success)} "
        f"({pct} CI {_fmt_prob_interval(q.probability_low, q.probability_high)}), {pq} duration "
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

    Probabilities [-] with Wilson intervals; ``mcnemar_p_value`` [-] is the exact two-sided
    McNemar test on the discordant pairs; ratios of energy per distance A / B [-] over samples
    where both are finite and B's is positive.
    """

    names: tuple[str, str]
    samples: int
    probability_success_a: float
    probability_success_b: float
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

    def to_frame(self):
        """Quantiles of the energy-per-km ratio A / B (pandas DataFrame)."""
        return _rows_frame(self.energy_ratio_quantiles)


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

    Returns
    -------
    PairedComparison
    """
    confidence = _check_confidence(confidence)
    sa = _as_bool_1d(success_a, "success_a")
    sb = _as_bool_1d(success_b, "success_b")
    ea = _as_float_1d(energy_per_km_a, "energy_per_km_a")
    eb = _as_float_1d(energy_per_km_b, "energy_per_km_b")
    n = _same_length(success_a=sa, success_b=sb, energy_per_km_a=ea, energy_per_km_b=eb)
    if n == 0:
        raise ShapeMismatchError("no samples: expected at least one")
    if np.any(np.isnan(ea)) or np.any(np.isnan(eb)):
        raise DecisionInputError("energy per km contains NaN: expected numbers (+inf for no headway)")
    if len(names) != 2:
        raise ShapeMismatchError(f"names={names!r}: expected two names")
    na, nb_ = (str(x) for x in names)
    a_only = int(np.count_nonzero(sa & ~sb))
    b_only = int(np.count_nonzero(sb & ~sa))
    lo_a, hi_a = _wilson(a_only, n, confidence)
    lo_b, hi_b = _wilson(b_only, n, confidence)
    p_value = mcnemar_exact_p_value(a_only, b_only)
    k_less = int(np.count_nonzero(ea < eb))
    lo_l, hi_l = _wilson(k_less, n, confidence)
    ok = np.isfinite(ea) & np.isfinite(eb) & (eb > 0)
    ratio = np.sort(ea[ok] / eb[ok])
    rq = []
    for q in quantiles:
        q = _check_probability_open(q, "quantiles entry")
        if ratio.size:
            est, lo, hi = _quantile_with_interval(ratio, q, confidence)
            rq.append(RatioQuantile(q, est, lo, hi))
    pct = f"{confidence * 100:g} %"
    sentence = (
        f"On {n:,} shared samples, {na} succeeds where {nb_} fails in {_fmt_prob(a_only / n)} "
        f"({pct} CI {_fmt_prob_interval(float(lo_a), float(hi_a))}) and {nb_} where {na} fails in "
        f"{_fmt_prob(b_only / n)} ({pct} CI {_fmt_prob_interval(float(lo_b), float(hi_b))}); exact "
        f"McNemar p = {p_value:.3g}. {na} uses less energy per km in {_fmt_prob(k_less / n)} of samples"
    )
    median = [r for r in rq if r.quantile == 0.5]
    if median:
        m = median[0]
        sentence += (
            f"; median energy-per-km ratio {na}/{nb_} {m.ratio:.3f} ({pct} CI "
            f"{_fmt_num(m.ratio_low, 3)}–{_fmt_num(m.ratio_high, 3)})"
        )
    sentence += "."
    return PairedComparison(
        names=(na, nb_),
        samples=n,
        probability_success_a=float(np.mean(sa)),
        probability_success_b=float(np.mean(sb)),
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
        energy_ratio_quantiles=tuple(rq),
        confidence=confidence,
        sentence=sentence,
    )
