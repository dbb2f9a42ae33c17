"""The outcome table: how the sampled deployments end, class by class, and the hardware risk.

One row per outcome class (:func:`uq.decisions.outcomes.classify_outcomes`) with its count,
its probability and the probability's interval; the point of no return along the route with
its distribution; and, beside the energy outcome, the risk of a hardware fault (a fault under
ice is a loss, a fault in open water a recovery), each sample weighted by its own probability
of a fault over its own mission duration.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from uq import estimators
from uq.decisions._common import _fmt_prob, _fmt_prob_interval
from uq.decisions.outcome_counts import OutcomeCounts, class_counts
from uq.decisions.outcomes import OUTCOME_CLASS_NAMES, OutcomeClass, classify_outcomes

__all__ = ["OutcomeRow", "HardwareRisk", "OutcomeTable", "outcome_table", "HARDWARE_VALUES",
           "hardware_values"]

_PNR_QUANTILES = (0.05, 0.1, 0.5, 0.9, 0.95)


@dataclass(frozen=True)
class OutcomeRow:
    """One outcome class: its count among the samples and its probability with interval."""

    code: int
    key: str  # snake_case name for JSON and CSV
    name: str  # plain-language name
    count: int
    probability: estimators.IntervalEstimate

    def to_dict(self) -> dict[str, Any]:
        p = self.probability
        return {"class": self.key, "name": self.name, "count": self.count,
                "probability": p.estimate, "lower": p.lower, "upper": p.upper,
                "confidence": p.confidence, "method": p.method}


@dataclass(frozen=True)
class HardwareRisk:
    """Hardware faults beside the energy outcome (means over samples of per-sample P)."""

    no_fault: estimators.IntervalEstimate  # P(no fault before the mission ends)
    fault_under_ice: estimators.IntervalEstimate  # P(first fault under ice): a loss
    fault_open_water: estimators.IntervalEstimate  # P(first fault in open water): recovered
    success_without_fault: estimators.IntervalEstimate  # P(energy success and no fault)
    lost_any_cause: estimators.IntervalEstimate  # P(lost under ice by energy or by a fault)
    subsystems: int

    def to_dict(self) -> dict[str, Any]:
        def d(e):
            return {"estimate": e.estimate, "lower": e.lower, "upper": e.upper,
                    "confidence": e.confidence, "method": e.method}
        return {"subsystems": self.subsystems, "p_no_fault": d(self.no_fault),
                "p_fault_under_ice": d(self.fault_under_ice),
                "p_fault_open_water": d(self.fault_open_water),
                "p_success_without_fault": d(self.success_without_fault),
                "p_lost_any_cause": d(self.lost_any_cause)}


@dataclass(frozen=True)
class OutcomeTable:
    """Outcome classes, point of no return and hardware risk of one propagation."""

    rows: tuple[OutcomeRow, ...]
    samples: int
    point_of_no_return_km: tuple[estimators.QuantileInterval, ...]  # over samples that have one
    share_with_point_of_no_return: float  # share of samples with x* short of the recovery point
    hardware: HardwareRisk | None

    def row(self, code: OutcomeClass) -> OutcomeRow:
        return next(r for r in self.rows if r.code == int(code))

    @property
    def p_lost(self) -> estimators.IntervalEstimate:
        """P(lost under ice) from energy alone."""
        return self.row(OutcomeClass.LOST_UNDER_ICE).probability

    @property
    def p_returned(self) -> estimators.IntervalEstimate:
        """P(turned back under ice and returned to a safe exit)."""
        return self.row(OutcomeClass.TURNED_BACK_TO_SAFE_EXIT).probability

    def to_dicts(self) -> list[dict[str, Any]]:
        return [r.to_dict() for r in self.rows]

    def sentence(self) -> str:
        """P(lost) beside P(success), the aborts and breaches, and the hardware share."""
        def part(code, label):
            p = self.row(code).probability
            return (f"{label} {_fmt_prob(p.estimate)} "
                    f"({p.confidence * 100:g} % CI {_fmt_prob_interval(p.lower, p.upper)})")
        text = (f"Outcomes: {part(OutcomeClass.SUCCESS, 'P(success)')}, "
                f"{part(OutcomeClass.LOST_UNDER_ICE, 'P(lost under ice)')}; "
                f"turned back to a safe exit "
                f"{_fmt_prob(self.row(OutcomeClass.TURNED_BACK_TO_SAFE_EXIT).probability.estimate)}, "
                f"reached recovery on the reserve "
                f"{_fmt_prob(self.row(OutcomeClass.RESERVE_BREACH).probability.estimate)}")
        if self.hardware is not None:
            hw = self.hardware
            text += (f"; with hardware faults P(lost) {_fmt_prob(hw.lost_any_cause.estimate)} "
                     f"and P(success without a fault) "
                     f"{_fmt_prob(hw.success_without_fault.estimate)}")
        return text + "."


def _split(values: np.ndarray, sizes: Sequence[int]) -> list[np.ndarray]:
    return np.split(values, np.cumsum(sizes)[:-1])


#: the fields :func:`uq.decisions.outcomes.classify_outcomes` reads
_CLASS_KEYS = ("success", "reaches_recovery", "failure_mode", "turned_back", "lost_under_ice")

#: the per-sample probabilities behind the hardware risk, in :class:`HardwareRisk` order
HARDWARE_VALUES = ("no_fault", "fault_under_ice", "fault_open_water", "success_without_fault",
                   "lost_any_cause")


def hardware_values(outcomes) -> np.ndarray:
    """``(n, 5)`` per-sample probabilities of :data:`HARDWARE_VALUES` (picklable: the sampling
    engine's workers call it to stream their moments over every sample)."""
    classes = classify_outcomes(outcomes)
    no_fault = np.asarray(outcomes["p_no_fault"], dtype=float)
    under = np.asarray(outcomes["p_fault_under_ice"], dtype=float)
    open_water = np.asarray(outcomes["p_fault_open_water"], dtype=float)
    lost = classes == OutcomeClass.LOST_UNDER_ICE
    # derived: an energy loss under ice is avoided only by a fault in open water before
    # it (the vehicle is recovered); any other sample is lost by a fault under ice
    lost_any = np.where(lost, 1.0 - open_water, under)
    success = (classes == OutcomeClass.SUCCESS) * no_fault
    return np.stack([no_fault, under, open_water, success, lost_any], axis=1)


def _mean(moments: Sequence, pooled, constant, scheme: str, confidence: float):
    """Mean of a per-sample probability by the one mean rule
    (:func:`uq.estimators.replicated_mean_from_moments`: a replicate t-interval for RQMC),
    kept in [0, 1]; ``moments`` per replicate, ``pooled`` over every sample, ``constant``
    the value when every sample has the same (else None)."""
    if constant is not None:
        v = float(constant)
        return estimators.IntervalEstimate(estimate=v, lower=v, upper=v, confidence=confidence,
                                           method="exact (no spread)", n=int(pooled.n))
    randomised = (scheme == "sobol" and len(moments) >= 2
                  and len({float(m.mean) for m in moments}) > 1)
    est = estimators.replicated_mean_from_moments(
        moments if randomised else [pooled], randomised=randomised, confidence=confidence)
    return estimators.IntervalEstimate(
        estimate=est.estimate, lower=max(0.0, est.lower), upper=min(1.0, est.upper),
        confidence=est.confidence, method=est.method, n=int(pooled.n))


def _hardware_of_rows(outcomes, sizes: Sequence[int]):
    """Per-replicate and pooled moments of the hardware values of rows held in memory, and
    the value where it has no spread."""
    values = hardware_values(outcomes)
    out = []
    for j in range(values.shape[1]):
        column = values[:, j]
        out.append(([estimators.sample_moments(p) for p in _split(column, sizes)],
                    estimators.sample_moments(column),
                    float(column[0]) if np.ptp(column) == 0.0 else None))
    return out


def outcome_table(outcomes, *, replicate_sizes: Sequence[int], scheme: str, confidence: float,
                  proportion, subsystems: int = 0, counts: OutcomeCounts | None = None,
                  hardware=None) -> OutcomeTable:
    """Tabulate the outcome classes of a propagation.

    Parameters
    ----------
    outcomes : uq.simulate.Outcomes
        Pooled over replicates, in plan order: every sample, or the rows kept of a larger
        sample (the point of no return's quantiles are then those of these rows).
    replicate_sizes : sequence of int
        Samples of each replicate, in order (they sum to the number of rows of ``outcomes``).
    scheme : str
        Sampling scheme of the plan ("sobol" uses the replicate rule).
    confidence : float
        Confidence level of every interval.
    proportion : callable
        ``proportion(counts, scheme, confidence) -> (IntervalEstimate, per-replicate)``, the
        assessment's one rule for a probability from per-replicate counts.
    subsystems : int
        Number of subsystems with a hazard (0: no hardware block).
    counts : uq.decisions.OutcomeCounts, optional
        The class counts of every sample, replicate by replicate; by default the tally of
        ``outcomes``.
    hardware : sequence, optional
        Per value of :data:`HARDWARE_VALUES`, ``(moments per replicate, pooled moments,
        the value if every sample has the same else None)`` over every sample; by default
        those of ``outcomes``.

    Returns
    -------
    OutcomeTable
    """
    if counts is None:  # the class counts of the rows, replicate by replicate
        ends = np.cumsum(replicate_sizes)
        by_class = [class_counts({k: np.asarray(outcomes[k])[hi - m:hi] for k in _CLASS_KEYS
                                  if k in outcomes})
                    for m, hi in zip(replicate_sizes, ends)]
        per_class = {int(c): [(int(t[int(c)]), int(m)) for t, m in zip(by_class, replicate_sizes)]
                     for c in OutcomeClass}
        samples = int(sum(replicate_sizes))
    else:
        per_class = {int(c): counts.of_class(int(c)) for c in OutcomeClass}
        samples = counts.samples
    rows = []
    for code in OutcomeClass:
        per_replicate = per_class[int(code)]
        est, _ = proportion(per_replicate, scheme, confidence)
        rows.append(OutcomeRow(code=int(code), key=code.name.lower(),
                               name=OUTCOME_CLASS_NAMES[code],
                               count=sum(c for c, _ in per_replicate), probability=est))
    pnr = np.asarray(outcomes["point_of_no_return_km"], dtype=float)
    has = np.isfinite(pnr)
    quantiles = []
    for q in _PNR_QUANTILES:
        try:
            quantiles.append(estimators.quantile_interval(pnr[has], q, confidence=confidence))
        except estimators.EstimatorError:
            continue  # too few samples with a point of no return for this level
    risk = None
    if subsystems:
        if hardware is None:
            hardware = _hardware_of_rows(outcomes, replicate_sizes)
        risk = HardwareRisk(*(_mean(*h, scheme, confidence) for h in hardware),
                            subsystems=int(subsystems))
    return OutcomeTable(rows=tuple(rows), samples=samples,
                        point_of_no_return_km=tuple(quantiles),
                        share_with_point_of_no_return=float(np.mean(has)) if has.size else 0.0,
                        hardware=risk)
