"""physics.energy_split against closed forms of the rate equations (derived here).

Propeller vehicle, one leg, still water, constant speed U: time t = L / U; the hotel load
draws P_h t; propulsion draws P_p (t + Delta_D * integral of phi dt) with the saturating
fouling law phi = 1 - exp(-(t - t_on)/tau) after the onset (MODEL.md s5-6; the integral
is written out below, not taken from the package).
"""
import math

import numpy as np
import pytest

from physics.energy_split import GLIDER_TERMS, PROPELLER_TERMS, leg_energy_split
from physics.mission import BatteryState, PropellerRates, fly_route


def _fly(rates, length, *, onset, tau, steps):
    n, legs = rates.hotel_load.shape
    battery = BatteryState(nominal_energy=np.full(n, 1e9), cold_derating=np.ones(n),
                           fade_rate=np.zeros(n), usable_fraction=np.ones(n),
                           reserve_fraction=np.zeros(n))
    return fly_route(rates, battery, leg_length=np.full((n, legs), length),
                     current_along=np.zeros((n, legs)), current_across=np.zeros((n, legs)),
                     fouling_growth_factor=np.ones((n, legs)), fouling_onset=np.full(n, onset),
                     fouling_time_constant=np.full(n, tau), profile_steps=steps)


@pytest.mark.parametrize("steps", [1, 8])
def test_propeller_split_with_fouling_is_the_closed_form(steps):
    drag, speed, eta, hotel, dd = 25.0, 1.5, 0.4, 35.0, 0.3
    rates = PropellerRates(clean_drag=np.full((1, 1), drag), speed=np.full(1, speed),
                           propulsive_efficiency=np.full(1, eta),
                           hotel_load=np.full((1, 1), hotel), drag_increase=np.full(1, dd))
    length, onset, tau = 300e3, 50e3, 80e3  # [m], [s], [s]
    out = _fly(rates, length, onset=onset, tau=tau, steps=steps)
    split = leg_energy_split(rates, out.profile, 1)
    t = length / speed
    # derived: integral of phi from onset to t = (t - t_on) - tau (1 - exp(-(t - t_on)/tau))
    phi_integral = (t - onset) - tau * (1.0 - math.exp(-(t - onset) / tau))
    propulsion = drag * speed / eta * (t + dd * phi_integral)
    # tolerance: the exact per-leg integrator and the closed form differ by rounding only;
    # the split is exact for a propeller vehicle at any number of profile columns
    assert split["propulsion"][0, 0] == pytest.approx(propulsion, rel=1e-9)
    assert split["hotel"][0, 0] == pytest.approx(hotel * t, rel=1e-9)
    assert tuple(split) == PROPELLER_TERMS and GLIDER_TERMS[-1] == "hotel"


def test_capacity_factor_scales_every_term():
    rates = PropellerRates(clean_drag=np.full((1, 2), 20.0), speed=np.full(1, 1.0),
                           propulsive_efficiency=np.full(1, 0.5),
                           hotel_load=np.full((1, 2), 10.0), drag_increase=np.zeros(1))
    n, legs = 1, 2
    battery = BatteryState(nominal_energy=np.full(n, 1e9), cold_derating=np.ones(n),
                           fade_rate=np.zeros(n), usable_fraction=np.ones(n),
                           reserve_fraction=np.zeros(n))
    charge = np.array([[1.0, 0.8]])
    out = fly_route(rates, battery, leg_length=np.full((n, legs), 1000.0),
                    current_along=np.zeros((n, legs)), current_across=np.zeros((n, legs)),
                    fouling_growth_factor=np.ones((n, legs)), fouling_onset=np.zeros(n),
                    fouling_time_constant=np.full(n, np.inf), capacity_factor=charge)
    split = leg_energy_split(rates, out.profile, legs, charge)
    # derived: 1000 s per leg; energy counted against rated capacity as E / c
    np.testing.assert_allclose(split["hotel"][0], [10.0 * 1000, 10.0 * 1000 / 0.8], rtol=1e-12)
    np.testing.assert_allclose(split["propulsion"][0], [40.0 * 1000, 40.0 * 1000 / 0.8],
                               rtol=1e-12)
