"""Tests of uq.sampling.plans: reproducible, chunk-invariant sample plans."""

import warnings

import numpy as np
import pytest
from scipy.stats import qmc

from uq.sampling.plans import (
    PowerOfTwoError,
    RowRangeError,
    SampleDesign,
    SampleDesignError,
    latin_hypercube,
    monte_carlo,
    scrambled_sobol,
)


def _scipy_sobol(d, seed, replicate, n):
    """scipy's own scrambled Sobol' with the documented child generator."""
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(replicate,)))
    try:
        engine = qmc.Sobol(d, scramble=True, rng=rng)
    except TypeError:  # scipy < 1.15 calls it `seed`
        engine = qmc.Sobol(d, scramble=True, seed=rng)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return engine.random(n)


@pytest.mark.parametrize("replicate", [0, 3])
def test_sobol_plan_equals_scipy_sobol(replicate):
    # Reference: scipy.stats.qmc.Sobol with the same seed stream; first point kept (Owen 2020).
    design = scrambled_sobol(2**10, 4, seed=1234, replicate=replicate, block_size=100)
    expected = _scipy_sobol(4, 1234, replicate, 2**10)
    np.testing.assert_array_equal(design.unit_points(), expected)
    # fast_forward slices agree with the full sequence, including odd boundaries
    np.testing.assert_array_equal(design.unit_points(333, 777), expected[333:777])


def test_sobol_root_stream_is_spawn_child():
    # numpy contract: SeedSequence(s).spawn(k)[i] has spawn_key (i,), so the documented
    # replicate stream equals a spawned child (numpy.random.SeedSequence docs).
    child = np.random.SeedSequence(99).spawn(3)[2]
    a = np.random.default_rng(child).random(5)
    b = np.random.default_rng(np.random.SeedSequence(99, spawn_key=(2,))).random(5)
    np.testing.assert_array_equal(a, b)


def test_sobol_requires_power_of_two_and_suggests_nearest():
    with pytest.raises(PowerOfTwoError, match=r"n=1000.*512 \(2\^9\) or 1024 \(2\^10\)"):
        scrambled_sobol(1000, 3, seed=0)
    with pytest.raises(PowerOfTwoError, match=r"got n=3. Nearest powers of two: 2 \(2\^1\) or 4 \(2\^2\)"):
        SampleDesign("sobol", 3, 2, seed=0)
    scrambled_sobol(1, 3, seed=0)  # 2^0 is a power of two


def test_sobol_balance_first_point_kept():
    # Scrambled Sobol' (t, m, s)-net property: with n = 2^m, each of the n intervals
    # [i/n, (i+1)/n) holds exactly one point in every coordinate (Owen 1997; digital nets
    # are (0, m, 1)-nets in each coordinate). Dropping the first point would break it.
    u = scrambled_sobol(2**8, 3, seed=7).unit_points()
    for j in range(3):
        assert np.array_equal(np.sort(np.floor(u[:, j] * 2**8)), np.arange(2**8))


@pytest.mark.parametrize(
    "design",
    [
        monte_carlo(10_000, 3, seed=5, block_size=1000),
        scrambled_sobol(2**13, 3, seed=5, block_size=1000),
        latin_hypercube(5_000, 3, seed=5, block_size=700),
    ],
    ids=["monte-carlo", "sobol", "latin-hypercube"],
)
def test_rows_identical_whatever_the_chunking(design):
    # derived: the plan is a function of (design, row index) only.
    full = design.unit_points(0, design.n)
    assert full.shape == (design.n, 3)
    cuts = [0, 1, 999, 1000, 1001, 2500, 4321, design.n]
    pieces = [design.unit_points(a, b) for a, b in zip(cuts[:-1], cuts[1:])]
    np.testing.assert_array_equal(np.concatenate(pieces), full)
    assert np.all((full >= 0) & (full < 1))


def test_monte_carlo_block_scheme_is_as_documented():
    # Block k of replicate r = default_rng(SeedSequence(seed, spawn_key=(r, k))).random((rows, d)).
    design = monte_carlo(2500, 2, seed=42, replicate=1, block_size=1000)
    rng2 = np.random.default_rng(np.random.SeedSequence(42, spawn_key=(1, 2)))
    np.testing.assert_array_equal(design.unit_points(2000, 2500), rng2.random((500, 2)))
    rng0 = np.random.default_rng(np.random.SeedSequence(42, spawn_key=(1, 0)))
    np.testing.assert_array_equal(design.unit_points(0, 1000), rng0.random((1000, 2)))


def test_latin_hypercube_one_point_per_stratum():
    # Defining property of LHS (McKay, Beckman & Conover 1979): each of the n equal strata
    # of every coordinate holds exactly one point.
    n = 1000
    u = latin_hypercube(n, 4, seed=8).unit_points()
    for j in range(4):
        assert np.array_equal(np.sort(np.floor(u[:, j] * n)), np.arange(n))


def test_replicates_are_independent_randomisations():
    d0 = scrambled_sobol(2**8, 2, seed=3)
    reps = d0.replicates(3)
    assert [d.replicate for d in reps] == [0, 1, 2]
    assert reps[0] == d0
    assert not np.array_equal(reps[0].unit_points(), reps[1].unit_points())


def test_seed_none_draws_and_records_a_seed():
    a = monte_carlo(100, 2, seed=None)
    b = monte_carlo(100, 2, seed=None)
    assert isinstance(a.seed, int) and a.seed != b.seed  # 128-bit entropy: no collision
    again = SampleDesign(**a.to_dict())  # the record alone regenerates the plan
    np.testing.assert_array_equal(again.unit_points(), a.unit_points())


def test_design_validation():
    with pytest.raises(SampleDesignError, match="scheme must be one of"):
        SampleDesign("halton", 8, 2, seed=0)
    with pytest.raises(SampleDesignError, match="n must be >= 1; got 0"):
        monte_carlo(0, 2, seed=0)
    with pytest.raises(SampleDesignError, match="dimension must be an integer"):
        monte_carlo(10, 2.0, seed=0)
    with pytest.raises(SampleDesignError, match="seed must be >= 0"):
        monte_carlo(10, 2, seed=-1)
    design = monte_carlo(10, 2, seed=0)
    with pytest.raises(RowRangeError, match=r"0 <= start <= stop <= n=10"):
        design.unit_points(5, 11)
    with pytest.raises(RowRangeError, match=r"0 <= start <= stop"):
        design.unit_points(6, 5)
    assert design.unit_points(4, 4).shape == (0, 2)


def test_sobol_rows_identical_in_any_request_order():
    # derived: the engine kept between requests moves forward only; backward or repeated
    # requests must still return the same rows as one full request.
    design = scrambled_sobol(2**12, 2, seed=21, block_size=512)
    full = _scipy_sobol(2, 21, 0, 2**12)
    ranges = [(3000, 4096), (0, 10), (10, 2000), (1500, 1600), (1600, 1600), (2000, 3000), (5, 6)]
    for a, b in ranges:
        np.testing.assert_array_equal(design.unit_points(a, b), full[a:b])
    other = scrambled_sobol(2**12, 2, seed=22)  # interleaving another design resets the cursor
    np.testing.assert_array_equal(other.unit_points(100, 200), _scipy_sobol(2, 22, 0, 2**12)[100:200])
    np.testing.assert_array_equal(design.unit_points(2000, 2100), full[2000:2100])
