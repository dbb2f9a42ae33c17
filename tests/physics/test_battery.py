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


def test_capacity_table_interpolation_against_the_table():
    # The defaults are values from memory (MODEL.md s8: Li-ion ~0.80-0.90 near 0 degC,
    # ~0.60-0.75 near -20 degC); the check is against the table itself: its own points,
    # straight lines between them, end values held outside.
    table = battery.LITHIUM_ION
    got = battery.capacity_fraction(np.array(table.temperature), table.temperature,
                                    table.fraction)
    np.testing.assert_array_equal(got, table.fraction)
    # derived: halfway between -10 degC (0.77) and 0 degC (0.85) -> 0.81; -1.6 degC lies
    # 0.84 of the way from -10 to 0 -> 0.77 + 0.84 * 0.08
    assert battery.capacity_fraction(-5.0, table.temperature, table.fraction) == \
        pytest.approx(0.81, rel=1e-12)
    assert battery.capacity_fraction(-1.6, table.temperature, table.fraction) == \
        pytest.approx(0.77 + 0.84 * 0.08, rel=1e-12)
    assert battery.capacity_fraction(-50.0, table.temperature, table.fraction) == 0.55
    assert battery.capacity_fraction(60.0, table.temperature, table.fraction) == 1.0


def test_default_tables_match_the_recalled_ranges():
    # from memory (MODEL.md s8): Li-ion keeps 0.80-0.90 near 0 degC and 0.60-0.75 near
    # -20 degC at low rates; lithium primary is similar or better; Li primary self-discharges
    # under 1-2 %/year, Li-ion a few %/month.
    ion, primary = battery.LITHIUM_ION, battery.LITHIUM_PRIMARY
    at = lambda tab, temp: battery.capacity_fraction(temp, tab.temperature, tab.fraction)  # noqa: E731
    assert 0.80 <= at(ion, 0.0) <= 0.90 and 0.60 <= at(ion, -20.0) <= 0.75
    assert at(primary, 0.0) >= at(ion, 0.0) and at(primary, -20.0) >= at(ion, -20.0)
    assert primary.self_discharge_per_month * 12 <= 0.02
    assert 0.01 <= ion.self_discharge_per_month <= 0.05
    assert set(battery.CHEMISTRIES) == {"lithium-ion", "lithium-primary"}


def test_capacity_table_refuses_bad_tables():
    with pytest.raises(ValueError, match="increase strictly"):
        battery.capacity_fraction(0.0, [0.0, -10.0], [0.9, 0.8])
    with pytest.raises(ValueError, match=r"\(0, 1.5\]"):
        battery.capacity_fraction(0.0, [-10.0, 0.0], [0.0, 0.8])


def test_self_discharge_rate_per_month():
    # derived: 3 %/month over one mean month (30.4375 d) loses exactly 3 %
    rate = battery.self_discharge_rate(0.03)
    assert battery.usable_energy(1.0, fade_rate=rate, elapsed=30.4375 * DAY) == \
        pytest.approx(0.97, rel=1e-12)
