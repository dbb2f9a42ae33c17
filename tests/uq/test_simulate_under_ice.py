"""The under-ice wiring of uq.simulate: new scenario fields reach the physics as stated.

Checks: a constant efficiency curve and a capacity curve of ones reproduce the model without
them bit for bit (derived: the curve's ratio is exactly 1); a hardware-free scenario has
P(no fault) = 1; hazard rates in 1/day give exp(-lambda t) over the sample's own duration
(any reliability text); the recovery demand by hand; the turn-back changes only the samples
that would not reach the goal with their reserve.
"""
from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path

import numpy as np
import pytest

from uq.scenario import load_scenario
from uq.scenario.types import CapacityCurve, EfficiencyCurve, Recovery, Subsystem, Hardware
from uq.simulate import simulate_arrays

DEMO = Path(__file__).resolve().parents[2] / "configs" / "under_ice_section.toml"
KEYS = ("range_km", "success", "reaches_recovery", "margin_Wh", "duration_days",
        "energy_per_km_Wh", "failure_mode")


@pytest.fixture(scope="module")
def demo():
    sc = load_scenario(DEMO)
    rng = np.random.default_rng(7)
    u = rng.random((512, len(sc.inputs)))
    x = np.column_stack([m.ppf(u[:, i]) for i, m in enumerate(sc.inputs)])
    return sc, x


def _run(sc, x):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # viscosity just below 0 degC is extrapolated
        return simulate_arrays(sc, x)


def _same(a, b):
    for key in KEYS:
        np.testing.assert_array_equal(a[key], b[key], err_msg=key)


def test_constant_efficiency_curve_reproduces_the_constant_efficiency(demo):
    sc, x = demo
    flat = dataclasses.replace(sc, vehicle=dataclasses.replace(
        sc.vehicle, efficiency_curve=EfficiencyCurve((0.5, 2.5), (0.4, 0.4))))
    none = dataclasses.replace(sc, vehicle=dataclasses.replace(sc.vehicle, efficiency_curve=None))
    _same(_run(flat, x), _run(none, x))


def test_capacity_curve_of_ones_is_temperature_blind(demo):
    sc, x = demo
    battery = dataclasses.replace(sc.battery, chemistry=None,
                                  capacity_curve=CapacityCurve((-5.0, 5.0), (1.0, 1.0)))
    ones = dataclasses.replace(sc, battery=battery)
    blind = dataclasses.replace(sc, battery=dataclasses.replace(battery, capacity_curve=None))
    _same(_run(ones, x), _run(blind, x))


def test_hazards_against_exponential_law(demo):
    sc, x = demo
    none = dataclasses.replace(sc, hardware=Hardware())
    a = _run(none, x)
    assert np.all(a["p_no_fault"] == 1.0) and np.all(a["p_fault_under_ice"] == 0.0)
    # one subsystem at 0.01/day, no recovery demand: P(no fault) = exp(-0.01 t[days]) over
    # the transit's own duration (any reliability text)
    one = dataclasses.replace(sc, recovery=Recovery(),
                              hardware=Hardware((Subsystem("thruster", 0.01),)))
    b = _run(one, x)
    done = b["reaches_recovery"]
    np.testing.assert_allclose(b["p_no_fault"][done], np.exp(-0.01 * b["duration_days"][done]),
                               rtol=1e-12)
    total = b["p_no_fault"] + b["p_fault_under_ice"] + b["p_fault_open_water"]
    np.testing.assert_allclose(total, 1.0, rtol=1e-12)


def test_turn_back_changes_only_samples_short_of_the_goal(demo):
    sc, x = demo
    cont = dataclasses.replace(sc, under_ice=dataclasses.replace(sc.under_ice, policy="continue"))
    a, b = _run(sc, x), _run(cont, x)
    assert not b["turned_back"].any()
    turned = a["turned_back"]
    # every sample that turns back is not a success; the others keep their outcome
    assert not a["success"][turned].any()
    np.testing.assert_array_equal(a["success"][~turned], b["success"][~turned])
    assert np.all(a["point_of_no_return_km"] > 38.0)  # beyond the open-water launch leg
    # a vehicle turned back has not reached the recovery point and is not lost
    assert not (a["reaches_recovery"] | a["lost_under_ice"])[turned].any()


def test_recovery_demand_lowers_the_margin_by_hand(demo):
    # derived: 2 h at 50 W loiter, no homing = 100 Wh, counted against rated capacity at the
    # last leg's -0.8 degC: lithium-primary default 0.90 - 0.8 * 0.007 = 0.8944 (from memory)
    sc, x = demo
    no_fade = dataclasses.replace(sc.battery, self_discharge_per_month=0.0)
    base = dataclasses.replace(sc, recovery=Recovery(), battery=no_fade,
                               under_ice=dataclasses.replace(sc.under_ice, policy="continue"))
    loiter = dataclasses.replace(base, recovery=Recovery(loiter_time_h=2.0, loiter_power_W=50.0))
    a, b = _run(base, x), _run(loiter, x)
    ok = a["arrived"]
    # 1e-9: float rounding of a difference of two ~1 kWh margins
    np.testing.assert_allclose(a["margin_Wh"][ok] - b["margin_Wh"][ok], 100.0 / 0.8944,
                               rtol=1e-9)
