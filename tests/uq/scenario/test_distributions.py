"""Marginal distributions of scenario inputs against closed forms, scipy.stats and chaospy.

Reference values: PERT (Malcolm et al. 1959, Operations Research 7(5):646-669; Vose 2008,
*Risk Analysis*, 3rd ed.), truncated normal (Johnson, Kotz & Balakrishnan, *Continuous
Univariate Distributions*, vol. 1), scipy.stats / scipy.special and chaospy — never the code
under test.
"""
from __future__ import annotations

import dataclasses
import math
import pickle

import chaospy
import numpy as np
import pytest
from scipy import special, stats

from uq.scenario import ScenarioError
from uq.scenario.distributions import Marginal, parse_distribution, unit_from_key

# Floating-point agreement between two implementations of the same closed form: a few ulp of
# the quantities involved, far below any modelling tolerance.
EXACT = 1e-12


def make(kind, **params):
    return Marginal(name="x.y", kind=kind, params=params)


def test_pert_mean_and_variance():
    m = make("pert", min=0.30, mode=0.38, max=0.44)
    # Malcolm et al. 1959: classic PERT mean (min + 4 mode + max) / 6
    assert m.mean == pytest.approx((0.30 + 4 * 0.38 + 0.44) / 6, rel=EXACT)
    # derived: beta variance alpha beta / ((alpha+beta)^2 (alpha+beta+1)) with
    # alpha + beta = shape + 2 = 6 gives (mean - min)(max - mean) / 7
    mu = m.mean
    assert m.std ** 2 == pytest.approx((mu - 0.30) * (0.44 - mu) / 7, rel=1e-10)
    assert m.support == (0.30, 0.44)


def test_pert_with_shape_matches_scipy_beta():
    # Vose 2008: PERT(a, m, b; lambda) = a + (b - a) Beta(1 + lambda (m-a)/(b-a), 1 + lambda (b-m)/(b-a))
    m = make("pert", min=1.0, mode=2.0, max=5.0, shape=6.0)
    ref = stats.beta(1 + 6 * 1 / 4, 1 + 6 * 3 / 4, loc=1.0, scale=4.0)
    u = np.linspace(0.01, 0.99, 41)
    np.testing.assert_allclose(m.ppf(u), ref.ppf(u), rtol=EXACT)
    assert m.describe() == "PERT(1, 2, 5, shape 6)"


def test_lognormal_from_mean_and_cv_reproduces_them():
    # derived: sigma^2 = ln(1 + cv^2), mu = ln(mean) - sigma^2 / 2 gives E = mean, sd/E = cv
    m = make("lognormal", mean=2.5, cv=0.3)
    assert m.mean == pytest.approx(2.5, rel=1e-10)
    assert m.std / m.mean == pytest.approx(0.3, rel=1e-10)
    assert m.median == pytest.approx(2.5 / math.sqrt(1 + 0.3 ** 2), rel=1e-10)  # derived: e^mu


def test_lognormal_from_median_and_log_sd():
    m = make("lognormal", median=60.0, log_sd=0.5)
    q = np.array([0.05, 0.5, 0.95])
    # closed form: median * exp(log_sd * Phi^-1(q)), Phi^-1 from scipy.special.ndtri
    np.testing.assert_allclose(m.ppf(q), 60.0 * np.exp(0.5 * special.ndtri(q)), rtol=1e-10)
    assert m.median == pytest.approx(60.0, rel=EXACT)


@pytest.mark.parametrize("lo, mode, hi", [(1.0, 2.0, 4.0), (0.0, 0.9, 1.0), (0.0, 0.5, 1.0)])
def test_triangular_median(lo, mode, hi):
    m = make("triangular", min=lo, mode=mode, max=hi)
    # derived by inverting the triangular cdf at 1/2
    if mode >= (lo + hi) / 2:
        closed = lo + math.sqrt((hi - lo) * (mode - lo) / 2)
    else:
        closed = hi - math.sqrt((hi - lo) * (hi - mode) / 2)
    assert m.median == pytest.approx(closed, rel=1e-10)
    ref = stats.triang((mode - lo) / (hi - lo), loc=lo, scale=hi - lo)
    assert m.median == pytest.approx(float(ref.median()), rel=EXACT)


def test_truncated_normal_mean():
    m = make("truncnormal", mean=0.4, sd=0.1, low=0.25, high=1.0)
    a, b = (0.25 - 0.4) / 0.1, (1.0 - 0.4) / 0.1
    # closed form (Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions, vol. 1):
    # mean = mu + sigma (phi(a) - phi(b)) / (Phi(b) - Phi(a))
    phi = lambda z: math.exp(-z * z / 2) / math.sqrt(2 * math.pi)  # noqa: E731
    closed = 0.4 + 0.1 * (phi(a) - phi(b)) / (special.ndtr(b) - special.ndtr(a))
    assert m.mean == pytest.approx(closed, rel=1e-10)
    assert m.support == (0.25, 1.0)


def test_uniform_and_beta_moments():
    u = make("uniform", low=0.84, high=0.94)
    assert u.median == pytest.approx(0.89, rel=EXACT)  # closed form: midpoint
    assert u.std == pytest.approx(0.10 / math.sqrt(12), rel=1e-10)  # closed form: width/sqrt(12)
    b = make("beta", alpha=2.0, beta=5.0, low=10.0, high=20.0)
    assert b.mean == pytest.approx(10.0 + 10.0 * 2 / 7, rel=1e-10)  # closed form: alpha/(alpha+beta)


CHAOSPY_CASES = [
    ("normal", {"mean": -0.05, "sd": 0.05}),
    ("truncnormal", {"mean": 0.4, "sd": 0.1, "low": 0.2, "high": 0.6}),
    ("truncnormal", {"mean": 0.4, "sd": 0.3, "low": 0.0}),
    ("lognormal", {"median": 60.0, "log_sd": 0.5}),
    ("lognormal", {"mean": 1.0, "cv": 0.2}),
    ("uniform", {"low": 0.84, "high": 0.94}),
    ("triangular", {"min": 1.0, "mode": 2.0, "max": 4.0}),
    ("pert", {"min": 0.30, "mode": 0.38, "max": 0.44}),
    ("beta", {"alpha": 2.0, "beta": 3.0, "low": -1.0, "high": 2.0}),
]


@pytest.mark.parametrize("kind, params", CHAOSPY_CASES, ids=[f"{k}-{i}" for i, (k, _) in enumerate(CHAOSPY_CASES)])
def test_chaospy_equivalent_matches_scipy(kind, params):
    m = make(kind, **params)
    c = m.to_chaospy()
    u = np.linspace(0.001, 0.999, 199)
    x = m.ppf(u)
    scale = max(1.0, float(np.max(np.abs(x))))
    # two libraries, same closed forms: agreement to 1e-10 (the brief's tolerance; observed ~1e-15)
    np.testing.assert_allclose(c.inv(u), x, rtol=1e-10, atol=1e-10 * scale)
    np.testing.assert_allclose(c.cdf(x), u, rtol=0, atol=1e-10)


def test_chaospy_pert_is_a_bounded_beta():
    c = make("pert", min=0.30, mode=0.38, max=0.44).to_chaospy()
    assert isinstance(c, chaospy.Beta)
    assert float(c.lower[0]) == pytest.approx(0.30) and float(c.upper[0]) == pytest.approx(0.44)


def test_ppf_and_cdf_are_vectorized():
    m = make("normal", mean=0.0, sd=1.0)
    u = np.full((3, 4), 0.975)
    assert m.ppf(u).shape == (3, 4)
    np.testing.assert_allclose(m.ppf(u), 1.959963984540054, rtol=1e-12)  # standard normal table
    np.testing.assert_allclose(m.cdf(m.ppf(u)), u, rtol=1e-12)
    assert isinstance(m.quantile(0.5), float) and isinstance(m.median, float)


def test_describe():
    assert make("pert", min=0.30, mode=0.38, max=0.44).describe() == "PERT(0.30, 0.38, 0.44)"
    assert make("normal", mean=-0.05, sd=0.05).describe() == "Normal(-0.05, 0.05)"
    assert make("uniform", low=20.0, high=40.0).describe() == "Uniform(20, 40)"
    assert make("lognormal", median=60.0, log_sd=0.5).describe() == "LogNormal(median 60, log-sd 0.5)"


def test_marginal_is_frozen_hashable_and_picklable():
    m = make("pert", min=0.30, mode=0.38, max=0.44)
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.kind = "normal"  # type: ignore[misc]
    with pytest.raises(TypeError):
        m.params["min"] = 0.0  # type: ignore[index]
    back = pickle.loads(pickle.dumps(m))
    assert back == m and hash(back) == hash(m)
    np.testing.assert_array_equal(back.ppf([0.1, 0.9]), m.ppf([0.1, 0.9]))


def test_units_from_key_suffix():
    assert unit_from_key("legs.a.current_along_m_s") == "m/s"
    assert unit_from_key("battery.nominal_energy_Wh") == "Wh"
    assert unit_from_key("vehicle.hotel_load_W") == "W"
    assert unit_from_key("fouling.time_constant_days") == "day"
    assert unit_from_key("battery.fade_per_day") == "1/day"
    assert unit_from_key("vehicle.polar.reference_area_m2") == "m^2"
    assert unit_from_key("legs.a.practical_salinity") == ""


def test_parse_distribution_error_names_the_parameter():
    with pytest.raises(ScenarioError, match=r"^f\.toml: a\.b\.sd = -1\.0: expected sd > 0$"):
        parse_distribution({"dist": "normal", "mean": 1.0, "sd": -1.0}, name="a.b", file="f.toml")


@pytest.mark.parametrize("table, key", [
    ({"dist": "beta", "alpha": 1e20, "beta": 2.0}, "alpha"),
    ({"dist": "beta", "alpha": 2.0, "beta": 1e7}, "beta"),
    ({"dist": "pert", "min": 0.0, "mode": 0.5, "max": 1.0, "shape": 1e20}, "shape"),
])
def test_beta_and_pert_shapes_past_a_million_are_refused(table, key):
    # Beta(1e20, 1e20) made scipy 1.13-1.16's inverse incomplete beta loop for ever (found by
    # the lowest-versions run); at shape 1e6 the sd is already 3.5e-4 of the range (derived:
    # sd = sqrt(ab / ((a+b)^2 (a+b+1))) = 0.5 / sqrt(2e6 + 1)), so a fixed value is meant.
    with pytest.raises(ScenarioError, match=rf"^f\.toml: a\.b\.{key} = .*<= 1e\+06"):
        parse_distribution(table, name="a.b", file="f.toml")
    ok = {**table, key: 1e6}
    assert parse_distribution(ok, name="a.b", file="f.toml").ppf([0.5]).shape == (1,)



def test_triangular_mean_and_variance_closed_forms():
    # closed forms (Johnson, Kotz & Balakrishnan vol. 2, triangular distribution):
    # mean (a + b + c)/3, variance (a^2 + b^2 + c^2 - ab - ac - bc)/18
    a, c, b = 1.0, 2.0, 4.0
    m = make("triangular", min=a, mode=c, max=b)
    assert m.mean == pytest.approx((a + b + c) / 3, rel=1e-12)
    assert m.std ** 2 == pytest.approx((a * a + b * b + c * c - a * b - a * c - b * c) / 18, rel=1e-10)


@pytest.mark.parametrize("kind, params", CHAOSPY_CASES, ids=[f"{k}-{i}" for i, (k, _) in enumerate(CHAOSPY_CASES)])
def test_quantiles_stay_inside_the_support(kind, params):
    # the sampling transform clips unit points at 2^-53 from 0 and 1: the extreme quantiles must
    # be finite and inside the support (an infinite input would become a NaN in the physics)
    m = make(kind, **params)
    x = m.ppf(np.array([2.0 ** -53, 0.5, 1.0 - 2.0 ** -53]))
    lo, hi = m.support
    assert np.all(np.isfinite(x)) and np.all(x >= lo) and np.all(x <= hi)


@pytest.mark.parametrize("a, b", [(1.0, 1.0), (1.0, 5.0), (5.0, 1.0), (2.6, 3.4), (3.0, 3.0),
                                  (1.5, 4.5), (1.2, 1.1), (7.0, 2.0)])
def test_fast_beta_quantile_inverts_scipys_incomplete_beta(a, b):
    from uq.scenario.distributions import BetaQuantile

    rng = np.random.default_rng(3)
    u = np.concatenate([rng.random(20000), [0.0, 2.0 ** -53, 1e-12, 0.5, 1 - 1e-12, 1 - 2.0 ** -53, 1.0]])
    x = BetaQuantile(a, b, 2.0, 5.0)(u)
    # the reference is scipy.special.betainc (the regularized incomplete beta function): the
    # quantile must return it to u within 1e-12 in probability (the accuracy target)
    assert np.max(np.abs(special.betainc(a, b, (x - 2.0) / 3.0) - u)) <= 1e-12
    assert x[-7] == 2.0 and x[-1] == 5.0 and np.all(np.diff(np.sort(u)) >= 0)
    # in x, against scipy.stats' own inverse, away from the flat extreme tails where a 1e-16
    # error in u moves x by 1e-16 / f(x)
    inner = (u > 1e-9) & (u < 1 - 1e-9)
    np.testing.assert_allclose(x[inner], stats.beta(a, b, loc=2.0, scale=3.0).ppf(u[inner]),
                               rtol=0, atol=1e-9)


def test_marginals_pickle_small_and_come_back_equal():
    m = make("pert", min=0.30, mode=0.38, max=0.44)
    blob = pickle.dumps(m)
    assert len(blob) < 1000  # what the planner wrote, not the scipy object or the tables
    back = pickle.loads(blob)
    u = np.linspace(0.0, 1.0, 101)
    np.testing.assert_array_equal(back.ppf(u), m.ppf(u))


def test_beta_with_a_shape_below_one_uses_scipy():
    m = make("beta", alpha=0.5, beta=2.0, low=0.0, high=1.0)
    u = np.linspace(0.01, 0.99, 33)
    np.testing.assert_array_equal(m.ppf(u), stats.beta(0.5, 2.0).ppf(u))
