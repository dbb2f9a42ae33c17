"""A two-layer current profile reaches the vehicle through the scenario: a propeller vehicle
feels the value at its running depth (derived: ground speed U + c_a with no cross current)."""
from __future__ import annotations

import pytest

from uq.scenario import parse_scenario
from uq.simulate import SECONDS_PER_DAY, nominal


def _propeller(depth_m: float):
    return parse_scenario({
        "scenario": {"name": "layers"},
        "vehicle": {"kind": "propeller", "name": "p", "hotel_load_W": 10.0,
                    "propulsive_efficiency": 0.4,
                    "drag": {"coefficient": 0.1, "reference_area_m2": 0.05,
                             "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": 1e5},
        "setpoint": {"speed_m_s": 1.0, "depth_m": depth_m},
        "legs": [{"name": "leg", "length_km": 10.0, "current_along_m_s": 0.0,
                  "surface_current_along_m_s": 0.5, "surface_layer_m": 100.0}],
    })


@pytest.mark.parametrize("depth, ground_speed", [(50.0, 1.5), (150.0, 1.0)])
def test_propeller_vehicle_feels_the_current_at_its_running_depth(depth, ground_speed):
    days = nominal(_propeller(depth)).outcome["duration_days"]
    # derived: 10 km at U + c_a; RK4 on constant rates is exact to rounding
    assert days * SECONDS_PER_DAY == pytest.approx(10e3 / ground_speed, rel=1e-9)
