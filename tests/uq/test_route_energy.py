"""Energy along the route (uq.simulate.route_energy, physics.energy_split).

The per-leg split is checked against closed forms written out here (seawater density from
gsw, TEOS-10), and the profile's end value against the assessment's own margin for the same
rows (the fan chart and the verdict must tell one story).
"""
import math

import gsw
import numpy as np
import pytest

import uq
from uq.route_energy import subsample_rows
from uq.scenario import parse_scenario
from uq.simulate import route_energy


def _rho(sp, t, p):
    """TEOS-10 in-situ density via gsw (no position: SR_from_SP), p in dbar."""
    sa = gsw.SR_from_SP(sp)
    return float(gsw.rho(sa, gsw.CT_from_t(sa, t, p), p))


def _propeller(hotel=30.0, analysis=None):
    return parse_scenario({
        "scenario": {"name": "split"},
        "vehicle": {"kind": "propeller", "name": "test hull", "hotel_load_W": hotel,
                    "propulsive_efficiency": 0.35,
                    "drag": {"coefficient": 0.12, "reference_area_m2": 0.25,
                             "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": 9000.0, "cold_derating": 0.9, "usable_fraction": 0.95,
                    "reserve_fraction": 0.2},
        "setpoint": {"speed_m_s": 1.3, "depth_m": 100.0},
        "legs": [{"name": "only", "length_km": 150.0, "temperature_C": 4.0,
                  "practical_salinity": 34.5}],
        "analysis": analysis or {"samples": 256, "seed": 1},
    })


def test_propeller_split_is_the_closed_form_in_still_water():
    sc = _propeller()
    re = route_energy(sc, np.zeros((1, 0)))
    rho = _rho(34.5, 4.0, 100.0)  # depth 100 m ~ 100 dbar (the model's pressure rule)
    t = 150e3 / 1.3  # derived: one leg in still water, time = L / U [s]
    # derived (MODEL.md s5; P = D U / eta + P_hotel, D = rho C_D A U^2 / 2):
    propulsion = 0.5 * rho * 0.12 * 0.25 * 1.3 ** 3 / 0.35 * t / 3600.0
    hotel = 30.0 * t / 3600.0
    # tolerance: the same closed form evaluated in another order (rounding only)
    assert re.leg_split_Wh["propulsion"][0, 0] == pytest.approx(propulsion, rel=1e-9)
    assert re.leg_split_Wh["hotel"][0, 0] == pytest.approx(hotel, rel=1e-9)
    # departure: usable = nominal x cold x usable fraction; the reserve its 20 % (derived)
    assert re.remaining_Wh[0, 0] == pytest.approx(9000.0 * 0.9 * 0.95, rel=1e-12)
    assert re.reserve_Wh[0, 0] == pytest.approx(0.2 * 9000.0 * 0.9 * 0.95, rel=1e-12)
    # the profile is uniform in distance within the leg (8 columns per leg by default)
    np.testing.assert_allclose(re.position_km[0], np.linspace(0.0, 150.0, 9), rtol=1e-12)


def _glider(angle_deg=25.0, bottom=800.0):
    return parse_scenario({
        "scenario": {"name": "glide-split"},
        "vehicle": {"kind": "glider", "name": "g", "hotel_load_W": 0.4, "pump_efficiency": 0.25,
                    "inflection_energy_J": 40.0,
                    "polar": {"reference_area_m2": 0.1, "zero_lift_drag": 0.1,
                              "induced_drag_factor": 0.3, "max_lift_coefficient": 0.9}},
        "battery": {"nominal_energy_Wh": 3000.0},
        "setpoint": {"glide_angle_deg": angle_deg, "net_buoyancy_N": 1.5, "top_depth_m": 0.0,
                     "bottom_depth_m": bottom},
        "legs": [{"name": "only", "length_km": 400.0, "temperature_C": 8.0,
                  "practical_salinity": 35.0}],
    })


def test_glider_pump_and_inflection_energy_are_the_closed_forms():
    re = route_energy(_glider(), np.zeros((1, 0)))
    tan = math.tan(math.radians(25.0))
    length = 400e3
    # derived (MODEL.md s5): per horizontal metre from the surface the pump costs
    # B tan(gamma) / eta_pump, and two inflections per cycle of horizontal length
    # s_c = 2 z_b / tan(gamma) cost 2 E_inf tan(gamma) / (2 z_b)
    pump = 1.5 * tan / 0.25 * length / 3600.0
    inflections = 2 * 40.0 * tan / (2 * 800.0) * length / 3600.0
    # tolerance: no fouling and constant trim, so the split is exact up to rounding
    assert re.leg_split_Wh["pump"][0, 0] == pytest.approx(pump, rel=1e-9)
    assert re.leg_split_Wh["inflections"][0, 0] == pytest.approx(inflections, rel=1e-9)
    assert re.leg_split_Wh["surfacing"][0, 0] == 0.0  # no surfacing declared
    total = sum(v[0, 0] for v in re.leg_split_Wh.values())
    assert total == pytest.approx(re.drawn_Wh[0, -1], rel=1e-12)


def test_profile_end_equals_the_assessments_margin_for_the_same_rows():
    sc = parse_scenario({
        "scenario": {"name": "fan-end"},
        "vehicle": {"kind": "propeller", "name": "test hull",
                    "hotel_load_W": {"dist": "pert", "min": 25.0, "mode": 30.0, "max": 45.0},
                    "propulsive_efficiency": {"dist": "uniform", "low": 0.3, "high": 0.4},
                    "drag": {"coefficient": 0.12, "reference_area_m2": 0.25,
                             "reference": "frontal"}},
        "battery": {"nominal_energy_Wh": 3000.0, "reserve_fraction": 0.2},
        "setpoint": {"speed_m_s": 1.3},
        "fouling": {"onset_days": 0.5, "time_constant_days": 2.0, "drag_increase": 0.3},
        "legs": [{"name": "a", "length_km": 60.0,
                  "current_along_m_s": {"dist": "normal", "mean": -0.1, "sd": 0.1}},
                 {"name": "b", "length_km": 70.0, "ice_ceiling_m": 10.0,
                  "temperature_C": -1.5, "practical_salinity": 34.0}],
        "recovery": {"loiter_time_h": 2.0, "loiter_power_W": 15.0},
        "analysis": {"samples": 256, "seed": 3, "replicates": 4},
    })
    a = uq.assess(sc, sensitivity_base_n=0)
    rows = subsample_rows(a.propagation.samples, 100)
    re = route_energy(sc, a.propagation.inputs[rows])
    margin = a.propagation.outcomes.margin_Wh[rows]
    arrived = re.arrived
    assert arrived.sum() > 50 and (~a.propagation.outcomes.success[rows]).any()
    # one flight, so the same numbers: only rounding may differ
    np.testing.assert_allclose(re.end_above_reserve_Wh[arrived], margin[arrived], rtol=0,
                               atol=1e-9)
    # the split adds up to the energy drawn on the route
    total = sum(v.sum(axis=1) for v in re.leg_split_Wh.values())
    np.testing.assert_allclose(total, re.drawn_Wh[:, -1], rtol=1e-12, atol=1e-9)


def test_subsample_rows_is_bounded_spread_and_deterministic():
    assert list(subsample_rows(5, 400)) == [0, 1, 2, 3, 4]
    rows = subsample_rows(8192, 400)
    assert len(rows) == 400 and rows[0] == 0 and rows[-1] == 8191
    assert np.array_equal(rows, subsample_rows(8192, 400))
