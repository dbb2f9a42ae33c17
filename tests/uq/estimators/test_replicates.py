"""The one P(success) rule and the one mean rule of a replicated plan."""
import numpy as np
import pytest
from scipy import stats

from uq.estimators import (
    EstimatorError,
    effective_sample_size,
    replicated_mean,
    success_probability,
)
from uq.sampling.engine import SumTotal
from uq.sampling.plans import plan_size


def test_single_plan_is_the_wilson_interval_of_scipy():
    # reference: scipy.stats.binomtest(...).proportion_ci(method="wilson") (Wilson 1927)
    est = success_probability([(930, 1000)], randomised=False, confidence=0.95)
    ref = stats.binomtest(930, 1000).proportion_ci(confidence_level=0.95, method="wilson")
    assert est.lower == pytest.approx(ref.low, abs=1e-12)
    assert est.upper == pytest.approx(ref.high, abs=1e-12)
    assert est.interval_kind == "wilson" and est.design_effect == 1.0


def test_agreeing_replicates_fall_back_to_the_exact_binomial_interval():
    # every replicate succeeds: no spread, so the interval is Clopper-Pearson on the pooled
    # count; reference scipy.stats.binomtest(...).proportion_ci(method="exact")
    est = success_probability([(256, 256)] * 16, randomised=True, confidence=0.95)
    ref = stats.binomtest(4096, 4096).proportion_ci(confidence_level=0.95, method="exact")
    assert est.upper == 1.0 and est.lower == pytest.approx(ref.low, rel=1e-9)
    assert "binomial floor" in est.method and est.effective_n == 4096


def test_effective_sample_size_is_korn_graubard():
    # derived: replicate fractions with variance s^2 give v = s^2 / K and
    # n_eff = p (1 - p) / v * (z / t_{K-1})^2 (Korn & Graubard 1998, Survey Methodology 24:193)
    counts = [(k, 512) for k in (486, 492, 497, 491, 487, 496, 492, 490)]
    fractions = np.array([k / 512 for k, _ in counts])
    p = fractions.mean()
    v = fractions.var(ddof=1) / fractions.size
    z, t = stats.norm.ppf(0.975), stats.t.ppf(0.975, fractions.size - 1)
    expected = p * (1 - p) / v * (z / t) ** 2
    assert effective_sample_size(fractions, 8 * 512, confidence=0.95) == pytest.approx(expected)
    est = success_probability(counts, randomised=True, confidence=0.95)
    # the interval is Clopper-Pearson at (p n_eff, n_eff): scipy's beta quantiles
    lo = stats.beta.ppf(0.025, p * expected, expected - p * expected + 1)
    hi = stats.beta.ppf(0.975, p * expected + 1, expected - p * expected)
    assert (est.lower, est.upper) == pytest.approx((lo, hi), rel=1e-9)
    assert est.lower < est.estimate < est.upper


def test_few_rare_events_never_give_an_interval_narrower_than_the_pooled_binomial():
    # 3 failures in 4096 (below 10 rare events): the interval contains the exact binomial
    # interval on the pooled count (scipy.stats.binomtest exact)
    counts = [(256, 256)] * 13 + [(255, 256)] * 3
    est = success_probability(counts, randomised=True, confidence=0.95)
    ref = stats.binomtest(4093, 4096).proportion_ci(confidence_level=0.95, method="exact")
    assert est.lower <= ref.low + 1e-12 and est.upper >= ref.high - 1e-12


def test_unequal_replicates_are_refused():
    with pytest.raises(EstimatorError, match="equal sizes"):
        success_probability([(10, 16), (30, 32)], randomised=True)


def test_replicated_mean_is_student_t_over_replicates_or_samples():
    rng = np.random.default_rng(3)
    parts = [rng.normal(5.0, 2.0, 64) for _ in range(8)]
    got = replicated_mean(parts, randomised=True, confidence=0.9)
    means = [p.mean() for p in parts]
    # reference: scipy.stats.t.interval on the 8 replicate means
    ref = stats.t.interval(0.9, 7, loc=np.mean(means), scale=stats.sem(means))
    assert (got.lower, got.upper) == pytest.approx(ref, rel=1e-12)
    x = parts[0]
    streamed = SumTotal(x.size, float(x.sum()), float(((x - x.mean()) ** 2).sum()))
    one = replicated_mean([streamed], randomised=False, confidence=0.9)
    ref = stats.t.interval(0.9, x.size - 1, loc=x.mean(), scale=stats.sem(x))
    assert (one.lower, one.upper) == pytest.approx(ref, rel=1e-9)


def test_plan_size_rounds_each_replicate_to_a_power_of_two():
    # derived: 10000 / 16 = 625 -> nearest power of two 512 -> 8192 in total
    assert plan_size(10000, scheme="sobol", replicates=16) == (512, 8192)
    assert plan_size(10000, scheme="monte-carlo", replicates=16) == (10000, 10000)
