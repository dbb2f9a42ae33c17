"""Along/across-track components of a current (physics.currents.track_components)."""
import math

import numpy as np
import pytest

from physics.currents import track_components


@pytest.mark.parametrize("bearing, east, north, along, across", [
    # derived by hand: track due north, current due east -> all across, to starboard (+)
    (0.0, 0.3, 0.0, 0.0, 0.3),
    # derived by hand: track due east (090), current due north -> across to port (-)
    (90.0, 0.0, 0.2, 0.0, -0.2),
    # derived by hand: track 045, current 0.1 m/s toward 045 -> all along
    (45.0, 0.1 / math.sqrt(2), 0.1 / math.sqrt(2), 0.1, 0.0),
    # derived by hand: track 225 (SW), current toward 045 -> head current, no across
    (225.0, 0.1 / math.sqrt(2), 0.1 / math.sqrt(2), -0.1, 0.0),
    # derived by hand: track 030, v_E = 0.2, v_N = -0.1:
    # c_a = -0.1 cos30 + 0.2 sin30 = -0.0866 + 0.1 = 0.01340; c_x = 0.1 sin30 + 0.2 cos30 = 0.22321
    (30.0, 0.2, -0.1, 0.0133975, 0.2232051),
])
def test_components_match_hand_calculation(bearing, east, north, along, across):
    got = track_components(east, north, bearing)
    # tolerance: the hand values above are printed to 7 digits
    assert got.along == pytest.approx(along, abs=1e-7)
    assert got.across == pytest.approx(across, abs=1e-7)


def test_rotation_keeps_the_speed_and_broadcasts():
    rng = np.random.default_rng(7)
    e, n = rng.normal(size=(2, 50))
    b = rng.uniform(0, 360, size=(4, 1))
    got = track_components(e, n, b)
    assert got.along.shape == (4, 50)
    # derived: a rotation of axes keeps the vector's length
    np.testing.assert_allclose(got.along**2 + got.across**2, np.broadcast_to(e**2 + n**2, (4, 50)),
                               rtol=1e-12)
