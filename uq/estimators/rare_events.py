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

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import special

from uq.estimators.intervals import EstimatorError, IntervalEstimate, check_confidence, replicate_interval

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
    """

    probability: IntervalEstimate
    replicate_estimates: tuple[float, ...]
    model_runs: int
    levels: tuple[int, ...]
    method: str

    @property
    def relative_half_width(self) -> float:
        """Half width of the interval over the estimate [-]."""
        p = self.probability
        return p.half_width / p.estimate if p.estimate > 0 else float("inf")

    def to_dict(self) -> dict:
        d = self.probability.to_dict()
        d.update(replicate_estimates=list(self.replicate_estimates), model_runs=self.model_runs,
                 levels=list(self.levels), relative_half_width=self.relative_half_width,
                 estimator=self.method)
        return d


def _one_run(limit_state, dimension: int, n: int, p0: float, max_levels: int,
             spread: float, rng: np.random.Generator) -> tuple[float, int, int]:
    """One subset-simulation run: (estimate, limit-state evaluations, levels)."""
    z = rng.standard_normal((n, dimension))
    g = np.asarray(limit_state(z), dtype=float)
    runs = n
    n_seeds = int(round(p0 * n))
    chain = n // n_seeds
    probability = 1.0
    for level in range(1, max_levels + 1):
        order = np.argsort(g, kind="stable")
        threshold = 0.5 * (g[order[n_seeds - 1]] + g[order[n_seeds]])
        if threshold <= 0.0:
            return probability * float(np.mean(g <= 0.0)), runs, level
        probability *= p0
        seeds_z, seeds_g = z[order[:n_seeds]], g[order[:n_seeds]]
        states_z, states_g = [seeds_z], [seeds_g]
        current_z, current_g = seeds_z.copy(), seeds_g.copy()
        for _ in range(chain - 1):
            # modified Metropolis: each component moves independently under a uniform proposal
            # with the standard-normal ratio; the candidate is kept only inside the level
            proposal = current_z + spread * rng.uniform(-1.0, 1.0, current_z.shape)
            ratio = np.exp(-0.5 * (proposal ** 2 - current_z ** 2))
            move = rng.uniform(size=current_z.shape) < np.minimum(1.0, ratio)
            candidate = np.where(move, proposal, current_z)
            changed = move.any(axis=1)
            cand_g = current_g.copy()
            if changed.any():
                cand_g[changed] = np.asarray(limit_state(candidate[changed]), dtype=float)
                runs += int(changed.sum())
            inside = cand_g <= threshold
            current_z = np.where(inside[:, None], candidate, current_z)
            current_g = np.where(inside, cand_g, current_g)
            states_z.append(current_z.copy())
            states_g.append(current_g.copy())
        z, g = np.concatenate(states_z), np.concatenate(states_g)
    raise EstimatorError(
        f"subset simulation did not reach the failure domain within {max_levels} levels "
        f"(P below {p0 ** max_levels:.0e}); the failure may be impossible for these inputs")


def subset_simulation(limit_state: Callable[[np.ndarray], np.ndarray], dimension: int, *,
                      samples_per_level: int = 2000, p0: float = 0.1, replicates: int = 10,
                      confidence: float = 0.95, max_levels: int = 12, spread: float = 1.0,
                      rng=None) -> RareEventEstimate:
    """P(g(Z) <= 0) for independent standard-normal Z by subset simulation (Au & Beck 2001).

    Parameters
    ----------
    limit_state : callable
        ``g(z) -> (n,)`` for ``z`` of shape (n, dimension); failure where ``g <= 0``.
        Vectorised over rows; each row is one model run.
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
    rng : None, int or numpy.random.Generator
        Root of the replicates' child streams.

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
    estimates, runs, levels = [], 0, []
    for child in root.spawn(int(replicates)):
        p, r, m = _one_run(limit_state, int(dimension), n, float(p0), int(max_levels),
                           float(spread), np.random.default_rng(child))
        estimates.append(p)
        runs += r
        levels.append(m)
    interval = replicate_interval(estimates, confidence=confidence)
    lower = max(0.0, interval.lower)
    method = (f"subset simulation (p0 = {p0:g}, {n:,} per level, modified Metropolis), "
              f"student-t over {len(estimates)} independent runs")
    probability = IntervalEstimate(interval.estimate, lower, interval.upper, confidence,
                                   method, runs)
    return RareEventEstimate(probability, tuple(estimates), runs, tuple(levels), method)


def failure_limit_state(model_fn, input_model, *, failed: str = "success",
                        margin: str = "margin_Wh") -> Callable[[np.ndarray], np.ndarray]:
    """A limit state on standard-normal coordinates from a transit model.

    ``z`` is mapped to unit points ``Phi(z)`` and through the input model's Gaussian copula
    and marginals; the model's energy margin serves as the distance to failure, clipped so
    that its sign agrees with the model's own success flag (a sample that fails in another
    way — no headway, too slow — counts as failed whatever its margin).

    Returns
    -------
    callable
        ``g(z)``: positive where the transit succeeds, <= 0 where it fails [output units].
    """
    def g(z: np.ndarray) -> np.ndarray:
        u = np.clip(special.ndtr(z), 1e-16, 1.0 - 1e-16)
        out = model_fn(input_model.transform(u) if input_model is not None else u)
        ok = np.asarray(out[failed] if isinstance(out, dict) else getattr(out, failed), bool)
        m = np.asarray(out[margin] if isinstance(out, dict) else getattr(out, margin), float)
        tiny = 1e-9
        return np.where(ok, np.maximum(m, tiny), np.minimum(m, -tiny))

    return g


def plain_sampling_runs_for(probability: float, relative_half_width: float, *,
                            confidence: float = 0.95) -> int:
    """Independent runs plain sampling needs for the same relative half width.

    ``n = z^2 (1 - P) / (P h^2)`` from the normal approximation of the binomial [derived].
    """
    confidence = check_confidence(confidence)
    z = float(special.ndtri(0.5 + confidence / 2.0))
    return int(math.ceil(z * z * (1.0 - probability) / (probability * relative_half_width ** 2)))
