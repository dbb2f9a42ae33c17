"""Subset simulation against the closed form of a lognormal energy shortfall."""
import numpy as np
import pytest
from scipy import stats

from uq.estimators import EstimatorError
from uq.estimators.rare_events import plain_sampling_runs_for, subset_simulation

#: log-sd of the usable energy and its split over four independent standard-normal inputs
#: (battery derating, hotel load, drag, efficiency: invented demo weights)
LOG_SD = 0.08
WEIGHTS = np.array([0.05, 0.04, 0.03, 0.039]) / np.linalg.norm([0.05, 0.04, 0.03, 0.039]) * LOG_SD


def _shortfall(probability):
    """Limit state of a lognormal energy shortfall: ln E = ln M + w.z, failure when E < E_req.

    derived: P(E < E_req) = Phi((ln E_req - ln M) / s) with s = |w|, so choosing
    ln E_req - ln M = s Phi^-1(P) makes the true probability exactly ``probability``; with
    everything else fixed the transit range is proportional to usable energy, so this is
    also the probability of falling short of the route.
    """
    gap = LOG_SD * stats.norm.ppf(probability)
    return lambda z: z @ WEIGHTS - gap


@pytest.mark.parametrize("probability", [1e-4, 1e-6])
def test_subset_simulation_matches_the_lognormal_closed_form(probability):
    est = subset_simulation(_shortfall(probability), 4, rng=2)
    p = est.probability
    # the criteria: truth inside the interval, relative half width <= 30 %,
    # at most 2e5 model runs
    assert p.lower <= probability <= p.upper
    assert est.relative_half_width <= 0.30
    assert est.model_runs <= 200_000
    # plain sampling would need z^2 (1 - P) / (P h^2) runs for the same relative half width
    assert plain_sampling_runs_for(probability, est.relative_half_width) > 10 * est.model_runs


def test_subset_simulation_refuses_bad_options():
    with pytest.raises(EstimatorError, match="p0"):
        subset_simulation(_shortfall(1e-3), 4, p0=0.7, rng=1)
    with pytest.raises(EstimatorError, match="replicates"):
        subset_simulation(_shortfall(1e-3), 4, replicates=1, rng=1)


@pytest.mark.slow
def test_subset_simulation_interval_coverage_over_100_seeds():
    # 100 independent estimates at P = 1e-4: the 95 % replicate interval should cover the
    # closed form in most of them (binomial sd 2.2 %; band 88 % allows the O(1/N) bias)
    hits = 0
    for seed in range(100):
        p = subset_simulation(_shortfall(1e-4), 4, rng=100 + seed).probability
        hits += p.lower <= 1e-4 <= p.upper
    print(f"subset simulation at P = 1e-4: {hits} of 100 intervals cover the closed form")
    assert hits >= 88, hits
