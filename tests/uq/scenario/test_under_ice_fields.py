"""Scenario fields for under-ice operations: recovery demand, turn-back, hardware, battery curve.

The parser is checked against the values written in the file (the expectation is the file
text itself) and every refusal names the key, the value and what was expected.
"""
from __future__ import annotations

import pytest

from tests.uq.scenario.test_scenario import PROPELLER, GLIDER_BASE, edit, parse
from uq.scenario import ScenarioError

EXTRA = """
[recovery]
loiter_time_h = {dist = "triangular", min = 1.0, mode = 3.0, max = 8.0}
loiter_power_W = 12.0
homing_distance_km = 1.5

[under_ice]
policy = "turn-back"
safe_exits_after = ["first"]
dead_reckoning_overhead = 0.04

[hardware]
[[hardware.subsystems]]
name = "thruster"
rate_per_day = 0.004
weibull_shape = 1.5

[[hardware.subsystems]]
name = "navigation"
rate_per_day = 0.002
"""

BATTERY = """
chemistry = "lithium-ion"
capacity_curve = {temperature_C = [-20.0, 0.0, 20.0], fraction = [0.7, 0.86, 1.0]}
self_discharge_per_month = 0.02
"""


def _full():
    text = edit(PROPELLER, "reserve_fraction = 0.15\n", "reserve_fraction = 0.15\n" + BATTERY)
    text = edit(text, "speed_m_s = 1.5\n", "speed_m_s = 1.5\nmin_ground_speed_m_s = 1.2\n")
    text = edit(text, "appendage_factor = 1.2\n", "appendage_factor = 1.2\n")
    text = edit(text, 'propulsive_efficiency = {dist = "pert", min = 0.30, mode = 0.38, max = 0.44}\n',
                'propulsive_efficiency = {dist = "pert", min = 0.30, mode = 0.38, max = 0.44}\n'
                "max_speed_m_s = 2.0\n"
                "efficiency_curve = {speed_m_s = [1.0, 1.5, 2.0], efficiency = [0.34, 0.38, 0.36]}\n")
    text = edit(text, 'length_km = 80.0\n', 'length_km = 80.0\nspeed_m_s = 1.3\ndepth_m = 30.0\n')
    return edit(text, "[decision]", EXTRA + "\n[decision]")


def test_new_sections_are_typed():
    sc = parse(_full())
    assert sc.recovery.loiter_power_W == 12.0 and sc.recovery.homing_distance_km == 1.5
    assert sc.recovery.loiter_time_h.name == "recovery.loiter_time_h"
    assert sc.recovery.loiter_time_h.unit == "h"
    assert sc.under_ice.policy == "turn-back"
    assert sc.under_ice.safe_exits_after == ("first",)
    assert sc.under_ice.dead_reckoning_overhead == 0.04
    assert [(s.name, s.rate_per_day, s.weibull_shape) for s in sc.hardware.subsystems] == \
        [("thruster", 0.004, 1.5), ("navigation", 0.002, 1.0)]
    b = sc.battery
    assert b.chemistry == "lithium-ion" and b.self_discharge_per_month == 0.02
    assert b.capacity_curve.temperature_C == (-20.0, 0.0, 20.0)
    assert b.capacity_curve.fraction == (0.7, 0.86, 1.0)
    assert sc.vehicle.efficiency_curve.speed_m_s == (1.0, 1.5, 2.0)
    assert sc.vehicle.max_speed_m_s == 2.0 and sc.setpoint.min_ground_speed_m_s == 1.2
    assert sc.legs[1].speed_m_s == 1.3 and sc.legs[1].depth_m == 30.0 and sc.legs[0].speed_m_s is None
    assert [leg.under_ice for leg in sc.legs] == [True, False]


def test_defaults_keep_todays_model():
    sc = parse(PROPELLER)
    assert sc.under_ice.policy == "continue" and sc.under_ice.dead_reckoning_overhead == 0.0
    assert sc.recovery.loiter_time_h == 0.0 and sc.recovery.homing_distance_km == 0.0
    assert sc.hardware.subsystems == ()
    assert sc.battery.capacity_curve is None and sc.battery.chemistry is None


@pytest.mark.parametrize("old, new, match", [
    ('policy = "turn-back"', 'policy = "turn-around"',
     r"under_ice\.policy = 'turn-around': expected what to do at the point of no return: one of "
     r"'continue', 'turn-back'; did you mean 'turn-back'\?"),
    ('safe_exits_after = ["first"]', 'safe_exits_after = ["frist"]',
     r"under_ice\.safe_exits_after = 'frist': expected the name of a leg of this route"),
    ("dead_reckoning_overhead = 0.04", "dead_reckoning_overhead = 1.5",
     r"under_ice\.dead_reckoning_overhead = 1\.5: expected a distance overhead"),
    ("rate_per_day = 0.004", "rate_per_day = -0.004",
     r"hardware\.subsystems\[0\]\.rate_per_day = -0\.004: expected a hazard rate"),
    ("weibull_shape = 1.5", "weibull_shape = 0.0",
     r"hardware\.subsystems\[0\]\.weibull_shape = 0\.0: expected a Weibull shape"),
    ("fraction = [0.7, 0.86, 1.0]", "fraction = [0.7, 0.86]",
     r"battery\.capacity_curve\.fraction = \[0\.7, 0\.86\]: expected as many values as"),
    ("temperature_C = [-20.0, 0.0, 20.0]", "temperature_C = [-20.0, 20.0, 0.0]",
     r"battery\.capacity_curve\.temperature_C = .*: expected strictly increasing values"),
    ('chemistry = "lithium-ion"', 'chemistry = "lead-acid"',
     r"battery\.chemistry = 'lead-acid': expected the cell chemistry"),
    ("efficiency = [0.34, 0.38, 0.36]", "efficiency = [0.34, 1.38, 0.36]",
     r"vehicle\.efficiency_curve\.efficiency = 1\.38: expected an efficiency in \(0, 1\]"),
    ("homing_distance_km = 1.5", "homing_distance_km = -1.5",
     r"recovery\.homing_distance_km = -1\.5: expected a distance \[km\]"),
])
def test_bad_under_ice_fields_are_refused_in_one_line(old, new, match):
    with pytest.raises(ScenarioError, match=match) as info:
        parse(edit(_full(), old, new))
    assert "\n" not in str(info.value)


def test_glider_refuses_per_leg_speed():
    text = edit(GLIDER_BASE, "length_km = 500.0", "length_km = 500.0\nspeed_m_s = 0.3")
    with pytest.raises(ScenarioError, match=r"legs\.only\.speed_m_s = 0\.3: expected no per-leg"):
        parse(text)
