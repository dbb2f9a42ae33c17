"""Checks of physics.drag against the ITTC-1957 line, Hoerner's form factor and geometry."""

import math
import warnings

import numpy as np
import pytest

from physics import drag


def test_ittc1957_at_1e7_is_exactly_0p003():
    # 8th ITTC 1957: log10(1e7) - 2 = 5, 0.075 / 25 = 0.003 exactly. Tolerance: float roundoff.
    assert drag.ittc1957_friction(1e7) == pytest.approx(3.000e-3, rel=1e-12)


def test_ittc1957_morrall_worked_example():
    # Morrall 1970, NPL Ship Report 142, worked example: Re = 5.62e6 -> C_F = 3.325e-3.
    # Tolerance 1e-6: Re is quoted to 3 significant figures (+/-0.005e6 moves C_F by 5e-7).
    assert drag.ittc1957_friction(5.62e6) == pytest.approx(3.325e-3, abs=1e-6)


def test_ittc1957_at_rest_is_zero_without_warning():
    # derived: zero speed -> zero friction; must not warn (divide by log10(0)).
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert drag.ittc1957_friction(0.0) == 0.0


@pytest.mark.parametrize(
    ("slenderness", "expected"),
    [
        (10.0, 1.0544),  # derived from Hoerner 1965, Fluid-Dynamic Drag ch. 6 formula
        (7.0, 1.101),  # derived from Hoerner 1965 formula
        (5.0, 1.190),  # derived from Hoerner 1965 formula
    ],
)
def test_hoerner_form_factor(slenderness, expected):
    # Tolerance 5e-4: the expected factors are rounded to 3-4 decimals.
    assert drag.hoerner_form_factor(slenderness, 1.0) == pytest.approx(expected, abs=5e-4)


def test_spheroid_area_sphere_limit():
    # Standard geometry: sphere area 4 pi r^2; also continuous across l = d (prolate/oblate).
    r = 0.7
    assert drag.spheroid_wetted_area(2 * r, 2 * r) == pytest.approx(4 * math.pi * r**2, rel=1e-12)
    near = drag.spheroid_wetted_area(2 * r * (1 + 1e-7), 2 * r)
    assert near == pytest.approx(4 * math.pi * r**2, rel=1e-6)
    near = drag.spheroid_wetted_area(2 * r, 2 * r * (1 + 1e-7))
    assert near == pytest.approx(4 * math.pi * r**2, rel=1e-6)


def test_spheroid_area_closed_form_2_to_1():
    # derived: a = 2, b = 1 -> e = sqrt(3)/2, arcsin(e) = pi/3,
    # S = 2 pi (1 + (2/e)(pi/3)) = 2 pi + 8 pi^2 / (3 sqrt 3) = 21.4784353 m2.
    assert drag.spheroid_wetted_area(4.0, 2.0) == pytest.approx(21.4784353, rel=1e-8)


def test_spheroid_area_slender_and_flat_limits():
    # derived: e -> 1 prolate, S -> pi^2 a b (arcsin 1 = pi/2); l/d = 1000 leaves ~1e-3.
    assert drag.spheroid_wetted_area(2000.0, 2.0) == pytest.approx(math.pi**2 * 1000.0, rel=2e-3)
    # derived: thin oblate disk of radius 1 -> both faces, 2 pi a^2.
    assert drag.spheroid_wetted_area(1e-9, 2.0) == pytest.approx(2 * math.pi, rel=1e-6)


def test_hull_drag_coefficient_composition():
    # derived: U = 5 m/s, L = 2 m, nu = 1e-6 -> Re = 1e7 exactly, C_F = 0.003 (8th ITTC
    # 1957); l/d = 10 -> 1.05443 (Hoerner 1965); appendages x1.2.
    cd = drag.hull_drag_coefficient(5.0, 2.0, 0.2, 1e-6, appendage_factor=1.2)
    assert cd == pytest.approx(0.003 * 1.054434 * 1.2, rel=1e-6)


def test_drag_force_hand_value():
    # derived: 0.5 * 1025 * 1.5^2 * 0.004 * 2.0 = 9.225 N.
    assert drag.drag_force(1025.0, 1.5, 0.004, 2.0) == pytest.approx(9.225, rel=1e-12)


def test_fouling_multiplier_clipped():
    # derived: 1 + Delta_D phi; phi outside [0, 1] is clipped.
    got = drag.fouling_drag_multiplier(np.array([-0.2, 0.0, 0.5, 1.0, 1.5]), 0.4)
    np.testing.assert_allclose(got, [1.0, 1.0, 1.2, 1.4, 1.4], rtol=1e-14)


@pytest.mark.parametrize(
    ("length_over_roughness", "expected"),
    [
        (1e3, 8.44774e-3),  # derived: hand evaluation of Schlichting's rough-plate law, 6.75^-2.5
        (1e4, 4.93385e-3),  # derived: hand evaluation of Schlichting's rough-plate law, 8.37^-2.5
    ],
)
def test_rough_friction_values(length_over_roughness, expected):
    # Schlichting, Boundary-Layer Theory, fully rough plate C_F = (1.89 + 1.62 log10 L/k)^-2.5.
    # Tolerance 1e-5 relative: expected values written to 6 significant figures.
    got = drag.rough_friction(2.0, 2.0 / length_over_roughness)
    assert got == pytest.approx(expected, rel=1e-5)


def test_roughness_reynolds_number_hand_value():
    # derived: u_tau = 2 sqrt(0.004/2) = 0.0894 m/s; k+ = 0.0894 * 1e-3 / 1e-6 = 89.4427.
    got = drag.roughness_reynolds_number(2.0, 1e-3, 1e-6, 0.004)
    assert got == pytest.approx(89.4427191, rel=1e-8)


def test_friction_with_roughness_zero_is_exactly_ittc():
    # 8th ITTC 1957 line; smooth surface must reproduce it bit for bit.
    u = np.array([0.3, 1.0, 2.0])
    nu = 1.3e-6
    smooth = drag.ittc1957_friction(drag.reynolds_number(u, 2.0, nu))
    got = drag.friction_with_roughness(u, 2.0, nu, 0.0)
    np.testing.assert_array_equal(got, smooth)


def test_slime_hydraulically_smooth_at_glider_speed():
    # derived (MODEL notes sec. 2): U = 0.3 m/s, L = 2 m, nu = 1.8e-6, k_s = 300 um
    # (heavy slime, Schultz 2007 table, from memory) gives k+ ~ 2.8 < 5: no friction increase.
    smooth = drag.ittc1957_friction(drag.reynolds_number(0.3, 2.0, 1.8e-6))
    assert drag.friction_with_roughness(0.3, 2.0, 1.8e-6, 300e-6) == smooth


def test_fully_rough_regime_uses_schlichting():
    # Heavy calcareous fouling k_s = 10 mm (Schultz 2007 table, from memory) at 1.5 m/s on a
    # 2 m hull: k+ >> 70, so C_F is the fully-rough law (derived hand value 1/(1.89+1.62*2.3)^2.5).
    nu = 1.2e-6
    got = drag.friction_with_roughness(1.5, 2.0, nu, 10e-3)
    k_plus = drag.roughness_reynolds_number(
        1.5, 10e-3, nu, drag.ittc1957_friction(drag.reynolds_number(1.5, 2.0, nu))
    )
    assert k_plus > 70.0
    expected = (1.89 + 1.62 * math.log10(200.0)) ** -2.5
    assert got == pytest.approx(expected, rel=1e-12)


def test_friction_with_roughness_monotone_and_never_below_smooth():
    # derived: the blend must be continuous, non-decreasing in k_s and >= smooth.
    ks = np.geomspace(1e-7, 3e-2, 400)
    for speed in (0.3, 1.0, 2.5):
        cf = drag.friction_with_roughness(speed, 2.0, 1.2e-6, ks)
        smooth = drag.ittc1957_friction(drag.reynolds_number(speed, 2.0, 1.2e-6))
        assert np.all(cf >= smooth)
        assert np.all(np.diff(cf) >= -1e-15)
        assert np.max(np.abs(np.diff(cf))) < 0.05 * cf.max()


def test_broadcast_shapes_agree():
    speeds = np.array([0.5, 1.0, 1.5, 2.0])
    roughness = np.array([0.0, 1e-4, 1e-3])
    grid = drag.friction_with_roughness(speeds[:, None], 2.0, 1.2e-6, roughness[None, :])
    assert grid.shape == (4, 3)
    for i, u in enumerate(speeds):
        row = drag.friction_with_roughness(u, 2.0, 1.2e-6, roughness)
        np.testing.assert_array_equal(grid[i], row)
        for j, k in enumerate(roughness):
            assert grid[i, j] == drag.friction_with_roughness(u, 2.0, 1.2e-6, k)
    cd = drag.hull_drag_coefficient(speeds[:, None], np.array([[1.5, 2.0, 3.0]]), 0.2, 1.2e-6)
    assert cd.shape == (4, 3)
    assert cd[1, 2] == drag.hull_drag_coefficient(1.0, 3.0, 0.2, 1.2e-6)
