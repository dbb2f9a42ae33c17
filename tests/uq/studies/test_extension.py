"""Extending a recorded run after UNDECIDED: each look counted and spent under one rule."""
import json

import pytest

from uq.report.summary import build_summary
from uq.studies.assess import assess
from uq.studies.extension import ExtensionError, load_recorded_run

from tests.uq.studies.test_assess import _battery_only_uncertain


def _recorded(tmp_path, a):
    path = tmp_path / "summary.json"
    path.write_text(json.dumps(build_summary(a)))
    return path


def test_looks_declared_up_front_are_counted_across_extensions(tmp_path):
    scenario = _battery_only_uncertain()
    first = assess(scenario, samples=256, replicates=4, sensitivity_base_n=0, max_looks=3)
    # derived (Bonferroni split, Lan & DeMets 1983 for the spending view): every look's
    # interval is at 1 - alpha / L = 1 - 0.05 / 3
    per_look = 1.0 - 0.05 / 3
    assert first.p_success.confidence == pytest.approx(per_look)
    assert first.sequential["looks_taken"] == 1 and first.sequential["max_looks"] == 3
    second = assess(scenario, samples=512, sensitivity_base_n=0,
                    extends=load_recorded_run(_recorded(tmp_path, first)))
    assert second.sequential["looks_taken"] == 2 and second.sequential["max_looks"] == 3
    assert second.p_success.confidence == pytest.approx(per_look)
    assert second.settings.seed == first.settings.seed
    assert second.settings.replicates == 4 and second.p_success.n == 512
    assert any("3 predeclared looks" in c and "2 looks taken" in c for c in second.cautions)
    third = assess(scenario, samples=1024, sensitivity_base_n=0, extends=second)
    assert third.sequential["looks_taken"] == 3
    with pytest.raises(ExtensionError, match="declared 3 looks .* has taken 3"):
        assess(scenario, samples=2048, sensitivity_base_n=0, extends=third)


def test_a_one_look_run_cannot_be_extended_and_says_so():
    scenario = _battery_only_uncertain()
    first = assess(scenario, samples=256, replicates=4, sensitivity_base_n=0)
    assert first.sequential["max_looks"] == 1
    if first.verdict.verdict == "undecided":
        assert any("second look" in c for c in first.cautions)
    with pytest.raises(ExtensionError, match="declared 1 look at P"):
        assess(scenario, samples=512, sensitivity_base_n=0, extends=first)


def test_an_extension_repeats_the_same_question(tmp_path):
    scenario = _battery_only_uncertain()
    first = assess(scenario, samples=256, replicates=4, sensitivity_base_n=0, max_looks=4)
    with pytest.raises(ExtensionError, match="seed 7"):
        assess(scenario, samples=512, seed=7, sensitivity_base_n=0, extends=first)
    with pytest.raises(ExtensionError, match="more than the recorded run's 256"):
        assess(scenario, samples=256, sensitivity_base_n=0, extends=first)
    with pytest.raises(ExtensionError, match="not both"):
        assess(scenario, samples=512, sensitivity_base_n=0, extends=first,
               target_half_width=0.01)
    bad = tmp_path / "summary.json"
    bad.write_text("{not json")
    with pytest.raises(ExtensionError, match="not a JSON summary"):
        load_recorded_run(bad)
    bad.write_text("{}")
    with pytest.raises(ExtensionError, match="settings"):
        load_recorded_run(bad)
