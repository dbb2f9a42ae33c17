"""The all-factors-at-once Saltelli/Jansen estimates and bootstrap against SALib itself.

Reference: ``SALib.analyze.sobol.analyze`` (SALib 1.5/1.6) called on the same outputs with a
generator of the same seed, so it draws the same resamples. The point estimates and the
bootstrap half widths must agree to rounding (1e-12 absolute on indices of order 1).
"""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from SALib.analyze import sobol as salib_sobol

from uq.estimators import sobol as sa
from uq.estimators.saltelli_bootstrap import first_total_with_bootstrap


def _salib(problem, y, resamples, confidence, seed):
    return salib_sobol.analyze(problem, y, calc_second_order=False, num_resamples=resamples,
                               conf_level=confidence, print_to_console=False,
                               seed=np.random.default_rng(seed))


def _compare(ours, ref):
    for key, value in (("S1", ours.first), ("S1_conf", ours.first_half_width),
                       ("ST", ours.total), ("ST_conf", ours.total_half_width)):
        np.testing.assert_allclose(value, np.asarray(ref[key], float), rtol=0, atol=1e-12,
                                   err_msg=key)


def _ishigami(x):
    """Ishigami & Homma (1990) on [-pi, pi]^3, a = 7, b = 0.1."""
    x = -np.pi + 2 * np.pi * x
    return np.sin(x[:, 0]) + 7 * np.sin(x[:, 1]) ** 2 + 0.1 * x[:, 2] ** 4 * np.sin(x[:, 0])


@pytest.mark.parametrize("base_n, resamples, confidence, seed",
                         [(256, 100, 0.95, 1), (1024, 200, 0.9, 7), (64, 3, 0.99, 11)])
def test_matches_salib_on_ishigami(base_n, resamples, confidence, seed):
    design = sa.saltelli_design(["x1", "x2", "x3"], base_n=base_n, second_order=False, seed=3)
    y = _ishigami(design.unit_points)
    ours = first_total_with_bootstrap(y, 3, n_resamples=resamples, confidence=confidence,
                                      rng=np.random.default_rng(seed))
    _compare(ours, _salib(design.problem(), y, resamples, confidence, seed))


def test_matches_salib_with_groups_and_an_indicator_output():
    names = [f"x{i}" for i in range(6)]
    groups = [("x0", "x1"), ("x2",), ("x3", "x4", "x5")]
    design = sa.saltelli_design(names, base_n=512, second_order=False, seed=5, groups=groups)
    u = design.unit_points
    failure = (u[:, 0] + 0.5 * u[:, 3] + 0.2 * u[:, 2] > 1.1).astype(float)
    ours = first_total_with_bootstrap(failure, design.n_factors, n_resamples=150,
                                      confidence=0.95, rng=np.random.default_rng(2))
    assert design.n_factors == 3
    _compare(ours, _salib(design.problem(), failure, 150, 0.95, 2))


def test_rare_indicator_whose_resamples_can_be_constant():
    # one failure in 8 x 64 runs: many resamples miss it (zero pooled variance in A and B)
    design = sa.saltelli_design(["a", "b"], base_n=64, second_order=False, seed=9)
    y = np.zeros(design.n_runs)
    y[4 * 3] = 1.0  # the A value of base row 3
    ours = first_total_with_bootstrap(y, 2, n_resamples=50, confidence=0.95,
                                      rng=np.random.default_rng(4))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # SALib's note on constant resamples
        ref = _salib(design.problem(), y, 50, 0.95, 4)
    _compare(ours, ref)


def test_sobol_indices_uses_it_and_keeps_salib_numbers():
    # the public estimator, no second order: its intervals are estimate -/+ SALib's half width
    design = sa.saltelli_design(["x1", "x2", "x3"], base_n=512, second_order=False, seed=21)
    y = _ishigami(design.unit_points)
    got = sa.sobol_indices(design, {"y": y}, confidence=0.95, seed=8)["y"]
    stream = sa._output_stream(np.random.SeedSequence(8), "y")
    ref = _salib(design.problem(), y, got.n_bootstrap, 0.95, stream)
    np.testing.assert_allclose(got.first, ref["S1"], atol=1e-12)
    np.testing.assert_allclose(got.total, ref["ST"], atol=1e-12)
    np.testing.assert_allclose(got.first_interval.high - got.first,
                               ref["S1_conf"], atol=1e-12)
    np.testing.assert_allclose(got.total_interval.high - got.total,
                               ref["ST_conf"], atol=1e-12)



@pytest.mark.parametrize("second_order", [False, True])
@pytest.mark.parametrize("groups", [None, [("x0", "x3"), ("x1",), ("x2", "x4")]])
def test_design_rows_equal_salib_sample(second_order, groups):
    """The Saltelli rows built with array operations are SALib.sample.sobol.sample's rows for
    the same problem and generator, bit for bit (SALib builds them in a loop)."""
    from SALib.sample import sobol as salib_sample

    names = [f"x{i}" for i in range(5)]
    design = sa.saltelli_design(names, base_n=64, second_order=second_order, seed=17,
                                groups=groups)
    reference = salib_sample.sample(design.problem(), 64, calc_second_order=second_order,
                                    scramble=True,
                                    seed=np.random.default_rng(np.random.SeedSequence(17)))
    np.testing.assert_array_equal(design.unit_points, reference)
