"""Small failure probabilities by subset simulation in standard-normal space.

Plain sampling estimates a probability of 1e-4 from about one failure per 10,000 runs; a
review that asks for the probability of losing the vehicle below 1e-3 or 1e-4 needs a
method whose cost grows with log(1/P) instead of 1/P. Subset simulation (Au & Beck 2001)
writes the failure probability as a product of larger conditional probabilities,
``P(F) = P(F_1) P(F_2 | F_1) ... P(F | F_{m-1})``, with intermediate thresholds set
adaptively at the ``p0`` quantile of the limit-state values, and samples each conditional
level by a component-wise ("modified") Metropolis chain started from the previous level's
failures.

Everything happens in independent standard-normal coordinates ``z``; a caller with
correlated inputs maps ``u = Phi(z)`` through its Gaussian copula and marginals
(:meth:`uq.sampling.inputs.InputModel.transform`) inside the limit-state function, so the
dependence is respected.

The interval is replicate based: R independent runs (child seed streams) give R unbiased-
in-the-limit estimates whose mean and Student-t interval are reported, so no formula for
the correlation of the Markov chains is needed.

References
----------
.. [1] Au, S.-K. & Beck, J. L. (2001). Estimation of small failure probabilities in high
   dimensions by subset simulation. Probabilistic Engineering Mechanics 16(4):263-277.
.. [2] Zuev, K. M., Beck, J. L., Au, S.-K. & Katafygiotis, L. S. (2012). Bayesian
   post-processor and other enhancements of subset simulation. Computers & Structures
   92-93:283-296 (choice of p0 = 0.1).
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np
from scipy import special

from uq.estimators.intervals import (EstimatorError, IntervalEstimate, check_confidence,
                                     clopper_pearson_bounds, replicate_interval)
from uq.estimators.replicates import MIN_RARE_EVENTS
from uq.estimators.streamed import evaluate_rows

__all__ = ["RareEventEstimate", "subset_simulation", "failure_limit_state",
           "plain_sampling_runs_for"]


@dataclass(frozen=True)
class RareEventEstimate:
    """A small failure probability with its replicate interval.

    Attributes
    ----------
    probability : IntervalEstimate
        Mean of the replicate estimates and its Student-t interval [-].
    replicate_estimates : tuple of float
        One estimate per independent subset-simulation run [-].
    model_runs : int
        Limit-state evaluations over all replicates [-].
    levels : tuple of int
        Number of conditional levels each replicate needed.
    method : str
        Name of the estimator (reported beside the number).
    events : dict of str to IntervalEstimate
        Sub-events of the failure (e.g. outcome classes) estimated from the same runs: the
        last level's share of each, times the product of the intermediate levels.
    """

    probability: IntervalEstimate
    replicate_estimates: tuple[float, ...]
    model_runs: int
    levels: tuple[int, ...]
    method: str
    events: dict = field(default_factory=dict)

    @property
    def relative_half_width(self) -> float:
        """Half width of the interval over the estimate [-]."""
        p = self.probability
        return p.half_width / p.estimate if p.estimate > 0 else float("inf")

    def to_dict(self) -> dict:
        d = self.probability.to_dict()
        d.update(replicate_estimates=list(self.replicate_estimates), model_runs=self.model_runs,
                 levels=list(self.levels), relative_half_width=self.relative_half_width,
                 estimator=self.method,
                 events={k: v.to_dict() for k, v in self.events.items()})
        return d


def _values(result, n_events: int) -> tuple[np.ndarray, np.ndarray]:
    """Split a limit state's return into g (n,) and the sub-event marks (n, n_events)."""
    if isinstance(result, tuple):
        g, marks = result
        marks = np.asarray(marks, dtype=bool).reshape(len(g), -1)
    else:
        g, marks = result, np.zeros((len(result), 0), dtype=bool)
    if marks.shape[1] != n_events:
        raise EstimatorError(
            f"the limit state marked {marks.shape[1]} sub-events; expected {n_events} (one per "
            "event name)")
    return np.asarray(g, dtype=float), marks


def _one_run(dimension: int, n: int, p0: float, max_levels: int, spread: float,
             rng: np.random.Generator, n_events: int = 0):
    """One subset-simulation run as a generator: it yields the points it needs evaluated and
    is sent back ``(g, marks)`` for them; it returns (estimate, sub-event estimates,
    evaluations, levels, (product of the intermediate levels, last-level samples, sub-event
    hits in the last level)). Several runs are driven in lockstep by :func:`_drive`."""
    z = rng.standard_normal((n, dimension))
    g, marks = yield z
    runs = n
    n_seeds = int(round(p0 * n))
    chain = n // n_seeds
    probability = 1.0
    for level in range(1, max_levels + 1):
        order = np.argsort(g, kind="stable")
        threshold = 0.5 * (g[order[n_seeds - 1]] + g[order[n_seeds]])
        if threshold <= 0.0:
            # a sub-event of failure lies inside every intermediate level, so the last level's
            # samples estimate it as they estimate the failure itself
            failed = g <= 0.0
            hits = np.count_nonzero(marks & failed[:, None], axis=0)
            return (probability * float(np.mean(failed)), probability * hits / g.size, runs,
                    level, (probability, g.size, hits))
        probability *= p0
        seeds = order[:n_seeds]
        current_z, current_g, current_m = z[seeds].copy(), g[seeds].copy(), marks[seeds].copy()
        states = [(current_z, current_g, current_m)]
        for _ in range(chain - 1):
            # modified Metropolis: each component moves independently under a uniform proposal
            # with the standard-normal ratio; the candidate is kept only inside the level
            proposal = current_z + spread * rng.uniform(-1.0, 1.0, current_z.shape)
            ratio = np.exp(-0.5 * (proposal ** 2 - current_z ** 2))
            move = rng.uniform(size=current_z.shape) < np.minimum(1.0, ratio)
            candidate = np.where(move, proposal, current_z)
            changed = move.any(axis=1)
            cand_g, cand_m = current_g.copy(), current_m.copy()
            if changed.any():
                cand_g[changed], cand_m[changed] = yield candidate[changed]
                runs += int(changed.sum())
            inside = cand_g <= threshold
            current_z = np.where(inside[:, None], candidate, current_z)
            current_g = np.where(inside, cand_g, current_g)
            current_m = np.where(inside[:, None], cand_m, current_m)
            states.append((current_z, current_g, current_m))
        z, g, marks = (np.concatenate(part) for part in zip(*states))
    raise EstimatorError(
        f"subset simulation did not reach the failure domain within {max_levels} levels "
        f"(P below {p0 ** max_levels:.0e}); the failure may be impossible for these inputs")


def _drive(limit_state, runs: list, n_events: int) -> list:
    """Drive independent runs in lockstep: each round evaluates every run's pending points in
    one call of the limit state (one stream through the engine instead of one per run).
    Each run draws from its own generator, so the results equal those of runs driven one by
    one."""
    results = [None] * len(runs)
    pending = {i: next(run) for i, run in enumerate(runs)}
    while pending:
        order = list(pending)
        points = [pending[i] for i in order]
        g, marks = _values(limit_state(np.concatenate(points)), n_events)
        cuts = np.cumsum([len(z) for z in points])[:-1]
        pending = {}
        for i, g_i, m_i in zip(order, np.split(g, cuts), np.split(marks, cuts)):
            try:
                pending[i] = runs[i].send((g_i, m_i))
            except StopIteration as done:
                results[i] = done.value
    return results


def subset_simulation(limit_state: Callable[[np.ndarray], np.ndarray], dimension: int, *,
                      samples_per_level: int = 2000, p0: float = 0.1, replicates: int = 10,
                      confidence: float = 0.95, max_levels: int = 12, spread: float = 1.0,
                      rng=None, event_names: Sequence[str] = ()) -> RareEventEstimate:
    """P(g(Z) <= 0) for independent standard-normal Z by subset simulation (Au & Beck 2001).

    Parameters
    ----------
    limit_state : callable
        ``g(z) -> (n,)`` for ``z`` of shape (n, dimension); failure where ``g <= 0``.
        Vectorised over rows; each row is one model run. With ``event_names`` it returns
        ``(g, marks)``, marks an (n, len(event_names)) boolean array of sub-events of the
        failure (only rows with ``g <= 0`` count).
    dimension : int
        Number of standard-normal coordinates.
    samples_per_level : int, default 2000
        Samples per conditional level N; ``p0 N`` must be a whole number of chains.
    p0 : float, default 0.1
        Conditional probability of each intermediate level [-].
    replicates : int, default 10
        Independent runs behind the Student-t interval (>= 2).
    confidence : float, default 0.95
    max_levels : int, default 12
    spread : float, default 1.0
        Half width of the uniform component proposal [standard deviations].
    rng : None, int, numpy.random.SeedSequence or numpy.random.Generator
        Root of the replicates' child streams.
    event_names : sequence of str, optional
        Names of the sub-events the limit state marks.

    Returns
    -------
    RareEventEstimate
    """
    confidence = check_confidence(confidence)
    if not 0.0 < p0 < 0.5:
        raise EstimatorError(f"p0 must be in (0, 0.5); got {p0!r}")
    n = int(samples_per_level)
    if n < 10 or abs(p0 * n - round(p0 * n)) > 1e-9 or n % int(round(p0 * n)):
        raise EstimatorError(
            f"samples_per_level={samples_per_level!r}: expected an integer >= 10 with p0 N a "
            "whole number of chains dividing N")
    if int(replicates) < 2:
        raise EstimatorError(f"replicates must be >= 2 for an interval; got {replicates!r}")
    root = np.random.SeedSequence(int(np.random.default_rng(rng).integers(2**63)))
    names = tuple(event_names)
    generators = [_one_run(int(dimension), n, float(p0), int(max_levels), float(spread),
                           np.random.default_rng(child), len(names))
                  for child in root.spawn(int(replicates))]
    results = _drive(limit_state, generators, len(names))
    estimates = [r[0] for r in results]
    runs = sum(r[2] for r in results)
    levels = [r[3] for r in results]
    method = (f"subset simulation (p0 = {p0:g}, {n:,} per level, modified Metropolis), "
              f"student-t over {len(estimates)} independent runs")

    def interval(values) -> IntervalEstimate:
        est = replicate_interval(values, confidence=confidence)
        return IntervalEstimate(est.estimate, max(0.0, est.lower), est.upper, confidence,
                                method, runs)

    per_event = np.asarray([r[1] for r in results], dtype=float).reshape(len(results), len(names))
    events = {name: _few_hits_floor(interval(per_event[:, j]), [r[4] for r in results], j,
                                    confidence)
              for j, name in enumerate(names)}
    return RareEventEstimate(interval(estimates), tuple(estimates), runs, tuple(levels), method,
                             events)


def _few_hits_floor(estimate: IntervalEstimate, last_levels, j: int,
                    confidence: float) -> IntervalEstimate:
    """A sub-event seen fewer than ``MIN_RARE_EVENTS`` times in the runs' last levels keeps an
    upper bound no lower than the exact binomial bound on those hits, scaled by the mean
    product of the intermediate levels: a replicate spread of a handful of hits (or of none,
    a degenerate [0, 0]) is not trusted."""
    hits = sum(int(level[2][j]) for level in last_levels)
    if hits >= MIN_RARE_EVENTS:
        return estimate
    samples = sum(int(level[1]) for level in last_levels)
    product = float(np.mean([level[0] for level in last_levels]))
    _, upper = clopper_pearson_bounds(hits, samples, confidence=confidence)
    return dataclasses.replace(
        estimate, upper=max(estimate.upper, product * upper),
        method=f"{estimate.method}; upper bound at least the exact binomial bound on the "
               f"{hits} last-level hit{'s' if hits != 1 else ''}")


def failure_limit_state(model_fn, input_model, *, success: str = "success",
                        margin: str = "margin_Wh", keys: Sequence[str] = (),
                        marks: Callable[[dict], np.ndarray] | None = None, executor=None,
                        chunk_blocks: int = 1, block_size: int = 4096
                        ) -> Callable[[np.ndarray], np.ndarray]:
    """A limit state on standard-normal coordinates from a transit model.

    ``z`` is mapped to unit points ``Phi(z)`` and streamed through the engine
    (:func:`uq.estimators.streamed.evaluate_rows`), which maps them through the input
    model's Gaussian copula and marginals, so the dependence is respected and the model
    runs are shared by the executor's workers with the same values as a serial run. The
    model's energy margin serves as the distance to failure, clipped so that its sign agrees
    with the model's own success flag (a sample that fails in another way — no headway, too
    slow — counts as failed whatever its margin).

    Parameters
    ----------
    model_fn : callable
        ``model_fn(x) -> outputs`` with fields ``success`` and ``margin``; picklable.
    input_model : uq.sampling.inputs.InputModel or None
    success, margin : str
        Output names of the success flag and the distance to failure [output units].
    keys : sequence of str
        Further outputs ``marks`` reads.
    marks : callable, optional
        ``marks(outputs) -> (n, k)`` booleans of sub-events of the failure (outcome classes);
        the limit state then returns ``(g, marks)`` (see :func:`subset_simulation`).
    executor, chunk_blocks, block_size
        As for :func:`uq.estimators.streamed.evaluate_rows`; they never change the values.

    Returns
    -------
    callable
        ``g(z)``: positive where the transit succeeds, <= 0 where it fails [output units].
    """
    collect = tuple(dict.fromkeys((success, margin, *keys)))

    def g(z: np.ndarray):
        u = np.clip(special.ndtr(z), 1e-16, 1.0 - 1e-16)
        out = evaluate_rows(u, model_fn, collect, input_model=input_model, executor=executor,
                            chunk_blocks=chunk_blocks, block_size=block_size)
        ok = np.asarray(out[success], bool)
        m = np.asarray(out[margin], float)
        tiny = 1e-9
        value = np.where(ok, np.maximum(m, tiny), np.minimum(m, -tiny))
        return value if marks is None else (value, marks(out))

    return g


def plain_sampling_runs_for(probability: float, relative_half_width: float, *,
                            confidence: float = 0.95) -> int:
    """Independent runs plain sampling needs for the same relative half width.

    ``n = z^2 (1 - P) / (P h^2)`` from the normal approximation of the binomial [derived].
    """
    confidence = check_confidence(confidence)
    z = float(special.ndtri(0.5 + confidence / 2.0))
    return int(math.ceil(z * z * (1.0 - probability) / (probability * relative_half_width ** 2)))
