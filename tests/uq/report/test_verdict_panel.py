"""The verdict panel's wording and gauges, and the plan summary's units.

Expected texts and positions are derived by hand from the numbers given (arithmetic on the
stated interval and requirement); the PERT median is checked against scipy.stats.
"""
from types import SimpleNamespace as NS

import numpy as np
import pytest
from scipy import stats

from uq.report._format import Formatter
from uq.report.plan import plan_summary
from uq.report.verdict_panel import dominant_failure, gauge, verdict_panel, zoom_gauge
from uq.scenario import parse_scenario
from uq.simulate import FailureMode


def _p(estimate, lower, upper):
    return NS(estimate=estimate, lower=lower, upper=upper, confidence=0.95, n=4096,
              method="test")


def _assessment(verdict, p, required, *, additional=None, outcomes=None):
    legs = (NS(name="a", under_ice=False), NS(name="b", under_ice=True))
    if outcomes is None:
        outcomes = {"success": np.array([True, False]),
                    "failure_mode": np.array([0, int(FailureMode.ENERGY)]),
                    "failing_leg": np.array([-1, 1])}
    return NS(verdict=NS(verdict=verdict, required_probability=required,
                         additional_samples=additional),
              propagation=NS(p_success=p, outcome_table=None, outcomes=outcomes),
              scenario=NS(legs=legs), go_requirements=None)


def test_a_near_miss_does_not_read_like_a_wide_miss():
    near = verdict_panel(_assessment("no-go", _p(0.946, 0.9415, 0.949), 0.95))
    far = verdict_panel(_assessment("no-go", _p(0.30, 0.286, 0.314), 0.95))
    assert near.closeness == "narrow" and far.closeness == "clear"
    # derived: 95 % - 94.9 % = 0.1 point; 95 % - 31.4 % = 63.6 points
    assert "narrowly" in near.closeness_sentence and "0.1 percentage points" in near.closeness_sentence
    assert "wide margin" in far.closeness_sentence and "63.6 percentage points" in far.closeness_sentence
    assert near.p_success == "94.6 % (95 % CI 94.2\u201394.9 %)"
    # the failure share is the complement of the one P(success) interval
    assert near.failure_sentence.startswith("5.4 % of the sampled deployments fail (5.1\u20135.8 %)")


def test_straddling_interval_says_too_close_to_call():
    panel = verdict_panel(_assessment("undecided", _p(0.951, 0.944, 0.957), 0.95, additional=9000))
    assert panel.closeness == "straddles"
    assert "Too close to call" in panel.closeness_sentence and "9,000 more samples" in panel.closeness_sentence


def test_gauges_have_a_fixed_full_scale_and_a_zoom_around_the_requirement():
    f = Formatter()
    p = _p(0.83, 0.8171, 0.8424)
    full = gauge(p, 0.9, f)
    assert (full.left, full.right) == (0.0, 1.0)
    assert [t for _, t in full.ticks] == ["0 %", "25 %", "50 %", "75 %", "100 %"]
    # derived: on 0-100 % a probability p sits at 100 p % of the width
    assert full.estimate == pytest.approx(83.0) and full.required == pytest.approx(90.0)
    assert full.ci_left == pytest.approx(81.71) and full.ci_width == pytest.approx(2.53)
    zoom = zoom_gauge(p, 0.9, f)  # allowed failure 10 % -> +-10 points: 80 to 100 %
    assert (zoom.left, zoom.right) == pytest.approx((0.8, 1.0))
    assert zoom.required == pytest.approx(50.0) and zoom.estimate == pytest.approx(15.0)
    off = zoom_gauge(_p(0.30, 0.286, 0.314), 0.95, f)  # 90 to 100 %: the interval is below
    assert off.off_scale == "below" and off.ci_left is None
    assert (off.left, off.right) == pytest.approx((0.9, 1.0))


def test_dominant_failure_names_mode_and_leg_with_its_share():
    back, energy = int(FailureMode.TURNED_BACK), int(FailureMode.ENERGY)
    mode = np.array([0, back, back, back, energy, 0])
    leg = np.array([-1, 1, 1, 1, 0, -1])
    out = {"success": mode == 0, "failure_mode": mode, "failing_leg": leg}
    text = dominant_failure(out, ["open", "ice"], Formatter())
    # derived: 3 of the 4 failures are turn-backs on leg "ice" (75 %); the other 1 of 4 (25 %)
    assert text == ("Most failures: turned back to a safe exit on ice (3 of 4 failures, 75.0 %);"
                    " next: energy below reserve on open (1 of 4 failures, 25.0 %).")
    none = {"success": np.ones(3, bool), "failure_mode": np.zeros(3), "failing_leg": -np.ones(3)}
    assert dominant_failure(none, ["x"], Formatter()) == "No sample failed (0 of 3)."


def test_plan_states_every_number_with_its_unit():
    sc = parse_scenario({
        "scenario": {"name": "plan"},
        "vehicle": {"kind": "propeller", "name": "test hull",
                    "hotel_load_W": {"dist": "pert", "min": 25.0, "mode": 30.0, "max": 45.0},
                    "propulsive_efficiency": 0.35,
                    "drag": {"coefficient": 0.12, "reference_area_m2": 0.25,
                             "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": 9000.0, "reserve_fraction": 0.2},
        "setpoint": {"speed_m_s": 1.3, "depth_m": 100.0},
        "legs": [{"name": "open", "length_km": 150.0, "temperature_C": 4.0},
                 {"name": "ice", "length_km": 50.0, "temperature_C": -1.5,
                  "practical_salinity": 34.0, "ice_ceiling_m": 20.0}],
    })
    plan = plan_summary(sc, arrival_days=[1.25, 1.7])
    rows = {k: v for t in plan.tables for k, v in t.rows}
    # PERT(a, m, b) = Beta(1 + 4(m-a)/(b-a), 1 + 4(b-m)/(b-a)) on [a, b] (Malcolm et al. 1959)
    median = stats.beta(2.0, 4.0, loc=25.0, scale=20.0).median()
    assert rows["Hotel load"] == f"{median:.1f} W \u00b7 PERT(25, 30, 45)"
    assert rows["Speed through water"] == "1.3 m/s" and rows["Nominal energy"] == "9,000 Wh"
    assert rows["Reserve kept on arrival (policy)"] == "20 %"
    assert rows["Reference area"] == "0.25 m\u00b2" and rows["P(success) required, at least"] == "90 %"
    header = plan.route.header
    ice = dict(zip(header, plan.route.rows[1]))
    assert ice["Length"] == "50 km" and ice["Ice ceiling"] == "20 m"
    assert ice["Water"] == "\u22121.5 \u00b0C, S 34"  # real minus sign
    assert dict(zip(header, plan.route.rows[0]))["Ice ceiling"] == "open water"
    assert plan.route.total[:2] == ("Route", "200 km") and plan.route.total[-1] == "day 1.7"
    assert "50 km under ice" in plan.headline and "20 % kept in reserve" in plan.headline


def test_a_moderate_miss_is_plain_and_levers_read_in_one_line():
    a = _assessment("no-go", _p(0.829, 0.823, 0.834), 0.9)
    a.go_requirements = (
        NS(label="nominal battery energy", unit="Wh", direction="at least", current_value=16000.0,
           required_value=16534.2, sentence="long"),
        NS(label="reserve fraction", unit="", direction="at most", current_value=0.15,
           required_value=0.1218, sentence="long"),
        NS(label="net buoyancy", unit="N", direction="at least", current_value=1.6,
           required_value=None, sentence="No net buoyancy gives GO on its own."))
    panel = verdict_panel(a)
    # derived: 90 % - 83.4 % = 6.6 points: more than the near band (2.5) but under 4 x 2.5
    assert panel.closeness_sentence == ("NO-GO: even the upper bound, 83.4 %, is 6.6 percentage "
                                        "points short of the required 90.0 %.")
    assert panel.go_sentences == ("nominal battery energy at least 16,534 Wh (now 16,000 Wh)",
                                  "reserve fraction at most 0.1218 (now 0.15)",
                                  "No net buoyancy gives GO on its own.")
