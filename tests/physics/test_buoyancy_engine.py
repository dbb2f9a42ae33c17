"""Checks of physics.buoyancy_engine: pump work and dive-cycle energy budgets."""

import math
import warnings

import numpy as np
import pytest

from physics import buoyancy_engine as be
from physics import glide


def test_standard_gravity():
    # 3rd CGPM 1901: g_n = 9.80665 m/s2 exactly.
    assert be.STANDARD_GRAVITY == 9.80665


def test_pumped_volume_and_inverse():
    # derived: rho g dV = 2B; B = 1.5 N, rho = 1025 -> dV = 3 / (1025 * 9.80665) = 2.98451e-4 m3.
    dv = be.pumped_volume(1.5, 1025.0)
    assert dv == pytest.approx(2.98451e-4, rel=1e-5)
    assert be.net_buoyancy_from_volume(dv, 1025.0) == pytest.approx(1.5, rel=1e-14)


def test_pump_work_equals_pressure_times_volume():
    # Hydraulic work against gauge pressure rho g z for volume dV, over efficiency:
    # E = rho g z dV / eta (MODEL sec. 5). Profiling-float scale: 31 mL at ~800 m.
    rho, z, eta = 1030.0, 800.0, 0.22
    dv = 31e-6
    b = be.net_buoyancy_from_volume(dv, rho)
    expected = rho * be.STANDARD_GRAVITY * z * dv / eta
    assert be.pump_energy(b, z, eta) == pytest.approx(expected, rel=1e-12)
    # Swift (Univ. Washington float energy budget, from memory): 31 mL at 800 dbar is about
    # 248 J of hydraulic work and 1.135 kJ drawn (eta ~ 0.22). Tolerance 2 %: recalled
    # figures, and 800 dbar is ~795 m.
    assert be.pump_energy(b, z, 1.0) == pytest.approx(248.0, rel=0.02)
    assert be.pump_energy(b, z, 248.0 / 1135.0) == pytest.approx(1135.0, rel=0.02)


def test_dive_cycle_hand_values():
    # derived: dz = 450 m, w = 0.1, u = 0.3 -> T = 9000 + 2*60 s, s = 2700 m,
    # E = 2*1.5*500/0.3 + 2*40 + 0.5*T = 5000 + 80 + 4560 = 9640 J.
    cyc = be.dive_cycle(0.3, 0.1, 1.5, 50.0, 500.0, 0.3, 0.5,
                        inflection_energy=40.0, inflection_time=60.0)
    assert cyc.time == pytest.approx(9120.0, rel=1e-14)
    assert cyc.horizontal_distance == pytest.approx(2700.0, rel=1e-14)
    assert cyc.energy == pytest.approx(9640.0, rel=1e-14)
    assert cyc.mean_horizontal_speed == pytest.approx(2700.0 / 9120.0, rel=1e-14)
    assert cyc.mean_power == pytest.approx(9640.0 / 9120.0, rel=1e-14)


def test_dive_cycle_infeasible_is_zero_not_nan():
    # Project rule: no cycle (w = 0 or top below bottom) -> zeros, caller flags the failure.
    with warnings.catch_warnings(), np.errstate(all="raise"):
        warnings.simplefilter("error")
        cyc = be.dive_cycle(np.array([0.3, 0.0, 0.3]), np.array([0.1, 0.0, 0.1]), 1.5,
                            np.array([0.0, 0.0, 600.0]), 500.0, 0.3, 0.5)
    for field in cyc:
        assert np.all(np.isfinite(field))
        assert np.all(field[1:] == 0.0)
    assert cyc.energy[0] > 0.0


def test_closed_form_energy_per_distance_matches_dive_cycle():
    # derived: E/s = B tan(g)/eta + P_hotel/u + E_inf tan(g)/z_b must equal the cycle energy
    # over the cycle distance for z_t = 0 and no inflection time, using a real steady glide.
    gamma = np.radians(np.array([18.0, 25.0, 35.0]))[:, None]
    z_b = np.array([200.0, 1000.0])[None, :]
    b, eta, hotel, e_inf = 1.5, 0.25, 0.4, 30.0
    sol = glide.steady_glide(gamma, b, 1027.0, 0.1, 0.1, 0.2)
    cyc = be.dive_cycle(sol.horizontal_speed, sol.vertical_speed, b, 0.0, z_b, eta, hotel,
                        inflection_energy=e_inf)
    closed = be.glider_energy_per_distance(gamma, sol.horizontal_speed, b, z_b, eta, hotel,
                                           inflection_energy=e_inf)
    assert closed.shape == (3, 2)
    np.testing.assert_allclose(closed, cyc.energy / cyc.horizontal_distance, rtol=1e-12)


def test_pump_term_independent_of_depth():
    # derived (MODEL sec. 5): with no hotel load or overhead, E/s = B tan(gamma)/eta at any depth.
    e = be.glider_energy_per_distance(math.radians(25.0), 0.3, 2.0, np.array([100.0, 1000.0]),
                                      0.25, 0.0)
    np.testing.assert_allclose(e, 2.0 * math.tan(math.radians(25.0)) / 0.25, rtol=1e-14)


def test_broadcast_shapes_agree():
    u = np.array([0.2, 0.3])
    z_b = np.array([300.0, 600.0, 900.0])
    grid = be.dive_cycle(u[:, None], 0.1, 1.5, 0.0, z_b[None, :], 0.3, 0.5)
    assert grid.energy.shape == (2, 3)
    for i, ui in enumerate(u):
        for j, zj in enumerate(z_b):
            one = be.dive_cycle(ui, 0.1, 1.5, 0.0, zj, 0.3, 0.5)
            assert grid.energy[i, j] == one.energy
            assert grid.horizontal_distance[i, j] == one.horizontal_distance
