"""Checks of physics.glide: steady-glide force balance, branches, feasibility and the polar."""

import math
import warnings

import numpy as np
import pytest

from physics import glide

# An invented glider: B = 1.5 N, S = 0.1 m2, C_D0 = 0.1, K = 0.2 (gamma_min ~ 15.8 deg).
B, RHO, AREA, CD0, K = 1.5, 1027.0, 0.1, 0.1, 0.2


def test_power_balance_buoyancy_equals_drag():
    # Leonard & Graver 2001 force balance; derived invariant: buoyancy power B w equals drag
    # power D V with D = 1/2 rho V^2 C_D S. Lift balance 1/2 rho V^2 C_L S = B cos(gamma).
    gamma = np.radians(np.linspace(16.0, 45.0, 30))
    for branch in ("efficient", "slow"):
        sol = glide.steady_glide(gamma, B, RHO, AREA, CD0, K, branch=branch)
        assert np.all(sol.state == glide.GLIDE_OK)
        dyn = 0.5 * RHO * sol.speed**2 * AREA
        np.testing.assert_allclose(B * sol.vertical_speed, dyn * sol.drag_coefficient * sol.speed,
                                   rtol=1e-12)
        np.testing.assert_allclose(dyn * sol.lift_coefficient, B * np.cos(gamma), rtol=1e-12)
        np.testing.assert_allclose(sol.drag_coefficient / sol.lift_coefficient, np.tan(gamma),
                                   rtol=1e-12)
        np.testing.assert_allclose(np.hypot(sol.horizontal_speed, sol.vertical_speed), sol.speed,
                                   rtol=1e-14)


def test_efficient_branch_faster_than_slow_branch():
    # Graver 2005 ch. 2: for one angle the smaller C_L (efficient) state flies faster.
    gamma = np.radians([18.0, 25.0, 35.0])
    fast = glide.steady_glide(gamma, B, RHO, AREA, CD0, K)
    slow = glide.steady_glide(gamma, B, RHO, AREA, CD0, K, branch="slow")
    assert np.all(fast.speed > slow.speed)
    assert np.all(fast.lift_coefficient < slow.lift_coefficient)
    # derived: Vieta, product of the two roots = C_D0 / K.
    np.testing.assert_allclose(fast.lift_coefficient * slow.lift_coefficient, CD0 / K, rtol=1e-12)


def test_minimum_glide_angle_flips_state_exactly():
    # Graver 2005: tan(gamma_min) = 2 sqrt(K C_D0); derived: both roots meet at sqrt(C_D0/K).
    gmin = glide.minimum_glide_angle(CD0, K)
    assert math.tan(gmin) == pytest.approx(2 * math.sqrt(K * CD0), rel=1e-14)
    below = glide.steady_glide(gmin * (1 - 1e-9), B, RHO, AREA, CD0, K)
    above = glide.steady_glide(gmin * (1 + 1e-9), B, RHO, AREA, CD0, K)
    assert below.state == glide.GLIDE_BELOW_MINIMUM_ANGLE
    assert above.state == glide.GLIDE_OK
    assert above.lift_coefficient == pytest.approx(math.sqrt(CD0 / K), rel=1e-3)


def test_stall_state():
    # derived: at 20 deg the slow root is C_L = 1.4826 > 1.0 -> stall; efficient root 0.337 ok.
    slow = glide.steady_glide(np.radians(20.0), B, RHO, AREA, CD0, K, branch="slow",
                              max_lift_coefficient=1.0)
    fast = glide.steady_glide(np.radians(20.0), B, RHO, AREA, CD0, K, max_lift_coefficient=1.0)
    assert slow.state == glide.GLIDE_STALL and slow.speed == 0.0
    assert slow.lift_coefficient == 0.0 and slow.drag_coefficient == 0.0
    assert fast.state == glide.GLIDE_OK


def test_vertical_dive_terminal_velocity():
    # derived: gamma = pi/2 -> no lift, drag = B -> V = sqrt(2 B / (rho S C_D0)).
    sol = glide.steady_glide(np.pi / 2, B, RHO, AREA, CD0, K)
    assert sol.state == glide.GLIDE_OK
    assert sol.speed == pytest.approx(math.sqrt(2 * B / (RHO * AREA * CD0)), rel=1e-9)


def test_no_induced_drag_limit():
    # derived: K = 0 -> C_L = C_D0 / tan(gamma); the slow root does not exist (stall).
    gamma = np.radians(10.0)
    fast = glide.steady_glide(gamma, B, RHO, AREA, CD0, 0.0)
    slow = glide.steady_glide(gamma, B, RHO, AREA, CD0, 0.0, branch="slow")
    assert fast.lift_coefficient == pytest.approx(CD0 / math.tan(gamma), rel=1e-14)
    assert slow.state == glide.GLIDE_STALL and slow.speed == 0.0


def test_infeasible_states_never_nan_or_warn():
    # Named failure modes instead of NaN (project rule); no floating-point event at all.
    gamma = np.array([0.0, 0.05, 0.3, 0.6, np.pi / 2])
    with warnings.catch_warnings(), np.errstate(all="raise"):
        warnings.simplefilter("error")
        for branch in ("efficient", "slow"):
            for k in (0.0, K):
                sol = glide.steady_glide(gamma, B, RHO, AREA, CD0, k, branch=branch,
                                         max_lift_coefficient=1.2)
                for field in sol[:-1]:
                    assert np.all(np.isfinite(field))
                bad = sol.state != glide.GLIDE_OK
                assert np.all(sol.speed[bad] == 0.0)
                assert np.all(sol.lift_coefficient[bad] == 0.0)
    assert sol.state.dtype == np.int8


def test_broadcast_shapes_agree():
    gamma = np.radians([10.0, 20.0, 30.0])
    buoyancy = np.array([1.0, 2.5])
    grid = glide.steady_glide(gamma[:, None], buoyancy[None, :], RHO, AREA, CD0, K)
    assert grid.speed.shape == (3, 2) and grid.state.shape == (3, 2)
    for i, g in enumerate(gamma):
        row = glide.steady_glide(g, buoyancy, RHO, AREA, CD0, K)
        np.testing.assert_array_equal(grid.horizontal_speed[i], row.horizontal_speed)
        for j, b in enumerate(buoyancy):
            one = glide.steady_glide(g, b, RHO, AREA, CD0, K)
            assert grid.vertical_speed[i, j] == one.vertical_speed
            assert grid.state[i, j] == one.state
    # derived: V scales with sqrt(B) at fixed angle.
    np.testing.assert_allclose(grid.speed[1:, 1] / grid.speed[1:, 0], math.sqrt(2.5), rtol=1e-12)


def test_invalid_inputs_raise():
    with pytest.raises(glide.GlideInputError, match="zero_lift_drag"):
        glide.steady_glide(0.3, B, RHO, AREA, 0.0, K)
    with pytest.raises(glide.GlideInputError, match="glide_angle"):
        glide.steady_glide(-0.3, B, RHO, AREA, CD0, K)
    with pytest.raises(glide.GlideInputError, match="branch"):
        glide.steady_glide(0.3, B, RHO, AREA, CD0, K, branch="fast")
    with pytest.raises(glide.GlideInputError, match="net_buoyancy"):
        glide.glide_polar(-1.0, RHO, AREA, CD0, K)
    assert issubclass(glide.GlideInputError, ValueError)


def test_glide_polar_consistent_with_steady_glide():
    # derived: each polar point is a steady glide at its own angle; points with
    # C_L <= sqrt(C_D0/K) lie on the efficient branch, the others on the slow branch.
    polar = glide.glide_polar(B, RHO, AREA, CD0, K, max_lift_coefficient=1.2, n=60)
    assert polar.lift_coefficient.shape == (60,)
    assert polar.lift_coefficient[-1] == pytest.approx(1.2)
    eff = polar.lift_coefficient <= math.sqrt(CD0 / K)
    for mask, branch in ((eff, "efficient"), (~eff, "slow")):
        sol = glide.steady_glide(polar.glide_angle[mask], B, RHO, AREA, CD0, K, branch=branch)
        np.testing.assert_allclose(sol.horizontal_speed, polar.horizontal_speed[mask], rtol=1e-9)
        np.testing.assert_allclose(sol.vertical_speed, polar.vertical_speed[mask], rtol=1e-9)
    # Graver 2005: the flattest glide on the polar is gamma_min.
    assert polar.glide_angle.min() >= glide.minimum_glide_angle(CD0, K) - 1e-15
    assert polar.glide_angle.min() == pytest.approx(glide.minimum_glide_angle(CD0, K), rel=1e-3)


def test_glide_polar_broadcasts_parameters():
    polar = glide.glide_polar(np.array([1.0, 2.0]), RHO, AREA, CD0, K, n=10)
    assert polar.horizontal_speed.shape == (2, 10)
    assert polar.lift_coefficient.shape == (2, 10)
    np.testing.assert_allclose(polar.horizontal_speed[1] / polar.horizontal_speed[0],
                               math.sqrt(2.0), rtol=1e-12)
