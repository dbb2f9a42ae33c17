"""Checks of physics.fouling: growth law and its closed-form integral."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

from physics import fouling

DAY = 86400.0


def test_fouling_state_values():
    # derived: phi = 1 - exp(-(c - c_on)/tau); one time constant after onset -> 1 - 1/e.
    onset, tau = 20 * DAY, 40 * DAY
    phi = fouling.fouling_state(np.array([0.0, 20 * DAY, 60 * DAY, 1e12]), onset, tau)
    np.testing.assert_allclose(phi, [0.0, 0.0, 1 - math.exp(-1), 1.0], rtol=1e-14, atol=0)


def test_infinite_and_zero_time_constant():
    # derived limits: tau = inf never fouls; tau = 0 is a step to 1 after the onset.
    assert fouling.fouling_state(1e9, 0.0, np.inf) == 0.0
    np.testing.assert_array_equal(fouling.fouling_state(np.array([5.0, 15.0]), 10.0, 0.0),
                                  [0.0, 1.0])


@pytest.mark.parametrize(
    ("start", "end", "onset", "tau"),
    [
        (0.0, 90 * DAY, 20 * DAY, 40 * DAY),  # straddles the onset
        (30 * DAY, 50 * DAY, 20 * DAY, 40 * DAY),  # entirely after the onset
        (0.0, 10 * DAY, 20 * DAY, 40 * DAY),  # entirely before: zero
        (0.0, 90 * DAY, 0.0, 1e4 * DAY),  # tau >> interval: expm1 branch
    ],
)
def test_integral_matches_quadrature(start, end, onset, tau):
    # Reference: scipy.integrate.quad of fouling_state; tolerance 1e-9 relative plus a tiny
    # absolute floor for the all-zero case (quad's own accuracy is ~1e-12 here).
    expected, _ = quad(lambda c: float(fouling.fouling_state(c, onset, tau)), start, end,
                       points=[onset] if start < onset < end else None, epsabs=1e-10,
                       epsrel=1e-12, limit=200)
    got = fouling.fouling_state_integral(start, end, onset, tau)
    assert got == pytest.approx(expected, rel=1e-9, abs=1e-6)


def test_integral_limits_and_reversal():
    # derived: tau = inf -> 0; tau = 0 -> time after onset; swapping limits flips the sign.
    assert fouling.fouling_state_integral(0.0, 100.0, 10.0, np.inf) == 0.0
    assert fouling.fouling_state_integral(0.0, 100.0, 10.0, 0.0) == 90.0
    forward = fouling.fouling_state_integral(0.0, 100.0, 10.0, 30.0)
    assert fouling.fouling_state_integral(100.0, 0.0, 10.0, 30.0) == -forward


def test_negative_time_constant_raises():
    with pytest.raises(fouling.FoulingInputError, match="time_constant"):
        fouling.fouling_state(1.0, 0.0, -5.0)
    with pytest.raises(ValueError, match="time_constant"):
        fouling.fouling_state_integral(0.0, 1.0, 0.0, -5.0)


def test_broadcast_shapes_agree():
    ends = np.array([10 * DAY, 50 * DAY, 120 * DAY])
    taus = np.array([20 * DAY, np.inf])
    grid = fouling.fouling_state_integral(0.0, ends[:, None], 5 * DAY, taus[None, :])
    assert grid.shape == (3, 2)
    for i, e in enumerate(ends):
        for j, t in enumerate(taus):
            assert grid[i, j] == fouling.fouling_state_integral(0.0, e, 5 * DAY, t)


@pytest.mark.parametrize(
    ("start", "end", "onset", "tau"),
    [
        (0.0, 90 * DAY, 20 * DAY, 40 * DAY),  # straddles the onset
        (30 * DAY, 50 * DAY, 20 * DAY, 40 * DAY),  # entirely after the onset
        (0.0, 10 * DAY, 20 * DAY, 40 * DAY),  # entirely before: zero
        (0.0, 90 * DAY, 0.0, 1e4 * DAY),  # tau >> interval
        (5 * DAY, 8 * DAY, 2 * DAY, 0.0),  # a step at the onset
        (5 * DAY, 8 * DAY, 2 * DAY, np.inf),  # no fouling
    ],
)
def test_growth_gives_the_integral_and_the_state_at_the_end(start, end, onset, tau):
    # Reference: scipy.integrate.quad for the integral (as above) and the closed form
    # phi(c_1) = 1 - exp(-(c_1 - c_on)/tau) past the onset (derived from the growth law),
    # written out here with math; 1e-12: the state is one subtraction of exponentials
    integral, state = fouling.fouling_growth(start, end, onset, tau)
    if tau > 0 and math.isfinite(tau):
        expected, _ = quad(lambda c: max(0.0, 1.0 - math.exp(-(c - onset) / tau)), start, end,
                           points=[onset] if start < onset < end else None, epsabs=1e-10,
                           epsrel=1e-12, limit=200)
        expected_state = 1.0 - math.exp(-(end - onset) / tau) if end > onset else 0.0
    elif tau == 0.0:
        expected, expected_state = max(end, onset) - max(start, onset), float(end > onset)
    else:
        expected, expected_state = 0.0, 0.0
    assert integral == pytest.approx(expected, rel=1e-9, abs=1e-6)
    assert state == pytest.approx(expected_state, rel=1e-12, abs=1e-15)
