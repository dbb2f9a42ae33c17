"""Value of information in money, outcome classes and the knowledge band, against closed forms.

Every expected number names its source; tolerances are multiples of the standard error stated
beside them. All randomness is seeded through SeedSequence children.
"""

import json
import math

import numpy as np
import pytest
from scipy import integrate, stats

from uq.decisions import (
    KNOWLEDGE,
    VARIABILITY,
    DecisionInputError,
    OutcomeClass,
    TestCandidate,
    classify_outcomes,
    decision_disagreement,
    format_money,
    format_money_interval,
    input_natures,
    knowledge_band,
    money_net_benefit,
    rank_tests,
)
from physics.states import FailureMode


def streams(seed, k):
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(k)]


def normal_loss(a, b):
    """E[max(a + b Z, 0)] - max(a, 0), Z ~ N(0, 1): |b| phi(a/b) - |a| Phi(-|a|/|b|).

    Derived (the normal loss integral; Raiffa & Schlaifer 1961).
    """
    return abs(b) * stats.norm.pdf(a / b) - abs(a) * stats.norm.cdf(-abs(a) / abs(b))


# ============================================================================ outcome classes
def test_classify_outcomes_by_definition():
    # definition (uq.decisions.outcomes): success; not at the recovery point -> lost; there
    # after the time limit -> late; there on the reserve -> reserve breach
    out = {
        "success": np.array([True, False, False, False, False, False]),
        "reaches_recovery": np.array([True, False, True, True, False, False]),
        "failure_mode": np.array([FailureMode.NONE, FailureMode.ENERGY, FailureMode.ENERGY,
                                  FailureMode.TIME_LIMIT, FailureMode.NO_HEADWAY, FailureMode.TIME_LIMIT]),
    }
    got = classify_outcomes(out)
    assert got.tolist() == [OutcomeClass.SUCCESS, OutcomeClass.LOST, OutcomeClass.RESERVE_BREACH,
                            OutcomeClass.LATE, OutcomeClass.LOST, OutcomeClass.LOST]


def test_money_net_benefit_prices_each_class():
    cls = np.array([0, 1, 2, 3, 0])
    nb = money_net_benefit(cls, value_of_success=100.0, class_costs={1: 50.0, 2: 20.0, 3: 5.0}, cost_of_no_go=7.0)
    assert nb.values[:, 0].tolist() == [100.0, -50.0, -20.0, -5.0, 100.0]  # definition
    assert np.all(nb.values[:, 1] == -7.0)
    with pytest.raises(DecisionInputError, match="lacks outcome classes"):
        money_net_benefit(cls, value_of_success=1.0, class_costs={1: 1.0}, cost_of_no_go=0.0)


# ============================================================================ formatting
def test_money_format_has_no_noise_and_no_double_minus():
    # display rules of the issue: whole units, "< 1 EUR" for tiny amounts, "a to b"
    assert format_money(1.57e-9, "EUR") == "< 1 EUR"
    assert format_money(0.0, "EUR") == "0 EUR"
    assert format_money(22760.4, "EUR") == "22,760 EUR"
    assert format_money_interval(-3000.0, -3000.0, "EUR") == "-3,000 to -3,000 EUR"
    assert "--" not in format_money_interval(-5.0, -2.0, "EUR")


# ============================================================================ EVPPI / EVSI in money
def test_linear_gaussian_evppi_and_evsi_in_money():
    # NB_go - NB_no-go = a + b z, z ~ N(0, 1) (a = 3,000 EUR, b = -6,000 EUR).
    # derived: EVPPI(z) = |b| phi(a/b) - |a| Phi(-|a|/|b|); a test leaving r of the prior sd
    # has a preposterior mean with sd |b| sqrt(1 - r^2), so EVSI = the same with b sqrt(1 - r^2).
    # Tolerance: the bootstrap interval, widened by 2 % of the value for the regression's bias.
    n = 20000
    (rz,) = streams(41, 1)
    z = rz.standard_normal(n)
    a, b = 3000.0, -6000.0
    nb = np.column_stack([a + b * z, np.zeros(n)])
    tests = [TestCandidate("perfect", 100.0, ("z",)), TestCandidate("noisy", 100.0, ("z",), residual_fraction=0.6)]
    res = rank_tests(tests, net_benefit=nb, inputs={"z": z}, currency="EUR", n_bootstrap=60, rng=5,
                     option_names=("go", "no-go"))
    rows = {r.name: r for r in res.rows}
    for name, shrink in (("perfect", 1.0), ("noisy", math.sqrt(1 - 0.36))):
        row = rows[name]
        truth = normal_loss(a, b * shrink)
        slack = 0.02 * truth
        assert row.value_money_low - slack <= truth <= row.value_money_high + slack, (name, truth, row)
    assert rows["perfect"].value_kind == "EVPPI" and rows["noisy"].value_kind == "EVSI"
    assert res.current_option == "go" and not res.fund_none


def test_two_action_normal_case_against_quadrature():
    # success iff theta + eps > c, theta ~ N(0, 1) (knowledge), eps ~ N(0, 0.5^2) (variability);
    # P(success | theta) = Phi((theta - c) / 0.5). With V, C, K the money net benefits,
    # E[NB_go | theta] = V p - C (1 - p); EVPPI = E_theta[max(E[NB_go|theta], -K)] - max(E NB_go, -K)
    # (Raiffa & Schlaifer), integrated by scipy quad. Tolerance: bootstrap interval + 3 %.
    n = 16384
    r1, r2 = streams(42, 2)
    theta, eps = r1.standard_normal(n), 0.5 * r2.standard_normal(n)
    c, V, C, K = -1.2, 100_000.0, 400_000.0, 20_000.0
    s = theta + eps > c
    cls = np.where(s, OutcomeClass.SUCCESS, OutcomeClass.LOST)
    nb = money_net_benefit(cls, value_of_success=V, class_costs={OutcomeClass.LOST: C}, cost_of_no_go=K)

    def go_given(t):
        p = stats.norm.cdf((t - c) / 0.5)
        return V * p - C * (1 - p)

    e_go = integrate.quad(lambda t: go_given(t) * stats.norm.pdf(t), -9, 9)[0]
    e_best = integrate.quad(lambda t: max(go_given(t), -K) * stats.norm.pdf(t), -9, 9, limit=200)[0]
    truth = e_best - max(e_go, -K)
    res = rank_tests([TestCandidate("pin theta", 10.0, ("theta",))], net_benefit=nb, inputs={"theta": theta},
                     currency="EUR", n_bootstrap=60, rng=9, success=s, required_probability=0.9)
    row = res.rows[0]
    assert row.value_money_low - 0.03 * truth <= truth <= row.value_money_high + 0.03 * truth
    # derived: the p* rule flips when P(success | theta) < 0.9 <=> theta < c + 0.5 z_0.9, given
    # that today P(success) = Phi(-c / sqrt(1.25)) = 0.858 < 0.9 (no-go): flip iff theta above it
    p_now = stats.norm.cdf(-c / math.sqrt(1.25))
    assert p_now < 0.9
    flip_truth = stats.norm.sf(c + 0.5 * stats.norm.ppf(0.9))
    assert row.flip_probability == pytest.approx(flip_truth, abs=0.02)  # ~4 binomial sd at n = 16k
    json.dumps(res.to_dict(), allow_nan=False)


def test_fund_none_when_no_test_can_pay():
    # built so no result can change the money decision: go is worth >= 500 EUR in every
    # sample (a success or a cheap late arrival) against a no-go at -1,000 EUR; derived:
    # EVPPI = 0 for every input, so each test's net value is minus its cost
    n = 4096
    r1, r2, r3 = streams(43, 3)
    x1, x2 = r1.standard_normal(n), r2.standard_normal(n)
    s = x1 + 0.3 * r3.standard_normal(n) > -1.5
    cls = np.where(s, OutcomeClass.SUCCESS, OutcomeClass.LATE)
    nb = money_net_benefit(cls, value_of_success=2000.0, class_costs={OutcomeClass.LATE: 0.0}, cost_of_no_go=1000.0)
    tests = [TestCandidate("weak", 3000.0, ("x2",)), TestCandidate("strong", 3000.0, ("x1",))]
    res = rank_tests(tests, net_benefit=nb, inputs={"x1": x1, "x2": x2}, currency="EUR", n_bootstrap=30,
                     rng=2, success=s, required_probability=0.95)
    assert res.fund_none
    assert all(r.value_money == 0.0 and r.net_value_money == -3000.0 for r in res.rows)
    # equal net values: the tie goes to the test more likely to flip the p* verdict (x1 drives
    # success, x2 does not), never to rounding noise
    assert [r.name for r in res.rows] == ["strong", "weak"]
    assert res.rows[0].flip_probability > 0.05 > res.rows[1].flip_probability
    assert res.sentence.startswith("Fund none and decide now (the money favours 'go')")
    assert "0 EUR" in res.sentence and "--" not in res.sentence and "e-" not in res.sentence


def test_decision_disagreement_sentence():
    text = decision_disagreement((1000.0, -60000.0), ("go", "no-go"), "no-go", 0.9, "EUR")
    assert text is not None and "favours 'go'" in text and "NO-GO" in text
    assert decision_disagreement((1000.0, -60000.0), ("go", "no-go"), "go", 0.9, "EUR") is None
    assert decision_disagreement((1000.0, -60000.0), ("go", "no-go"), "undecided", 0.9, "EUR") is None


# ============================================================================ knowledge band
def _probit_case(n=8192, seed=44):
    # success iff x0 + 0.5 x1 + x2 + 0.7 e < 1.8, all standard normal; knowledge: x0, x1, x3
    # (x3 irrelevant); variability: x2, e. Derived: P(success | x0, x1) =
    # Phi((1.8 - x0 - 0.5 x1) / sqrt(1.49)); U = x0 + 0.5 x1 ~ N(0, 1.25).
    r = streams(seed, 5)
    x = {f"x{i}": r[i].standard_normal(n) for i in range(4)}
    s = x["x0"] + 0.5 * x["x1"] + x["x2"] + 0.7 * r[4].standard_normal(n) < 1.8
    natures = {"x0": KNOWLEDGE, "x1": KNOWLEDGE, "x3": KNOWLEDGE, "x2": VARIABILITY}
    return s, x, natures


def test_knowledge_band_against_probit_closed_form():
    s, x, natures = _probit_case()
    band = knowledge_band(s, x, natures, required_probability=0.9, n_bootstrap=10, rng=1)
    sd_u, sd_v = math.sqrt(1.25), math.sqrt(1.49)
    # derived: band quantile q is Phi((1.8 - U_{1-q}) / sqrt(1.49))
    truth = [stats.norm.cdf((1.8 - sd_u * stats.norm.ppf(1 - q)) / sd_v) for q in (0.05, 0.5, 0.95)]
    assert band.values == pytest.approx(truth, abs=0.03)  # fit error ~0.01 at n = 8192, 3 sd
    # derived: credibility = P(U <= 1.8 - sqrt(1.49) z_0.9)
    cred = stats.norm.cdf((1.8 - sd_v * stats.norm.ppf(0.9)) / sd_u)
    assert band.credibility == pytest.approx(cred, abs=0.03)
    # identity: the band's mean is P(success) (the logistic intercept's score equation)
    assert band.mean == pytest.approx(s.mean(), abs=1e-6)
    assert "credibility" in band.sentence
    json.dumps(band.to_dict(), allow_nan=False)


def test_knowledge_band_identities_at_the_extremes():
    s, x, _ = _probit_case(n=2048, seed=45)
    all_k = knowledge_band(s, x, {k: KNOWLEDGE for k in x}, required_probability=0.9, n_bootstrap=0)
    # definition: with nothing left to vary, P(success | everything) is the outcome: 0 or 1
    assert set(np.unique(all_k.sample_values)) <= {0.0, 1.0}
    assert all_k.mean == pytest.approx(s.mean(), abs=1e-12)
    all_v = knowledge_band(s, x, {k: VARIABILITY for k in x}, required_probability=0.9, n_bootstrap=0)
    # definition: with nothing to learn, the band is the point P(success)
    assert all_v.values == pytest.approx((s.mean(),) * 3, abs=1e-12) and all_v.sd == pytest.approx(0.0, abs=1e-12)


def test_band_after_a_test_narrows_more_for_the_stronger_input():
    s, x, natures = _probit_case(n=4096, seed=46)
    band = knowledge_band(s, x, natures, required_probability=0.9, n_bootstrap=0)
    tests = [TestCandidate("x1 test", 10.0, ("x1",)), TestCandidate("x0 test", 10.0, ("x0",)),
             TestCandidate("x3 test", 10.0, ("x3",))]
    nb = np.column_stack([np.where(s, 1.0, -5.0), np.zeros(s.size)])
    res = rank_tests(tests, net_benefit=nb, inputs=x, n_bootstrap=0, rng=3, band_values=band.sample_values,
                     knowledge_inputs=band.knowledge_inputs)
    after = {r.name: r.band_after for r in res.rows}
    # derived: U = x0 + 0.5 x1; learning x0 removes ~ 1/1.25 = 80 % of U's variance, x1 ~ 20 %,
    # x3 none (it does not enter); the band is a monotone map of U, so the order carries over
    assert after["x0 test"].share_removed > 0.6 > after["x1 test"].share_removed > 0.1
    assert after["x3 test"].share_removed < 0.02


def test_input_natures_default_and_errors():
    got = input_natures(["a", "b", "c"], variability=["c"], tested=["a", "c"])
    # documented default: tested -> knowledge, others variability; a declared nature wins
    assert got == {"a": KNOWLEDGE, "b": VARIABILITY, "c": VARIABILITY}
    with pytest.raises(DecisionInputError, match="both knowledge and variability"):
        input_natures(["a"], knowledge=["a"], variability=["a"])
