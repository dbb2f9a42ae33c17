"""Under ice: the point of no return, the turn-back decision and the recovery-point demand.

Every expected value is worked by hand from constant-consumption cases (MODEL.md s8,
"Turn-back under ice": x* = x_s + E(x_s) / (e_f + e_b), derived).
"""
import numpy as np
import pytest

from physics import reliability
from physics.mission import BatteryState, PropellerRates, fly_route
from physics.turnback import arrival_demand, fault_split, last_safe_exit, under_ice_outcome

DRAG, SPEED, ETA, HOTEL = 20.0, 1.5, 0.4, 30.0
POWER = DRAG * SPEED / ETA + HOTEL  # 105 W, constant (no fouling)
OPEN_KM, ICE_KM = 20e3, 100e3
HEAD = -0.1  # along-track current on the ice leg [m/s]


def _case(energy_J, *, overhead=0.0, capacity=1.0, policy="turn-back", loiter=(0.0, 0.0),
          homing=0.0):
    n = len(energy_J)
    rates = PropellerRates(
        clean_drag=np.full((n, 2), DRAG), speed=np.full(n, SPEED),
        propulsive_efficiency=np.full(n, ETA), hotel_load=np.full((n, 2), HOTEL),
        drag_increase=np.zeros(n))
    battery = BatteryState(
        nominal_energy=np.asarray(energy_J, float), cold_derating=np.ones(n),
        fade_rate=np.zeros(n), usable_fraction=np.ones(n), reserve_fraction=np.full(n, 0.2))
    legs = np.broadcast_to([OPEN_KM, ICE_KM], (n, 2))
    along = np.broadcast_to([0.0, HEAD], (n, 2))
    across = np.zeros((n, 2))
    path = np.broadcast_to([0.0, overhead], (n, 2))
    charge = np.broadcast_to([1.0, capacity], (n, 2))
    transit = fly_route(rates, battery, leg_length=legs, current_along=along,
                        current_across=across, fouling_growth_factor=np.ones((n, 2)),
                        fouling_onset=np.zeros(n), fouling_time_constant=np.full(n, np.inf),
                        distance_overhead=path, capacity_factor=charge)
    out = under_ice_outcome(rates, battery, transit, ice=[False, True], leg_length=legs,
                            current_along=along, current_across=across,
                            distance_overhead=path, capacity_factor=charge,
                            loiter_power=loiter[0], loiter_time=loiter[1],
                            homing_distance=homing, policy=policy)
    return transit, out


def _pnr_by_hand(energy_J, *, overhead=0.0, capacity=1.0):
    drawable = 0.8 * np.asarray(energy_J, float)
    e_open = POWER / SPEED  # J/m on the open leg, no current
    spare_at_edge = drawable - e_open * OPEN_KM  # E(x_s)
    e_f = POWER * (1 + overhead) / (SPEED + HEAD) / capacity
    e_b = POWER * (1 + overhead) / (SPEED - HEAD) / capacity
    return OPEN_KM + spare_at_edge / (e_f + e_b), e_b


def test_point_of_no_return_matches_closed_form():
    # derived (MODEL.md s8): x* = x_s + E(x_s) / (e_f + e_b), constant consumption per metre;
    # linear in x between profile columns, so the interpolation is exact (1e-9: RK4 rounding).
    energy = np.array([3.0e6, 4.0e6, 12.0e6])
    _, out = _case(energy)
    expected, e_b = _pnr_by_hand(energy)
    np.testing.assert_allclose(out.point_of_no_return, expected, rtol=1e-9)
    # the first two cannot reach the goal (route needs 1.4 + 7.5 MJ above the reserve): their
    # forecast at x* says so, they turn back there and reach the ice edge with exactly their
    # reserve; the third (9.6 MJ above the reserve) forecasts 0.76 MJ to spare and goes on
    assert out.turned_back.tolist() == [True, True, False]
    np.testing.assert_allclose(out.turn_position[:2], expected[:2], rtol=1e-9)
    np.testing.assert_allclose(out.return_energy[:2], e_b * (expected[:2] - OPEN_KM), rtol=1e-9)
    np.testing.assert_allclose(out.return_duration[:2],
                               (expected[:2] - OPEN_KM) / (SPEED - HEAD), rtol=1e-9)
    assert out.success.tolist() == [False, False, True]
    assert not out.lost_under_ice.any()


def test_point_of_no_return_with_overhead_and_cold_capacity():
    # derived: dead-reckoning overhead f and capacity c scale both e_f and e_b by (1 + f)/c.
    energy = np.array([3.0e6, 3.5e6])
    _, out = _case(energy, overhead=0.1, capacity=0.85)
    expected, _ = _pnr_by_hand(energy, overhead=0.1, capacity=0.85)
    np.testing.assert_allclose(out.point_of_no_return, expected, rtol=1e-9)


def test_no_point_of_no_return_when_return_always_possible():
    # derived: with 20 MJ the spare at the goal, 16e6 - 105/1.5*20e3 - 105/1.4*100e3
    # = 7.1 MJ, exceeds the return from the goal (105/1.6*100e3 = 6.56 MJ): no x* on the route.
    _, out = _case(np.array([20e6]))
    assert np.isinf(out.point_of_no_return[0])
    assert out.success[0] and not out.turned_back[0]


def test_continue_policy_loses_the_vehicle_under_ice():
    # derived: 2.2 MJ x 0.8 = 1.76 MJ; the open leg takes 1.4 MJ, the whole ice leg needs
    # 7.5 MJ and the pack (2.2 MJ) empties on the ice leg: without turn-back it is lost there.
    _, out = _case(np.array([2.2e6]), policy="continue")
    assert out.lost_under_ice[0] and not out.turned_back[0] and not out.reaches_recovery[0]
    _, back = _case(np.array([2.2e6]))
    assert back.turned_back[0] and not back.lost_under_ice[0]


def test_recovery_demand_by_hand():
    # derived: loiter 2 h at 30 W = 216 kJ; homing 600 m at 105 W and 1.5 m/s = 42 kJ;
    # 258 kJ in all, 400 s + 7200 s.
    energy, duration = arrival_demand(30.0, 7200.0, POWER, SPEED, 600.0)
    assert energy == pytest.approx(216e3 + 42e3, rel=1e-12)
    assert duration == pytest.approx(7600.0, rel=1e-12)
    # at 0.85 of rated capacity the same demand costs 258/0.85 kJ of rated capacity
    assert arrival_demand(30.0, 7200.0, POWER, SPEED, 600.0, 0.85)[0] == \
        pytest.approx(258e3 / 0.85, rel=1e-12)


def test_recovery_demand_turns_a_success_into_a_breach():
    # derived: margin at the goal of a 12 MJ pack, 9.6e6 - 1.4e6 - 7.5e6 = 0.7 MJ above the
    # reserve; a 1 MJ loiter demand leaves -0.3 MJ: reached recovery, on the reserve.
    _, out = _case(np.array([12e6]), loiter=(50.0, 2.0e4), policy="continue")
    assert out.margin[0] == pytest.approx(0.7e6 - 1.0e6, rel=1e-9)
    assert not out.success[0] and out.reaches_recovery[0]


def test_last_safe_exit():
    # derived by reading the route: open, ice, ice (edge named after leg 1), ice, open
    ice = [False, True, True, True, False]
    named = [False, False, True, False, False, False]
    assert last_safe_exit(ice, named).tolist() == [0, 1, 2, 2, 4]
    with pytest.raises(ValueError, match="6 entries"):
        last_safe_exit(ice, [True])


def test_fault_split_against_exponential_law():
    # P(no fault in t) = exp(-lambda t) (any reliability text); the ice leg of the 12 MJ
    # sample (a success) runs from t_a = 20 km / 1.5 m/s to t_b = t_a + 100 km / 1.4 m/s.
    transit, out = _case(np.array([12.0e6]))
    lam = 0.05 / 86400.0
    split = fault_split(out, [False, True], [lam])
    t_a = OPEN_KM / SPEED
    t_b = t_a + ICE_KM / (SPEED + HEAD)
    assert out.mission_end[0] == pytest.approx(t_b, rel=1e-9)
    assert split.no_fault[0] == pytest.approx(np.exp(-lam * t_b), rel=1e-9)
    assert split.under_ice[0] == pytest.approx(np.exp(-lam * t_a) - np.exp(-lam * t_b),
                                               rel=1e-9)
    assert split.open_water[0] == pytest.approx(1 - np.exp(-lam * t_a), rel=1e-9)


def test_survival_constant_and_weibull():
    scipy_stats = pytest.importorskip("scipy.stats")
    t = np.array([0.0, 3.0, 30.0]) * 86400.0
    lam = np.array([0.01, 0.002]) / 86400.0
    # constant hazards in series: exp(-(l1 + l2) t) (any reliability text)
    np.testing.assert_allclose(reliability.survival_probability(t, lam),
                               np.exp(-lam.sum() * t), rtol=1e-12)
    # Weibull: reference library scipy.stats.weibull_min, scale eta = 1/lambda
    beta = np.array([1.8, 0.7])
    expected = np.prod([scipy_stats.weibull_min.sf(t, c=b, scale=1 / l)
                        for l, b in zip(lam, beta)], axis=0)
    np.testing.assert_allclose(reliability.survival_probability(t, lam, beta), expected,
                               rtol=1e-12)
    assert reliability.survival_probability(t, []).tolist() == [1.0, 1.0, 1.0]
    with pytest.raises(ValueError, match="shapes > 0"):
        reliability.cumulative_hazard(1.0, 1.0, 0.0)
