"""Recovery-window ship booking: the window between two arrival quantiles plus the ship's
passage, never the whole transit."""
from __future__ import annotations

import datetime

import numpy as np
import pytest

from uq import decisions


def test_window_booking_on_an_evenly_spread_arrival_sample():
    # derived: arrivals evenly spread over 50-150 days (10,001 points) have the q-quantile
    # 50 + 100 q exactly (linear interpolation on an even grid): window 145 - 55 = 90 days,
    # + 3 days of passage = 93 days at 24,000 EUR/day = 2,232,000 EUR. Dates by hand:
    # 12 April 2027 + 55 days = 6 June 2027, + 145 days = 4 September 2027.
    t = np.linspace(50.0, 150.0, 10001)
    w = decisions.recovery_window_booking(
        t, arrived=np.ones(t.size, bool), deployment_date=datetime.date(2027, 4, 12),
        window_quantiles=(0.05, 0.95), ship_transit_days=3.0, day_rate=24000.0,
        currency="EUR", confidence=0.95)
    assert w.window_days == pytest.approx(90.0, abs=1e-9)
    assert w.booking_days == pytest.approx(93.0, abs=1e-9)
    assert w.booking_cost == pytest.approx(2_232_000.0, rel=1e-12)
    assert w.arrivals[0].date == "2027-06-06" and w.arrivals[-1].date == "2027-09-04"
    assert w.on_station_days == pytest.approx(145.0)
    # the window's interval holds the estimate and is no wider than the quantile intervals allow
    assert w.window_days_low <= w.window_days <= w.window_days_high
    assert w.booking_days_high - w.booking_days_low < 2.0
    assert "2027-06-06" in w.sentence and "93.0 days" in w.sentence


def test_window_booking_ignores_samples_that_never_arrive():
    t = np.array([10.0, 20.0, 30.0, 1e9, 40.0])
    arrived = np.array([True, True, True, False, True])
    w = decisions.recovery_window_booking(
        t, arrived=arrived, deployment_date=datetime.date(2027, 1, 1),
        window_quantiles=(0.25, 0.75), ship_transit_days=0.0, day_rate=1.0, currency="EUR",
        confidence=0.9)
    # numpy linear quantiles of 10, 20, 30, 40: 17.5 and 32.5 -> a 15-day window
    assert w.window_days == pytest.approx(15.0)
    assert w.arrived == 4 and w.samples == 5


@pytest.mark.parametrize("kwargs, match", [
    ({"window_quantiles": (0.9, 0.1)}, "early < late"),
    ({"ship_transit_days": -1.0}, "ship_transit_days"),
    ({"day_rate": -5.0}, "day_rate"),
])
def test_window_booking_refuses_bad_input(kwargs, match):
    args = dict(arrived=np.ones(3, bool), deployment_date=datetime.date(2027, 1, 1),
                window_quantiles=(0.1, 0.9), ship_transit_days=1.0, day_rate=1.0,
                currency="EUR", confidence=0.9)
    args.update(kwargs)
    with pytest.raises(decisions.DecisionInputError, match=match):
        decisions.recovery_window_booking(np.array([1.0, 2.0, 3.0]), **args)
