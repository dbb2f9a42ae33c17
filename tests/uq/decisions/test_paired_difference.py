"""The paired comparison's lead: which configuration is better, by how much, with the paired
interval; and the sweep's recommendation rule."""
import math

import numpy as np
import pytest
from scipy import stats

from uq.decisions import paired_comparison, robust_choice, sweep_summary


def _pairs(n11, n10, n01, n00):
    """Success indicators of A and B from the four cells of a paired 2x2 table."""
    a = np.array([1] * n11 + [1] * n10 + [0] * n01 + [0] * n00, bool)
    b = np.array([1] * n11 + [0] * n10 + [1] * n01 + [0] * n00, bool)
    return a, b


def test_paired_interval_on_a_known_table_matches_scipy_and_the_wald_formula():
    # Paired 2x2 table of 1,600 subjects (approve/approve 794, approve/disapprove 150,
    # disapprove/approve 86, disapprove/disapprove 570): the worked example of a paired
    # difference of proportions in Agresti, Categorical Data Analysis (2nd ed., sec. 10.1),
    # from memory: difference 0.59 - 0.55 = 0.04, se 0.0095, 95 % CI (0.02, 0.06).
    a, b = _pairs(794, 150, 86, 570)
    e = np.ones(a.size)
    res = paired_comparison(a, b, e, e, names=("first", "second"), confidence=0.95)
    assert res.difference == pytest.approx(0.04, abs=1e-12)  # (150 - 86) / 1600, derived
    # reference library: the one mean rule on the per-sample difference is the one-sample
    # t interval; scipy.stats.ttest_1samp(...).confidence_interval, same arithmetic -> 1e-12
    ref = stats.ttest_1samp(a.astype(float) - b.astype(float), 0.0).confidence_interval(0.95)
    assert res.difference_low == pytest.approx(ref.low, abs=1e-12)
    assert res.difference_high == pytest.approx(ref.high, abs=1e-12)
    # closed form (Wald, derived): var = [(n10 + n01)/n - ((n10 - n01)/n)^2] / n; t vs z and
    # n vs n - 1 differ by < 1e-4 at n = 1,600
    n = 1600
    se = math.sqrt(((150 + 86) / n - ((150 - 86) / n) ** 2) / n)
    assert res.difference_low == pytest.approx(0.04 - 1.959964 * se, abs=1e-4)
    assert res.difference_high == pytest.approx(0.04 + 1.959964 * se, abs=1e-4)
    # the book's interval, printed to 2 decimals (tolerance: half a unit of the last digit)
    assert res.difference_low == pytest.approx(0.02, abs=0.005)
    assert res.difference_high == pytest.approx(0.06, abs=0.005)
    # the book's standard error 0.0095 (4 decimals; t vs z adds < 1e-5 here)
    assert (res.difference_high - res.difference) / 1.959964 == pytest.approx(0.0095, abs=1e-4)
    assert res.better == "first"
    assert res.sentence.startswith("first is better than second by 4.0 percentage points")
    # McNemar stays in the details, checked against scipy.stats.binomtest (exact two-sided)
    assert res.mcnemar_p_value == pytest.approx(stats.binomtest(150, 236, 0.5).pvalue, abs=1e-12)
    assert "McNemar" not in res.sentence


def test_paired_interval_over_rqmc_replicates_is_student_t_on_replicate_means():
    # 4 replicates of 250: the interval is the t interval over the 4 replicate differences
    # (Owen 1997: independent scramblings give i.i.d. replicate estimates);
    # reference: scipy.stats.t.interval with the replicate means' sd / sqrt(4)
    rng = np.random.default_rng(3)
    u = rng.random(1000)
    a, b = u < 0.8, u < 0.7 + 0.05 * rng.random(1000)
    e = np.ones(1000)
    res = paired_comparison(a, b, e, e, names=("A", "B"), confidence=0.9, replicates=4,
                            randomised=True, required_probability=0.75)
    d = (a.astype(float) - b.astype(float)).reshape(4, 250).mean(axis=1)
    low, high = stats.t.interval(0.9, 3, loc=d.mean(), scale=d.std(ddof=1) / 2.0)
    assert res.difference == pytest.approx(d.mean(), abs=1e-12)
    assert (res.difference_low, res.difference_high) == pytest.approx((low, high), abs=1e-12)
    assert res.verdict_a in ("go", "no-go", "undecided") and res.verdict_b is not None


def test_neither_is_better_when_the_interval_spans_zero():
    a, b = _pairs(400, 30, 29, 41)
    e = np.ones(a.size)
    res = paired_comparison(a, b, e, e, names=("A", "B"), confidence=0.95)
    assert res.better is None and res.difference_low < 0 < res.difference_high
    assert res.sentence.startswith("Neither configuration is clearly better")


def test_the_worse_first_configuration_is_named_as_worse():
    a, b = _pairs(400, 2, 60, 38)
    e = np.ones(a.size)
    res = paired_comparison(a, b, e, e, names=("stock", "fin kit"), confidence=0.95)
    assert res.better == "fin kit" and res.sentence.startswith("fin kit is better than stock")


def test_sweep_recommends_nothing_when_no_value_meets_the_requirement():
    rng = np.random.default_rng(1)
    u = rng.random(2000)
    success = np.stack([u < 0.5, u < 0.6])
    ones = np.ones((2, 2000))
    res = sweep_summary([1.0, 2.0], success, ones, success, ones, required_probability=0.9,
                        confidence=0.95, setpoint_name="speed", unit="m/s")
    assert res.recommended_setpoint is None
    assert res.robust_setpoint == 2.0  # still shown: the highest lower bound
    assert "none is recommended" in res.sentence and not res.sentence.startswith("Set ")


def test_robust_choice_ranks_lower_bound_then_margin_then_duration():
    # common practice, no source: the rule the sweep and the study page both use
    assert robust_choice([0.9, 0.95, 0.95], [10.0, 5.0, 7.0]) == 2
    assert robust_choice([0.9, 0.95, 0.95], [10.0, 7.0, 7.0], [3.0, 4.0, 2.0]) == 2
    assert robust_choice([None, 0.1]) == 1
