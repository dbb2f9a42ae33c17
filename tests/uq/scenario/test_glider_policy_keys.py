"""The scenario keys of the glider's flight, current and surfacing policies and of the
recovery-window booking: read, typed, and refused with one clear line when wrong."""
from __future__ import annotations

import copy
import datetime
import tomllib
from pathlib import Path

import pytest

from uq.scenario import ScenarioError, parse_scenario

CONFIGS = Path(__file__).resolve().parents[3] / "configs"


def _doc(name: str) -> dict:
    with open(CONFIGS / name, "rb") as fh:
        return tomllib.load(fh)


GLIDER = _doc("glider_transit.toml")
PROPELLER = _doc("under_ice_section.toml")


def test_demo_glider_reads_its_policies():
    s = parse_scenario(copy.deepcopy(GLIDER))
    assert s.setpoint.flight_policy == "efficient"
    assert s.setpoint.horizontal_speed_m_s == 0.32
    assert [leg.current_policy for leg in s.legs] == ["crab", "crab_or_drift", "crab_or_drift",
                                                       "crab_or_drift"]
    assert s.decision.ship_booking == "recovery_window"
    assert s.decision.deployment_date == datetime.date(2027, 4, 12)
    assert s.decision.recovery_window == (0.05, 0.95)
    assert "vehicle.hull_volume_L" in s.input_names


def test_recovery_window_needs_a_deployment_date():
    d = copy.deepcopy(GLIDER)
    del d["decision"]["deployment_date"]
    with pytest.raises(ScenarioError, match=r"decision\.deployment_date.*deployment date"):
        parse_scenario(d)


@pytest.mark.parametrize("window", [[0.95, 0.05], [0.0, 0.9], [0.1], "early"])
def test_recovery_window_quantiles_must_be_an_ordered_pair(window):
    d = copy.deepcopy(GLIDER)
    d["decision"]["recovery_window"] = window
    with pytest.raises(ScenarioError, match=r"decision\.recovery_window.*two arrival quantiles"):
        parse_scenario(d)


def test_deployment_date_must_be_a_date():
    d = copy.deepcopy(GLIDER)
    d["decision"]["deployment_date"] = "2027-04-12"
    with pytest.raises(ScenarioError, match=r"decision\.deployment_date.*local date"):
        parse_scenario(d)


def test_retrim_policy_needs_a_speed_to_hold():
    d = copy.deepcopy(GLIDER)
    del d["setpoint"]["horizontal_speed_m_s"]
    with pytest.raises(ScenarioError, match=r"setpoint\.horizontal_speed_m_s.*efficient"):
        parse_scenario(d)


def test_unknown_policy_names_are_refused_with_a_suggestion():
    d = copy.deepcopy(GLIDER)
    d["legs"][1]["current_policy"] = "drfit"
    with pytest.raises(ScenarioError, match=r"legs\.boundary_current_crossing\.current_policy.*drift"):
        parse_scenario(d)
    d = copy.deepcopy(GLIDER)
    d["setpoint"]["flight_policy"] = "fast"
    with pytest.raises(ScenarioError, match=r"setpoint\.flight_policy"):
        parse_scenario(d)


def test_engine_volume_needs_the_hull_volume():
    d = copy.deepcopy(GLIDER)
    del d["vehicle"]["hull_volume_L"]
    with pytest.raises(ScenarioError, match=r"vehicle\.hull_volume_L.*trim check"):
        parse_scenario(d)


def test_glider_only_leg_keys_are_refused_for_a_propeller_vehicle():
    d = copy.deepcopy(PROPELLER)
    d["legs"][0]["dives_per_surfacing"] = 2
    with pytest.raises(ScenarioError, match=r"dives_per_surfacing.*kind = 'glider'"):
        parse_scenario(d)


def test_duty_cycle_is_a_fraction():
    d = copy.deepcopy(GLIDER)
    d["legs"][2]["payload_duty_cycle"] = 1.5
    with pytest.raises(ScenarioError, match=r"payload_duty_cycle = 1\.5.*duty cycle"):
        parse_scenario(d)


def test_small_engine_cannot_trim_the_demo_for_the_deep_basin():
    # TEOS-10 (gsw): lightest water of the demo route 12 degC, SP 35.2 at the surface, densest
    # 6 degC, SP 35.0 at 1000 dbar: (rho_max - rho_min) g V_hull with V_hull >= 61 L is
    # >= 3.2 N, more than the 3.0 N swing of 0.3 L (MODEL.md s8), so the engine cannot trim
    # the vehicle once it meets the basin's deep water (leg 2); on the crossing (12 degC at
    # 1000 dbar, ~2.7 N of range) it still flies, at the engine's limit.
    import gsw
    import numpy as np

    from physics.states import FailureMode, FlightEvent
    from uq.simulate import nominal_inputs, simulate_arrays

    sa_light, sa_dense = gsw.SR_from_SP(35.2), gsw.SR_from_SP(35.0)
    rho_min = gsw.rho(sa_light, gsw.CT_from_t(sa_light, 12.0, 0.0), 0.0)
    rho_max = gsw.rho(sa_dense, gsw.CT_from_t(sa_dense, 6.0, 1000.0), 1000.0)
    swing = rho_min * 9.80665 * 0.3e-3
    assert (rho_max - rho_min) * 9.80665 * 0.061 > swing
    d = copy.deepcopy(GLIDER)
    d["vehicle"]["max_pumped_volume_L"] = 0.3
    d["limits"]["max_duration_days"] = float("inf")  # slow at the limit: no time limit here
    s = parse_scenario(d)
    a = simulate_arrays(s, nominal_inputs(s))
    assert a["failure_mode"][0] == FailureMode.CANNOT_TRIM
    assert a["failing_leg"][0] == 2
    assert a["flight_events"][0] & FlightEvent.AT_ENGINE_LIMIT
    assert np.isfinite(a["range_km"]).all()
