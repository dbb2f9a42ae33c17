"""Checks of physics.propulsion: drag power and the optimum-speed cost of transport."""

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from physics import propulsion

RHO, CD, AREA, ETA, HOTEL = 1026.0, 0.0035, 2.4, 0.4, 25.0  # invented small AUV, wetted area


def test_propulsion_power_hand_value():
    # derived: D = 0.5*1026*1.5^2*0.0035*2.4 = 9.69570 N; P = D U / eta = 36.3589 W.
    assert propulsion.propulsion_power(RHO, 1.5, CD, AREA, ETA) == pytest.approx(36.3589, rel=1e-5)


def test_optimal_speed_halves_hotel_and_minimises_cost():
    # derived: dE/dU = 0 at U* = (eta P_h / (rho C_D A))^(1/3), where propulsion power =
    # P_hotel / 2 (published treatment: Phillips et al. 2017, Ocean Eng.). Cross-checked with
    # scipy.optimize.minimize_scalar; tolerance 1e-5 relative on U* (xatol 1e-10 on a flat
    # minimum limits the optimiser to ~sqrt(eps) in U).
    u_star = propulsion.optimal_speed(RHO, CD, AREA, ETA, HOTEL)
    assert propulsion.propulsion_power(RHO, u_star, CD, AREA, ETA) == pytest.approx(HOTEL / 2,
                                                                                   rel=1e-12)
    res = minimize_scalar(
        lambda u: float(propulsion.propeller_energy_per_distance(RHO, u, CD, AREA, ETA, HOTEL)),
        bounds=(0.05, 5.0), method="bounded", options={"xatol": 1e-10},
    )
    assert res.x == pytest.approx(float(u_star), rel=1e-5)
    # derived: at U* the cost of transport is 1.5 P_hotel / U*.
    cost = propulsion.propeller_energy_per_distance(RHO, u_star, CD, AREA, ETA, HOTEL)
    assert cost == pytest.approx(1.5 * HOTEL / u_star, rel=1e-12)


def test_energy_per_distance_at_rest_is_inf_not_nan():
    # Project rule: no NaN; standing still makes no distance (infinite cost).
    got = propulsion.propeller_energy_per_distance(RHO, np.array([0.0, 1.0]), CD, AREA, ETA, 0.0)
    assert got[0] == np.inf and np.isfinite(got[1])


def test_broadcast_shapes_agree():
    u = np.array([0.5, 1.0, 1.5])
    hotel = np.array([10.0, 40.0])
    grid = propulsion.propeller_energy_per_distance(RHO, u[:, None], CD, AREA, ETA, hotel[None, :])
    assert grid.shape == (3, 2)
    for i, ui in enumerate(u):
        row = propulsion.propeller_energy_per_distance(RHO, ui, CD, AREA, ETA, hotel)
        np.testing.assert_array_equal(grid[i], row)
        for j, hj in enumerate(hotel):
            assert grid[i, j] == propulsion.propeller_energy_per_distance(RHO, ui, CD, AREA,
                                                                           ETA, hj)
    us = propulsion.optimal_speed(RHO, CD, AREA, ETA, hotel)
    # derived: U* scales with P_hotel^(1/3).
    assert us[1] / us[0] == pytest.approx(4.0 ** (1 / 3), rel=1e-14)


def test_constant_efficiency_curve_returns_the_reference_exactly():
    # derived: eta_ref * T(U) / T(U_ref) with T constant is eta_ref, bit for bit
    eta = np.array([0.31, 0.38, 0.44])
    got = propulsion.efficiency_at_speed(np.array([0.8, 1.4, 2.2]), eta, 1.4,
                                         [0.5, 2.5], [0.37, 0.37])
    np.testing.assert_array_equal(got, eta)


def test_efficiency_curve_interpolates_and_scales():
    # derived: table 0.30 at 1.0 m/s, 0.40 at 2.0 m/s; reference 0.38 at 1.5 m/s (T = 0.35);
    # at 1.25 m/s T = 0.325 -> 0.38 * 0.325 / 0.35
    got = propulsion.efficiency_at_speed(1.25, 0.38, 1.5, [1.0, 2.0], [0.30, 0.40])
    assert got == pytest.approx(0.38 * 0.325 / 0.35, rel=1e-12)
    with pytest.raises(ValueError, match=r"\(0, 1\]"):
        propulsion.efficiency_at_speed(1.0, 0.4, 1.0, [1.0, 2.0], [0.3, 1.2])


def test_speed_to_hold_ground_speed_inverts_the_crab_triangle():
    # derived: U = sqrt((g - c_a)^2 + c_x^2) makes u_g = sqrt(U^2 - c_x^2) + c_a = g
    # (MODEL.md s6); the result is checked through physics.currents.ground_track.
    from physics import currents
    c_a = np.array([-0.4, -0.35, 0.3, -0.9])
    c_x = np.array([0.2, 0.0, 0.1, 0.3])
    u = propulsion.speed_to_hold_ground_speed(1.2, 1.0, c_a, c_x, 1.8)
    g = currents.ground_track(u, c_a, c_x).ground_speed
    np.testing.assert_allclose(g[:2], 1.0, rtol=1e-12)  # sped up to hold 1 m/s
    assert u[2] == 1.2 and g[2] > 1.0  # a following current: the setpoint suffices
    assert u[3] == 1.8  # capped at the maximum speed
    assert u[0] == pytest.approx(np.hypot(1.4, 0.2), rel=1e-12)
