"""The assessment's rare-event stage against the closed form of a lognormal energy shortfall.

One still-water leg at a fixed speed with no hotel load: the energy drawn is
W = C_D A W_1 with W_1 = (1/2 rho U^2 / eta) L, and the drag coefficient C_D, the reference
area A and the battery's nominal energy E are independent lognormals (log-sd s each), so the
transit range E / (C_D A W_1 / L) is proportional to the usable energy. derived: with
X = ln E - ln C_D - ln A ~ N(mu, 3 s^2), success iff 0.8 E >= W (20 % reserve) and reaching
the recovery point iff E >= W, so P(fail) = Phi((ln(W_1 / 0.8) - mu) / (s sqrt 3)) and
P(reserve breach) = P(fail) - Phi((ln W_1 - mu) / (s sqrt 3)).
"""
from collections import defaultdict

import numpy as np
import pytest
from scipy import stats

import gsw
from uq.report.summary import build_summary
from uq.scenario import parse_scenario
from uq.studies.assess import assess

LOG_SD = 0.05
SIGMA = LOG_SD * np.sqrt(3.0)  # of X = ln E - ln C_D - ln A
LENGTH_KM = 200.0
C_D, AREA = 0.1, 0.3  # medians


def _unit_drawn_Wh():
    """W_1 = (1/2 rho U^2 / eta) L [Wh per unit C_D A] for U = 1 m/s, eta = 0.4 (the closed
    form, written out; rho from TEOS-10 through gsw)."""
    sa = gsw.SR_from_SP(35.0)
    rho = float(gsw.rho(sa, gsw.CT_from_t(sa, 10.0, 0.0), 0.0))
    return 0.5 * rho * 1.0 ** 2 / 0.4 * LENGTH_KM * 1e3 / 3600.0


def _shortfall_scenario(p_fail, *, required=0.999, rare_events=None):
    """The median energy placed so that P(fail) = p_fail exactly (derived, see above); returns
    the scenario and mu, the mean of X."""
    mu = np.log(_unit_drawn_Wh() / 0.8) - SIGMA * stats.norm.ppf(p_fail)
    median = float(np.exp(mu) * C_D * AREA)
    analysis = {"samples": 1024, "seed": 5, "scheme": "sobol", "replicates": 8,
                "sensitivity_base_n": 64}
    if rare_events is not None:
        analysis["rare_events"] = rare_events
    lognormal = (lambda m: {"dist": "lognormal", "median": m, "log_sd": LOG_SD})
    return parse_scenario({
        "scenario": {"name": "lognormal-shortfall", "description": "closed-form P(fail)"},
        "vehicle": {"kind": "propeller", "name": "test hull", "hotel_load_W": 0.0,
                    "propulsive_efficiency": 0.4,
                    "drag": {"coefficient": lognormal(C_D), "reference_area_m2": lognormal(AREA),
                             "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": lognormal(median), "reserve_fraction": 0.2},
        "setpoint": {"speed_m_s": 1.0, "depth_m": 0.0},
        "legs": [{"name": "only", "length_km": LENGTH_KM, "temperature_C": 10.0,
                  "practical_salinity": 35.0}],
        "decision": {"required_probability": required, "confidence": 0.95},
        "analysis": analysis,
    }), mu


def _check_against_closed_form(a, p_fail, mu, *, precise=True):
    stage = a.rare_events
    assert stage is not None
    fail = stage.failure.probability
    # the criteria: truth inside the interval, relative half width <= 30 %, <= 2e5 runs
    # (the precision only with the stage's own settings, not the cheap ones of the quick test)
    assert fail.lower <= p_fail <= fail.upper
    assert stage.failure.model_runs <= 200_000
    if precise:
        assert stage.failure.relative_half_width <= 0.30
    w1 = _unit_drawn_Wh()
    breach = (stats.norm.cdf((np.log(w1 / 0.8) - mu) / SIGMA)
              - stats.norm.cdf((np.log(w1) - mu) / SIGMA))
    got = stage.classes["reserve_breach"]
    assert got.lower <= breach <= got.upper
    # P(success) and its interval are 1 - P(fail), and the verdict is judged on them
    assert a.p_success.estimate == pytest.approx(1.0 - fail.estimate)
    assert a.verdict.probability_low == pytest.approx(1.0 - fail.upper)


def test_a_demanding_requirement_brings_in_subset_simulation_at_1e_4(monkeypatch):
    # a cheaper stage than the default (1,000 per level instead of 3,000) keeps the default
    # run short; the slow tests below check the default's precision
    from uq.studies import rare

    monkeypatch.setattr(rare, "SAMPLES_PER_LEVEL", 1000)
    scenario, mu = _shortfall_scenario(1e-4)
    a = assess(scenario, sensitivity_base_n=0)
    _check_against_closed_form(a, 1e-4, mu, precise=False)
    # the true P(success) 0.9999 meets 0.999 and the rare-event interval shows it
    assert a.verdict.verdict == "go"
    named = a.estimators()
    assert named["p_success"].startswith("1 - P(fail) by subset simulation")
    assert named["outcomes.reserve_breach"].startswith("subset simulation")
    assert "wilson" in named["p_reached_recovery"] or "clopper" in named["p_reached_recovery"]
    summary = build_summary(a)
    assert summary["estimators"] == named
    assert summary["rare_events"]["p_fail"]["estimate"] == a.rare_events.failure.probability.estimate
    assert "subset simulation" in summary["p_success"]["method"]
    # the report names the estimator of each number and shows the plain estimate beside it
    from uq.report.writer import render_html

    page = render_html(a, images=defaultdict(str))  # no figures drawn
    section = page[page.index('<section id="estimators">'):]
    section = section[:section.index("</section>")]
    assert "by subset simulation" in section and "the main sample alone gave" in section
    assert named["outcomes.reserve_breach"] in section


def test_the_stage_runs_only_when_asked_or_needed():
    # plenty of failures and an ordinary requirement: plain sampling carries the numbers
    common, _ = _shortfall_scenario(0.3, required=0.5)
    a = assess(common, samples=256, sensitivity_base_n=0)
    assert a.rare_events is None and "subset" not in a.estimators()["p_success"]
    from uq.report.writer import render_html

    page = render_html(a, images=defaultdict(str))  # no figures drawn
    assert "The rare-event stage (subset simulation) did not run" in page
    # "off" keeps the plain estimate even where the stage would help
    rare, _ = _shortfall_scenario(1e-4, rare_events="off")
    assert assess(rare, samples=256, sensitivity_base_n=0).rare_events is None


def test_rare_events_mode_is_read_and_checked_in_the_scenario():
    from uq.scenario.errors import ScenarioError

    scenario, _ = _shortfall_scenario(1e-4, rare_events="always")
    assert scenario.analysis.rare_events == "always"
    with pytest.raises(ScenarioError, match="rare_events"):
        _shortfall_scenario(1e-4, rare_events="sometimes")


@pytest.mark.slow
@pytest.mark.parametrize("p_fail", [1e-4, 1e-6])
def test_subset_simulation_in_the_assessment_with_workers(p_fail):
    scenario, mu = _shortfall_scenario(p_fail)
    a = assess(scenario, sensitivity_base_n=0)
    _check_against_closed_form(a, p_fail, mu)
    print(f"P(fail) {p_fail:g}: {a.rare_events.failure.probability.estimate:.3e} "
          f"[{a.rare_events.failure.probability.lower:.3e}, "
          f"{a.rare_events.failure.probability.upper:.3e}], relative half width "
          f"{a.rare_events.failure.relative_half_width:.3f}, "
          f"{a.rare_events.failure.model_runs:,} model runs")
    # two worker processes share the model runs, or smaller blocks stream them; the numbers
    # stay the same
    pooled = assess(scenario, sensitivity_base_n=0, workers=2)
    assert pooled.rare_events.failure == a.rare_events.failure
    assert pooled.p_success == a.p_success
    blocks = assess(scenario, sensitivity_base_n=0, block_size=1024, chunk_blocks=2)
    assert blocks.rare_events.failure == a.rare_events.failure


def test_sweep_and_compare_state_the_rare_event_p_success_of_the_assessed_configuration(
        monkeypatch):
    # one answer per question: the sweep row at the scenario's own setpoint and configuration
    # A of a comparison state the verdict's P(success), here 1 - P(fail) by subset simulation
    # (the main sample alone has no failure at P(fail) = 1e-4 and would say 100 %)
    from uq.studies import rare
    from uq.studies.sweeps import compare_scenarios, sweep_setpoint

    monkeypatch.setattr(rare, "SAMPLES_PER_LEVEL", 1000)
    scenario, _ = _shortfall_scenario(1e-4)
    a = assess(scenario, sensitivity_base_n=0)
    assert a.rare_events is not None
    sweep = sweep_setpoint(scenario, "setpoint.speed_m_s", [0.9, 1.0], reference=a)
    row = sweep.summary.rows[1]
    assert (row.p_success, row.p_success_low, row.p_success_high) == (
        a.p_success.estimate, a.p_success.lower, a.p_success.upper)
    assert row.p_success < 1.0 and row.successes == a.propagation.samples  # no failure counted
    pair = compare_scenarios(scenario, scenario, reference=a).comparison
    assert pair.p_success_a == a.p_success.estimate and pair.verdict_a == a.verdict.verdict
