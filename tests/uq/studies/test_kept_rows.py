"""The row limit: above ``kept_rows`` counts and means are streamed over every sample.

Two paths compute the headline figures: from rows held in memory (every sample up to the row
limit) and from engine reducers over every sample (above it). They are different code, so
running one small demo sample both ways — every row kept, and only the first 16 rows of each
replicate kept — and requiring the same counts, the same curve and the same mean is a real
check. The figures of every row are also checked against numpy and scipy.stats computed here
from the rows (references named beside each check).
"""
from __future__ import annotations

import dataclasses
import warnings
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from uq.decisions.outcomes import OutcomeClass, classify_outcomes
from uq.estimators import exceedance_curve
from uq.report.summary import build_summary
from uq.scenario import load_scenario
from uq.studies.assess import assess
from uq.studies.propagation import KEPT_ROWS, _settings, propagate
from uq.studies.streamed_figures import range_grid

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
N = 1024  # 16 replicates of 64 rows
KEPT = 256  # 16 rows of each replicate


@pytest.fixture(scope="module")
def scenario():
    return load_scenario(CONFIGS / "under_ice_section.toml")


@pytest.fixture(scope="module")
def both(scenario):
    """The demo assessed with every row kept and with 256 of its 1,024 rows kept."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        every = assess(scenario, samples=N, sensitivity_base_n=0)
        few = assess(scenario, samples=N, sensitivity_base_n=0, kept_rows=KEPT)
    return every, few


def _numbers(a) -> dict:
    s = build_summary(a)
    # not numbers of the sample: wall times, versions, the settings (kept_rows differs), and
    # the cautions (a physics fit's range caution is raised once per process, by whichever
    # run meets it first)
    for key in ("timings_s", "versions", "settings", "kept_rows", "cautions"):
        s.pop(key)
    return s


@pytest.mark.parametrize("demo", ["under_ice_section.toml", "glider_transit.toml",
                                  "sollen_sea_transit.toml"])
def test_the_default_limit_keeps_every_row_of_the_demos(demo):
    # the bundled demos run at their own [analysis] sizes on the every-row path, so their
    # reports are those of before the row limit existed
    if demo.startswith("sollen"):  # waypoints and gridded data: the [ocean] extra
        pytest.importorskip("pyproj", reason="the [ocean] extra is not installed")
        pytest.importorskip("xarray", reason="the [ocean] extra is not installed")
    sc = load_scenario(CONFIGS / demo)
    settings = _settings(sc)
    assert settings.samples <= settings.kept_rows == KEPT_ROWS


def test_at_or_below_the_limit_the_figures_are_those_of_every_row(scenario, both):
    every, _ = both
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        at_limit = assess(scenario, samples=N, sensitivity_base_n=0, kept_rows=N)
    assert at_limit.propagation.kept.every_row and every.propagation.kept.every_row
    assert _numbers(at_limit) == _numbers(every)  # same path: identical to the last bit
    prop = every.propagation
    out = prop.outcomes
    assert prop.kept_rows == prop.samples == N
    # reference: numpy counts of the rows
    assert prop.p_success.count == int(np.count_nonzero(out["success"]))
    classes = classify_outcomes(out)
    for row in prop.outcome_table.rows:
        assert row.count == int(np.count_nonzero(classes == row.code))
    # reference: scipy.stats.t interval over the 16 replicate means (Student-t, K - 1 dof)
    means = np.asarray(out["margin_Wh"]).reshape(16, -1).mean(axis=1)
    lo, hi = stats.t.interval(0.95, 15, loc=means.mean(), scale=stats.sem(means))
    assert prop.mean_margin_Wh.estimate == pytest.approx(means.mean(), rel=1e-13)
    assert (prop.mean_margin_Wh.lower, prop.mean_margin_Wh.upper) == pytest.approx((lo, hi),
                                                                                    rel=1e-12)
    # reference: numpy count of ranges at or beyond each threshold, over n
    curve = prop.range_curve
    r = np.asarray(out["range_km"])
    np.testing.assert_array_equal(curve.count, [np.count_nonzero(r >= t) for t in curve.grid])
    np.testing.assert_array_equal(curve.probability, curve.count / N)


def test_above_the_limit_reducers_give_the_figures_of_every_row(scenario, both):
    every, few = both
    a, b = every.propagation, few.propagation
    assert b.kept_rows == KEPT and b.samples == N and not b.kept.every_row
    assert b.kept.sentence() == ("a subsample of 256 of the 1,024 samples: the first 16 of "
                                 "each replicate")
    # the kept rows are the first 16 rows of each replicate, bit for bit
    index = b.kept.row_index()
    assert index[:17].tolist() == list(range(16)) + [64]
    for key in ("range_km", "margin_Wh", "failure_mode", "duration_days"):
        np.testing.assert_array_equal(b.outcomes[key], a.outcomes[key][index])
    np.testing.assert_array_equal(b.inputs, a.inputs[index])
    # counts of every sample: identical integers and intervals
    assert b.p_success == a.p_success and b.p_arrive == a.p_arrive
    np.testing.assert_array_equal(b.counts.by_replicate, a.counts.by_replicate)
    assert b.outcome_table.rows == a.outcome_table.rows
    assert few.failures == every.failures
    assert b.counts.censored == int(np.count_nonzero(a.outcomes["range_censored"]))
    # the mean margin: moments streamed block by block against the mean of each replicate's
    # rows; equal up to summation order (double precision, 1e-12 relative)
    assert b.mean_margin_Wh.estimate == pytest.approx(a.mean_margin_Wh.estimate, rel=1e-12)
    assert b.mean_margin_Wh.lower == pytest.approx(a.mean_margin_Wh.lower, rel=1e-12)
    assert b.mean_margin_Wh.upper == pytest.approx(a.mean_margin_Wh.upper, rel=1e-12)
    hw_b, hw_a = b.outcome_table.hardware, a.outcome_table.hardware
    for name in ("no_fault", "fault_under_ice", "fault_open_water", "success_without_fault",
                 "lost_any_cause"):
        x, y = getattr(hw_b, name), getattr(hw_a, name)
        assert (x.estimate, x.lower, x.upper) == pytest.approx((y.estimate, y.lower, y.upper),
                                                               rel=1e-12)
        assert x.method == y.method and x.n == y.n == N
    # the range curve: counts at a grid fixed before streaming = the curve of every row there
    grid = range_grid(scenario)
    assert grid[-1] == pytest.approx(1.5 * scenario.route_length_km)  # derived: 1 + extension
    ref = exceedance_curve(a.outcomes["range_km"], grid, confidence=0.95)
    assert b.range_curve.n == ref.n == N
    for field in ("grid", "count", "probability", "lower", "upper", "band_lower", "band_upper"):
        np.testing.assert_array_equal(getattr(b.range_curve, field), getattr(ref, field))


def test_above_the_limit_the_report_says_which_figures_use_the_kept_rows(both):
    _, few = both
    summary = build_summary(few)
    kept = summary["kept_rows"]
    assert kept["rows"] == KEPT and kept["per_replicate"] == 16 and kept["samples"] == N
    assert not kept["every_row"] and "range_km.quantiles" in kept["used_for"]
    assert any("a subsample of 256 of the 1,024 samples" in c for c in summary["cautions"])
    # quantiles with order-statistic intervals are those of the 256 kept rows
    assert {q["n"] for q in summary["range_km"]["quantiles"]} == {KEPT}
    assert summary["p_success"]["n"] == N and summary["failure_modes"]["samples"] == N


def test_streamed_figures_do_not_depend_on_chunking_or_workers(scenario):
    """8-row blocks (128 of them: the engine folds its partials) in 1-block and 5-block
    tasks, in this process and in a 2-process pool: the same numbers to the last bit."""
    base = dataclasses.replace(_settings(scenario, samples=N, kept_rows=KEPT), block_size=8)
    runs = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        runs.append(propagate(scenario, base))
        runs.append(propagate(scenario, dataclasses.replace(base, chunk_blocks=5)))
        with ProcessPoolExecutor(2) as pool:
            runs.append(propagate(scenario, dataclasses.replace(base, chunk_blocks=3),
                                  executor=pool))
    first = runs[0]
    for other in runs[1:]:
        assert other.p_success == first.p_success
        assert other.mean_margin_Wh == first.mean_margin_Wh
        assert other.outcome_table == first.outcome_table
        np.testing.assert_array_equal(other.counts.by_replicate, first.counts.by_replicate)
        np.testing.assert_array_equal(other.range_curve.probability,
                                      first.range_curve.probability)
        np.testing.assert_array_equal(other.outcomes["margin_Wh"], first.outcomes["margin_Wh"])


def test_a_row_limit_below_two_rows_per_replicate_is_refused(scenario):
    from uq.errors import InputError

    with pytest.raises(InputError, match="kept_rows 16: expected an integer of at least 2 rows"):
        _settings(scenario, samples=N, kept_rows=16)


def test_the_report_of_a_subsample_names_it_and_numbers_its_rows(both, tmp_path):
    import json

    import pandas as pd

    from uq.report import write_report

    _, few = both
    folder = write_report(few, tmp_path / "report")
    page = (folder / "index.html").read_text(encoding="utf-8")
    assert "a subsample of 256 of the 1,024 samples: the first 16 of each replicate" in page
    summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    assert summary["kept_rows"]["rows"] == KEPT and summary["samples"] == N
    if (folder / "samples.parquet").exists():  # the optional ocean extra
        frame = pd.read_parquet(folder / "samples.parquet")
        # the per-sample file holds the kept rows under their own plan row numbers
        np.testing.assert_array_equal(frame["sample"], few.propagation.kept.row_index())


def test_the_scenario_file_sets_the_row_limit_and_a_bad_one_is_refused(tmp_path):
    # [analysis] kept_rows reaches the propagation; fewer than 2 rows per replicate is a
    # one-line error naming the file and the key (the input rules of the README)
    from uq.scenario.errors import ScenarioError

    text = (CONFIGS / "under_ice_section.toml").read_text()
    good = tmp_path / "limit.toml"
    good.write_text(text.replace("[analysis]", "[analysis]\nkept_rows = 4096", 1))
    assert _settings(load_scenario(good)).kept_rows == 4096
    assert _settings(load_scenario(good), kept_rows=512).kept_rows == 512  # the API's wins
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace("[analysis]", "[analysis]\nkept_rows = 8", 1))
    with pytest.raises(ScenarioError, match=r"bad\.toml.*analysis\.kept_rows.*2 rows per replicate"):
        load_scenario(bad)
