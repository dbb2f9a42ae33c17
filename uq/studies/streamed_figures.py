"""The propagation's counts and means streamed over every sample, when rows are not all kept.

Above the row limit (:data:`uq.studies.propagation.KEPT_ROWS`) the propagation keeps only a
subsample of rows; the figures below still use every sample, through reducers of the sampling
engine whose memory does not grow with the sample size:

* the outcome classes, failure modes by leg and censored ranges, replicate by replicate — the
  one tally :class:`uq.decisions.OutcomeTally` summed block by block;
* the mean energy margin — per-replicate moments into the one mean rule
  (:func:`uq.estimators.replicated_mean_from_moments`);
* the hardware risk — per-replicate moments of the per-sample fault probabilities
  (:func:`uq.decisions.outcome_table.hardware_values`);
* the probability-of-reaching-range curve — exact counts at a grid fixed before streaming, up
  to the longest range a sample can report (:func:`uq.simulate.range_limit_km`), into the
  curve's one rule (:func:`uq.estimators.exceedance_curve_from_counts`).
"""
from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np

from uq import estimators
from uq.decisions.outcome_counts import OutcomeCounts, OutcomeTally
from uq.decisions.outcome_table import hardware_values
from uq.sampling.engine import HistogramReducer, merge_moments
from uq.sampling.group_reducers import GroupMoments, GroupMomentsReducer, GroupTallyReducer
from uq.simulate import range_limit_km

__all__ = ["Figures", "range_grid", "reducers", "figures"]

#: points of the probability-of-reaching-range curve
_CURVE_POINTS = 241


class Figures(NamedTuple):
    """The figures of every sample that the propagation reports beside its rows."""

    range_curve: estimators.ExceedanceCurve
    mean_margin_Wh: estimators.IntervalEstimate
    counts: OutcomeCounts
    hardware: Any  # per hardware value (moments per replicate, pooled, constant) or None


def range_grid(scenario) -> np.ndarray:
    """Thresholds of the streamed range curve [km]: 0 to the longest range a sample can
    report, known before the first sample."""
    return np.linspace(0.0, range_limit_km(scenario), _CURVE_POINTS)


def reducers(scenario, offsets) -> dict:
    """The engine reducers of :func:`figures` (groups: the replicates at ``offsets``)."""
    tally = OutcomeTally(len(scenario.legs))
    out = {"tally": GroupTallyReducer(tally, offsets, tally.size),
           "margin": GroupMomentsReducer("margin_Wh", offsets),
           "range": HistogramReducer("range_km", range_grid(scenario))}
    if scenario.hardware.subsystems:
        out["hardware"] = GroupMomentsReducer(hardware_values, offsets)
    return out


def _pooled(moments) -> GroupMoments:
    """The moments of several groups together, merged in plan order."""
    n, total, m2 = 0, 0.0, 0.0
    for m in moments:
        n, total, m2 = merge_moments((n, total, m2), m[:3])
    return GroupMoments(n, total, m2, min(m.minimum for m in moments),
                        max(m.maximum for m in moments))


def figures(scenario, result: dict, confidence: float, randomised: bool) -> Figures:
    """The figures of every sample from the reducers' results (``result`` of the stream)."""
    hist = result["range"]
    curve = estimators.exceedance_curve_from_counts(hist.edges, hist.counts, hist.n,
                                                    above=hist.above, confidence=confidence)
    margin = [columns[0] for columns in result["margin"]]
    hardware = None
    if "hardware" in result:
        hardware = []
        for j in range(len(result["hardware"][0])):
            per = [columns[j] for columns in result["hardware"]]
            pooled = _pooled(per)
            constant = pooled.minimum if pooled.minimum == pooled.maximum else None
            hardware.append((per, pooled, constant))
    return Figures(
        range_curve=curve,
        mean_margin_Wh=estimators.replicated_mean_from_moments(
            margin if randomised else [_pooled(margin)], randomised=randomised,
            confidence=confidence),
        counts=OutcomeCounts(result["tally"], len(scenario.legs)),
        hardware=hardware)
