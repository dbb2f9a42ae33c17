"""Tests of uq.estimators.pce against closed forms, scipy.stats and chaospy.

Sampling is plain seeded Monte Carlo from numpy; surrogate error is stated
per test (exact representation -> rounding-level tolerance; truncated
expansion -> tolerance from the neglected variance).
"""

import itertools
import math
import warnings

import chaospy
import numpy as np
import pytest
from scipy import integrate, stats

from uq.estimators.pce import (
    InsufficientSamplesError,
    PolynomialChaosInputError,
    PolynomialChaosQualityError,
    PolynomialChaosQualityWarning,
    chaospy_reference_indices,
    fit_polynomial_chaos,
    hyperbolic_multi_indices,
    least_squares_with_loo,
)

# Ishigami & Homma 1990; values from Homma & Saltelli 1996 (a = 7, b = 0.1).
ISHIGAMI_FIRST = np.array([0.3139, 0.4424, 0.0])
ISHIGAMI_TOTAL = np.array([0.5576, 0.4424, 0.2437])


def ishigami(x, a=7.0, b=0.1):
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


# ------------------------------------------------------------- basis
def test_multi_indices_match_hyperbolic_definition():
    # Blatman & Sudret 2011: keep a with (sum a_j^q)^(1/q) <= p; enumerate by brute force.
    for d, p, q in [(2, 5, 1.0), (3, 6, 0.75), (4, 4, 0.5), (3, 8, 0.75)]:
        got = {tuple(r) for r in hyperbolic_multi_indices(d, p, q_norm=q)}
        want = {
            a for a in itertools.product(range(p + 1), repeat=d)
            if sum(k**q for k in a) ** (1 / q) <= p + 1e-9
        }
        assert got == want
    # derived: full total-degree set has C(p + d, d) terms.
    assert hyperbolic_multi_indices(3, 8, q_norm=1.0).shape == (math.comb(11, 3), 3)
    assert not hyperbolic_multi_indices(3, 4).any(axis=1)[0]  # constant term first


@pytest.mark.parametrize(
    "dist, frozen",
    [
        (chaospy.Uniform(-np.pi, np.pi), stats.uniform(-np.pi, 2 * np.pi)),
        (chaospy.Normal(0.5, 1.2), stats.norm(0.5, 1.2)),
        (chaospy.Beta(2, 3), stats.beta(2, 3)),
        (chaospy.LogNormal(0.0, 0.4), stats.lognorm(0.4)),
        (chaospy.Exponential(1.0), stats.expon()),
    ],
)
def test_basis_is_orthonormal_under_scipy_density(dist, frozen):
    # Reference: Gram matrix E[p_k p_l] by adaptive quadrature (scipy
    # quad_vec) against the scipy.stats density, which must be the identity.
    degree = 5
    x = frozen.rvs(size=40, random_state=1)[:, None]
    pce = fit_polynomial_chaos([dist], x, x[:, 0] ** degree, max_degree=degree,
                               holdout_fraction=0, seed=0)
    assert pce.degree == degree  # y = x^5 is exact at degree 5, not before
    order = np.argsort(pce.multi_indices[:, 0])

    def gram_integrand(t):
        p = pce.basis_matrix(np.array([[t]]))[0, order]
        return np.outer(p, p) * frozen.pdf(t)

    # Support cut at the 1e-30 tail quantiles: the omitted mass times p_5^2
    # is far below the quadrature tolerance.
    lo, hi = frozen.ppf(1e-30), frozen.isf(1e-30)
    gram, err = integrate.quad_vec(gram_integrand, lo, hi, epsabs=1e-11, epsrel=1e-11, limit=400)
    np.testing.assert_allclose(gram, np.eye(degree + 1), atol=1e-8)


def test_basis_matches_chaospy_orthonormal_expansion():
    # Reference: chaospy.expansion.stieltjes(normed=True) evaluated at points.
    dists = [chaospy.Uniform(0, 2), chaospy.Normal(1, 2)]
    rng = np.random.default_rng(3)
    x = np.c_[rng.uniform(0, 2, 300), rng.normal(1, 2, 300)]
    y = x[:, 0] ** 3 * x[:, 1] + x[:, 1] ** 2
    pce = fit_polynomial_chaos(dists, x, y, max_degree=4, q_norm=1.0, holdout_fraction=0, seed=0)
    ours = pce.basis_matrix(x[:10])
    for j, dist in enumerate(dists):
        ref = chaospy.expansion.stieltjes(pce.degree, dist, normed=True)(x[:10, j])
        for t, row in enumerate(pce.multi_indices):
            if row.sum() == row[j]:  # pure-j term (incl. constant)
                np.testing.assert_allclose(ours[:, t], ref[row[j]], rtol=1e-10, atol=1e-10)


# ------------------------------------------------ closed-form indices
def test_ishigami_indices_from_coefficients():
    rng = np.random.default_rng(0)
    dists = [chaospy.Uniform(-np.pi, np.pi) for _ in range(3)]
    x = rng.uniform(-np.pi, np.pi, size=(800, 3))
    pce = fit_polynomial_chaos(dists, x, ishigami(x), max_degree=12, q_norm=0.75, seed=1)
    assert pce.quality == "good"
    s = pce.sobol_indices()
    # Published values have 4 decimals (+-5e-5); at the selected degree the
    # LOO error is ~1e-6, i.e. the surrogate misses ~1e-6 of the variance.
    np.testing.assert_allclose(s.first, ISHIGAMI_FIRST, atol=1e-3)
    np.testing.assert_allclose(s.total, ISHIGAMI_TOTAL, atol=1e-3)
    # Homma & Saltelli 1996: only x1-x3 interact, S13 = ST3 = 0.2437.
    assert s.second[0, 2] == pytest.approx(0.2437, abs=1e-3)
    assert abs(s.second[0, 1]) < 1e-3 and abs(s.second[1, 2]) < 1e-3
    # Ishigami & Homma 1990: mean a/2, V = 1/2 + a^2/8 + b pi^4/5 + b^2 pi^8/18.
    v = 0.5 + 49 / 8 + 0.1 * np.pi**4 / 5 + 0.01 * np.pi**8 / 18
    assert pce.mean == pytest.approx(3.5, abs=1e-3)
    assert pce.variance == pytest.approx(v, rel=1e-3)


def test_sobol_g_function_indices():
    # Saltelli & Sobol' 1995 closed form.  |4x - 2| has a kink, so the
    # expansion converges slowly; the LOO error at this budget is ~3e-3 and
    # the index error is of the order of the missed variance fraction: 0.01.
    a = np.array([0.0, 1.0, 9.0])
    vi = 1.0 / (3.0 * (1.0 + a) ** 2)
    v = np.prod(1 + vi) - 1
    first, total = vi / v, vi * np.prod(1 + vi) / (1 + vi) / v
    rng = np.random.default_rng(2)
    u = rng.uniform(size=(1000, 3))
    y = np.prod((np.abs(4 * u - 2) + a) / (1 + a), axis=1)
    pce = fit_polynomial_chaos([chaospy.Uniform(0, 1) for _ in range(3)], u, y,
                               max_degree=12, q_norm=0.75, seed=1)
    s = pce.sobol_indices()
    np.testing.assert_allclose(s.first, first, atol=0.01)
    np.testing.assert_allclose(s.total, total, atol=0.01)


def test_lognormal_product_with_lognormal_marginals_is_exact():
    # derived (MODEL.md sec. 7): S_i = (e^{s_i^2} - 1)/(e^{sum s^2} - 1),
    # ST_i = 1 - (e^{sum_{j!=i} s_j^2} - 1)/(e^{sum s^2} - 1).
    # Y = X1 X2 X3 is multilinear, so it lies exactly in the degree-3 basis:
    # only rounding error remains.
    s = np.array([0.2, 0.4, 0.6])
    mu = np.array([0.0, 1.0, -0.5])
    rng = np.random.default_rng(4)
    x = np.exp(mu + s * rng.standard_normal((200, 3)))
    pce = fit_polynomial_chaos([chaospy.LogNormal(m, t) for m, t in zip(mu, s)], x, x.prod(axis=1),
                               max_degree=3, q_norm=1.0, seed=1)
    denom = np.expm1(np.sum(s**2))
    idx = pce.sobol_indices()
    np.testing.assert_allclose(idx.first, np.expm1(s**2) / denom, atol=1e-10)
    np.testing.assert_allclose(idx.total, 1 - np.expm1(np.sum(s**2) - s**2) / denom, atol=1e-10)
    # Lognormal moments (scipy.stats.lognorm docs): E = e^{mu + s^2/2}, independent product.
    mean = np.exp(np.sum(mu + s**2 / 2))
    assert pce.mean == pytest.approx(mean, rel=1e-10)
    assert pce.variance == pytest.approx(mean**2 * denom, rel=1e-9)


def test_lognormal_product_in_log_space_hermite():
    # Same closed form, fitted on Z ~ N(0,1) with Y = exp(sum s_i Z_i).
    # derived: the total-degree-k part of exp(s.z) carries a variance fraction
    # (S^2)^k / k! / (e^{S^2} - 1), S^2 = sum s^2 = 0.56: beyond degree 6,
    # delta ~ 5e-6.  The neglected tail aliases into the least-squares
    # coefficients (error ~ sqrt(delta V P / n) each), so the index error is
    # ~ 2 sqrt(S_i delta P / n) ~ 1e-3 at n = 640 training points, P = 84.
    s = np.array([0.2, 0.4, 0.6])
    rng = np.random.default_rng(5)
    z = rng.standard_normal((800, 3))
    pce = fit_polynomial_chaos([chaospy.Normal(0, 1) for _ in range(3)], z, np.exp(z @ s),
                               max_degree=6, q_norm=1.0, seed=1)
    denom = np.expm1(np.sum(s**2))
    idx = pce.sobol_indices()
    np.testing.assert_allclose(idx.first, np.expm1(s**2) / denom, atol=2e-3)
    np.testing.assert_allclose(idx.total, 1 - np.expm1(np.sum(s**2) - s**2) / denom, atol=2e-3)


def test_additive_linear_model():
    # derived (MODEL.md sec. 7): S_i = ST_i = c_i^2 s_i^2 / sum c_j^2 s_j^2;
    # exact at degree 1, so rounding-level tolerance.
    c = np.array([1.0, -2.0, 0.5, 3.0])
    mu = np.array([10.0, -1.0, 0.0, 2.0])
    sd = np.array([1.0, 0.5, 2.0, 0.2])
    rng = np.random.default_rng(6)
    x = rng.normal(mu, sd, size=(100, 4))
    pce = fit_polynomial_chaos([chaospy.Normal(m, t) for m, t in zip(mu, sd)], x, x @ c,
                               max_degree=3, seed=1)
    ref = c**2 * sd**2 / np.sum(c**2 * sd**2)
    idx = pce.sobol_indices()
    np.testing.assert_allclose(idx.first, ref, atol=1e-10)
    np.testing.assert_allclose(idx.total, ref, atol=1e-10)
    np.testing.assert_allclose(idx.second, 0.0, atol=1e-10)
    assert pce.mean == pytest.approx(c @ mu, rel=1e-12)
    assert pce.variance == pytest.approx(np.sum(c**2 * sd**2), rel=1e-10)
    frame = idx.to_frame()
    assert list(frame.columns) == ["first", "total"] and list(frame.index) == ["x0", "x1", "x2", "x3"]


def test_polynomial_model_mean_and_variance_exact():
    # derived: Y = X1^2 + X1 X2 + 3 X3 with independent X1 ~ N(1, 0.5),
    # X2 ~ U(0, 2), X3 ~ Exp(1); raw moments from scipy.stats, expanded by hand:
    # E Y   = m1(2) + m1(1) m2(1) + 3 m3(1)
    # E Y^2 = m1(4) + m1(2) m2(2) + 9 m3(2) + 2 m1(3) m2(1) + 6 m1(2) m3(1) + 6 m1(1) m2(1) m3(1)
    d1, d2, d3 = stats.norm(1, 0.5), stats.uniform(0, 2), stats.expon()
    m1, m2, m3 = d1.moment, d2.moment, d3.moment
    mean = m1(2) + m1(1) * m2(1) + 3 * m3(1)
    second = (m1(4) + m1(2) * m2(2) + 9 * m3(2) + 2 * m1(3) * m2(1)
              + 6 * m1(2) * m3(1) + 6 * m1(1) * m2(1) * m3(1))
    rng = np.random.default_rng(7)
    x = np.c_[d1.rvs(60, random_state=rng), d2.rvs(60, random_state=rng), d3.rvs(60, random_state=rng)]
    y = x[:, 0] ** 2 + x[:, 0] * x[:, 1] + 3 * x[:, 2]
    pce = fit_polynomial_chaos([chaospy.Normal(1, 0.5), chaospy.Uniform(0, 2), chaospy.Exponential(1)],
                               x, y, max_degree=2, q_norm=1.0, holdout_fraction=0, seed=0)
    assert pce.degree == 2 and pce.loo_error < 1e-20
    assert pce.mean == pytest.approx(mean, rel=1e-12)
    assert pce.variance == pytest.approx(second - mean**2, rel=1e-11)
    x_new = np.c_[[0.3, -1.0], [1.9, 0.1], [0.0, 4.0]]
    np.testing.assert_allclose(pce.predict(x_new), x_new[:, 0] ** 2 + x_new[:, 0] * x_new[:, 1] + 3 * x_new[:, 2], rtol=1e-11)


# ---------------------------------------------------- chaospy cross-check
def test_coefficient_indices_equal_chaospy_sens():
    # Reference: chaospy.Sens_m / Sens_t on the same expansion (3 inputs,
    # degree 4, mixed marginals).  Same polynomial, two different algebras:
    # agreement to rounding, 1e-8.
    dists = [chaospy.Uniform(-np.pi, np.pi), chaospy.Normal(0.5, 1.2), chaospy.Beta(2, 3)]
    rng = np.random.default_rng(7)
    x = np.c_[rng.uniform(-np.pi, np.pi, 400), rng.normal(0.5, 1.2, 400), rng.beta(2, 3, 400)]
    y = np.sin(x[:, 0]) + 2 * x[:, 1] ** 2 * x[:, 2] + x[:, 0] * x[:, 2] ** 3
    pce = fit_polynomial_chaos(dists, x, y, max_degree=4, q_norm=1.0, holdout_fraction=0, seed=1)
    assert pce.degree == 4
    first, total = chaospy_reference_indices(pce)
    idx = pce.sobol_indices()
    np.testing.assert_allclose(idx.first, first, atol=1e-8)
    np.testing.assert_allclose(idx.total, total, atol=1e-8)


def test_reference_refuses_shared_distribution_object():
    u = chaospy.Uniform(0, 1)
    rng = np.random.default_rng(0)
    x = rng.uniform(size=(40, 2))
    pce = fit_polynomial_chaos([u, u], x, x.sum(axis=1), max_degree=1, holdout_fraction=0, seed=0)
    with pytest.raises(PolynomialChaosInputError, match="distinct objects"):
        chaospy_reference_indices(pce)


# ------------------------------------------------------------- LOO
def test_closed_form_loo_equals_brute_force_refits():
    # derived: e_i = r_i / (1 - h_ii) equals the error at sample i of the
    # least-squares fit without sample i (Blatman & Sudret 2011).  Brute force:
    # n refits by numpy.linalg.lstsq.  Both are exact linear algebra: 1e-9.
    rng = np.random.default_rng(8)
    x = rng.uniform(-1, 1, size=(30, 2))
    y = np.exp(x[:, 0]) * np.cos(2 * x[:, 1]) + 0.1 * rng.standard_normal(30)
    pce = fit_polynomial_chaos([chaospy.Uniform(-1, 1), chaospy.Uniform(-1, 1)], x, y,
                               max_degree=3, q_norm=1.0, holdout_fraction=0, seed=0, min_oversampling=1.5)
    psi = pce.basis_matrix(x)
    fit = least_squares_with_loo(psi, y)
    brute = np.empty(30)
    for i in range(30):
        keep = np.arange(30) != i
        coef = np.linalg.lstsq(psi[keep], y[keep], rcond=None)[0]
        brute[i] = y[i] - psi[i] @ coef
    np.testing.assert_allclose(fit.loo_residuals, brute, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(fit.coefficients, pce.coefficients, rtol=1e-10, atol=1e-12)
    assert pce.loo_error == pytest.approx(np.mean(brute**2) / np.var(y), rel=1e-9)


def test_degree_selection_skips_undersampled_degrees():
    rng = np.random.default_rng(9)
    x = rng.uniform(-1, 1, size=(25, 3))
    y = x[:, 0] ** 2 + x[:, 1]
    pce = fit_polynomial_chaos([chaospy.Uniform(-1, 1) for _ in range(3)], x, y,
                               max_degree=8, q_norm=1.0, holdout_fraction=0, seed=0)
    # derived: 25 >= 2 x 10 terms at degree 2, but < 2 x 20 at degree 3.
    assert pce.degree == 2
    assert pce.degree_scan[-1].outcome == "too few samples"
    assert pce.n_train >= 2 * pce.n_terms


# ----------------------------------------------- quality and guard rails
def test_poor_surrogate_flagged_warned_and_refused():
    rng = np.random.default_rng(10)
    x = rng.uniform(size=(200, 2))
    noise = rng.standard_normal(200)  # unrelated to x: nothing to explain
    pce = fit_polynomial_chaos([chaospy.Uniform(0, 1), chaospy.Uniform(0, 1)], x, noise, seed=1)
    assert pce.quality == "poor"
    assert pce.loo_error > 0.05 and pce.q2_holdout < 0.9
    with pytest.warns(PolynomialChaosQualityWarning, match="poor"):
        pce.check_quality()
    with pytest.raises(PolynomialChaosQualityError, match="LOO error"):
        pce.check_quality(on_poor="raise")
    assert pce.sobol_indices().quality == "poor"


def test_good_surrogate_passes_quality_check():
    rng = np.random.default_rng(11)
    x = rng.uniform(size=(100, 2))
    pce = fit_polynomial_chaos([chaospy.Uniform(0, 1), chaospy.Uniform(0, 1)], x,
                               1 + x[:, 0] * x[:, 1], seed=1)
    assert pce.quality == "good" and pce.q2_holdout == pytest.approx(1.0, abs=1e-12)
    assert pce.n_holdout == 20 and pce.n_train == 80
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert pce.check_quality(on_poor="raise") is pce


def test_separate_holdout_set():
    rng = np.random.default_rng(12)
    x, xh = rng.uniform(size=(60, 2)), rng.uniform(size=(15, 2))
    f = lambda z: z[:, 0] ** 2 - z[:, 1]
    pce = fit_polynomial_chaos([chaospy.Uniform(0, 1), chaospy.Uniform(0, 1)], x, f(x),
                               holdout=(xh, f(xh)), seed=0)
    assert pce.n_train == 60 and pce.n_holdout == 15
    assert pce.q2_holdout == pytest.approx(1.0, abs=1e-12)


def test_zero_variance_output():
    rng = np.random.default_rng(13)
    x = rng.uniform(size=(50, 2))
    pce = fit_polynomial_chaos([chaospy.Uniform(0, 1), chaospy.Uniform(0, 1)], x, np.full(50, 4.2), seed=0)
    idx = pce.sobol_indices()
    assert idx.status == "zero variance"
    np.testing.assert_array_equal(idx.first, 0.0)
    np.testing.assert_array_equal(idx.total, 0.0)
    assert pce.mean == 4.2 and pce.variance == 0.0
    np.testing.assert_allclose(pce.predict(x[:3]), 4.2)


def test_input_validation():
    u = [chaospy.Uniform(0, 1), chaospy.Uniform(0, 1)]
    x = np.random.default_rng(0).uniform(size=(20, 2))
    with pytest.raises(InsufficientSamplesError, match="too few"):
        fit_polynomial_chaos(u, x[:5], x[:5, 0], holdout_fraction=0, seed=0)
    with pytest.raises(PolynomialChaosInputError, match=r"shape \(n, 2\)"):
        fit_polynomial_chaos(u, x[:, :1], x[:, 0], seed=0)
    with pytest.raises(PolynomialChaosInputError, match="NaN"):
        fit_polynomial_chaos(u, x, np.where(x[:, 0] > 0.5, np.nan, 1.0), seed=0)
    with pytest.raises(PolynomialChaosInputError, match="sequence of 1-D"):
        fit_polynomial_chaos(chaospy.J(*u), x, x[:, 0], seed=0)
    with pytest.raises(PolynomialChaosInputError, match="q_norm"):
        fit_polynomial_chaos(u, x, x[:, 0], q_norm=1.5, seed=0)
    with pytest.raises(PolynomialChaosInputError, match="holdout_fraction"):
        fit_polynomial_chaos(u, x, x[:, 0], holdout_fraction=1.0, seed=0)


def test_recurrence_kept_per_distribution_matches_closed_forms():
    """Three-term recurrences against the classical closed forms (Gautschi 2004, table 1.1):
    Normal(mu, s): alpha_k = mu, beta_k = k s^2 (k >= 1); Uniform(0, 1) (shifted Legendre):
    alpha_k = 1/2, beta_k = k^2 / (4 (4 k^2 - 1)). Asked twice (the second answer is the kept
    one) and for two normals differing only in sigma, which must not share an entry."""
    import chaospy

    from uq.estimators.pce_basis import _recurrence

    k = np.arange(1, 5)
    for _ in range(2):
        for sigma in (1.0, 2.0):
            c = _recurrence(chaospy.Normal(mu=0.3, sigma=sigma), 4)
            np.testing.assert_allclose(c[0], 0.3, atol=1e-9)
            np.testing.assert_allclose(c[1, 1:], k * sigma ** 2, rtol=1e-9)
        u = _recurrence(chaospy.Uniform(0.0, 1.0), 4)
        np.testing.assert_allclose(u[0], 0.5, atol=1e-12)
        np.testing.assert_allclose(u[1, 1:], k ** 2 / (4.0 * (4.0 * k ** 2 - 1.0)), rtol=1e-9)
