"""Coverage of the P(success) interval the assessment reports, on an analytic case.

Success indicator 1{x1 x2 <= t} with x1, x2 ~ U(0, 1): P = t (1 - ln t) (derived: the area
under the hyperbola x1 x2 = t in the unit square). With t = 0.6, P = 0.90649.
"""
import numpy as np
import pytest

from uq.estimators import success_probability
from uq.sampling.plans import SampleDesign

T = 0.6
P_TRUE = T * (1.0 - np.log(T))


def _coverage(scheme, repetitions, *, n, replicates):
    covered = 0
    for rep in range(repetitions):
        counts = []
        for r in range(replicates):
            d = SampleDesign(scheme=scheme, n=n, dimension=2, seed=1000 + rep, replicate=r)
            u = d.unit_points()
            counts.append((int(np.count_nonzero(u[:, 0] * u[:, 1] <= T)), n))
        est = success_probability(counts, randomised=scheme == "sobol", confidence=0.95)
        covered += est.lower <= P_TRUE <= est.upper
    return covered / repetitions


@pytest.mark.slow
def test_rqmc_replicate_interval_covers_95_percent_over_1000_repetitions():
    # the assessment's default: K = 8 scrambled Sobol' replicates, Student-t interval.
    # 1000 repetitions: binomial sd of the coverage is sqrt(.95 * .05 / 1000) = 0.7 %,
    # so the 93-97 % band is about +-3 sd.
    coverage = _coverage("sobol", 1000, n=256, replicates=8)
    print(f"RQMC, 8 replicates of 256, P = {P_TRUE:.4f}: coverage {coverage:.3f}")
    assert 0.93 <= coverage <= 0.97, coverage


@pytest.mark.slow
def test_monte_carlo_wilson_interval_covers_95_percent_over_1000_repetitions():
    coverage = _coverage("monte-carlo", 1000, n=2048, replicates=1)
    print(f"Monte Carlo, 2048 samples, P = {P_TRUE:.4f}: coverage {coverage:.3f}")
    assert 0.93 <= coverage <= 0.97, coverage


def test_rqmc_replicate_interval_coverage_quick():
    # 200 repetitions in the default run: sd 1.5 %, band widened to 90-99 % (about +-3 sd)
    coverage = _coverage("sobol", 200, n=256, replicates=8)
    assert 0.90 <= coverage <= 0.99, coverage


def _coverage_at(target, repetitions, *, n, replicates):
    """Coverage and lower-side miss rate at P(x1 x2 <= t) = target (t solved numerically)."""
    from scipy import optimize

    t = optimize.brentq(lambda s: s * (1.0 - np.log(s)) - target, 1e-9, 1.0 - 1e-12)
    covered = low_miss = 0
    for rep in range(repetitions):
        counts = []
        for r in range(replicates):
            u = SampleDesign(scheme="sobol", n=n, dimension=2, seed=5000 + rep,
                             replicate=r).unit_points()
            counts.append((int(np.count_nonzero(u[:, 0] * u[:, 1] <= t)), n))
        est = success_probability(counts, randomised=True, confidence=0.95)
        covered += est.lower <= target <= est.upper
        low_miss += est.lower > target
    return covered / repetitions, low_miss / repetitions


@pytest.mark.slow
@pytest.mark.parametrize("target", [0.96, 0.99])
def test_default_16_replicates_cover_near_the_boundary(target):
    # the assessment's default (16 replicates), N = 2048, 1000 repetitions (sd 0.7 %):
    # measured 95.7 % at 0.96 and 96.1 % at 0.99; a Student-t interval over 8 replicates
    # gave 92.8 % at 0.99. The false-GO side (interval above the truth) stays <= 3.5 %.
    coverage, low_miss = _coverage_at(target, 1000, n=128, replicates=16)
    print(f"RQMC, 16 replicates of 128, P = {target}: coverage {coverage:.3f}, lower-side "
          f"miss {low_miss:.3f}")
    assert 0.93 <= coverage <= 0.97, coverage
    assert low_miss <= 0.035, low_miss
