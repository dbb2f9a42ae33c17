"""Grouped, interval-carrying sensitivity ranking and the engine-streamed Saltelli stage."""
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest
from scipy import stats

from uq.estimators import sobol as sa
from uq.estimators.sensitivity import (
    ORDER_NOT_RESOLVED,
    evaluate_saltelli,
    indicator_flips,
    indicator_total_bounds,
    rank_factors,
)
from uq.sampling.inputs import InputModel, ScipyMarginal

RHO = 0.6  # Pearson correlation of x1 and x2


def _linear(x):
    return {"y": x[:, 0] + x[:, 1] + 2.0 * x[:, 2], "fail": x[:, 0] + x[:, 1] + 2 * x[:, 2] > 3.0}


def _model():
    names = ("x1", "x2", "x3")
    marginals = [ScipyMarginal(n, stats.norm(0.0, 1.0)) for n in names]
    rank = np.eye(3)
    # Spearman correlation of a Gaussian pair with Pearson RHO: (6/pi) arcsin(RHO/2)
    # (Kruskal 1958), so the copula reproduces RHO exactly
    rank[0, 1] = rank[1, 0] = 6.0 / np.pi * np.arcsin(RHO / 2.0)
    return names, InputModel(marginals, rank_correlation=rank)


def _grouped_indices(base_n=1024, **kw):
    names, model = _model()
    groups = [tuple(g) for g in model.groups()]
    design = sa.saltelli_design(names, base_n=base_n, seed=11, groups=groups)
    out = evaluate_saltelli(design, _linear, ("y", "fail"), input_model=model, **kw)
    return design, out


def test_saltelli_stage_is_bit_identical_for_any_executor_and_chunking():
    _, serial = _grouped_indices(base_n=256)
    with ThreadPoolExecutor(2) as pool:
        _, parallel = _grouped_indices(base_n=256, executor=pool, chunk_blocks=3, block_size=100)
    assert np.array_equal(serial["y"], parallel["y"])
    assert np.array_equal(serial["fail"], parallel["fail"])


def test_correlated_pair_is_ranked_as_one_group_with_its_closed_form_share():
    # derived (additive linear model, MODEL.md section 7 with a correlated pair): with
    # y = x1 + x2 + 2 x3, var(x_i) = 1, corr(x1, x2) = 0.6, V = 1 + 1 + 2*0.6 + 4 = 7.2;
    # the pair's first = total index = 3.2 / 7.2 = 0.444, x3's = 4 / 7.2 = 0.556
    design, out = _grouped_indices()
    res = sa.sobol_indices(design, {"y": out["y"]}, seed=5)["y"]
    members = design.groups
    ranking = rank_factors(res.factors, members, res.first, res.first_interval.low,
                           res.first_interval.high, res.total, res.total_interval.low,
                           res.total_interval.high, base_n=design.base_n, output="y")
    assert [r.members for r in ranking.rows] == [("x3",), ("x1", "x2")]
    top, pair = ranking.rows
    # tolerance 0.05: Saltelli/Jansen error at base N 1024 on this model is ~0.01-0.02
    assert top.total == pytest.approx(4 / 7.2, abs=0.05)
    assert pair.total == pytest.approx(3.2 / 7.2, abs=0.05)
    assert pair.first == pytest.approx(3.2 / 7.2, abs=0.05)
    assert pair.total_low <= pair.total <= pair.total_high


def test_overlapping_neighbours_are_flagged_with_a_base_n_that_would_resolve_them():
    # derived: totals 0.50 +- 0.10 and 0.45 +- 0.10 overlap; the spread 0.20 must shrink below
    # the gap 0.05, a factor 4 in half-width, i.e. 16x the base N: 1024 * 16 = 16384
    r = rank_factors(("a", "b"), (("a",), ("b",)), [0.5, 0.45], [0.4, 0.35], [0.6, 0.55],
                     [0.5, 0.45], [0.4, 0.35], [0.6, 0.55], base_n=1024, output="failure")
    assert not r.order_resolved and r.suggested_base_n == 16384
    assert ORDER_NOT_RESOLVED in r.sentence
    clear = rank_factors(("a", "b"), (("a",), ("b",)), [0.5, 0.1], [0.45, 0.05], [0.55, 0.15],
                         [0.5, 0.1], [0.45, 0.05], [0.55, 0.15], base_n=1024, output="failure")
    assert clear.order_resolved and clear.suggested_base_n is None


def test_indicator_total_index_matches_salib_and_its_bounds_are_not_degenerate():
    # reference: SALib's Jansen total index of a 0/1 output equals m / (2 N V), m = flips
    design, out = _grouped_indices(base_n=512)
    fail = out["fail"].astype(float)
    res = sa.sobol_indices(design, {"fail": fail}, seed=5)["fail"]
    flips = indicator_flips(fail, design.n_factors)
    y = fail.reshape(-1, design.n_factors + 2)
    var = np.concatenate([y[:, 0], y[:, -1]]).var()  # SALib's variance: the A and B rows
    assert res.total == pytest.approx(flips / (2 * design.base_n * var), rel=1e-9)
    lo, hi = indicator_total_bounds(fail, design.n_factors)
    assert np.all(lo <= res.total) and np.all(hi >= res.total) and np.all(hi > 0)


def test_pce_group_indices_of_a_linear_model_with_bootstrap_intervals():
    # derived (additive linear model): y = x1 + x2 + 2 x3 with independent N(0, 1) inputs,
    # V = 6; the group {x1, x2} has first = total = 2/6, x3 has 4/6
    import chaospy

    from uq.estimators.pce import fit_polynomial_chaos
    from uq.estimators.sensitivity import pce_group_indices

    rng = np.random.default_rng(4)
    x = rng.standard_normal((400, 3))
    y = x[:, 0] + x[:, 1] + 2 * x[:, 2] + 0.1 * rng.standard_normal(400)  # small noise
    pce = fit_polynomial_chaos([chaospy.Normal(0, 1)] * 3, x, y, max_degree=2, seed=1,
                               names=("x1", "x2", "x3"))
    g = pce_group_indices(pce, x, y, [("x1", "x2"), ("x3",)], rng=3)
    # tolerance 0.01: the noise variance 0.01 is 0.2 % of V
    assert g.total == pytest.approx([2 / 6, 4 / 6], abs=0.01)
    assert g.first == pytest.approx([2 / 6, 4 / 6], abs=0.01)
    assert np.all(g.total_low <= g.total) and np.all(g.total <= g.total_high)
    assert np.all(g.total_high - g.total_low > 0)
    assert g.factors == ("x1 + x2", "x3")
