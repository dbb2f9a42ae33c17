"""The verdict panel: what the board reads first.

:func:`verdict_panel` turns an assessment into the panel's texts and gauge positions: the
verdict and how close it is (a 94.6 % against 95 % must not read like a 30 %), P(success) and
P(lost) with intervals, the dominant failure (mode and leg) in one sentence, what would make
it GO where the run computed it, a gauge on a fixed 0-100 % scale and a zoomed strip around
the requirement. Numbers come from the assessment's own estimates; nothing is re-estimated
here except the joint count of (failure mode, leg), which the breakdown gives only
separately.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from uq.decisions.outcome_counts import OutcomeCounts, mode_leg_counts
from uq.decisions.outcomes import OUTCOME_CLASS_NAMES, OutcomeClass
from uq.report._format import Formatter
from uq.simulate import FAILURE_MODE_NAMES, FailureMode

__all__ = ["Gauge", "VerdictPanel", "verdict_panel", "near_band", "gauge", "zoom_gauge",
           "dominant_failure"]

WORDS = {"go": "GO", "no-go": "NO-GO", "undecided": "UNDECIDED"}


def near_band(required: float) -> float:
    """How close [-] an interval bound may come to p* and still read as "narrow": a quarter
    of the failure share the requirement allows, at least one percentage point (a reporting
    choice, common practice, no source)."""
    return max(0.01, 0.25 * (1.0 - required))


@dataclass(frozen=True)
class Gauge:
    """Positions [% of the strip width] on a scale from ``left`` to ``right`` [-]."""

    left: float
    right: float
    ticks: tuple[tuple[float, str], ...]  # (position, label)
    ci_left: float | None
    ci_width: float | None
    estimate: float | None
    required: float
    off_scale: str | None  # "below" / "above": the interval lies outside the strip
    caption: str


def _position(v: float, left: float, right: float) -> float:
    return 100.0 * (v - left) / (right - left)


def _make_gauge(p, required: float, left: float, right: float, step: float,
                fmt: Formatter, caption: str) -> Gauge:
    ticks = []
    k = math.ceil(left / step - 1e-9)
    while k * step <= right + 1e-9:
        v = k * step
        ticks.append((_position(v, left, right), f"{100 * v:.{0 if step >= 0.01 else 1}f} %"))
        k += 1
    lo, hi, est = float(p.lower), float(p.upper), float(p.estimate)
    off = "below" if hi < left else ("above" if lo > right else None)
    if off:
        return Gauge(left, right, tuple(ticks), None, None, None,
                     _position(required, left, right), off, caption)
    a, b = max(lo, left), min(hi, right)
    return Gauge(left, right, tuple(ticks), _position(a, left, right),
                 max(_position(b, left, right) - _position(a, left, right), 0.4),
                 _position(est, left, right) if left <= est <= right else None,
                 _position(required, left, right), None, caption)


def gauge(p, required: float, fmt: Formatter) -> Gauge:
    """P(success) and its interval on the fixed 0-100 % scale."""
    return _make_gauge(p, required, 0.0, 1.0, 0.25, fmt, "0 to 100 %")


def zoom_gauge(p, required: float, fmt: Formatter) -> Gauge:
    """A strip around the requirement: p* +- w, w from {2, 5, 10} percentage points (the
    failure share allowed, at least 2 and at most 10 points), clipped to 0-100 %."""
    allowed = 1.0 - required
    w = next((c for c in (0.02, 0.05, 0.1) if c >= allowed - 1e-12), 0.1)
    left, right = max(0.0, required - w), min(1.0, required + w)
    step = w / 2 if w >= 0.05 else 0.005
    return _make_gauge(p, required, left, right, step, fmt,
                       f"zoom: {fmt.pct(left, 0 if w >= 0.05 else 1)} to "
                       f"{fmt.pct(right, 0 if w >= 0.05 else 1)}")


def dominant_failure(outcomes, leg_names, fmt: Formatter) -> str:
    """One sentence: the commonest (failure mode, leg) pair and its share of the failures.

    ``outcomes``: per-sample outcomes, or the :class:`uq.decisions.OutcomeCounts` of every
    sample of a propagation (the same tally either way)."""
    if isinstance(outcomes, OutcomeCounts):
        cells, samples = outcomes.mode_leg(success=False), outcomes.samples
    else:
        success = np.asarray(outcomes["success"], bool)
        cells = mode_leg_counts(outcomes["failure_mode"], outcomes["failing_leg"], success,
                                len(leg_names))[:, :, 0]
        samples = success.size
    failures = int(cells.sum())
    if failures == 0:
        return f"No sample failed (0 of {samples:,})."
    # (mode, leg + 1) cells in row-major order: the pairs sorted by mode, then leg
    flat = np.flatnonzero(cells)
    counts = cells.ravel()[flat]
    order = np.argsort(-counts, kind="stable")

    def part(i):
        m, j = divmod(int(flat[i]), cells.shape[1])
        j -= 1
        where = f" on {leg_names[j]}" if 0 <= j < len(leg_names) else ""
        return (f"{FAILURE_MODE_NAMES[FailureMode(m)]}{where} ({int(counts[i]):,} of "
                f"{failures:,} failures, {fmt.pct(counts[i] / failures)})")

    text = f"Most failures: {part(order[0])}"
    if len(order) > 1 and counts[order[1]] >= 0.1 * failures:
        text += f"; next: {part(order[1])}"
    return text + "."


@dataclass(frozen=True)
class VerdictPanel:
    verdict: str  # "go" | "no-go" | "undecided" (CSS class)
    word: str
    closeness: str  # "clear" | "narrow" | "straddles"
    closeness_sentence: str
    p_success: str  # "83.0 % (95 % CI 81.7–84.2 %)"
    level: str  # confidence level of the P(success) interval, "95 %"
    required: str
    failure_sentence: str  # share failing against the share allowed
    lost: tuple[str, str] | None  # (label, value text)
    reason: str
    go_sentences: tuple[str, ...]
    full: Gauge
    zoom: Gauge


def _level(p) -> str:
    """Confidence level as written ("95 %", "97.5 %" under a sequential rule's looks)."""
    return f"{100.0 * p.confidence:.4g} %"


def _closeness(v, p, fmt: Formatter) -> tuple[str, str]:
    req, lo, hi = v.required_probability, float(p.lower), float(p.upper)
    band = near_band(req)
    ci = f"{_level(p)} interval {fmt.pct_interval(lo, hi)}"
    if v.verdict == "undecided":
        more = (f" About {v.additional_samples:,} more samples would settle it."
                if v.additional_samples else "")
        return "straddles", (f"Too close to call: the {ci} contains the required "
                             f"{fmt.pct(req)}.{more}")
    gap = (lo - req) if v.verdict == "go" else (req - hi)
    points = f"{100 * gap:.1f} percentage points" if gap >= 0.001 else "less than 0.1 percentage point"
    if v.verdict == "go":
        if gap < band:
            return "narrow", (f"GO, but narrowly: the lower bound {fmt.pct(lo)} clears the "
                              f"required {fmt.pct(req)} by only {points}; a small adverse "
                              "change to the plan or its inputs could undo it.")
        return "clear", (f"GO with room: the lower bound {fmt.pct(lo)} clears the required "
                         f"{fmt.pct(req)} by {points}.")
    if gap < band:
        return "narrow", (f"NO-GO, but narrowly: the upper bound {fmt.pct(hi)} is only {points} "
                          f"short of the required {fmt.pct(req)}; a small change to the plan "
                          "may make it GO.")
    wide = " by a wide margin" if gap >= 4 * band else ""
    return "clear", (f"NO-GO{wide}: even the upper bound, {fmt.pct(hi)}, is {points} short of "
                     f"the required {fmt.pct(req)}.")


def _lost(a, fmt: Formatter) -> tuple[str, str] | None:
    table = a.propagation.outcome_table
    if table is None:
        return None
    ice = any(leg.under_ice for leg in a.scenario.legs)
    code = OutcomeClass.LOST_UNDER_ICE if ice else OutcomeClass.LOST
    row = table.row(code)
    p = row.probability
    label = "P(lost under ice)" if ice else "P(lost)"
    text = (f"{fmt.pct(p.estimate)} ({_level(p)} CI "
            f"{fmt.pct_interval(p.lower, p.upper)}; {row.count:,} of {table.samples:,} samples"
            f"{'' if ice else ': ' + OUTCOME_CLASS_NAMES[code].split('(')[-1].rstrip(')')})")
    other = table.row(OutcomeClass.LOST)
    if ice and other.count:
        text += f"; lost in open water {fmt.pct(other.probability.estimate)}"
    if table.hardware is not None:
        hw = table.hardware.lost_any_cause
        text += f"; with hardware faults {fmt.pct(hw.estimate)}"
    return label, text


def _lever_text(g) -> str:
    """One lever of the requirement search in a line: "nominal battery energy at least
    16,534 Wh (now 16,000 Wh)"; its own sentence when no value was found."""
    if g.required_value is None:
        return g.sentence

    def val(x):
        text = f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.4g}"
        return f"{text} {g.unit}".rstrip().replace("-", "\u2212")

    return f"{g.label} {g.direction} {val(g.required_value)} (now {val(g.current_value)})"


def verdict_panel(a: Any, fmt: Formatter | None = None) -> VerdictPanel:
    """The panel of assessment ``a`` (see the module docstring)."""
    fmt = fmt or Formatter()
    v, p = a.verdict, a.propagation.p_success
    closeness, sentence = _closeness(v, p, fmt)
    # the complement of the one P(success) estimate and interval, not a second estimate
    failure_sentence = (
        f"{fmt.pct(1.0 - p.estimate)} of the sampled deployments fail "
        f"({fmt.pct_interval(1.0 - p.upper, 1.0 - p.lower)}); the requirement allows "
        f"{fmt.pct(1.0 - v.required_probability)}.")
    go = tuple(_lever_text(g) for g in (getattr(a, "go_requirements", None) or ()))
    return VerdictPanel(
        verdict=v.verdict, word=WORDS.get(v.verdict, v.verdict.upper()), closeness=closeness,
        closeness_sentence=sentence,
        p_success=(f"{fmt.pct(p.estimate)} ({_level(p)} CI "
                   f"{fmt.pct_interval(p.lower, p.upper)})"),
        level=_level(p), required=fmt.pct(v.required_probability),
        failure_sentence=failure_sentence,
        lost=_lost(a, fmt),
        # the counts of every sample (a propagation without them: its rows)
        reason=dominant_failure(getattr(a.propagation, "counts", None) or a.propagation.outcomes,
                                [leg.name for leg in a.scenario.legs], fmt),
        go_sentences=go, full=gauge(p, v.required_probability, fmt),
        zoom=zoom_gauge(p, v.required_probability, fmt))
