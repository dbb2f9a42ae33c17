"""Tests of uq.estimators.sobol against closed-form Sobol' indices.

Tolerance of the Saltelli checks.  At base N = 2^12 with scrambled Sobol'
points, the spread of the estimates over 20 independent scramblings was
measured while writing these tests: sd <= 0.004 (first order), <= 0.0022
(total), 0.0041 (Ishigami S13), for both Ishigami and Sobol' G.  ABS_TOL = 0.02
is 5 of those sd: a correct estimator does not fail at any seed, a wrong
estimator, a swapped column or a mis-read N (errors of 0.05 and more) does.
SALib's bootstrap treats the rows as i.i.d. and so is MC-sized (half-widths
about 0.01-0.04 at this N): it must cover the reference, which we also check.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from uq.estimators.sobol import (
    BaseSizeError,
    FactorNamesError,
    OutputLengthError,
    SaltelliDesign,
    SensitivityOptionError,
    saltelli_design,
    sobol_indices,
)

ABS_TOL = 0.02  # 5 x measured RQMC sd at N = 2^12 (see module docstring)

# Ishigami & Homma 1990; values from Homma & Saltelli 1996 (a = 7, b = 0.1).
ISHIGAMI_FIRST = np.array([0.3139, 0.4424, 0.0])
ISHIGAMI_TOTAL = np.array([0.5576, 0.4424, 0.2437])


def ishigami_from_unit(u, a=7.0, b=0.1):
    x = -np.pi + 2.0 * np.pi * u  # X_i ~ U(-pi, pi)
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def ishigami_s13(a=7.0, b=0.1):
    # Ishigami & Homma 1990 / Homma & Saltelli 1996: V13 = 8 b^2 pi^8 / 225.
    v = 0.5 + a**2 / 8 + b * np.pi**4 / 5 + b**2 * np.pi**8 / 18
    return 8 * b**2 * np.pi**8 / 225 / v


def sobol_g(u, a):
    # Saltelli & Sobol' 1995.
    return np.prod((np.abs(4.0 * u - 2.0) + a) / (1.0 + a), axis=1)


def sobol_g_indices(a):
    # Saltelli & Sobol' 1995: V_i = 1/(3(1+a_i)^2), V = prod(1+V_i) - 1.
    vi = 1.0 / (3.0 * (1.0 + a) ** 2)
    v = np.prod(1.0 + vi) - 1.0
    return vi / v, vi * np.prod(1.0 + vi) / (1.0 + vi) / v


def assert_close_and_covered(est, interval, ref):
    np.testing.assert_allclose(est, ref, atol=ABS_TOL, rtol=0)
    assert np.all(interval.low <= ref + 1e-12) and np.all(ref <= interval.high + 1e-12)


# ---------------------------------------------------------------- design
def test_design_shape_metadata_and_read_only():
    d = saltelli_design(["a", "b", "c"], base_n=64, seed=1)
    assert isinstance(d, SaltelliDesign)
    assert d.n_runs == 64 * (3 + 2) == d.unit_points.shape[0]  # SALib docs: N(D+2)
    assert d.unit_points.shape[1] == 3
    assert np.all((d.unit_points >= 0) & (d.unit_points < 1))
    with pytest.raises(ValueError):
        d.unit_points[0, 0] = 0.5
    d2 = saltelli_design(["a", "b", "c"], base_n=64, second_order=True, seed=1)
    assert d2.n_runs == 64 * (2 * 3 + 2) == d2.unit_points.shape[0]  # SALib docs: N(2D+2)
    # Same seed, same design; another seed, another scrambling.
    again = saltelli_design(["a", "b", "c"], base_n=64, seed=1)
    other = saltelli_design(["a", "b", "c"], base_n=64, seed=2)
    np.testing.assert_array_equal(d.unit_points, again.unit_points)
    assert not np.allclose(d.unit_points, other.unit_points)


def test_design_none_seed_is_recorded_and_rebuilds():
    d = saltelli_design(["a", "b"], base_n=8, seed=None)
    rebuilt = saltelli_design(["a", "b"], base_n=8, seed=d.seed)
    np.testing.assert_array_equal(d.unit_points, rebuilt.unit_points)


@pytest.mark.parametrize("base_n, hint", [(1000, "512 and 1024"), (3, "2 and 4"), (1, "smallest")])
def test_base_n_must_be_power_of_two(base_n, hint):
    with pytest.raises(BaseSizeError, match=hint):
        saltelli_design(["a", "b"], base_n=base_n, seed=0)


def test_base_n_rejects_non_integers():
    with pytest.raises(BaseSizeError, match="integer"):
        saltelli_design(["a", "b"], base_n=64.0, seed=0)


def test_names_and_groups_validated():
    with pytest.raises(FactorNamesError, match="unique"):
        saltelli_design(["a", "a"], base_n=8, seed=0)
    with pytest.raises(FactorNamesError, match="not grouped"):
        saltelli_design(["a", "b", "c"], base_n=8, seed=0, groups=[("a", "b")])
    with pytest.raises(FactorNamesError, match="two groups"):
        saltelli_design(["a", "b"], base_n=8, seed=0, groups=[("a", "b"), ("b",)])
    with pytest.raises(FactorNamesError, match="not in names"):
        saltelli_design(["a", "b"], base_n=8, seed=0, groups=[("a", "b", "z")])


def test_grouped_design_counts_groups():
    d = saltelli_design(["a", "b", "c"], base_n=16, seed=0, groups={"ac": ["c", "a"], "b": ["b"]})
    assert d.n_factors == 2
    assert d.n_runs == 16 * (2 + 2)  # SALib docs: D = number of groups
    assert d.factor_labels == ("ac", "b")  # ordered by first appearance in names
    assert d.problem()["groups"] == ["ac", "b", "ac"]


# ------------------------------------------------------- closed forms
def test_ishigami_first_and_total():
    d = saltelli_design(["x1", "x2", "x3"], base_n=2**12, seed=11)
    res = sobol_indices(d, {"y": ishigami_from_unit(d.unit_points)}, seed=3)["y"]
    assert res.status == "ok"
    assert_close_and_covered(res.first, res.first_interval, ISHIGAMI_FIRST)
    assert_close_and_covered(res.total, res.total_interval, ISHIGAMI_TOTAL)
    assert res.second is None


def test_ishigami_second_order():
    d = saltelli_design(["x1", "x2", "x3"], base_n=2**12, seed=12, second_order=True)
    res = sobol_indices(d, {"y": ishigami_from_unit(d.unit_points)}, seed=4)["y"]
    # Only x1-x3 interact (Ishigami & Homma 1990): S12 = S23 = 0, S13 = V13 / V.
    ref = np.array([[np.nan, 0.0, ishigami_s13()], [0.0, np.nan, 0.0], [ishigami_s13(), 0.0, np.nan]])
    iu = np.triu_indices(3, k=1)
    np.testing.assert_allclose(res.second[iu], ref[iu], atol=ABS_TOL, rtol=0)
    np.testing.assert_array_equal(res.second, res.second.T)
    frame = res.second_order_frame()
    assert frame.loc[("x1", "x3"), "second"] == pytest.approx(ishigami_s13(), abs=ABS_TOL)
    assert_close_and_covered(res.total, res.total_interval, ISHIGAMI_TOTAL)


def test_ishigami_groups():
    # derived: groups {x1, x3} and {x2} do not interact, so their first and
    # total indices are S1 + S3 + S13 = ST1 and S2 (Homma & Saltelli 1996 values).
    d = saltelli_design(
        ["x1", "x2", "x3"], base_n=2**12, seed=13, groups={"x1x3": ("x1", "x3"), "x2": ("x2",)}
    )
    res = sobol_indices(d, {"y": ishigami_from_unit(d.unit_points)}, seed=5)["y"]
    ref = np.array([ISHIGAMI_TOTAL[0], ISHIGAMI_FIRST[1]])
    assert res.factors == ("x1x3", "x2")
    assert_close_and_covered(res.first, res.first_interval, ref)
    assert_close_and_covered(res.total, res.total_interval, ref)


def test_sobol_g_function():
    a = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0])  # Saltelli & Sobol' 1995 test set
    first, total = sobol_g_indices(a)
    d = saltelli_design([f"x{i}" for i in range(6)], base_n=2**12, seed=21)
    res = sobol_indices(d, {"g": sobol_g(d.unit_points, a)}, seed=6)["g"]
    assert_close_and_covered(res.first, res.first_interval, first)
    assert_close_and_covered(res.total, res.total_interval, total)


def test_additive_linear_model_with_normal_inputs():
    # derived (MODEL.md sec. 7): S_i = ST_i = c_i^2 s_i^2 / sum_j c_j^2 s_j^2.
    c = np.array([1.0, -2.0, 0.5, 3.0])
    mu = np.array([10.0, -1.0, 0.0, 2.0])
    s = np.array([1.0, 0.5, 2.0, 0.2])
    ref = c**2 * s**2 / np.sum(c**2 * s**2)
    d = saltelli_design(["a", "b", "c", "d"], base_n=2**12, seed=31)
    x = stats.norm.ppf(d.unit_points, loc=mu, scale=s)  # caller maps unit -> physical
    res = sobol_indices(d, {"y": x @ c}, seed=7)["y"]
    assert_close_and_covered(res.first, res.first_interval, ref)
    assert_close_and_covered(res.total, res.total_interval, ref)


def test_indicator_output():
    # derived: Y = 1{u1 < p} 1{u2 < q}, u3 inert.  Var Y = pq(1 - pq),
    # V1 = q^2 p(1-p), V2 = p^2 q(1-q), so S1 = q(1-p)/(1-pq),
    # S2 = p(1-q)/(1-pq), ST1 = 1 - S2, ST2 = 1 - S1, S3 = ST3 = 0.
    p, q = 0.5, 0.4
    s1, s2 = q * (1 - p) / (1 - p * q), p * (1 - q) / (1 - p * q)
    d = saltelli_design(["u1", "u2", "u3"], base_n=2**12, seed=41)
    u = d.unit_points
    fails = (u[:, 0] < p) & (u[:, 1] < q)  # boolean indicator accepted as is
    res = sobol_indices(d, {"fail": fails}, seed=8)["fail"]
    assert res.status == "ok"
    # Indicator outputs are discontinuous: RQMC gains less, so twice the tolerance.
    np.testing.assert_allclose(res.first, [s1, s2, 0.0], atol=2 * ABS_TOL, rtol=0)
    np.testing.assert_allclose(res.total, [1 - s2, 1 - s1, 0.0], atol=2 * ABS_TOL, rtol=0)


# ------------------------------------------------------ guard rails
def test_zero_variance_output_reported_not_divided():
    d = saltelli_design(["a", "b", "c"], base_n=64, seed=1, second_order=True)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # any divide-by-zero or SALib warning fails
        res = sobol_indices(
            d,
            {
                "constant": np.full(d.n_runs, 7.0),
                "all_zero": np.zeros(d.n_runs),
                # roundoff-level wiggle on a large mean is still "constant"
                "nearly": 1e6 + 1e-9 * d.unit_points[:, 0],
            },
            seed=0,
        )
    for name in ("constant", "all_zero", "nearly"):
        r = res[name]
        assert r.status == "zero variance"
        np.testing.assert_array_equal(r.first, 0.0)
        np.testing.assert_array_equal(r.total, 0.0)
        np.testing.assert_array_equal(r.first_interval.low, 0.0)
        assert r.second is not None and r.second[0, 1] == 0.0


def test_non_finite_output_flagged():
    d = saltelli_design(["a", "b"], base_n=32, seed=1)
    y = d.unit_points[:, 0] + d.unit_points[:, 1]
    y[5] = np.nan
    y_inf = d.unit_points[:, 0].copy()
    y_inf[0] = np.inf
    res = sobol_indices(d, {"y": y, "inf": y_inf, "ok": d.unit_points[:, 0]}, seed=0)
    for name in ("y", "inf"):
        assert res[name].status == "non-finite"
        assert np.all(np.isnan(res[name].first)) and np.all(np.isnan(res[name].total))
    assert res["ok"].status == "ok"


def test_output_length_must_match_design():
    d = saltelli_design(["a", "b", "c"], base_n=16, seed=1)  # 16 x 5 = 80 rows
    with pytest.raises(OutputLengthError, match=r"expected \(80,\)"):
        sobol_indices(d, {"y": np.ones(d.n_runs - 1)}, seed=0)
    d2 = saltelli_design(["a", "b", "c"], base_n=16, seed=1, second_order=True)  # 128 rows
    with pytest.raises(OutputLengthError, match="evaluate the model on every row"):
        sobol_indices(d, {"y": d2.unit_points[:, 0]}, seed=0)
    with pytest.raises(OutputLengthError, match="shape"):
        sobol_indices(d, {"y": np.ones((d.n_runs, 2))}, seed=0)


def test_salib_silent_n_trap_is_caught():
    # 40 outputs of a first-order design (N = 8, D = 3: 8 x 5 rows) fed to a
    # second-order analysis: 40 is a multiple of 2D + 2 = 8, so SALib alone
    # infers N = 5 and returns numbers (MODEL.md sec. 7, SALib traps).
    from SALib.analyze import sobol as salib_sobol

    first = saltelli_design(["a", "b", "c"], base_n=8, seed=1)
    y = ishigami_from_unit(first.unit_points)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        salib_sobol.analyze(first.problem(), y, calc_second_order=True, seed=1)  # no error
    second = saltelli_design(["a", "b", "c"], base_n=8, seed=1, second_order=True)
    with pytest.raises(OutputLengthError, match=r"expected \(64,\)"):
        sobol_indices(second, {"y": y}, seed=0)


def test_options_validated():
    d = saltelli_design(["a", "b"], base_n=8, seed=1)
    y = {"y": d.unit_points[:, 0]}
    with pytest.raises(SensitivityOptionError, match="confidence"):
        sobol_indices(d, y, confidence=95, seed=0)
    with pytest.raises(SensitivityOptionError, match="n_bootstrap"):
        sobol_indices(d, y, n_bootstrap=1, seed=0)
    with pytest.raises(OutputLengthError, match="SaltelliDesign"):
        sobol_indices(d.unit_points, y, seed=0)


def test_bootstrap_stream_keyed_by_output_name():
    d = saltelli_design(["a", "b", "c"], base_n=256, seed=1)
    y = ishigami_from_unit(d.unit_points)
    alone = sobol_indices(d, {"y": y}, seed=9)["y"]
    with_other = sobol_indices(d, {"z": 2 * y + 1, "y": y}, seed=9)["y"]
    np.testing.assert_array_equal(alone.first_interval.low, with_other.first_interval.low)
    # The Sobol' indices are invariant to affine maps of the output (definition).
    z = sobol_indices(d, {"z": 2 * y + 1}, seed=9)["z"]
    np.testing.assert_allclose(z.first, alone.first, atol=1e-12)


def test_to_frame_layout():
    d = saltelli_design(["a", "b"], base_n=64, seed=1)
    res = sobol_indices(d, {"y": d.unit_points[:, 0] + 0.1 * d.unit_points[:, 1], "c": np.ones(d.n_runs)}, seed=0)
    f = res["y"].to_frame()
    assert list(f.columns) == ["first", "first_low", "first_high", "total", "total_low", "total_high"]
    assert list(f.index) == ["a", "b"]
    both = res.to_frame()
    assert isinstance(both.index, pd.MultiIndex)
    assert both.loc[("c", "a"), "status"] == "zero variance"
    with pytest.raises(SensitivityOptionError, match="second_order=False"):
        res["y"].second_order_frame()
