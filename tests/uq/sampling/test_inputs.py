"""Tests of uq.sampling.inputs: marginals, Gaussian copula on rank correlations, groups."""

import numpy as np
import pytest
from scipy import stats

from uq.sampling.inputs import (
    UNIT_CLIP,
    CorrelationMatrixError,
    InputModel,
    InputModelError,
    ScipyMarginal,
    UnitPointsError,
    spearman_to_pearson,
)
from uq.sampling.plans import monte_carlo, scrambled_sobol


def _three_marginals():
    return [
        ScipyMarginal("drag_factor", stats.lognorm(s=0.2, scale=1.0)),
        ScipyMarginal("hotel_load", stats.uniform(loc=0.1, scale=0.9)),
        ScipyMarginal("current", stats.norm(loc=0.0, scale=0.05)),
    ]


def test_independent_transform_is_columnwise_ppf():
    # Reference: scipy.stats ppf applied column by column (definition of inverse transform).
    marginals = _three_marginals()
    model = InputModel(marginals)
    u = monte_carlo(1000, 3, seed=11).unit_points()
    x = model.transform(u)
    for j, m in enumerate(marginals):
        np.testing.assert_array_equal(x[:, j], m.frozen.ppf(u[:, j]))
    assert model.names == ("drag_factor", "hotel_load", "current")
    assert model.dimension == 3
    assert model.groups() == [["drag_factor"], ["hotel_load"], ["current"]]


def test_identity_correlation_equals_independent():
    # derived: with R = I the Cholesky factor is I and Phi(Phi^-1(u)) = u.
    u = monte_carlo(500, 3, seed=3).unit_points()
    a = InputModel(_three_marginals()).transform(u)
    b = InputModel(_three_marginals(), rank_correlation=np.eye(3)).transform(u)
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-15)  # float round trip only


def test_copula_mixing_equals_matrix_product():
    # derived: z = g @ L.T; the engine computes it with elementwise column sums (no BLAS),
    # which must agree with numpy's matrix product to rounding.
    from uq.sampling.inputs import _lower_triangular_rows

    rank = np.array([[1.0, 0.4, 0.0], [0.4, 1.0, 0.2], [0.0, 0.2, 1.0]])
    chol = np.linalg.cholesky(spearman_to_pearson(rank))
    g = np.random.default_rng(1).normal(size=(100, 3))
    np.testing.assert_allclose(_lower_triangular_rows(g, chol), g @ chol.T, rtol=1e-14, atol=1e-15)


def test_unit_clip_keeps_infinite_supports_finite():
    # Normal has infinite support: ppf(0) = -inf, ppf(1) = +inf in scipy.
    model = InputModel([ScipyMarginal("z", stats.norm())])
    x = model.transform(np.array([[0.0], [1.0]]))
    assert np.all(np.isfinite(x))
    # derived: Phi^-1(2^-53) = -8.2 (2^-53 = 1.11e-16), the clip level documented.
    np.testing.assert_allclose(x[0, 0], stats.norm.ppf(UNIT_CLIP), rtol=1e-12)
    assert -8.3 < x[0, 0] < -8.1 and 8.1 < x[1, 0] < 8.3


def test_spearman_to_pearson_closed_form():
    # Kruskal (1958): for a bivariate normal, rho_S = (6/pi) arcsin(r/2); so
    # r = 2 sin(pi rho_S / 6): 0 -> 0, 1 -> 1, 0.5 -> 2 sin(pi/12) = 0.517638 (derived).
    np.testing.assert_allclose(spearman_to_pearson([0.0, 1.0, 0.5]),
                               [0.0, 1.0, 0.5176380902050415], rtol=1e-14)


def test_copula_reproduces_rank_correlation_and_marginals():
    rank = np.array([[1.0, 0.6, 0.0],
                     [0.6, 1.0, -0.3],
                     [0.0, -0.3, 1.0]])
    marginals = _three_marginals()
    model = InputModel(marginals, rank_correlation=rank)
    n = 20_000
    x = model.transform(monte_carlo(n, 3, seed=2024).unit_points())
    observed = stats.spearmanr(x).statistic
    # Tolerance from the sampling error of Spearman's rho: Var(atanh r_S) ~ 1.06/(n-3)
    # (Fieller, Hartley & Pearson 1957, Biometrika 44:470; constant from memory);
    # 4 sd per pair -> false alarm ~ 6e-5 per pair.
    tol = 4.0 * np.sqrt(1.06 / (n - 3))
    iu = np.triu_indices(3, k=1)
    assert np.all(np.abs(np.arctanh(observed[iu]) - np.arctanh(rank[iu])) < tol)
    # Marginals preserved: Kolmogorov-Smirnov test of each column against its marginal
    # (scipy.stats.kstest); seeded, p > 1e-3 is a loose guard against a wrong transform
    # (a wrong marginal at n = 2e4 gives p ~ 0).
    for j, m in enumerate(marginals):
        assert stats.kstest(x[:, j], m.frozen.cdf).pvalue > 1e-3


def test_copula_with_sobol_points_has_requested_rank_correlation():
    # Same check on a scrambled Sobol' plan (the plan the project uses most);
    # Sobol' points are more uniform than MC, so the MC tolerance above is conservative.
    rank = np.array([[1.0, -0.5], [-0.5, 1.0]])
    model = InputModel(_three_marginals()[:2], rank_correlation=rank)
    n = 2**14
    x = model.transform(scrambled_sobol(n, 2, seed=5).unit_points())
    r = stats.spearmanr(x[:, 0], x[:, 1]).statistic
    assert abs(np.arctanh(r) - np.arctanh(-0.5)) < 4.0 * np.sqrt(1.06 / (n - 3))


def test_groups_are_connected_components():
    marginals = [ScipyMarginal(name, stats.uniform()) for name in "abcde"]
    rank = np.eye(5)
    rank[0, 2] = rank[2, 0] = 0.3   # a-c
    rank[2, 4] = rank[4, 2] = -0.2  # c-e  -> a, c, e one group (transitive)
    model = InputModel(marginals, rank_correlation=rank)
    assert model.groups() == [["a", "c", "e"], ["b"], ["d"]]


@pytest.mark.parametrize(
    "matrix, match",
    [
        (np.array([[1.0, 0.5], [0.4, 1.0]]), "not symmetric"),
        (np.array([[1.0, 0.5], [0.5, 0.9]]), "unit diagonal"),
        (np.array([[1.0, 1.5], [1.5, 1.0]]), r"\[-1, 1\]"),
        (np.eye(3), r"shape \(3, 3\); expected \(2, 2\)"),
        (np.array([[1.0, np.nan], [np.nan, 1.0]]), "non-finite"),
    ],
)
def test_invalid_correlation_raises(matrix, match):
    with pytest.raises(CorrelationMatrixError, match=match):
        InputModel(_three_marginals()[:2], rank_correlation=matrix)


def test_inconsistent_correlations_rejected_as_not_positive_definite():
    # derived: a-b and b-c strongly positive but a-c strongly negative cannot coexist
    # (eigenvalues of the converted matrix include a negative one).
    rank = np.array([[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]])
    assert np.linalg.eigvalsh(spearman_to_pearson(rank)).min() < 0
    with pytest.raises(CorrelationMatrixError, match="not positive definite"):
        InputModel(_three_marginals(), rank_correlation=rank)


def test_model_validation_errors():
    with pytest.raises(InputModelError, match="at least one marginal"):
        InputModel([])
    with pytest.raises(InputModelError, match="unique; repeated: \\['x'\\]"):
        InputModel([ScipyMarginal("x", stats.norm()), ScipyMarginal("x", stats.norm())])
    with pytest.raises(InputModelError, match="'name' attribute and a 'ppf' method"):
        InputModel([object()])
    model = InputModel(_three_marginals())
    with pytest.raises(UnitPointsError, match=r"shape \(n, 3\)"):
        model.transform(np.zeros((4, 2)))
    with pytest.raises(UnitPointsError, match=r"\[0, 1\]"):
        model.transform(np.full((1, 3), 1.5))
