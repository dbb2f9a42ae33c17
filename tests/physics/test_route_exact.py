"""The exact per-leg propeller transit against an independent scalar implementation.

The reference below is written here from the rate equations alone (MODEL.md s5, s6): within
a leg the propeller vehicle holds its speed through water, so its ground speed is constant and
the energy drawn is P_0 s + P_1 int phi (derived); the fouling integral is written out
directly (not through physics.fouling), and the reserve crossing is found by plain bisection
in time, per sample, in Python floats. Random inputs cover per-leg speed and efficiency,
fouling onsets inside legs, a frozen fouling clock, a linear fade, crabbing in cross currents,
dead-reckoning overhead, a capacity factor and legs without headway.
"""
import math

import numpy as np
import pytest

from physics.mission import BatteryState, GliderRates, PropellerRates, fly_route
from physics.states import FailureMode

DAY = 86400.0
MIN_GROUND_SPEED = 0.01


def _phi_integral(c0, c1, onset, tau):
    """int_{c0}^{c1} max(0, 1 - exp(-(c - onset)/tau)) dc, c1 >= c0 (derived, direct form)."""
    a, b = max(c0, onset), max(c1, onset)
    if b <= a:
        return 0.0
    return (b - a) - tau * (math.exp(-(a - onset) / tau) - math.exp(-(b - onset) / tau))


def _phi(c, onset, tau):
    return 1.0 - math.exp(-(c - onset) / tau) if c > onset else 0.0


def _reference(s):
    """Range [m], duration [s], margin [J], no-headway leg (or -1) of one sample (dict)."""
    legs = len(s["L"])
    lengths = list(s["L"]) + [s["extension"] * sum(s["L"])]
    t = clock = energy = x = 0.0
    rng, duration, margin = None, None, None

    def drawable(time):
        return s["A0"] * max(1.0 - s["fade"] * time, 0.0)

    for seg in range(legs + 1):
        j = min(seg, legs - 1)
        u, cx, ca = s["U"][j], abs(s["cx"][j]), s["ca"][j]
        ground = math.sqrt(u * u - cx * cx) + ca if u > cx else 0.0
        if ground <= MIN_GROUND_SPEED:
            return (x if rng is None else rng), t, min(drawable(t) - energy, 0.0), j
        v = ground / (1.0 + s["f"][j])
        k = s["k"][j]
        p0 = (s["D"][j] * u / s["eta"][j] + s["hotel"][j]) / s["c"][j]
        p1 = s["D"][j] * u * s["delta"] / s["eta"][j] / s["c"][j]

        def drawn(sec, clock=clock, k=k, p0=p0, p1=p1):
            if k > 0:
                fouled = _phi_integral(clock, clock + k * sec, s["onset"], s["tau"]) / k
            else:
                fouled = _phi(clock, s["onset"], s["tau"]) * sec
            return p0 * sec + p1 * fouled

        span = lengths[seg] / v
        if rng is None and drawable(t + span) - energy - drawn(span) <= 0.0:
            lo, hi = 0.0, span
            for _ in range(200):
                mid = 0.5 * (lo + hi)
                if drawable(t + mid) - energy - drawn(mid) > 0.0:
                    lo = mid
                else:
                    hi = mid
            rng = x + v * 0.5 * (lo + hi)
        if seg == legs - 1:
            duration = t + span
            margin = drawable(duration) - energy - drawn(span)
        energy += drawn(span)
        clock += k * span
        t += span
        x += lengths[seg]
    return (x if rng is None else rng), duration, margin, -1


def _random_case(n, legs, seed):
    rng = np.random.default_rng(seed)
    speed = rng.uniform(0.8, 2.0, (n, legs))
    case = dict(
        D=rng.uniform(5.0, 40.0, (n, legs)), U=speed, eta=rng.uniform(0.25, 0.5, (n, legs)),
        hotel=rng.uniform(10.0, 60.0, (n, legs)), delta=rng.uniform(0.0, 1.5, n),
        L=rng.uniform(20e3, 200e3, (n, legs)), ca=rng.uniform(-0.4, 0.3, (n, legs)),
        cx=rng.uniform(-0.5, 0.5, (n, legs)),
        k=np.where(rng.random((n, legs)) < 0.15, 0.0, rng.uniform(0.3, 1.2, (n, legs))),
        onset=rng.uniform(0.0, 6.0, n) * DAY, tau=rng.uniform(5.0, 60.0, n) * DAY,
        f=rng.uniform(0.0, 0.15, (n, legs)), c=rng.uniform(0.7, 1.0, (n, legs)),
        energy=rng.uniform(5e6, 60e6, n), reserve=rng.uniform(0.1, 0.3, n),
        fade=rng.uniform(0.0, 0.002, n) / DAY)
    # a few legs without headway: a head current stronger than the vehicle
    blocked = rng.random((n, legs)) < 0.03
    case["ca"] = np.where(blocked, -speed - 0.1, case["ca"])
    return case


def _fly(case, **kw):
    n, legs = case["L"].shape
    rates = PropellerRates(clean_drag=case["D"], speed=case["U"],
                           propulsive_efficiency=case["eta"], hotel_load=case["hotel"],
                           drag_increase=case["delta"])
    battery = BatteryState(nominal_energy=case["energy"], cold_derating=np.ones(n),
                           fade_rate=case["fade"], usable_fraction=np.ones(n),
                           reserve_fraction=case["reserve"])
    return fly_route(rates, battery, leg_length=case["L"], current_along=case["ca"],
                     current_across=case["cx"], fouling_growth_factor=case["k"],
                     fouling_onset=case["onset"], fouling_time_constant=case["tau"],
                     distance_overhead=case["f"], capacity_factor=case["c"],
                     min_ground_speed=MIN_GROUND_SPEED, **kw)


def _sample(case, i):
    return dict(L=case["L"][i].tolist(), U=case["U"][i].tolist(), eta=case["eta"][i].tolist(),
                D=case["D"][i].tolist(), hotel=case["hotel"][i].tolist(),
                ca=case["ca"][i].tolist(), cx=case["cx"][i].tolist(), k=case["k"][i].tolist(),
                f=case["f"][i].tolist(), c=case["c"][i].tolist(), delta=float(case["delta"][i]),
                onset=float(case["onset"][i]), tau=float(case["tau"][i]),
                A0=float(case["energy"][i] * (1.0 - case["reserve"][i])),
                fade=float(case["fade"][i]), extension=0.5)


def test_exact_transit_matches_an_independent_scalar_reference():
    # derived (module docstring); 1e-9: the reference's bisection and float rounding, far
    # below any physical tolerance, so any modelling difference would show
    case = _random_case(300, 4, seed=11)
    out = _fly(case)
    for i in range(300):
        rng, duration, margin, blocked_leg = _reference(_sample(case, i))
        assert out.range[i] == pytest.approx(rng, rel=1e-9), i
        if blocked_leg >= 0:
            assert not out.arrived[i] and out.failure_mode[i] in (FailureMode.NO_HEADWAY,
                                                                  FailureMode.ENERGY)
            assert out.margin[i] == pytest.approx(margin, rel=1e-9, abs=1e-3)
            continue
        assert out.arrived[i]
        assert out.duration[i] == pytest.approx(duration, rel=1e-12)
        assert out.margin[i] == pytest.approx(margin, rel=1e-9, abs=1e-3)
    assert (out.failure_mode == FailureMode.NO_HEADWAY).any()  # the blocked legs were met
    assert (out.failure_mode == FailureMode.ENERGY).any()
    assert np.isfinite(out.range).all() and np.isfinite(out.margin).all()


def test_exact_and_runge_kutta_paths_agree_where_the_rates_are_smooth():
    # derived: with the fouling onset at departure phi is smooth, so RK4 on 64 steps a leg
    # converges to ~1e-10; both must then give the same transit (the exact path is the
    # reference, checked above against the independent one)
    case = _random_case(200, 3, seed=5)
    case["onset"] = np.zeros(200)
    case["ca"] = np.maximum(case["ca"], -0.4)  # every leg with headway
    exact = _fly(case)
    rk = _fly(case, integration="runge-kutta", steps_per_leg=64, extension_steps=128)
    np.testing.assert_allclose(exact.range, rk.range, rtol=1e-8)
    np.testing.assert_allclose(exact.duration, rk.duration, rtol=1e-8)
    np.testing.assert_allclose(exact.margin, rk.margin, rtol=1e-8, atol=1e-2)
    np.testing.assert_array_equal(exact.failure_mode, rk.failure_mode)
    np.testing.assert_allclose(exact.energy_per_distance, rk.energy_per_distance, rtol=1e-8)
    np.testing.assert_allclose(exact.profile.energy[:, ::8], rk.profile.energy[:, ::64],
                               rtol=1e-8)


def test_exact_integration_is_refused_for_a_glider_and_profile_steps_checked():
    rates = PropellerRates(clean_drag=np.ones((1, 1)), speed=np.ones(1),
                           propulsive_efficiency=np.ones(1), hotel_load=np.ones((1, 1)),
                           drag_increase=np.zeros(1))
    battery = BatteryState(*(np.ones(1) for _ in range(4)), reserve_fraction=np.zeros(1))
    route = dict(leg_length=np.ones((1, 1)), current_along=np.zeros((1, 1)),
                 current_across=np.zeros((1, 1)), fouling_growth_factor=np.ones((1, 1)),
                 fouling_onset=np.zeros(1), fouling_time_constant=np.full(1, np.inf))
    glider = GliderRates(*(np.ones(1) for _ in range(15)))
    with pytest.raises(ValueError, match="exact integration needs PropellerRates"):
        fly_route(glider, battery, integration="exact", **route)
    with pytest.raises(ValueError, match="integration must be one of"):
        fly_route(rates, battery, integration="euler", **route)
    with pytest.raises(ValueError, match="profile_steps"):
        fly_route(rates, battery, integration="runge-kutta", profile_steps=3, **route)
    assert fly_route(rates, battery, profile_steps=1, **route).profile.position.shape == (1, 2)
