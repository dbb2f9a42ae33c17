"""Checks of physics.seawater against TEOS-10 reference values and published viscosity."""

import warnings

import gsw
import numpy as np
import pytest

from physics import seawater


# TEOS-10 check values: computed with gsw 3.6.23 from SP = 35, p = 0 dbar, no position;
# Tupper, Introduction to Naval Architecture, Table 5.1 agrees within 0.1 kg/m3.
# These verify that our wrapper composes SR_from_SP -> CT_from_t -> rho correctly.
# Tolerance 0.01 kg/m3: the reference values are quoted to two decimals.
@pytest.mark.parametrize(
    ("temperature", "expected"),
    [
        (0.0, 1028.11),  # gsw 3.6.23 / Tupper Table 5.1
        (10.0, 1026.96),  # gsw 3.6.23 / Tupper Table 5.1
        (15.0, 1025.98),  # gsw 3.6.23 / Tupper Table 5.1
        (20.0, 1024.77),  # gsw 3.6.23 / Tupper Table 5.1
    ],
)
def test_density_teos10_surface(temperature, expected):
    assert seawater.density(35.0, temperature, 0.0) == pytest.approx(expected, abs=0.01)


def test_density_teos10_at_1000_dbar():
    # gsw 3.6.23, SP = 35, t = 0 degC, p = 1000 dbar: about 1032.8 kg/m3 (quoted to 0.1,
    # hence the 0.05 tolerance). Compressibility adds ~4.7 kg/m3 over the surface value.
    assert seawater.density(35.0, 0.0, 1000.0) == pytest.approx(1032.8, abs=0.05)


def test_density_with_position_uses_absolute_salinity():
    # Reference library: gsw's own composition at a North Atlantic point. The composition
    # anomaly there is small, so the result must also be within 0.05 kg/m3 of the SR route.
    sp, t, p, lon, lat = 35.0, 5.0, 500.0, -30.0, 45.0
    sa = gsw.SA_from_SP(sp, p, lon, lat)
    expected = gsw.rho(sa, gsw.CT_from_t(sa, t, p), p)
    got = seawater.density(sp, t, p, longitude=lon, latitude=lat)
    assert got == pytest.approx(expected, rel=1e-12)
    assert abs(got - seawater.density(sp, t, p)) < 0.05


# ITTC Recommended Procedure 7.5-02-01-03 (2011), fresh water and seawater properties,
# seawater (S = 35.16504 g/kg) table; values from memory. Tolerance 2 %: the Sharqawy fit
# claims +/-1.5 % and the recalled table values carry rounding.
@pytest.mark.parametrize(
    ("temperature", "expected"),
    [
        (0.0, 1.83e-6),  # ITTC 7.5-02-01-03 seawater table, from memory
        (15.0, 1.189e-6),  # ITTC 7.5-02-01-03 seawater table, from memory
        (20.0, 1.05e-6),  # ITTC 7.5-02-01-03 seawater table, from memory
    ],
)
def test_kinematic_viscosity_ittc_table(temperature, expected):
    rho = seawater.density(35.0, temperature, 0.0)
    nu = seawater.kinematic_viscosity(temperature, 35.0, rho)
    assert nu == pytest.approx(expected, rel=0.02)


def test_pure_water_viscosity_20c():
    # IAPWS 2008 formulation for the viscosity of ordinary water: 1.0016 mPa s at 20 degC,
    # 0.1 MPa (from memory). Tolerance 0.5 %: well inside the fit's stated 1.5 %.
    assert seawater.dynamic_viscosity(20.0, 0.0) == pytest.approx(1.0016e-3, rel=0.005)


def test_salt_raises_viscosity():
    # Common practice, no source: seawater is ~5-10 % more viscous than fresh water.
    ratio = seawater.dynamic_viscosity(10.0, 35.0) / seawater.dynamic_viscosity(10.0, 0.0)
    assert 1.03 < ratio < 1.12


def test_range_warning_emitted_once_per_process():
    seawater.reset_range_warning()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        first = seawater.dynamic_viscosity(np.array([-1.8, 5.0]), 34.0)
        seawater.dynamic_viscosity(-1.8, 34.0)
    hits = [w for w in caught if issubclass(w.category, seawater.SeawaterRangeWarning)]
    assert len(hits) == 1
    assert issubclass(seawater.SeawaterRangeWarning, UserWarning)
    # Extrapolated, still finite and above the 0 degC value (viscosity rises as it cools).
    assert np.all(np.isfinite(first))
    assert first[0] > seawater.dynamic_viscosity(0.0, 34.0)
    seawater.reset_range_warning()


def test_no_warning_inside_range():
    seawater.reset_range_warning()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        seawater.dynamic_viscosity(np.linspace(0.0, 30.0, 7), 35.0)


def test_broadcast_shapes_agree():
    t = np.array([0.0, 10.0, 20.0])
    s = np.array([30.0, 35.0])
    grid = seawater.density(s[None, :], t[:, None], 0.0)
    assert grid.shape == (3, 2)
    for i, ti in enumerate(t):
        for j, sj in enumerate(s):
            assert grid[i, j] == seawater.density(sj, ti, 0.0)
    nu = seawater.kinematic_viscosity(t[:, None], s[None, :], grid)
    assert nu[2, 1] == pytest.approx(
        seawater.kinematic_viscosity(20.0, 35.0, seawater.density(35.0, 20.0, 0.0)), rel=1e-14
    )
