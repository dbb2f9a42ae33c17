"""One question, one answer: a one-variant study and an assessment of the same scenario, seed
and samples give identical headline figures (issue: a study could say GO where assess said
UNDECIDED because each had its own interval rule)."""
from pathlib import Path

import pytest

from uq.scenario import load_scenario
from uq.scenario.study_file import parse_study
from uq.studies.assess import assess
from uq.studies.batch import run_study

CONFIGS = Path(__file__).resolve().parents[3] / "configs"


@pytest.mark.parametrize("scheme, samples, replicates", [("sobol", 1024, 8), ("monte-carlo", 1500, 1)])
def test_one_variant_study_equals_the_assessment(scheme, samples, replicates):
    name = "under_ice_section.toml"
    study = parse_study({"study": {"name": "one", "scenario": name, "samples": samples, "seed": 11,
                                   "scheme": scheme, "replicates": replicates},
                         "variants": [{"name": "as filed", "overrides": {}}]}, base_dir=CONFIGS)
    row = run_study(study).variants[0]
    a = assess(load_scenario(CONFIGS / name), samples=samples, seed=11, scheme=scheme,
               replicates=replicates, sensitivity_base_n=0)
    # exact equality: the same samples through the same estimators must give the same numbers
    assert row.p_success == a.propagation.p_success
    assert row.verdict.verdict == a.verdict.verdict
    assert row.verdict.sentence == a.verdict.sentence
    assert row.mean_margin_Wh == a.propagation.mean_margin_Wh
    assert row.contingency.to_dict() == a.contingency.to_dict()


def test_notebook_display_is_short():
    # a notebook echoes the result: one line, with the verdict and its interval
    a = assess(load_scenario(CONFIGS / "under_ice_section.toml"), samples=256, replicates=2,
               sensitivity_base_n=0)
    text = repr(a)
    assert len(text) < 300 and "\n" not in text and a.verdict.verdict.upper() in text
    assert "<table>" in a._repr_html_() and "P(success)" in a._repr_html_()
