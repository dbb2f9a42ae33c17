"""Tests of uq.estimators against scipy.stats and closed forms."""

import math

import numpy as np
import pytest
from scipy import stats

from uq.sampling.engine import CountReducer, SumReducer, stream
from uq.estimators import (
    EstimatorError,
    InsufficientSamplesError,
    IntervalEstimate,
    dkw_half_width,
    exceedance_curve,
    exceedance_curve_from_counts,
    grow_until,
    mean_interval,
    minimum_samples_for_quantile,
    proportion_interval,
    quantile_interval,
    quantile_interval_from_counts,
    quantile_ranks,
    replicate_interval,
    wilson_bounds,
)
from uq.sampling.plans import monte_carlo, scrambled_sobol

CASES = [(0, 10), (10, 10), (1, 10), (3, 50), (25, 50), (0, 1000), (7, 1000), (999, 1000),
         (1000, 1000), (123, 4567)]


# ---------------------------------------------------------------------- binomial
@pytest.mark.parametrize("k, n", CASES)
@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
@pytest.mark.parametrize("method, scipy_method", [("wilson", "wilson"), ("clopper-pearson", "exact")])
def test_proportion_interval_matches_scipy_binomtest(k, n, confidence, method, scipy_method):
    # Reference implementation: scipy.stats.binomtest(k, n).proportion_ci (Wilson 1927;
    # Clopper & Pearson 1934). Tolerance 1e-12 absolute: both are closed forms / beta ppf.
    ref = stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method=scipy_method)
    got = proportion_interval(k, n, confidence=confidence, method=method)
    assert got.estimate == k / n
    assert got.lower == pytest.approx(ref.low, abs=1e-12)
    assert got.upper == pytest.approx(ref.high, abs=1e-12)
    assert (got.confidence, got.method, got.n) == (confidence, method, n)


def test_proportion_interval_edges_and_errors():
    # derived: with 0 successes the lower bound is 0, with n successes the upper is 1;
    # Clopper-Pearson upper bound at k = 0 is 1 - (alpha/2)^(1/n) (Clopper & Pearson 1934).
    cp = proportion_interval(0, 20, method="clopper-pearson")
    assert cp.lower == 0.0 and cp.upper == pytest.approx(1 - 0.025 ** (1 / 20), rel=1e-12)
    assert proportion_interval(20, 20).upper == 1.0
    d = proportion_interval(3, 10).to_dict()
    assert d["half_width"] == pytest.approx((d["upper"] - d["lower"]) / 2)
    with pytest.raises(EstimatorError, match=r"successes must be in \[0, n=10\]; got 11"):
        proportion_interval(11, 10)
    with pytest.raises(EstimatorError, match="method must be 'wilson' or 'clopper-pearson'"):
        proportion_interval(1, 10, method="wald")
    with pytest.raises(EstimatorError, match="confidence must be strictly between 0 and 1"):
        proportion_interval(1, 10, confidence=95)


def _exact_wilson_coverage(n, p, confidence=0.95):
    """Exact coverage: sum of Binomial(n, p) pmf over k whose scipy Wilson interval covers p
    (the computation behind Brown, Cai & DasGupta 2001, Fig. 5)."""
    covered = 0.0
    for k in range(n + 1):
        ci = stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method="wilson")
        covered += stats.binom.pmf(k, n, p) * (ci.low <= p <= ci.high)
    return covered


def _simulated_wilson_coverage(n, p, repetitions, seed):
    """Coverage of the full pipeline: MC plan -> stream -> CountReducer -> Wilson interval."""
    hits = 0
    seeds = np.random.SeedSequence(seed).generate_state(repetitions)
    for s in seeds:
        design = monte_carlo(n, 1, seed=int(s))
        count = stream(design, lambda u: u[:, 0] < p, CountReducer(None))
        ci = proportion_interval(count.count, count.n)
        hits += ci.lower <= p <= ci.upper
    return hits / repetitions


def _check_coverage(n, p, repetitions, seed):
    exact = _exact_wilson_coverage(n, p)
    # Brown, Cai & DasGupta (2001), Fig. 5: Wilson coverage oscillates close to the
    # nominal 0.95 at moderate n (band 0.93-0.97 from memory); the exact value is computed
    # above from scipy's own Wilson interval (0.956 for n = 200, p = 0.1).
    assert 0.93 < exact < 0.97
    simulated = _simulated_wilson_coverage(n, p, repetitions, seed)
    # 4 binomial standard errors of a coverage fraction from `repetitions` trials
    tol = 4 * math.sqrt(exact * (1 - exact) / repetitions)
    assert abs(simulated - exact) < tol


def test_wilson_coverage_cheap():
    _check_coverage(200, 0.1, repetitions=1500, seed=1)  # 4 SE = 2.1 points; 50,000 below


@pytest.mark.slow
def test_wilson_coverage_many_repetitions():
    _check_coverage(200, 0.1, repetitions=50_000, seed=2)


# ---------------------------------------------------------------------- t intervals
def test_mean_interval_matches_scipy_t():
    x = np.random.default_rng(4).normal(3.0, 2.0, size=37)
    got = mean_interval(x, confidence=0.9)
    # Reference: scipy.stats.t.interval with loc = mean, scale = s / sqrt(n)
    lo, hi = stats.t.interval(0.9, df=36, loc=x.mean(), scale=stats.sem(x))
    assert (got.lower, got.upper) == (pytest.approx(lo, rel=1e-13), pytest.approx(hi, rel=1e-13))
    assert got.n == 37 and got.estimate == pytest.approx(x.mean())


def test_replicate_interval_needs_two_replicates():
    with pytest.raises(InsufficientSamplesError, match="at least 2 values; got 1"):
        replicate_interval([0.3])
    ci = replicate_interval([1.0, 2.0, 3.0], confidence=0.95)
    # derived: mean 2, s = 1, K = 3: 2 ± t_{0.975, 2} / sqrt(3), t = 4.302653 (t table);
    # rel 1e-10: scipy 1.13's t quantile is good to ~1e-11
    assert ci.half_width == pytest.approx(4.302652729749464 / math.sqrt(3), rel=1e-10)


def _smooth_product(x):
    """prod_i (pi/2) sin(pi x_i): integral over [0,1]^d is exactly 1 (derived:
    int_0^1 (pi/2) sin(pi x) dx = 1); variance (pi^2/8)^d - 1 (derived)."""
    return {"f": np.prod(0.5 * np.pi * np.sin(np.pi * x), axis=1)}


def test_rqmc_replicates_cover_truth_and_beat_monte_carlo():
    n, d, replicates = 2**12, 5, 8
    base = scrambled_sobol(n, d, seed=2718, block_size=2**10)
    estimates = [stream(rep, _smooth_product, SumReducer("f")).mean for rep in base.replicates(replicates)]
    ci = replicate_interval(estimates, confidence=0.95)
    assert ci.lower <= 1.0 <= ci.upper and ci.n == replicates
    # MC standard error at equal n from the exact variance (derived above)
    mc_sd = math.sqrt(((math.pi**2 / 8) ** d - 1) / n)
    rqmc_sd = float(np.std(estimates, ddof=1))
    # Owen (1997): scrambled-net variance is o(1/n) for smooth integrands; at n = 2^12 the
    # observed gain here is ~25x, so "several times" (> 5) leaves a wide margin.
    assert rqmc_sd * 5 < mc_sd
    # The closed-form MC sd is itself checked on 8 plain MC runs: their sample sd is
    # mc_sd * sqrt(chi2_7 / 7), whose 0.05 % and 99.95 % quantiles bound the ratio
    # (scipy.stats.chi2), so this fails by chance once in a thousand seeds.
    mc = [stream(monte_carlo(n, d, seed=10 + r), _smooth_product, SumReducer("f")).mean
          for r in range(replicates)]
    low, high = np.sqrt(stats.chi2.ppf([0.0005, 0.9995], replicates - 1) / (replicates - 1))
    assert low * mc_sd < np.std(mc, ddof=1) < high * mc_sd


# ---------------------------------------------------------------------- exceedance
def test_dkw_half_width_formula():
    # DKW with Massart's (1990) constant: eps = sqrt(ln(2/alpha) / (2n));
    # n = 1000, alpha = 0.05 -> sqrt(ln(40)/2000) = sqrt(3.688879/2000) = 0.0429469 (derived).
    assert dkw_half_width(1000, confidence=0.95) == pytest.approx(math.sqrt(math.log(40) / 2000), rel=1e-15)
    assert dkw_half_width(1000, confidence=0.95) == pytest.approx(0.0429469, abs=1e-7)


def test_exceedance_curve_counts_wilson_and_band():
    v = np.random.default_rng(6).exponential(1.0, size=1000)
    grid = np.array([0.0, 0.5, 1.0, 2.0, 5.0, 100.0])
    curve = exceedance_curve(v, grid, confidence=0.95)
    expected = np.array([(v >= r).sum() for r in grid])  # definition of P(V >= r) counts
    np.testing.assert_array_equal(curve.count, expected)
    np.testing.assert_array_equal(curve.probability, expected / 1000)
    for j, k in enumerate(expected):  # pointwise band = scipy's Wilson interval
        ref = stats.binomtest(int(k), 1000).proportion_ci(method="wilson")
        assert curve.lower[j] == pytest.approx(ref.low, abs=1e-12)
        assert curve.upper[j] == pytest.approx(ref.high, abs=1e-12)
    eps = math.sqrt(math.log(40) / 2000)
    np.testing.assert_allclose(curve.band_upper, np.minimum(expected / 1000 + eps, 1.0))
    np.testing.assert_allclose(curve.band_lower, np.maximum(expected / 1000 - eps, 0.0))
    assert curve.band_upper[0] == 1.0 and curve.band_lower[-1] == 0.0  # clipped to [0, 1]
    frame = curve.to_frame()
    assert list(frame.columns)[:3] == ["threshold", "count_at_least", "probability"]
    assert len(frame) == grid.size


def test_dkw_band_simultaneous_coverage():
    # DKW-Massart: P(sup_r |S_n(r) - S(r)| > eps) <= alpha, so the band covers the whole
    # true exceedance curve in >= 95 % of repetitions. Uniform V: S(r) = 1 - r (derived).
    rng = np.random.default_rng(8)
    n, reps = 200, 2000
    grid = np.linspace(0.0, 1.0, 201)
    covered = 0
    for _ in range(reps // 100):
        for v in rng.random((100, n)):
            c = exceedance_curve(v, grid)
            covered += bool(np.all((c.band_lower <= 1 - grid) & (1 - grid <= c.band_upper)))
    # The bound is conservative; coverage >= 0.95 - 3 binomial sd (0.0146) is required.
    assert covered / reps >= 0.95 - 3 * math.sqrt(0.95 * 0.05 / reps)


def test_exceedance_from_counts_equals_raw_values():
    # derived: counts of V >= edge_j = sum of bin counts from j on + count above the last edge
    v = np.random.default_rng(9).normal(size=5000)
    edges = np.linspace(-2.0, 2.0, 41)
    inside = (v >= edges[0]) & (v < edges[-1])
    counts, _ = np.histogram(v[inside], bins=edges)
    above = int(np.count_nonzero(v >= edges[-1]))
    from_counts = exceedance_curve_from_counts(edges, counts, v.size, above=above)
    direct = exceedance_curve(v, edges)
    np.testing.assert_array_equal(from_counts.count, direct.count)
    np.testing.assert_array_equal(from_counts.upper, direct.upper)
    with pytest.raises(EstimatorError, match="len\\(edges\\) - 1 = 40"):
        exceedance_curve_from_counts(edges, counts[:-1], v.size)
    with pytest.raises(EstimatorError, match="n must be an integer >= the number of counted"):
        exceedance_curve_from_counts(edges, counts, 10)


def test_wilson_bounds_vectorized_equals_scalar():
    k = np.array([0, 5, 50, 100])
    lo, hi = wilson_bounds(k, 100)
    for j, kk in enumerate(k):
        ci = proportion_interval(int(kk), 100)
        assert (lo[j], hi[j]) == (ci.lower, ci.upper)


# ---------------------------------------------------------------------- quantiles
def test_median_ranks_n20_textbook_case():
    # Distribution-free 95 % interval for the median of n = 20 is (X_(6), X_(15)) with
    # coverage 0.9586 (tables of binomial order statistics, e.g. Conover, Practical
    # Nonparametric Statistics; from memory). Checked here with scipy.stats.binom:
    lower, upper, coverage = quantile_ranks(20, 0.5, confidence=0.95)
    assert (lower, upper) == (6, 15)
    exact = stats.binom.cdf(14, 20, 0.5) - stats.binom.cdf(5, 20, 0.5)
    assert coverage == pytest.approx(exact, rel=1e-12)
    assert coverage == pytest.approx(0.9586, abs=1e-4)


@pytest.mark.parametrize("n, q", [(50, 0.5), (100, 0.1), (100, 0.9), (1000, 0.05), (10_000, 0.99), (37, 0.9)])
def test_quantile_ranks_against_exact_binomial(n, q):
    # Coverage of (X_(l), X_(u)) is P(l <= B <= u-1), B ~ Binomial(n, q) (Hahn, Meeker &
    # Escobar 2017, ch. 5). Each tail must be <= alpha/2, and the ranks the tightest such.
    alpha = 0.05
    lower, upper, coverage = quantile_ranks(n, q, confidence=1 - alpha)
    binom = stats.binom(n, q)
    assert binom.cdf(lower - 1) < alpha / 2 <= binom.cdf(lower)          # tight below
    assert binom.sf(upper - 1) <= alpha / 2 < binom.sf(upper - 2)        # tight above
    assert coverage == pytest.approx(binom.cdf(upper - 1) - binom.cdf(lower - 1), rel=1e-12)
    assert coverage >= 1 - alpha


def test_quantile_interval_values_and_empirical_coverage():
    rng = np.random.default_rng(10)
    x = rng.random(200)
    ci = quantile_interval(x, 0.3)
    s = np.sort(x)
    assert ci.lower == s[ci.lower_rank - 1] and ci.upper == s[ci.upper_rank - 1]
    assert ci.estimate == pytest.approx(np.quantile(x, 0.3))
    # empirical coverage for U(0,1), true 0.3-quantile = 0.3 (derived), 2000 repetitions;
    # tolerance 4 binomial sd around the exact coverage.
    reps = 2000
    samples = np.sort(rng.random((reps, 200)), axis=1)
    hits = (samples[:, ci.lower_rank - 1] <= 0.3) & (0.3 < samples[:, ci.upper_rank - 1])
    assert abs(hits.mean() - ci.coverage) < 4 * math.sqrt(ci.coverage * (1 - ci.coverage) / reps)


def test_quantile_interval_refuses_too_few_samples():
    # derived: a two-sided 95 % interval for the 0.9-quantile needs 0.9^n <= 0.025,
    # i.e. n >= ln(0.025)/ln(0.9) = 35.01 -> 36.
    assert minimum_samples_for_quantile(0.9, confidence=0.95) == 36
    with pytest.raises(InsufficientSamplesError, match="need n >= 36"):
        quantile_interval(np.arange(35.0), 0.9)
    quantile_interval(np.arange(36.0), 0.9)
    # derived: median at 95 % needs 0.5^n < 0.025 -> n >= 6
    assert minimum_samples_for_quantile(0.5) == 6
    with pytest.raises(EstimatorError, match="q must be strictly between 0 and 1"):
        quantile_interval(np.arange(10.0), 1.0)


@pytest.mark.parametrize("q", [0.01, 0.05, 0.5, 0.95])
def test_quantile_from_counts_brackets_the_exact_interval(q):
    # derived: binning only widens the order-statistic interval to bin edges, and the
    # interpolated estimate lies within one bin width of the sample quantile.
    v = np.random.default_rng(12).lognormal(0.0, 0.5, size=20_000)
    edges = np.linspace(0.3, 3.0, 271)  # bin width 0.01; some samples fall outside
    inside = (v >= edges[0]) & (v < edges[-1])
    counts, _ = np.histogram(v[inside], bins=edges)
    below, above = int((v < edges[0]).sum()), int((v >= edges[-1]).sum())
    approx = quantile_interval_from_counts(edges, counts, q, below=below, above=above)
    exact = quantile_interval(v, q)
    assert (approx.lower_rank, approx.upper_rank) == (exact.lower_rank, exact.upper_rank)
    assert approx.lower <= exact.lower and exact.upper <= approx.upper
    assert approx.upper - approx.lower <= exact.upper - exact.lower + 2 * 0.01 + 1e-12
    assert abs(approx.estimate - exact.estimate) <= 0.01 + 1e-12


def test_quantile_from_counts_outside_edges_is_unbounded():
    # derived: all 100 samples below the first edge -> the quantile lies left of edges[0]
    got = quantile_interval_from_counts([1.0, 2.0], [0], 0.5, below=100)
    assert got.lower == -np.inf and got.upper == 1.0


# ---------------------------------------------------------------------- convergence
def _fake(n, confidence=0.95):
    # half width 1/sqrt(n) exactly (derived for the check below)
    return IntervalEstimate(0.5, 0.5 - n**-0.5, 0.5 + n**-0.5, 0.95, "fake", n)


def test_grow_until_doubles_to_target():
    # derived: 1/sqrt(n) <= 0.01 first at n = 2^14 = 16384 starting from 2^10
    result = grow_until(_fake, target_half_width=0.01, n_start=2**10, n_max=2**20)
    assert result.converged and result.n == 2**14
    assert [n for n, _ in result.history] == [2**10, 2**11, 2**12, 2**13, 2**14]
    capped = grow_until(_fake, target_half_width=0.01, n_start=2**10, n_max=10_000)
    assert not capped.converged and capped.n == 2**13  # next n (2^14) would exceed n_max


def test_grow_until_with_a_real_proportion_run():
    # P(U < 0.2) = 0.2 (derived). 1024 .. 65536 is 7 predeclared looks, so each look's
    # interval is at 1 - 0.05/7 (Bonferroni), z = 2.689 (scipy.stats.norm.ppf(1 - 0.025/7));
    # the Wilson half width ~ z sqrt(0.16/n) <= 0.01 needs n >= 11,570 -> the doubling from
    # 1024 stops at 16384 (a single 95 % look would have stopped at 8192).
    def run(n, confidence):
        count = stream(monte_carlo(n, 1, seed=n), lambda u: u[:, 0] < 0.2, CountReducer(None))
        return proportion_interval(count.count, count.n, confidence=confidence)

    result = grow_until(run, target_half_width=0.01, n_start=1024, n_max=2**16)
    assert result.converged and result.n == 16384
    assert result.rule.max_looks == 7 and result.looks == 5
    with pytest.raises(EstimatorError, match="growth must be an integer >= 2"):
        grow_until(run, target_half_width=0.01, n_start=8, n_max=64, growth=1)
