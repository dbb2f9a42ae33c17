"""Tests of uq.decisions against closed forms and scipy.stats.

Every expected number names its source. Sampling tolerances are multiples of the standard
error stated beside them; all randomness is seeded (distinct SeedSequence children, so
input samples and simulated test noise never share a stream).
"""

import json
import math

import numpy as np
import pytest
from scipy import integrate, stats

from uq.decisions import (
    SOBOL_BASIS,
    VOI_BASIS,
    DecisionInputError,
    EmptySampleError,
    ShapeMismatchError,
    OutOfRangeError,
    TestCandidate,
    UnknownCodeError,
    decision_flip_probability,
    evpi,
    evppi_regression,
    evsi_regression,
    failure_breakdown,
    go_no_go,
    go_no_go_net_benefit,
    mcnemar_exact_p_value,
    paired_comparison,
    pinned_input_probabilities,
    rank_tests,
    samples_to_settle,
    ship_time_contingency,
    sweep_summary,
)
from uq.decisions._common import _wilson
from uq.estimators import InsufficientSamplesError, minimum_samples_for_quantile, quantile_ranks


def streams(seed, k):
    """k independent generators (SeedSequence children)."""
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(k)]


def unit_normal_loss(mu, sigma):
    """E[max(X, 0)] - max(E[X], 0) for X ~ N(mu, sigma^2).

    Raiffa & Schlaifer 1961 (unit normal loss integral): sigma * phi(mu/sigma)
    - |mu| * Phi(-|mu|/sigma).
    """
    return sigma * stats.norm.pdf(mu / sigma) - abs(mu) * stats.norm.cdf(-abs(mu) / sigma)


def wilson_textbook(k, n, confidence):
    """Wilson 1927 (JASA 22:209) score interval, written out independently of the module."""
    z = stats.norm.ppf(0.5 + confidence / 2)
    p = k / n
    c = (p + z**2 / (2 * n)) / (1 + z**2 / n)
    h = z / (1 + z**2 / n) * math.sqrt(p * (1 - p) / n + z**2 / (4 * n**2))
    return c - h, c + h


def assert_json_ready(result):
    json.dumps(result.to_dict(), allow_nan=False)


# ============================================================================ Wilson
@pytest.mark.parametrize(
    "k,n,confidence",
    [(0, 10, 0.95), (1, 10, 0.95), (5, 10, 0.9), (10, 10, 0.95), (37, 1000, 0.99), (9990, 10000, 0.95)],
)
def test_wilson_matches_scipy(k, n, confidence):
    # reference: scipy.stats.binomtest(k, n).proportion_ci(method="wilson"); same formula,
    # so agreement to rounding (1e-12)
    ref = stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method="wilson")
    lo, hi = _wilson(k, n, confidence)
    assert float(lo) == pytest.approx(ref.low, abs=1e-12)
    assert float(hi) == pytest.approx(ref.high, abs=1e-12)


# ============================================================================ order statistics
def test_order_statistic_ranks_median_n20():
    # from memory: standard nonparametric table (e.g. Conover, Practical Nonparametric
    # Statistics): the 95 % interval for the median of n = 20 is [X(6), X(15)], coverage
    # 1 - 2 * F_Bin(20, 1/2)(5) = 0.9586 (recomputed here with scipy.stats.binom)
    lower, upper, coverage = quantile_ranks(20, 0.5, confidence=0.95)
    assert (lower, upper) == (6, 15)
    assert coverage == pytest.approx(1 - 2 * stats.binom.cdf(5, 20, 0.5), abs=1e-12)
    assert coverage == pytest.approx(0.9586, abs=1e-4)


@pytest.mark.parametrize("m", [50, 200, 1000, 5000])
@pytest.mark.parametrize("q", [0.5, 0.8, 0.9, 0.95])
def test_order_statistic_ranks_exact_binomial_coverage(m, q):
    # source: exact coverage P(l <= B <= u-1), B ~ Binomial(m, q), via scipy.stats.binom.
    # Each tail must hold <= alpha/2 and moving either rank inward must break that.
    alpha = 0.05
    if m < minimum_samples_for_quantile(q, confidence=0.95):
        # derived: no rank u <= m leaves <= alpha/2 above (0.95^50 = 0.077 > 0.025)
        with pytest.raises(InsufficientSamplesError, match="too few"):
            quantile_ranks(m, q, confidence=0.95)
        return
    lower, upper, _ = quantile_ranks(m, q, confidence=0.95)
    b = stats.binom(m, q)
    below = b.cdf(lower - 1) if lower >= 1 else 0.0  # P(xi_q < X_(l))
    above = 1 - b.cdf(upper - 1)  # P(xi_q >= X_(u))
    assert below <= alpha / 2 + 1e-15 and above <= alpha / 2 + 1e-15
    assert b.cdf(upper - 1) - below >= 0.95
    assert b.cdf(lower) > alpha / 2  # l + 1 would leave more than alpha/2 below
    assert 1 - b.cdf(upper - 2) > alpha / 2  # u - 1 would leave more than alpha/2 above


def test_order_statistic_interval_empirical_coverage():
    # Monte Carlo check of the distribution-free claim on Gamma(2) samples: the empirical
    # coverage of [X(l), X(u)] for the 0.9 quantile over 4000 seeded replicates of m = 120
    # must match the exact binomial coverage within 4 binomial standard errors (~0.013)
    m, q, reps = 120, 0.9, 4000
    lower, upper, coverage = quantile_ranks(m, q, confidence=0.95)
    (rng,) = streams(11, 1)
    x = np.sort(rng.gamma(2.0, size=(reps, m)), axis=1)
    truth = stats.gamma.ppf(q, 2.0)  # scipy.stats reference quantile
    covered = (x[:, lower - 1] <= truth) & (truth < x[:, upper - 1])
    se = math.sqrt(coverage * (1 - coverage) / reps)
    assert covered.mean() == pytest.approx(coverage, abs=4 * se)


# ============================================================================ go / no-go
def test_go_branch():
    # requirement logic (common practice, no source): GO when the lower bound >= p*
    v = go_no_go(0.951, 0.968, 0.960, required_probability=0.95, confidence=0.95, samples=4000)
    assert v.verdict == "go" and v.samples_to_settle is None
    assert "GO" in v.sentence and "95.0 %" in v.sentence and "96.0 %" in v.sentence
    assert_json_ready(v)


def test_no_go_branch():
    # NO-GO when even the upper bound is below p* (common practice, no source)
    v = go_no_go(0.90, 0.945, 0.93, required_probability=0.95, confidence=0.95, samples=4000)
    assert v.verdict == "no-go" and v.samples_to_settle is None
    assert v.sentence.startswith("NO-GO")


def test_boundary_lower_equal_requirement_is_go():
    # lower bound exactly at p*: "lower >= p*" is GO (the rule as specified)
    v = go_no_go(0.95, 0.97, 0.96, required_probability=0.95, confidence=0.95, samples=1000)
    assert v.verdict == "go"


@pytest.mark.parametrize("p_hat,p_star", [(0.96, 0.95), (0.94, 0.95), (0.5, 0.52), (0.999, 0.998)])
def test_samples_to_settle_actually_settles(p_hat, p_star):
    # derived: the Wilson interval inverts the score test, so p* is on a bound at
    # n = z^2 p*(1-p*)/(p_hat-p*)^2. Check with the textbook Wilson formula (independent
    # of the module) that the returned n settles and n - 1 does not.
    conf = 0.95
    n = samples_to_settle(p_hat, p_star, confidence=conf)
    z = stats.norm.ppf(0.975)
    assert abs(n - z**2 * p_star * (1 - p_star) / (p_hat - p_star) ** 2) <= 1.0

    def settles(m):
        lo, hi = wilson_textbook(p_hat * m, m, conf)
        return lo >= p_star if p_hat > p_star else hi < p_star

    assert settles(n)
    assert not settles(n - 1)


def test_undecided_reports_samples_to_settle():
    # p_hat = 0.96 with a 0.95 requirement: about z^2 * 0.95*0.05/0.01^2 = 1825 samples (derived)
    lo, hi = wilson_textbook(0.96 * 1000, 1000, 0.95)
    v = go_no_go(lo, hi, 0.96, required_probability=0.95, confidence=0.95, samples=1000)
    assert v.verdict == "undecided"
    assert v.samples_to_settle == samples_to_settle(0.96, 0.95, confidence=0.95)
    assert 1800 < v.samples_to_settle < 1850
    assert v.additional_samples == v.samples_to_settle - 1000
    assert f"{v.samples_to_settle:,}" in v.sentence


def test_undecided_on_the_requirement_needs_better_inputs():
    # estimate on p* (and a case needing more than max_samples): no sample count settles it
    v = go_no_go(0.94, 0.96, 0.95, required_probability=0.95, confidence=0.95, samples=2000)
    assert v.verdict == "undecided" and v.samples_to_settle is None
    assert "no feasible sample size settles it; narrowing the inputs" in v.sentence
    v2 = go_no_go(0.94, 0.96, 0.9501, required_probability=0.95, confidence=0.95, samples=2000, max_samples=10**6)
    assert v2.samples_to_settle is None  # needs ~1.8e7 (derived as above)


def test_go_no_go_validation():
    with pytest.raises(DecisionInputError, match="does not contain the estimate"):
        go_no_go(0.97, 0.99, 0.96, required_probability=0.95, confidence=0.95, samples=100)
    with pytest.raises(OutOfRangeError, match="required_probability"):
        go_no_go(0.9, 0.99, 0.96, required_probability=1.5, confidence=0.95, samples=100)
    with pytest.raises(OutOfRangeError, match="confidence"):
        go_no_go(0.9, 0.99, 0.96, required_probability=0.95, confidence=95, samples=100)


# ============================================================================ failure breakdown
def test_failure_breakdown_counts_and_intervals():
    # 1000 samples: 60 "energy exhausted" (code 1), 40 "no headway" (code 2);
    # legs: 70 failures in leg 1, 25 in leg 0, 5 without a leg (hand-built counts)
    mode = np.zeros(1000, dtype=int)
    leg = np.full(1000, -1)
    mode[:60], mode[60:100] = 1, 2
    leg[:70], leg[70:95] = 1, 0
    res = failure_breakdown(
        mode, leg, mode_names={0: "none", 1: "energy exhausted", 2: "no headway"},
        leg_names=["shelf", "under ice"], confidence=0.95,
    )
    assert res.failures == 100 and res.failure_probability == pytest.approx(0.1)
    energy = next(r for r in res.modes if r.name == "energy exhausted")
    assert energy.share_of_failures == pytest.approx(0.6) and energy.share_of_samples == pytest.approx(0.06)
    ref = stats.binomtest(60, 100).proportion_ci(confidence_level=0.95, method="wilson")  # scipy reference
    assert (energy.share_of_failures_low, energy.share_of_failures_high) == pytest.approx((ref.low, ref.high), abs=1e-12)
    ref_all = stats.binomtest(60, 1000).proportion_ci(confidence_level=0.95, method="wilson")
    assert energy.share_of_samples_low == pytest.approx(ref_all.low, abs=1e-12)
    ice = next(r for r in res.legs if r.name == "under ice")
    assert ice.count == 70 and any(r.code == -1 and r.count == 5 for r in res.legs)
    assert res.dominant_mode == "energy exhausted" and res.dominant_leg == "under ice"
    assert "energy exhausted" in res.sentence and "60.0 %" in res.sentence and "under ice" in res.sentence
    frame = res.to_frame()
    assert len(frame) == 2 + 3 and set(frame["kind"]) == {"mode", "leg"}
    assert_json_ready(res)


def test_failure_breakdown_unknown_code():
    with pytest.raises(UnknownCodeError, match=r"\[3\]"):
        failure_breakdown(np.array([0, 3]), np.array([-1, 0]), mode_names={1: "x"}, leg_names=["a"], confidence=0.95)
    with pytest.raises(UnknownCodeError, match="failing_leg"):
        failure_breakdown(np.array([0, 1]), np.array([-1, 4]), mode_names={1: "x"}, leg_names=["a"], confidence=0.95)


# ============================================================================ ship time
def _arrivals(dist, n, seed, p_lost=0.05):
    rng_t, rng_a = streams(seed, 2)
    t = dist.rvs(size=n, random_state=rng_t)
    arrived = rng_a.random(n) > p_lost
    t = np.where(arrived, t, np.inf)  # lost samples carry no finite duration
    return t, arrived


@pytest.mark.parametrize("dist", [stats.norm(30.0, 2.0), stats.gamma(9.0, scale=3.5)])
def test_contingency_quantiles_match_analytic_distribution(dist):
    # reference: scipy.stats ppf. Tolerance 4 standard errors of a sample quantile,
    # sqrt(q(1-q)/m) / f(xi_q) (asymptotic normality of sample quantiles; e.g. Serfling 1980)
    t, arrived = _arrivals(dist, 40000, seed=5)
    res = ship_time_contingency(
        t, arrived=arrived, nominal_days=28.0, booking_quantile=0.9, day_rate=38000.0,
        currency="EUR", confidence=0.95,
    )
    m = int(arrived.sum())
    assert res.arrived == m and res.not_arrived == 40000 - m
    for row in res.table:
        xi = dist.ppf(row.quantile)
        se = math.sqrt(row.quantile * (1 - row.quantile) / m) / dist.pdf(xi)
        assert row.booking_days == pytest.approx(xi, abs=4 * se)
        assert row.booking_days_low < row.booking_days < row.booking_days_high
        # arithmetic of the plan (definition): contingency over nominal, costed at the day rate
        assert row.contingency_days == pytest.approx(row.booking_days - 28.0)
        assert row.contingency_cost_money == pytest.approx(row.contingency_days * 38000.0)
    assert res.booking.quantile == 0.9
    assert res.probability_of_arrival == pytest.approx(m / 40000)
    assert "did not reach the recovery point" in res.sentence and "EUR" in res.sentence and "days" in res.sentence
    assert len(res.to_frame()) == 4
    assert_json_ready(res)


def test_contingency_idle_and_overrun_match_normal_partial_expectations():
    # derived (normal partial expectation / unit normal loss function), T ~ N(mu, s^2),
    # z = (b - mu)/s:  E[(T - b)+] = s [phi(z) - z (1 - Phi(z))] = s L(z);
    #                  E[(b - T)+] = (b - mu) + E[(T - b)+] = s [phi(z) + z Phi(z)].
    # Evaluated at the booking the function chose; tolerance 4 standard errors of the mean
    # (half-width of its t-interval / 1.96).
    mu, s = 30.0, 2.0
    t, arrived = _arrivals(stats.norm(mu, s), 40000, seed=6)
    res = ship_time_contingency(
        t, arrived=arrived, nominal_days=30.0, booking_quantile=0.8, day_rate=1.0, currency="EUR", confidence=0.95
    )
    b = res.booking.booking_days
    z = (b - mu) / s
    overrun = s * (stats.norm.pdf(z) - z * stats.norm.sf(z))
    idle = s * (stats.norm.pdf(z) + z * stats.norm.cdf(z))
    se_over = (res.expected_overrun_days_high - res.expected_overrun_days) / 1.96
    se_idle = (res.expected_idle_days_high - res.expected_idle_days) / 1.96
    assert res.expected_overrun_days == pytest.approx(overrun, abs=4 * se_over)
    assert res.expected_idle_days == pytest.approx(idle, abs=4 * se_idle)


def test_contingency_nobody_arrives():
    with pytest.raises(EmptySampleError, match="none of the 3 samples arrived"):
        ship_time_contingency(
            [np.inf] * 3, arrived=[False] * 3, nominal_days=10, booking_quantile=0.9, day_rate=1,
            currency="EUR", confidence=0.95,
        )


# ============================================================================ value of information
def test_unit_normal_loss_formula_against_quadrature():
    # the closed form used below, checked against direct numerical integration of
    # E[max(X, 0)] (scipy.integrate.quad); agreement to quadrature error 1e-9
    for mu, sigma in [(0.3, 1.0), (-1.2, 0.7), (2.0, 3.0)]:
        e_max, _ = integrate.quad(lambda x: x * stats.norm.pdf(x, mu, sigma), 0, np.inf)
        assert unit_normal_loss(mu, sigma) == pytest.approx(e_max - max(mu, 0.0), abs=1e-9)


N_VOI = 20000  # measured over 30 seeds: sd of the EVPI/EVPPI/EVSI estimates ~ 0.005 here


def _linear_decision(seed, mu=0.3, a=0.5, sigma1=2.0, b=0.8, sigma2=1.0):
    r1, r2 = streams(seed, 2)
    th1 = r1.normal(5.0, sigma1, N_VOI)
    th2 = r2.normal(-1.0, sigma2, N_VOI)
    inc = mu + a * (th1 - 5.0) + b * (th2 + 1.0)
    nb = np.column_stack([np.full(N_VOI, 100.0), 100.0 + inc])  # baseline offset must not matter
    return nb, th1, th2


def test_evpi_closed_form_when_nb_depends_on_one_parameter():
    # Raiffa & Schlaifer 1961: EVPI of a two-option choice with normal incremental net
    # benefit N(mu, sigma^2) is the unit normal loss integral. Tolerance 0.02 = 4 sd (0.005).
    r1, = streams(1, 1)
    theta = r1.normal(0.0, 1.3, N_VOI)
    nb = np.column_stack([np.zeros(N_VOI), -0.4 + theta])
    res = evpi(nb, currency="EUR")
    assert res.value == pytest.approx(unit_normal_loss(-0.4, 1.3), abs=0.02)
    assert res.value_low < res.value < res.value_high
    # derived: the decision flips when mu + theta > 0 -> P = Phi(-|mu|/sigma); 4 binomial sd ~ 0.014
    assert res.flip_probability == pytest.approx(stats.norm.cdf(-0.4 / 1.3), abs=0.015)
    assert res.kind == "EVPI" and "EUR" in res.sentence
    assert_json_ready(res)


@pytest.mark.parametrize("method", ["spline", "polynomial"])
def test_evppi_closed_form_partial_variance(method):
    # derived (Raiffa & Schlaifer unit normal loss): NB_inc = mu + a th1 + b th2, independent
    # normals -> E[NB_inc | th1] ~ N(mu, (a s1)^2), so EVPPI(th1) = L(mu, |a| s1) and the
    # joint EVPPI(th1, th2) = EVPI = L(mu, sqrt(a^2 s1^2 + b^2 s2^2)). Tolerance 0.02 = 4 sd.
    nb, th1, th2 = _linear_decision(2)
    res = evppi_regression(nb, th1, method=method, rng=7, n_bootstrap=100, currency="EUR", parameter_names=["th1"])
    expected = unit_normal_loss(0.3, 0.5 * 2.0)
    assert res.value_raw == pytest.approx(expected, abs=0.02)
    assert res.value_low <= res.value_raw <= res.value_high
    assert res.value_low - 0.01 < expected < res.value_high + 0.01  # bootstrap interval near truth
    joint = evppi_regression(nb, np.column_stack([th1, th2]), method=method, n_bootstrap=0)
    assert joint.value_raw == pytest.approx(unit_normal_loss(0.3, math.hypot(1.0, 0.8)), abs=0.02)
    assert res.kind == "EVPPI" and "th1" in res.sentence
    assert_json_ready(res)


def test_evppi_reports_raw_before_clipping():
    # a parameter unrelated to NB has true EVPPI 0 (derived); the raw regression estimate
    # is reported as such and the clipped value is max(raw, 0)
    r1, r2, r3 = streams(3, 3)
    nb = np.column_stack([np.zeros(4000), 1.0 + r1.normal(size=4000)])
    res = evppi_regression(nb, r2.normal(size=4000), n_bootstrap=0, rng=r3)
    assert res.value == max(res.value_raw, 0.0)
    assert abs(res.value_raw) < 0.01  # true 0; |mu|/sigma = 1 leaves little room to flip


def test_evsi_closed_form_normal_normal():
    # derived (normal-normal conjugacy): with t = z + eps, s^2 = r^2/(1-r^2), the posterior
    # mean E[z|t] = t/(1+s^2) has preposterior sd sigma_pre = sqrt(1 - r^2); hence
    # EVSI = L(mu, |a| s1 sqrt(1 - r^2)). Tolerance 0.02 = 4 sd measured over 30 seeds.
    nb, th1, _ = _linear_decision(4)
    sigma = 0.5 * 2.0
    for r in (0.3, 0.6):
        res = evsi_regression(nb, th1, residual_fraction=r, rng=100 + int(10 * r), n_bootstrap=0)
        assert res.kind == "EVSI"
        assert res.value_raw == pytest.approx(unit_normal_loss(0.3, sigma * math.sqrt(1 - r * r)), abs=0.02)
    # limits: r = 0 is EVPPI exactly (same regression), r = 1 carries no information
    r0 = evsi_regression(nb, th1, residual_fraction=0.0, rng=1, n_bootstrap=0)
    assert r0.value_raw == evppi_regression(nb, th1, n_bootstrap=0).value_raw
    assert evsi_regression(nb, th1, residual_fraction=1.0, rng=1).value == 0.0


def test_decision_flip_probability_closed_form():
    # derived: perfect knowledge of th1 flips the current choice (option 1, since mu > 0)
    # when mu + a (th1 - 5) < 0 -> P = Phi(-mu/(|a| s1)) = Phi(-0.3); 4 binomial sd ~ 0.014.
    # With residual r the preposterior sd shrinks to |a| s1 sqrt(1-r^2): P = Phi(-0.3/sqrt(1-r^2)).
    nb, th1, _ = _linear_decision(5)
    res = decision_flip_probability(nb, th1, option_names=["stay", "go"])
    assert res.current_option == "go"
    assert res.probability == pytest.approx(stats.norm.cdf(-0.3), abs=0.015)
    res_r = decision_flip_probability(nb, th1, residual_fraction=0.6, rng=9)
    assert res_r.probability == pytest.approx(stats.norm.cdf(-0.3 / 0.8), abs=0.015)


def test_go_no_go_net_benefit_and_its_evpi():
    # NB(go) = V s - C (1 - s), NB(no-go) = -K (definition). With P(s) = p and go optimal,
    # perfect foresight only changes failed samples from -C to -K:
    # EVPI = (1 - p)(C - K) (derived), exact for the sample share of failures.
    (rng,) = streams(8, 1)
    s = rng.random(5000) < 0.9
    nb = go_no_go_net_benefit(s, value_of_success=200.0, cost_of_failure=500.0, cost_of_no_go=50.0)
    assert nb.option_names == ("go", "no-go")
    assert np.all(nb.values[s, 0] == 200.0) and np.all(nb.values[~s, 0] == -500.0) and np.all(nb.values[:, 1] == -50.0)
    res = evpi(nb, currency="EUR")
    assert res.current_option == "go"
    assert res.value == pytest.approx((1 - s.mean()) * (500.0 - 50.0), rel=1e-12)


def test_rank_tests_orders_by_net_value():
    # th1 carries more decision-relevant variance (|a| s1 = 1.0 vs |b| s2 = 0.8), so pinning it
    # is worth L(0.3, 1.0) = 0.267 versus L(0.3, 0.8) = 0.196 (derived); with costs 0.05 and 0.02
    # th1 still nets more; a joint test of both is worth L(0.3, 1.28) = 0.375 but costs 0.3.
    nb, th1, th2 = _linear_decision(6)
    tests = [
        TestCandidate("ballast trial", 0.02, ("th2",)),
        TestCandidate("pump bench test", 0.05, ("th1",)),
        TestCandidate("both, noisy", 0.01, ("th1", "th2"), residual_fraction=0.95),
        TestCandidate("full campaign", 0.30, ("th1", "th2")),
    ]
    # amounts of order 0.1: in abstract units (in EUR they would all be "< 1 EUR", a tie)
    res = rank_tests(tests, net_benefit=nb, inputs={"th1": th1, "th2": th2}, currency="kEUR units", n_bootstrap=50, rng=3,
                     total_indices={"th1": 0.6, "th2": 0.4})
    assert res.ranking_basis == VOI_BASIS == "expected value of information"
    names = [r.name for r in res.rows]
    assert names[0] == "pump bench test" and names[1] == "ballast trial"
    top = res.rows[0]
    assert top.value_money == pytest.approx(unit_normal_loss(0.3, 1.0), abs=0.02)
    assert top.net_value_money == pytest.approx(top.value_money - 0.05)
    full = next(r for r in res.rows if r.name == "full campaign")
    assert full.value_money == pytest.approx(unit_normal_loss(0.3, math.hypot(1.0, 0.8)), abs=0.02)
    noisy = next(r for r in res.rows if r.name == "both, noisy")
    assert noisy.value_kind == "EVSI"
    # derived: r = 0.95 leaves preposterior sd 1.28 * sqrt(1 - 0.9025) = 0.40 -> L(0.3, 0.40)
    assert noisy.value_money == pytest.approx(unit_normal_loss(0.3, math.hypot(1.0, 0.8) * math.sqrt(1 - 0.95**2)), abs=0.02)
    assert [r.rank for r in res.rows] == [1, 2, 3, 4]
    assert "pump bench test" in res.sentence and "kEUR units" in res.sentence
    assert len(res.to_frame()) == 4
    assert_json_ready(res)


def test_rank_tests_falls_back_to_sobol_when_no_money():
    tests = [TestCandidate("a", 10.0, ("x1",)), TestCandidate("b", 5.0, ("x2", "x3")), TestCandidate("c", 1.0, ("x2",))]
    res = rank_tests(tests, net_benefit=None, inputs={}, total_indices={"x1": 0.3, "x2": 0.25, "x3": 0.1})
    assert res.ranking_basis == SOBOL_BASIS
    assert "not a monetary value" in res.ranking_basis and "total Sobol index" in res.ranking_basis
    assert [r.name for r in res.rows] == ["b", "a", "c"]  # sums 0.35, 0.30, 0.25
    assert all(r.value_money is None and r.net_value_money is None for r in res.rows)
    assert "not a monetary value" in res.sentence
    with pytest.raises(DecisionInputError, match="total_indices is None"):
        rank_tests(tests, net_benefit=None, inputs={}, total_indices=None)


def test_rank_tests_unknown_input():
    nb, th1, _ = _linear_decision(7)
    with pytest.raises(UnknownCodeError, match="nope"):
        rank_tests([TestCandidate("t", 1.0, ("nope",))], net_benefit=nb, inputs={"th1": th1})


def test_pinned_input_probabilities_against_probit_truth():
    # success = th + e > 1 with th, e ~ N(0, 1): P(success | th) = Phi(th - 1) (derived);
    # the truth for a bin is that probit averaged over th between its 5 % and 15 %
    # (85 % and 95 %) quantiles (scipy quad). Tolerance: 4 binomial sd of a 10 % bin.
    n = 40000
    r1, r2 = streams(9, 2)
    th = r1.normal(size=n)
    success = th + r2.normal(size=n) > 1.0
    res = pinned_input_probabilities(success, th, quantiles=(0.1, 0.9), parameter_name="pump efficiency", unit="-")
    for row in res.rows:
        a, b = stats.norm.ppf(row.quantile - 0.05), stats.norm.ppf(row.quantile + 0.05)
        val, _ = integrate.quad(lambda x: stats.norm.cdf(x - 1.0) * stats.norm.pdf(x), a, b)
        truth = val / 0.1
        se = math.sqrt(truth * (1 - truth) / row.samples_in_bin)
        assert row.probability_of_success == pytest.approx(truth, abs=4 * se)
        assert row.probability_low < row.probability_of_success < row.probability_high
        assert row.samples_in_bin == pytest.approx(0.1 * n, abs=2)
    # unconditional: P(th + e > 1) = Phi(-1/sqrt 2) (derived)
    assert res.probability_of_success == pytest.approx(stats.norm.cdf(-1 / math.sqrt(2)), abs=4 * math.sqrt(0.24 / n))
    assert "10th percentile" in res.sentence and "pump efficiency" in res.sentence
    assert_json_ready(res)


# ============================================================================ sweep and paired
def test_sweep_summary_robust_choice_and_tie_break():
    # four speeds with true P(success) 0.90, 0.97, 0.97, 0.80 (speeds 2 and 3 share the same
    # outcome array, so their Wilson bounds tie exactly) and P90 durations from normal
    # durations with means 40, 34, 30, 27 d, sd 2 d: P90 = mean + 1.2816 * 2 (scipy ppf).
    m, n = 4, 20000
    rs = streams(10, 4)
    base = rs[0].random(n)
    p = np.array([0.90, 0.97, 0.97, 0.80])
    success = base[None, :] < p[:, None]
    means = np.array([40.0, 34.0, 30.0, 27.0])
    duration = means[:, None] + 2.0 * rs[1].normal(size=(m, n))
    arrived = np.ones((m, n), dtype=bool)
    margin = rs[2].normal(100.0, 20.0, size=(1, n)) + np.zeros((m, 1))  # equal margins
    res = sweep_summary(
        [0.8, 1.0, 1.2, 1.4], success, duration, arrived, margin, required_probability=0.95,
        confidence=0.95, setpoint_name="cruise speed", unit="m/s", deterministic_optimum=1.4,
    )
    assert res.robust_setpoint == 1.2  # tie on the lower bound and margin -> shorter P90
    bigger_margin_at_1p0 = margin + np.array([[0.0], [5.0], [0.0], [0.0]])
    res2 = sweep_summary(
        [0.8, 1.0, 1.2, 1.4], success, duration, arrived, bigger_margin_at_1p0,
        required_probability=0.95, confidence=0.95, setpoint_name="cruise speed", unit="m/s")
    assert res2.robust_setpoint == 1.0  # tie on the lower bound -> larger mean margin
    for row, mu, pi in zip(res.rows, means, p):
        ref = stats.binomtest(int(round(row.p_success * n)), n).proportion_ci(method="wilson")
        assert row.p_success_low == pytest.approx(ref.low, abs=1e-12)  # scipy reference
        se = math.sqrt(0.09 / n) / stats.norm.pdf(stats.norm.ppf(0.9)) * 2.0  # sample-quantile se
        assert row.duration_quantile_days == pytest.approx(stats.norm.ppf(0.9, mu, 2.0), abs=4 * se)
        assert row.mean_margin_Wh_low < 100.0 + 4 * 20 / math.sqrt(n)
    assert res.rows[2].meets_requirement and not res.rows[3].meets_requirement
    assert "1.2 m/s" in res.sentence and "deterministic optimum 1.4 m/s" in res.sentence
    assert len(res.to_frame()) == 4
    assert_json_ready(res)


@pytest.mark.parametrize("a_only,b_only", [(0, 0), (3, 12), (25, 25), (40, 18), (1, 0)])
def test_mcnemar_matches_scipy_binomtest(a_only, b_only):
    # reference: exact McNemar = two-sided binomial test of the discordant pairs at p = 1/2,
    # scipy.stats.binomtest(a_only, a_only + b_only, 0.5).pvalue; same arithmetic -> 1e-12
    expected = 1.0 if a_only + b_only == 0 else stats.binomtest(a_only, a_only + b_only, 0.5).pvalue
    assert mcnemar_exact_p_value(a_only, b_only) == pytest.approx(expected, abs=1e-12)


def test_paired_comparison_energy_ratio_lognormal():
    # energy per km of A = B * exp(-0.05 + 0.1 g), g ~ N(0, 1): P(A < B) = Phi(0.5) and the
    # ratio quantiles are exp(-0.05 + 0.1 z_q) (derived, lognormal); tolerances 4 sd of a
    # proportion and of a sample quantile (sqrt(q(1-q)/n) / f(xi_q)).
    n = 20000
    r1, r2, r3, r4 = streams(12, 4)
    eb = r1.uniform(5.0, 9.0, n)
    ea = eb * np.exp(-0.05 + 0.1 * r2.normal(size=n))
    ea[:10] = np.inf  # A makes no headway in 10 samples: never "uses less"
    u = r3.random(n)
    sa, sb = u < 0.93, u < 0.90  # A succeeds whenever B does: b_only = 0
    sb = sb | (r4.random(n) < 0.01)
    res = paired_comparison(sa, sb, ea, eb, names=("fin kit", "stock"), confidence=0.95)
    expected_p = 1.0 if res.a_only + res.b_only == 0 else stats.binomtest(res.a_only, res.a_only + res.b_only).pvalue
    assert res.mcnemar_p_value == pytest.approx(expected_p, abs=1e-12)
    assert res.probability_a_less_energy == pytest.approx(stats.norm.cdf(0.5), abs=4 * math.sqrt(0.22 / n))
    dist = stats.lognorm(s=0.1, scale=math.exp(-0.05))
    for rq in res.energy_ratio_quantiles:
        se = math.sqrt(rq.quantile * (1 - rq.quantile) / n) / dist.pdf(dist.ppf(rq.quantile))
        assert rq.ratio == pytest.approx(dist.ppf(rq.quantile), abs=4 * se)
    assert res.energy_ratio_samples == n - 10
    # the lead sentence says which is better and by how much; McNemar stays in the details
    assert "fin kit is better than stock" in res.sentence and "McNemar" not in res.sentence
    assert_json_ready(res)


def test_undecided_with_an_interval_wider_than_binomial():
    # supplied interval straddles p* although a Wilson interval at 4000 samples would not
    # (derived: GO needs ~2,850 samples at p_hat = 0.958): the sentence must not ask for more samples
    v = go_no_go(0.948, 0.968, 0.958, required_probability=0.95, confidence=0.95, samples=4000)
    assert v.verdict == "undecided" and v.additional_samples == 0
    assert "wider than binomial sampling error" in v.sentence


def test_sweep_summary_shape_error():
    with pytest.raises(ShapeMismatchError, match="setpoints"):
        sweep_summary([1.0, 2.0], np.ones((3, 5), bool), np.ones((3, 5)), np.ones((3, 5), bool), np.ones((3, 5)),
                      required_probability=0.9, confidence=0.95, setpoint_name="speed", unit="m/s")


def test_bootstrap_fast_path_equals_plain_normal_equations(monkeypatch):
    # the precomputed cross-product path and the plain X'WX path solve the same weighted
    # normal equations with the same resamples: equal to rounding (1e-9 relative)
    import uq.decisions._regression as voi

    nb, th1, th2 = _linear_decision(13)
    args = dict(n_bootstrap=20, rng=5)
    fast = evppi_regression(nb[:3000], np.column_stack([th1, th2])[:3000], **args)
    monkeypatch.setattr(voi, "_CROSS_PRODUCT_LIMIT", 0)
    plain = evppi_regression(nb[:3000], np.column_stack([th1, th2])[:3000], **args)
    assert (fast.value_low, fast.value_high) == pytest.approx((plain.value_low, plain.value_high), rel=1e-9)
