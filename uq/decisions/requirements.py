"""What would make it GO: the value of one lever at which the confidence bound meets p*.

A lever (battery energy, a setpoint, the reserve policy) is changed alone and the assessment
re-run on common random numbers (the same sample points), so P(success) moves only through
the lever. Its lower confidence bound is then a step function of the lever; a bracketing root
finder (:func:`scipy.optimize.brentq`) locates the step at which it crosses p*. The lever
value where the *upper* bound crosses p* closes an interval: between the two, P(success) = p*
cannot be told apart from the run's sampling error (inverting the interval, as a test).
"""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from scipy import optimize

from ._common import OutOfRangeError, _fmt_prob, _ResultMixin

__all__ = ["GoRequirement", "go_requirement"]

#: (lower bound, estimate, upper bound) of P(success) at a lever value [-]
Bounds = tuple[float, float, float]


@dataclass(frozen=True)
class GoRequirement(_ResultMixin):
    """The lever value that gives GO on the confidence bound, everything else unchanged.

    Attributes
    ----------
    lever : str
        Scenario key of the lever, e.g. ``battery.nominal_energy_Wh``.
    label, unit : str
    direction : {"at least", "at most"}
        GO needs the lever at least (or at most) ``required_value``.
    current_value : float
        The scenario's value [unit].
    required_value : float or None
        Where the lower confidence bound of P(success) reaches p* [unit]; None when not
        reachable within the search range.
    interval_low, interval_high : float or None
        Lever values between which P(success) = p* is within the run's interval: from where
        the upper bound reaches p* to ``required_value`` [unit].
    search_low, search_high : float
        The range searched [unit].
    lower_bound_at_required : float or None
        Lower confidence bound of P(success) re-run at ``required_value`` [-].
    required_probability : float
    evaluations : int
        Re-runs of the assessment's sample [-].
    samples : int
        Samples of each re-run [-].
    sentence : str
    """

    lever: str
    label: str
    unit: str
    direction: str
    current_value: float
    required_value: float | None
    interval_low: float | None
    interval_high: float | None
    search_low: float
    search_high: float
    lower_bound_at_required: float | None
    required_probability: float
    evaluations: int
    samples: int
    sentence: str


def _fmt(x: float, unit: str) -> str:
    text = f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.4g}"
    return f"{text} {unit}".rstrip()


def _crossing(f: Callable[[float], float], inside: float, outside: float, xtol: float) -> float:
    """The point between ``inside`` (f >= 0) and ``outside`` (f < 0) where f changes sign,
    returned on the f >= 0 side (within ``xtol``)."""
    root = optimize.brentq(f, inside, outside, xtol=xtol, maxiter=60)
    step = math.copysign(xtol, inside - outside)
    x = root
    for _ in range(4):  # a step function: make sure the answer itself is on the GO side
        if f(x) >= 0.0:
            return x
        x += step
    return inside


def go_requirement(
    evaluate: Callable[[float], Bounds],
    *,
    lever: str,
    label: str,
    unit: str,
    current_value: float,
    search: Sequence[float],
    required_probability: float,
    samples: int,
    xtol: float,
) -> GoRequirement:
    """Find the lever value at which the lower bound of P(success) reaches p*.

    Parameters
    ----------
    evaluate : callable float -> (lower, estimate, upper)
        Re-runs the assessment at a lever value on common random numbers [-].
    lever, label, unit : str
    current_value : float
        The scenario's value [unit].
    search : sequence of float
        Lever values to scan, in increasing order and containing the current value; the
        crossing nearest the current value between two scanned points is refined [unit].
    required_probability : float
        p* [-].
    samples : int
        Samples behind each evaluation [-].
    xtol : float
        Absolute tolerance of the root [unit].

    Returns
    -------
    GoRequirement
    """
    grid = sorted(float(v) for v in search)
    if len(grid) < 2 or not grid[0] <= current_value <= grid[-1]:
        raise OutOfRangeError(f"search={list(search)!r}: expected >= 2 values spanning current_value={current_value!r}")
    p_star = float(required_probability)
    cache: dict[float, Bounds] = {}

    def bounds(x: float) -> Bounds:
        if x not in cache:
            cache[x] = tuple(float(v) for v in evaluate(x))
        return cache[x]

    def gap_lower(x):
        return bounds(x)[0] - p_star

    def gap_upper(x):
        return bounds(x)[2] - p_star

    go = [gap_lower(x) >= 0.0 for x in grid]
    # GO points nearest the current value, then the neighbour across the boundary
    candidates = [i for i, ok in enumerate(go) if ok]
    if not candidates:
        best = max(grid, key=lambda x: bounds(x)[0])
        sentence = (
            f"No {label} gives GO on its own: not reachable within [{_fmt(grid[0], '')}, "
            f"{_fmt(grid[-1], unit)}] (the lower bound of P(success) peaks at "
            f"{_fmt_prob(bounds(best)[0])} at {_fmt(best, unit)}, short of {_fmt_prob(p_star)}).")
        return GoRequirement(lever, label, unit, "at least", float(current_value), None, None, None,
                             grid[0], grid[-1], None, p_star, len(cache), samples, sentence)
    i_go = min(candidates, key=lambda i: abs(grid[i] - current_value))
    neighbours = [j for j in (i_go - 1, i_go + 1) if 0 <= j < len(grid) and not go[j]]
    if not neighbours:  # GO across the whole neighbourhood: the edge of the GO region nearest
        edge = [j for j in range(len(grid)) if not go[j]]
        if not edge:
            sentence = (f"Every {label} from {_fmt(grid[0], unit)} to {_fmt(grid[-1], unit)} gives GO: "
                        f"the verdict does not hinge on it within that range.")
            return GoRequirement(lever, label, unit, "at least", float(current_value), None, None, None,
                                 grid[0], grid[-1], None, p_star, len(cache), samples, sentence)
        j = min(edge, key=lambda k: abs(grid[k] - grid[i_go]))
        i_go = j + 1 if j < i_go else j - 1
        neighbours = [j]
    j = min(neighbours, key=lambda k: abs(grid[k] - current_value))
    inside, outside = grid[i_go], grid[j]
    direction = "at least" if inside > outside else "at most"
    required = _crossing(gap_lower, inside, outside, xtol)
    # the other end of the interval: where the upper bound reaches p*, on the far side
    far = outside
    if gap_upper(far) >= 0.0:
        k = j
        step = -1 if j < i_go else 1
        while 0 <= k + step < len(grid) and gap_upper(grid[k]) >= 0.0:
            k += step
        far = grid[k]
    other = _crossing(gap_upper, required, far, xtol) if gap_upper(far) < 0.0 else far
    low, high = sorted((required, other))
    lb = bounds(required)[0]
    now = f"now {_fmt(current_value, unit)}"
    head = (f"GO holds for a {label} of {direction} {_fmt(required, unit)} ({now}: the margin)"
            if gap_lower(current_value) >= 0.0 else
            f"GO needs a {label} of {direction} {_fmt(required, unit)} ({now})")
    sentence = (
        f"{head}, everything else as planned: there the lower bound of P(success) is "
        f"{_fmt_prob(lb)} against the required {_fmt_prob(p_star)}; P(success) itself reaches "
        f"{_fmt_prob(p_star)} between {_fmt(low, unit)} and {_fmt(high, unit)} within the run's "
        f"sampling error.")
    return GoRequirement(lever, label, unit, direction, float(current_value), float(required),
                         float(low), float(high), grid[0], grid[-1], lb, p_star, len(cache),
                         samples, sentence)
