"""Checks of physics.battery: derated usable energy and the arrival reserve."""

import numpy as np
import pytest

from physics import battery

DAY = 86400.0


def test_usable_energy_hand_value():
    # derived: 10 MJ x 0.9 cold x (1 - 3 %/30 d x 60 d) x 0.95 = 10e6*0.9*0.94*0.95 = 8.037 MJ.
    # Fade of a few %/month is typical of rechargeable Li-ion (from memory).
    fade = 0.03 / (30 * DAY)
    got = battery.usable_energy(10e6, cold_derating=0.9, fade_rate=fade, elapsed=60 * DAY,
                                usable_fraction=0.95)
    assert got == pytest.approx(8.037e6, rel=1e-12)


def test_usable_energy_clipped_at_zero():
    # derived: fade beyond 100 % leaves nothing, never a negative energy.
    got = battery.usable_energy(1e6, fade_rate=1e-6, elapsed=np.array([0.0, 5e5, 2e6]))
    np.testing.assert_allclose(got, [1e6, 0.5e6, 0.0], rtol=1e-14)


def test_defaults_are_nominal():
    # derived: no derating, fade or cut-off -> nominal energy.
    assert battery.usable_energy(3.6e6) == 3.6e6


def test_energy_above_reserve():
    # derived: 20 % reserve (policy range 10-30 %, common practice, no source) leaves 80 %.
    assert battery.energy_above_reserve(5e6, 0.2) == pytest.approx(4e6, rel=1e-15)


def test_broadcast_shapes_agree():
    nominal = np.array([1e6, 2e6])
    elapsed = np.array([0.0, 10 * DAY, 20 * DAY])
    grid = battery.usable_energy(nominal[:, None], fade_rate=1e-8, elapsed=elapsed[None, :])
    assert grid.shape == (2, 3)
    for i, e in enumerate(nominal):
        for j, t in enumerate(elapsed):
            assert grid[i, j] == battery.usable_energy(e, fade_rate=1e-8, elapsed=t)
