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


def test_a_sub_event_of_the_failure_comes_from_the_same_runs():
    # failure F = {w.z <= s Phi^-1(1e-4)}; sub-event E = F and z_1 <= -2.4 (about half of F).
    # derived: X = w.z / s and z_1 are standard bivariate normal with correlation w_1 / s, so
    # P(E) = Phi_2(Phi^-1(1e-4), -2.4; w_1 / s), evaluated by scipy.stats.multivariate_normal
    failure = _shortfall(1e-4)
    rho = WEIGHTS[0] / LOG_SD
    truth = stats.multivariate_normal([0.0, 0.0], [[1.0, rho], [rho, 1.0]]).cdf(
        [stats.norm.ppf(1e-4), -2.4])
    assert 2e-5 < truth < 8e-5  # the sub-event is a real part of the failure, not all of it

    def limit_state(z):
        return failure(z), (z[:, :1] <= -2.4)

    est = subset_simulation(limit_state, 4, rng=3, event_names=["deep"])
    sub = est.events["deep"]
    assert sub.lower <= truth <= sub.upper
    assert est.probability.lower <= 1e-4 <= est.probability.upper
    assert sub.estimate < est.probability.estimate


def test_a_sub_event_never_seen_keeps_a_binomial_upper_bound():
    # an impossible sub-event (z_1 > 50) is never marked: its estimate is 0, but the interval
    # is not the degenerate [0, 0] - the exact binomial bound on 0 hits in the last levels,
    # times the levels' product (about 3 / n_last * 1e-3, Clopper & Pearson 1934), is kept
    failure = _shortfall(1e-4)
    est = subset_simulation(lambda z: (failure(z), z[:, :1] > 50.0), 4, rng=4,
                            event_names=["never"])
    never = est.events["never"]
    assert never.estimate == 0.0 and never.lower == 0.0
    assert 1e-8 < never.upper < est.probability.upper


def test_runs_driven_in_lockstep_equal_runs_driven_one_by_one():
    # the runs share evaluation calls but not random streams: each run's estimate is the same
    # whether it is evaluated alone or beside the others
    from uq.estimators.rare_events import _drive, _one_run

    failure = _shortfall(1e-3)
    children = np.random.SeedSequence(11).spawn(3)

    def runs():
        return [_one_run(4, 500, 0.1, 12, 1.0, np.random.default_rng(c)) for c in children]

    calls = []

    def counted(z):
        calls.append(len(z))
        return failure(z)

    together = [r[0] for r in _drive(counted, runs(), 0)]
    lockstep_calls = len(calls)
    alone = [_drive(counted, [run], 0)[0][0] for run in runs()]
    assert together == alone
    assert lockstep_calls < len(calls) - lockstep_calls  # fewer calls than one by one
