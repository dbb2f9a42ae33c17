"""Per-group reducers, row ranges of the collecting reducer, and the engine's folding of
partials: checked against numpy on the rows themselves (reference: numpy's mean, var with
ddof = 1, min, max and bincount), and folding against not folding, bit for bit."""
from __future__ import annotations

import numpy as np
import pytest

from uq.sampling import engine
from uq.sampling.engine import (CollectReducer, GroupCountReducer, HistogramReducer,
                                MultiReducer, SumReducer, stream)
from uq.sampling.group_reducers import GroupMomentsReducer, GroupTallyReducer
from uq.sampling.plans import SampleDesign

OFFSETS = np.array([0, 300, 301, 700, 1000])  # uneven groups, one of a single row
DESIGN = SampleDesign("monte-carlo", 1000, 2, seed=7, block_size=37)  # blocks cross groups


def model(x):
    return {"value": np.log1p(x[:, 0]) * 100.0 + x[:, 1], "flag": x[:, 0] < 0.3,
            "code": (x[:, 1] * 4).astype(np.int64)}


def tally(outputs):
    return np.bincount(outputs["code"], minlength=4)


def _rows():
    return model(DESIGN.unit_points())


def test_group_moments_equal_numpy_on_each_group():
    result = stream(DESIGN, model, GroupMomentsReducer("value", OFFSETS))
    rows = _rows()["value"]
    for g, (lo, hi) in enumerate(zip(OFFSETS[:-1], OFFSETS[1:])):
        part = rows[lo:hi]
        m = result[g][0]
        assert m.n == part.size
        # summation order differs (block sums merged pairwise): 1e-12 relative
        assert m.mean == pytest.approx(np.mean(part), rel=1e-12)
        assert (m.minimum, m.maximum) == (part.min(), part.max())
        if part.size > 1:
            assert m.sd == pytest.approx(np.std(part, ddof=1), rel=1e-9)


def test_group_tally_and_collected_ranges_equal_the_rows():
    ranges = ((5, 40), (300, 301), (690, 760))
    result = stream(DESIGN, model, MultiReducer({
        "tally": GroupTallyReducer(tally, OFFSETS, 4),
        "rows": CollectReducer(("value",), 35 + 1 + 70, ranges=ranges)}))
    rows = _rows()
    for g, (lo, hi) in enumerate(zip(OFFSETS[:-1], OFFSETS[1:])):
        np.testing.assert_array_equal(result["tally"][g],
                                      np.bincount(rows["code"][lo:hi], minlength=4))
    np.testing.assert_array_equal(
        result["rows"]["value"], np.concatenate([rows["value"][a:b] for a, b in ranges]))


def test_overlapping_ranges_are_refused():
    with pytest.raises(engine.EngineError, match="increasing, non-overlapping"):
        CollectReducer(("value",), 20, ranges=((0, 15), (10, 15)))


def test_folding_partials_changes_no_bit(monkeypatch):
    def reducer():
        return MultiReducer({
            "count": GroupCountReducer("flag", OFFSETS), "sum": SumReducer("value"),
            "moments": GroupMomentsReducer("value", OFFSETS),
            "tally": GroupTallyReducer(tally, OFFSETS, 4),
            "hist": HistogramReducer("value", np.linspace(0.0, 80.0, 17)),
            "rows": CollectReducer(("value",), 100, ranges=((0, 50), (950, 1000)))})

    assert engine.can_fold(reducer())
    monkeypatch.setattr(engine, "FOLD_BLOCKS", 10**9)
    plain = stream(DESIGN, model, reducer(), chunk_blocks=1)
    monkeypatch.setattr(engine, "FOLD_BLOCKS", 2)  # 28 blocks: a fold every 2 or 3
    folded = [stream(DESIGN, model, reducer(), chunk_blocks=c) for c in (1, 3)]
    for other in folded:
        assert other["count"] == plain["count"] and other["sum"] == plain["sum"]
        assert other["moments"] == plain["moments"]
        np.testing.assert_array_equal(other["tally"], plain["tally"])
        np.testing.assert_array_equal(other["hist"].counts, plain["hist"].counts)
        np.testing.assert_array_equal(other["rows"]["value"], plain["rows"]["value"])
