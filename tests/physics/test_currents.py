"""Checks of physics.currents: crab geometry and the no-headway failure state."""

import math
import warnings

import numpy as np
import pytest

from physics import currents


def test_three_four_five_triangle():
    # derived: velocity triangle u = 5, c_x = 3 -> along-track 4 (3-4-5), crab asin(3/5).
    track = currents.ground_track(5.0, 0.0, 3.0)
    assert track.ground_speed == pytest.approx(4.0, rel=1e-15)
    assert track.crab_angle == pytest.approx(math.asin(0.6), rel=1e-15)
    assert bool(track.headway)


def test_along_track_current_adds():
    # derived: following current adds, head current subtracts; cross sign does not matter.
    track = currents.ground_track(5.0, np.array([0.5, -1.0]), np.array([-3.0, 3.0]))
    np.testing.assert_allclose(track.ground_speed, [4.5, 3.0], rtol=1e-15)


def test_no_headway_is_a_state_not_nan():
    # Project rule: u <= |c_x| or u_g <= 0 -> no headway, speed 0.0, crab pi/2, no NaN/warning.
    u = np.array([0.3, 0.3, 0.3, 0.0, 0.3])
    along = np.array([0.0, -0.3, -0.31, 0.0, 0.0])
    across = np.array([0.3, 0.0, 0.0, 0.0, 0.5])
    with warnings.catch_warnings(), np.errstate(all="raise"):
        warnings.simplefilter("error")
        track = currents.ground_track(u, along, across)
    assert not np.any(track.headway)
    np.testing.assert_array_equal(track.ground_speed, 0.0)
    np.testing.assert_array_equal(track.crab_angle, np.pi / 2)
    assert track.headway.dtype == bool


def test_broadcast_shapes_agree():
    u = np.array([0.25, 0.5, 1.0])
    cross = np.array([0.0, 0.2, 0.4])
    grid = currents.ground_track(u[:, None], 0.05, cross[None, :])
    assert grid.ground_speed.shape == (3, 3)
    for i, ui in enumerate(u):
        for j, cj in enumerate(cross):
            one = currents.ground_track(ui, 0.05, cj)
            assert grid.ground_speed[i, j] == one.ground_speed
            assert grid.headway[i, j] == one.headway
