"""uq.simulate: the one bridge from scenario files (km, Wh, days, degrees) to the physics in SI.

Checks go through scenario files, so the unit conversions and the routing of fields are what is
tested; expected values are closed forms written out here with seawater density from gsw
(TEOS-10) itself, never the package's own physics functions.
"""
import math

import gsw
import numpy as np
import pytest

from uq.errors import InputError
from uq.scenario import parse_scenario
from uq.simulate import Outcomes, deterministic_optimum, glide_operating_point, nominal, simulate, simulate_arrays


def _rho(sp, t, p):
    """TEOS-10 in-situ density via gsw (no position: SR_from_SP), p in dbar."""
    sa = gsw.SR_from_SP(sp)
    return float(gsw.rho(sa, gsw.CT_from_t(sa, t, p), p))


def _propeller(**leg):
    doc = {
        "scenario": {"name": "closed-form"},
        "vehicle": {"kind": "propeller", "name": "test hull", "hotel_load_W": 30.0,
                    "propulsive_efficiency": 0.35,
                    "drag": {"coefficient": 0.12, "reference_area_m2": 0.25, "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": 9000.0, "cold_derating": 0.9, "usable_fraction": 0.95,
                    "reserve_fraction": 0.2},
        "setpoint": {"speed_m_s": 1.3, "depth_m": 100.0},
        "legs": [{"name": "only", "length_km": 150.0, "temperature_C": 4.0,
                  "practical_salinity": 34.5, **leg}],
        "analysis": {"samples": 256, "seed": 1},
    }
    return parse_scenario(doc)


def test_propeller_range_duration_and_margin_in_file_units():
    sc = _propeller(current_along_m_s=-0.2)
    rho = _rho(34.5, 4.0, 100.0)  # depth 100 m ~ 100 dbar (the model's pressure rule)
    power = 0.5 * rho * 1.3 ** 3 * 0.12 * 0.25 / 0.35 + 30.0  # P = D U / eta + P_hotel [W]
    drawable_J = 9000.0 * 3600.0 * 0.9 * 0.95 * (1 - 0.2)
    ground = 1.3 - 0.2  # head current along track, none across
    row = nominal(sc).outcome
    # derived: constant power and ground speed on one leg
    assert row["range_km"] == pytest.approx(drawable_J / power * ground / 1000.0, rel=1e-9)
    assert row["duration_days"] == pytest.approx(150e3 / ground / 86400.0, rel=1e-9)
    assert row["margin_Wh"] == pytest.approx((drawable_J - power * 150e3 / ground) / 3600.0, rel=1e-9)
    assert row["energy_per_km_Wh.only"] == pytest.approx(power * 1000.0 / ground / 3600.0, rel=1e-9)
    assert bool(row["success"]) and bool(row["reaches_recovery"])


def test_optimum_speed_is_the_closed_form_for_a_constant_drag_coefficient():
    sc = _propeller()
    rho = _rho(34.5, 4.0, 100.0)
    # derived (MODEL.md s5): U* = (eta P_hotel / (rho C_D A))^(1/3)
    u_star = (0.35 * 30.0 / (rho * 0.12 * 0.25)) ** (1 / 3)
    assert deterministic_optimum(sc, "setpoint.speed_m_s") == pytest.approx(u_star, rel=1e-6)
    assert deterministic_optimum(sc, "setpoint.depth_m") is None


def test_glide_operating_point_keeps_the_steady_glide_balance():
    doc = {
        "scenario": {"name": "glide"},
        "vehicle": {"kind": "glider", "name": "g", "hotel_load_W": 0.4, "pump_efficiency": 0.25,
                    "polar": {"reference_area_m2": 0.1, "zero_lift_drag": 0.1,
                              "induced_drag_factor": 0.3, "max_lift_coefficient": 0.9}},
        "battery": {"nominal_energy_Wh": 3000.0},
        "setpoint": {"glide_angle_deg": 25.0, "net_buoyancy_N": 1.5, "top_depth_m": 0.0,
                     "bottom_depth_m": 800.0},
        "legs": [{"name": "only", "length_km": 400.0, "temperature_C": 8.0, "practical_salinity": 35.0}],
    }
    op = glide_operating_point(parse_scenario(doc))
    assert op.density == pytest.approx(_rho(35.0, 8.0, 400.0), rel=1e-12)  # mid-depth of the band
    gamma = math.radians(25.0)
    assert op.vertical_speed / op.horizontal_speed == pytest.approx(math.tan(gamma), rel=1e-12)
    # Leonard & Graver 2001 / Graver 2005: L = B cos(gamma) gives C_L; buoyancy power B w equals
    # drag power D V on the polar C_D = C_D0 + K C_L^2
    v = math.hypot(op.horizontal_speed, op.vertical_speed)
    cl = 2 * 1.5 * math.cos(gamma) / (op.density * 0.1 * v * v)
    drag = 0.5 * op.density * 0.1 * v * v * (0.1 + 0.3 * cl * cl)
    assert 1.5 * op.vertical_speed == pytest.approx(drag * v, rel=1e-9)
    assert glide_operating_point(_propeller()) is None


def test_outcomes_are_one_typed_object():
    sc = _propeller(current_along_m_s={"dist": "normal", "mean": 0.0, "sd": 0.1})
    x = np.array([[-0.2], [-0.1], [0.0]])
    out = simulate_arrays(sc, x)
    assert isinstance(out, Outcomes) and out.n == 3
    assert out["range_km"] is out.range_km
    with pytest.raises(KeyError, match="no outcome 'arived'"):
        out["arived"]
    both = Outcomes.concatenate([out.take([0]), out.take(slice(1, 3))])
    for name in out.keys():
        np.testing.assert_array_equal(both[name], out[name])
    frame = simulate(sc, x)
    assert list(frame["failure_mode"]) == ["success"] * 3 and "energy_per_km_Wh.only" in frame
    np.testing.assert_array_equal(frame["range_km"], out.range_km)
    # a following current raises the range (sanity of the column routing)
    assert out.range_km[2] > out.range_km[1] > out.range_km[0]


def test_wrong_sample_width_is_an_input_error():
    sc = _propeller(current_along_m_s={"dist": "normal", "mean": 0.0, "sd": 0.1})
    with pytest.raises(InputError, match=r"expected \(n, 1\)"):
        simulate_arrays(sc, np.zeros((4, 2)))
