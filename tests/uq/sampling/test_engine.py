"""Tests of uq.sampling.engine: chunk- and executor-invariant streaming, exact reducers."""

from concurrent.futures import ProcessPoolExecutor, ThreadPoolExecutor

import numpy as np
import pytest
from scipy import stats

from uq.sampling.engine import (
    CollectReducer,
    CountReducer,
    EngineError,
    GroupCountReducer,
    HistogramReducer,
    MultiReducer,
    OutputKeyError,
    SumReducer,
    stream,
)
from uq.estimators import exceedance_curve, histogram_exceedance_curve, histogram_quantile_interval
from uq.sampling.inputs import InputModel, ScipyMarginal
from uq.sampling.plans import StackedDesigns, monte_carlo, scrambled_sobol

BLOCK = 1000
EDGES = np.linspace(-1.0, 4.0, 26)


def toy_model(x):
    """Cheap 3-input model (top level so process pools can pickle it)."""
    if len(x) > BLOCK:
        raise RuntimeError("engine handed the model more than one block")
    y = x[:, 0] + x[:, 1] ** 2 - 0.5 * np.sin(3.0 * x[:, 2])
    return {"y": y, "fail": y > 1.2, "x0": x[:, 0]}


def _reducer():
    return MultiReducer({
        "count": CountReducer("fail"),
        "sum": SumReducer("y"),
        "hist": HistogramReducer("y", EDGES),
        "keep": CollectReducer(["y", "x0"], 2500),
    })


def _as_bytes(result):
    """Canonical bytes of a stream result, for bit-for-bit comparison."""
    keep = result["keep"]
    return (
        tuple(result["count"]),
        tuple(float(v).hex() for v in result["sum"]),
        result["hist"].counts.tobytes(), result["hist"].below, result["hist"].above,
        keep["y"].tobytes(), keep["x0"].tobytes(),
    )


@pytest.fixture(scope="module")
def design():
    return monte_carlo(10_500, 3, seed=77, block_size=BLOCK)  # 11 blocks, last one short


@pytest.fixture(scope="module")
def reference(design):
    """Everything computed at once from the whole plan, with plain numpy."""
    x = design.unit_points()
    y = x[:, 0] + x[:, 1] ** 2 - 0.5 * np.sin(3.0 * x[:, 2])  # same formula as toy_model
    return {"x": x, "y": y}


def test_results_bit_identical_for_any_chunking(design):
    results = [_as_bytes(stream(design, toy_model, _reducer(), chunk_blocks=c)) for c in (1, 3, 8)]
    assert results[0] == results[1] == results[2]


def test_results_bit_identical_with_process_pool(design):
    serial = _as_bytes(stream(design, toy_model, _reducer(), chunk_blocks=2))
    with ProcessPoolExecutor(2) as pool:
        parallel = _as_bytes(stream(design, toy_model, _reducer(), chunk_blocks=3, executor=pool))
    assert serial == parallel


def test_sobol_stream_bit_identical_with_thread_pool():
    # Sobol' engines are kept per thread between blocks; threads must not share them.
    design = scrambled_sobol(2**14, 3, seed=31, block_size=BLOCK)
    serial = _as_bytes(stream(design, toy_model, _reducer()))
    with ThreadPoolExecutor(3) as pool:
        threaded = _as_bytes(stream(design, toy_model, _reducer(), chunk_blocks=2, executor=pool))
    with ProcessPoolExecutor(2) as pool:
        parallel = _as_bytes(stream(design, toy_model, _reducer(), chunk_blocks=5, executor=pool))
    assert serial == threaded == parallel


def test_reducers_agree_with_whole_array_numpy(design, reference):
    result = stream(design, toy_model, _reducer(), chunk_blocks=4)
    y = reference["y"]
    # exact integers against numpy on the whole array
    assert tuple(result["count"]) == (int(np.count_nonzero(y > 1.2)), design.n)
    hist = result["hist"]
    inside = (y >= EDGES[0]) & (y < EDGES[-1])
    expected_counts, _ = np.histogram(y[inside], bins=EDGES)  # numpy reference histogram
    np.testing.assert_array_equal(hist.counts, expected_counts)
    assert hist.below == np.count_nonzero(y < EDGES[0])
    assert hist.above == np.count_nonzero(y >= EDGES[-1])
    assert hist.n == design.n
    # streamed exceedance counts equal direct counting of y >= edge
    np.testing.assert_array_equal(hist.count_at_least(), [(y >= e).sum() for e in EDGES])
    curve = histogram_exceedance_curve(hist)
    direct = exceedance_curve(y, EDGES)
    np.testing.assert_array_equal(curve.count, direct.count)
    # derived: the sample median lies between X_(l) and X_(u) (l <= n/2 <= u), and the
    # histogram interval contains [X_(l), X_(u)]
    median_ci = histogram_quantile_interval(hist, 0.5)
    assert median_ci.lower <= np.median(y) <= median_ci.upper
    # sums: only the summation order differs from numpy -> agreement to ~1e-12 relative
    s = result["sum"]
    assert s.n == design.n
    np.testing.assert_allclose(s.mean, np.mean(y), rtol=1e-12)
    np.testing.assert_allclose(s.sd, np.std(y, ddof=1), rtol=1e-10)
    np.testing.assert_allclose(s.sum_of_squares, np.sum(y**2), rtol=1e-10)
    # collected first rows are exactly the plan's first rows
    np.testing.assert_array_equal(result["keep"]["y"], y[:2500])
    np.testing.assert_array_equal(result["keep"]["x0"], reference["x"][:2500, 0])


def test_input_model_is_applied_before_the_model():
    marginals = [ScipyMarginal(f"v{i}", stats.norm(loc=i, scale=0.1)) for i in range(3)]
    model = InputModel(marginals)
    design = scrambled_sobol(2**12, 3, seed=9, block_size=BLOCK)
    result = stream(design, toy_model, CollectReducer(["x0"], 10**6), input_model=model)
    expected = model.transform(design.unit_points())[:, 0]
    np.testing.assert_array_equal(result["x0"], expected)


def test_progress_reports_cumulative_rows(design):
    seen = []
    stream(design, toy_model, CountReducer("fail"), chunk_blocks=4, progress=seen.append)
    assert seen == [4000, 8000, 10_500]  # 11 blocks in tasks of 4, 4, 3


def test_collect_skips_blocks_past_the_limit(design):
    reducer = CollectReducer(["y"], 1500).prepare(design)
    assert reducer.map(5, {"y": np.ones(BLOCK)}) is None  # rows 5000.. are past the limit
    assert reducer.map(1, {"y": np.ones(BLOCK)})["y"].size == 500


def test_count_and_sum_reject_bad_outputs(design):
    with pytest.raises(OutputKeyError, match="boolean output"):
        stream(design, toy_model, CountReducer("y"))
    with pytest.raises(OutputKeyError, match="no key 'missing'"):
        stream(design, toy_model, SumReducer("missing"))
    with pytest.raises(OutputKeyError, match="non-finite"):
        stream(design, lambda x: {"y": np.full(len(x), np.nan)}, SumReducer("y"))
    with pytest.raises(EngineError, match="chunk_blocks must be an integer >= 1"):
        stream(design, toy_model, CountReducer("fail"), chunk_blocks=0)
    with pytest.raises(EngineError, match="strictly increasing"):
        HistogramReducer("y", [0.0, 0.0, 1.0])
    with pytest.raises(EngineError, match="input model has 1 inputs but the design has dimension 3"):
        stream(design, toy_model, CountReducer("fail"),
               input_model=InputModel([ScipyMarginal("a", stats.norm())]))


def test_histogram_counts_nan_and_infinities_separately():
    reducer = HistogramReducer(None, [0.0, 1.0, 2.0])
    partial = reducer.map(0, np.array([-np.inf, -1.0, 0.0, 0.5, 1.0, 2.0, np.inf, np.nan]))
    h = reducer.reduce([partial])
    # derived: bins [0,1) -> {0, 0.5}; [1,2) -> {1}; below {-inf, -1}; above {2, inf}
    assert h.counts.tolist() == [2, 1] and (h.below, h.above, h.nonfinite, h.n) == (2, 2, 1, 8)


def _stacked_model(x):
    y = x[:, 0] + x[:, 1] ** 2 - 0.5 * np.sin(3.0 * x[:, 2])
    return {"y": y, "fail": y > 1.2}


@pytest.mark.parametrize("block_size, chunk_blocks", [(96, 1), (256, 3), (1000, 1)])
def test_stacked_replicates_match_each_replicate_streamed_alone(block_size, chunk_blocks):
    # Reference: numpy on each replicate's own SampleDesign.unit_points (the plan's record),
    # counted with np.count_nonzero; stacking must change neither rows nor counts, for block
    # sizes that split replicates (96, 256) and that hold several (1000).
    designs = scrambled_sobol(128, 3, seed=5).replicates(5)
    plan = StackedDesigns(tuple(designs), block_size=block_size)
    out = stream(plan, _stacked_model, MultiReducer({
        "rows": CollectReducer(["y"], plan.n),
        "fail": GroupCountReducer("fail", plan.offsets)}), chunk_blocks=chunk_blocks)
    alone = [_stacked_model(d.unit_points()) for d in designs]
    np.testing.assert_array_equal(out["rows"]["y"], np.concatenate([a["y"] for a in alone]))
    assert [(c.count, c.n) for c in out["fail"]] == [
        (int(np.count_nonzero(a["fail"])), 128) for a in alone]
    assert sum(c.count for c in out["fail"]) > 0  # the check sees failures
