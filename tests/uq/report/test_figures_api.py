"""Plotting API: every figure function takes ``ax=`` and returns it; the figures say what they
show (ranked Sobol bars with readable labels, the range curve labelled as energy alone beside
the verdict, only the failure modes the vehicle can have); the study page's sentence and heat
map."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure

from uq.report import figures
from uq.report._format import input_label
from uq.report.study import best_variant_sentence
from uq.scenario import load_scenario
from uq.studies.assess import assess

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "configs" / "under_ice_section.toml"


@pytest.fixture(scope="module")
def small():
    return assess(load_scenario(DEMO), samples=512, seed=2, sensitivity_base_n=64)


def test_every_figure_draws_on_a_given_axes_and_returns_it(small):
    a = small
    prop = a.propagation
    calls = [
        lambda ax: figures.range_curve_figure(prop.range_curve, route_km=prop.route_km,
                                              required_probability=0.9, ax=ax),
        lambda ax: figures.failures_figure(a.failures, ax=ax),
        lambda ax: figures.sensitivity_figure(a.sensitivity.sobol["failure"], title="t", ax=ax),
        lambda ax: figures.contingency_figure(prop.outcomes.duration_days, a.contingency, ax=ax),
    ]
    for call in calls:
        ax = Figure().subplots()
        assert call(ax) is ax
        assert ax.has_data()  # it drew on the given axes
    own = figures.failures_figure(a.failures)  # without ax: a new free-standing figure
    assert isinstance(own.figure, Figure)


def test_sobol_bars_are_ranked_largest_total_first_with_readable_labels(small):
    res = small.sensitivity.sobol["range_km"]
    ax = figures.sensitivity_figure(res, title="range")
    labels = [t.get_text() for t in ax.get_yticklabels()]  # top bar first (y descending)
    ticks = ax.get_yticks()
    top_down = [lab for _, lab in sorted(zip(ticks, labels), reverse=True)]
    order = sorted(range(len(res.factors)), key=lambda i: -float(res.total[i]))
    assert top_down == [input_label(res.factors[i], wrap=True) for i in order]
    assert not any("legs." in lab or "_m_s" in lab for lab in labels)  # no raw key paths


def test_input_labels_name_leg_quantity_and_unit():
    # common practice, no source: the file's unit suffixes spelled as units
    assert input_label("legs.front_and_recovery.current_along_m_s") == \
        "front and recovery: current along track [m/s]"
    assert input_label("vehicle.hull.appendage_factor") == "hull appendage factor [-]"
    assert input_label("battery.nominal_energy_Wh") == "battery nominal energy [Wh]"
    assert input_label("legs.a.current_along_m_s+legs.a.current_across_m_s").startswith(
        "correlated group: a: current along track [m/s] + a: current across")


def test_range_curve_states_energy_alone_beside_the_verdict(small):
    prop = small.propagation
    ax = figures.range_curve_figure(prop.range_curve, route_km=prop.route_km,
                                    required_probability=0.9, p_success=0.318)
    title = ax.get_title(loc="left")
    at_route = float(np.interp(prop.route_km, prop.range_curve.grid,
                               prop.range_curve.probability))
    assert "energy alone" in title and f"{at_route:.1%}" in title and "31.8%" in title
    assert ax.child_axes  # the inset that expands the decision region
    inset = ax.child_axes[0]
    assert inset.get_ylim()[0] >= 0.79 and inset.get_ylim()[1] <= 1.01


def test_propeller_failure_chart_lists_no_glider_only_mode(small):
    names = {r.name for r in small.failures.modes}
    assert not names & {"infeasible glide", "cannot trim", "cannot hold flight"}
    assert "energy below reserve" in names
    ax = figures.failures_figure(small.failures)
    assert not any("trim" in t.get_text() for t in ax.get_yticklabels())


def _study_rows(p_low, p):
    return [{"label": f"#{i + 1}", "speed_m_s": s, "p_success": q, "p_success_low": lo,
             "p_success_high": min(1.0, q + 0.01), "mean_margin_Wh": 100.0 * i}
            for i, (s, lo, q) in enumerate(zip([1.0, 1.2, 1.4], p_low, p))]


def test_best_variant_sentence_names_the_best_that_meets_the_requirement():
    rows = _study_rows([0.92, 0.95, 0.80], [0.94, 0.97, 0.85])
    text = best_variant_sentence(rows, ["speed_m_s"], 0.9, 0.95)
    assert text.startswith("Best variant meeting the required 90.0 %: #2")
    rows = _study_rows([0.5, 0.6, 0.7], [0.55, 0.65, 0.75])
    text = best_variant_sentence(rows, ["speed_m_s"], 0.9, 0.95)
    assert text.startswith("No variant meets the required 90.0 %") and "#3" in text


def test_study_heat_map_has_one_cell_per_variant():
    frame = pd.DataFrame({"a": [1, 1, 2, 2, 3, 3], "b": [10, 20] * 3,
                          "p_success": [0.1, 0.5, 0.9, 0.95, 0.99, 0.2],
                          "p_success_low": [0.05, 0.45, 0.85, 0.93, 0.98, 0.1],
                          "verdict": ["no-go"] * 4 + ["go", "no-go"]})
    ax = figures.study_heatmap(frame, "a", "b", required_probability=0.9)
    image = ax.get_images()[0].get_array()
    assert image.shape == (2, 3)  # y: b (2 values), x: a (3 values)
    assert image[1, 2] == pytest.approx(20.0)  # a = 3, b = 20 -> 0.2
    assert len(ax.patches) == 2  # outlined: lower bound >= 0.9 (0.93 and 0.98)
    fig = figures.study_heatmaps_figure(frame, ["a", "b"], required_probability=0.9)
    assert fig is not None
    assert figures.study_heatmaps_figure(frame, ["a"], required_probability=0.9) is None


def test_study_page_names_variants_once_shows_percent_and_a_heat_map():
    from uq.report.study import render_study_html
    from uq.scenario.study_file import parse_study
    from uq.studies.batch import run_study

    study = parse_study({"study": {"name": "page", "scenario": "under_ice_section.toml",
                                   "samples": 256, "seed": 4, "scheme": "sobol",
                                   "replicates": 2},
                         "grid": {"setpoint.speed_m_s": [1.2, 1.5],
                                  "battery.nominal_energy_Wh": [15000.0, 18000.0]}},
                        base_dir=ROOT / "configs")
    result = run_study(study)
    html = render_study_html(result)
    body = html.split('<section id="variants">')[1]
    assert "speed_m_s=1.2" not in html  # the parameters are columns, not repeated in names
    assert "<td>#1</td>" in body and "<td>#4</td>" in body
    first = result.variants[0].p_success
    assert f"{100 * first.estimate:.1f} %" in body or f"{100 * first.estimate:.2f} %" in body
    assert f"{first.estimate:.4f}" not in body  # never a bare fraction
    assert '<section id="heatmap">' in html and 'class="scroll"' in html
    assert ("Best variant meeting the required" in html) or ("No variant meets" in html)
