"""Checks of physics.lift against lifting-line theory and Helmbold's formula."""

import math

import numpy as np
import pytest

from physics import lift


def test_lifting_line_elliptic_wing():
    # Prandtl lifting line, a0 = 2 pi, e = 1: a = 2 pi AR / (AR + 2) (Anderson, Fundamentals
    # of Aerodynamics, ch. 5). Tolerance: float roundoff only (exact algebraic identity).
    ar = np.array([2.0, 4.0, 6.0, 10.0])
    np.testing.assert_allclose(lift.lift_curve_slope(ar), 2 * np.pi * ar / (ar + 2), rtol=1e-14)


def test_lifting_line_with_efficiency_and_section_slope():
    # derived: a0 = 6.0, e = 0.8, AR = 5 -> 6 / (1 + 6 / (4 pi)) = 4.06101 /rad.
    got = lift.lift_curve_slope(5.0, span_efficiency=0.8, section_slope=6.0)
    assert got == pytest.approx(6.0 / (1.0 + 6.0 / (4.0 * math.pi)), rel=1e-14)
    assert got == pytest.approx(4.06101, rel=1e-5)


def test_helmbold_ar6():
    # Helmbold 1942 low-aspect-ratio formula, AR = 6 -> 4.528 /rad (from memory).
    # Tolerance 1e-3 /rad: value recalled to 3 decimals.
    assert lift.lift_curve_slope_low_aspect(6.0) == pytest.approx(4.528, abs=1e-3)


def test_helmbold_limits():
    # Slender-wing theory (R.T. Jones 1946): a -> pi AR / 2 as AR -> 0; 2 pi as AR -> inf.
    assert lift.lift_curve_slope_low_aspect(1e-4) == pytest.approx(math.pi * 1e-4 / 2, rel=1e-6)
    assert lift.lift_curve_slope_low_aspect(1e6) == pytest.approx(2 * math.pi, rel=1e-5)


def test_induced_drag_factor_hand_value():
    # derived: K = 1 / (pi e AR), AR = 8, e = 0.8 -> 1 / (6.4 pi) = 0.0497359.
    assert lift.induced_drag_factor(8.0, 0.8) == pytest.approx(0.0497359, rel=1e-6)


def test_fouled_induced_drag_factor():
    # derived: K / (1 - delta)^2; delta = 0.5 -> 4 K; delta >= 1 clipped to 0.999 -> 1e6 K.
    k = 0.05
    got = lift.fouled_induced_drag_factor(k, np.array([0.0, 0.5, 1.0, 3.0, -0.1]))
    np.testing.assert_allclose(got, [k, 4 * k, k / 0.001**2, k / 0.001**2, k], rtol=1e-12)
    assert np.all(np.isfinite(got))


def test_broadcast_shapes_agree():
    ar = np.array([2.0, 6.0, 12.0])
    e = np.array([0.7, 0.9])
    grid = lift.lift_curve_slope(ar[:, None], span_efficiency=e[None, :])
    assert grid.shape == (3, 2)
    assert grid[1, 0] == lift.lift_curve_slope(6.0, span_efficiency=0.7)
    k = lift.induced_drag_factor(ar[:, None], e[None, :])
    np.testing.assert_array_equal(k[:, 1], lift.induced_drag_factor(ar, 0.9))
