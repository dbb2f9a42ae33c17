"""Route integration against closed forms (all derived here from the model's own equations).

The mission integrator is checked against cases whose answer follows by hand from the rate
equations of MODEL.md sections 5-6: constant rates (range = drawable energy x ground speed /
power), a linear battery fade, the closed-form integral of the saturating fouling law, and
the glide feasibility threshold.
"""
import numpy as np
import pytest
from scipy import integrate, optimize

from physics import buoyancy_engine, fouling, glide, lift
from physics.mission import BatteryState, GliderRates, PropellerRates, fly_route
from physics.states import FailureMode

DAY = 86400.0


def _battery(n, energy_J, *, fade_rate=0.0, reserve=0.0):
    return BatteryState(
        nominal_energy=np.full(n, energy_J), cold_derating=np.ones(n),
        fade_rate=np.full(n, fade_rate), usable_fraction=np.ones(n),
        reserve_fraction=np.full(n, reserve),
    )


def _propeller(n, legs, *, drag_N=20.0, speed=1.5, eta=0.4, hotel=30.0, drag_increase=0.0):
    return PropellerRates(
        clean_drag=np.full((n, legs), drag_N), speed=np.full(n, speed),
        propulsive_efficiency=np.full(n, eta), hotel_load=np.full((n, legs), hotel),
        drag_increase=np.full(n, drag_increase),
    )


def _fly(rates, battery, length_m, *, along=0.0, across=0.0, growth=1.0, onset=0.0,
         tau=np.inf, limit=np.inf, **kw):
    n, legs = rates.hotel_load.shape
    return fly_route(
        rates, battery, leg_length=np.broadcast_to(length_m, (n, legs)),
        current_along=np.broadcast_to(along, (n, legs)),
        current_across=np.broadcast_to(across, (n, legs)),
        fouling_growth_factor=np.broadcast_to(growth, (n, legs)),
        fouling_onset=np.full(n, onset), fouling_time_constant=np.full(n, tau),
        max_duration=limit, **kw,
    )


def test_single_leg_constant_rates_range_is_energy_times_ground_speed_over_power():
    # derived: with constant power P and ground speed u_g, range = A u_g / P (MODEL.md s5-6)
    rates = _propeller(3, 1)
    energy = np.array([2e6, 5e6, 9e6])
    battery = BatteryState(nominal_energy=energy, cold_derating=np.full(3, 0.9),
                           fade_rate=np.zeros(3), usable_fraction=np.full(3, 0.95),
                           reserve_fraction=np.full(3, 0.2))
    out = _fly(rates, battery, 30e3, along=-0.1, across=0.3, extension=3.0)
    power = 20.0 * 1.5 / 0.4 + 30.0
    ug = np.sqrt(1.5**2 - 0.3**2) - 0.1  # crab to hold the track (MODEL.md s6)
    drawable = energy * 0.9 * 0.95 * 0.8
    np.testing.assert_allclose(out.range, drawable * ug / power, rtol=1e-9)
    np.testing.assert_allclose(out.duration[out.arrived], 30e3 / ug, rtol=1e-12)
    np.testing.assert_allclose(out.margin, drawable - power * 30e3 / ug, rtol=1e-9)
    # 2e6 J runs out before 30 km; the others arrive with energy left
    assert list(out.success) == [False, True, True]
    assert out.failure_mode[0] == FailureMode.ENERGY and out.failing_leg[0] == 0


def test_linear_fade_crossing_time():
    # derived: drawable A0(1 - f t) meets P t at t* = A0 / (P + A0 f); range = u_g t*
    rates = _propeller(1, 1)
    f = 0.02 / DAY
    out = _fly(rates, _battery(1, 3e6, fade_rate=f), 5e3, extension=200.0,
               extension_steps=400)
    power = 20.0 * 1.5 / 0.4 + 30.0
    t_star = 3e6 / (power + 3e6 * f)
    np.testing.assert_allclose(out.range, 1.5 * t_star, rtol=1e-9)


def test_fouling_integral_closed_form_within_0p1_percent():
    # derived: E(T) = P_h T + (D U / eta) [T + Delta (1/m) Int_0^{mT} phi(c) dc], with the
    # integral in closed form (physics.fouling.fouling_state_integral)
    speed, eta, hotel, d0, delta, growth = 1.2, 0.35, 25.0, 18.0, 0.6, 0.7
    onset, tau = 3 * DAY, 10 * DAY
    length = 900e3  # ~ 8.7 days at 1.2 m/s: well past the onset, phi ~ 0.3
    rates = _propeller(1, 1, drag_N=d0, speed=speed, eta=eta, hotel=hotel, drag_increase=delta)
    out = _fly(rates, _battery(1, 1e9), length, growth=growth, onset=onset, tau=tau)
    T = length / speed
    phi_integral = fouling.fouling_state_integral(0.0, growth * T, onset, tau) / growth
    expected_energy = hotel * T + d0 * speed / eta * (T + delta * phi_integral)
    used = 1e9 - out.margin[0]
    assert abs(used / expected_energy - 1) < 1e-3  # the 0.1 % requirement
    # what 8 RK4 steps achieve: the kink of phi at the onset limits the step containing it
    # to second order, hence 1e-4 rather than RK4's usual ~1e-9 here
    assert abs(used / expected_energy - 1) < 1e-4


def test_legs_add_up_with_their_own_currents_and_hotel_loads():
    # derived: duration = sum L_j / u_gj, energy = sum P_j L_j / u_gj
    rates = _propeller(1, 3)
    rates = PropellerRates(clean_drag=rates.clean_drag, speed=rates.speed,
                           propulsive_efficiency=rates.propulsive_efficiency,
                           hotel_load=np.array([[30.0, 60.0, 30.0]]),
                           drag_increase=rates.drag_increase)
    along = np.array([[0.2, -0.3, 0.0]])
    across = np.array([[0.0, 0.4, 0.9]])
    lengths = np.array([[10e3, 40e3, 15e3]])
    out = _fly(rates, _battery(1, 1e9), lengths, along=along, across=across)
    ug = np.sqrt(1.5**2 - across**2) + along
    power = 20.0 * 1.5 / 0.4 + np.array([[30.0, 60.0, 30.0]])
    np.testing.assert_allclose(out.duration, (lengths / ug).sum(), rtol=1e-12)
    np.testing.assert_allclose(1e9 - out.margin, (power * lengths / ug).sum(), rtol=1e-9)
    np.testing.assert_allclose(out.energy_per_distance, power / ug, rtol=1e-9)


def test_no_headway_is_a_named_failure_at_the_leg_start_never_nan():
    rates = _propeller(2, 2)
    across = np.array([[0.0, 1.6], [0.0, 0.2]])  # 1.6 m/s across > 1.5 m/s through water
    out = _fly(rates, _battery(2, 1e9), np.array([[10e3, 10e3]]), across=across)
    assert out.failure_mode[0] == FailureMode.NO_HEADWAY and out.failing_leg[0] == 1
    assert out.range[0] == pytest.approx(10e3)
    assert not out.arrived[0] and out.success[1]
    for field in ("range", "duration", "margin", "margin_fraction"):
        assert np.isfinite(getattr(out, field)).all()


def test_head_current_stronger_than_vehicle_is_no_headway():
    rates = _propeller(1, 1)
    out = _fly(rates, _battery(1, 1e9), 10e3, along=-1.7)
    assert out.failure_mode[0] == FailureMode.NO_HEADWAY


def test_time_limit_failure_when_energy_is_enough():
    rates = _propeller(1, 2)
    out = _fly(rates, _battery(1, 1e9), np.array([[50e3, 50e3]]), limit=0.5 * DAY)
    # derived: 100 km at 1.5 m/s = 18.5 h > 12 h; the limit is passed on leg 2 (at 64.8 km)
    assert out.failure_mode[0] == FailureMode.TIME_LIMIT and out.failing_leg[0] == 1
    assert out.arrived[0] and not out.success[0]


def _glider(n, legs, *, angle_deg=25.0, buoyancy=1.5, cd0=0.08, k=0.4, drag_increase=0.0,
            lift_loss=0.0, hotel=0.4, eta=0.27, bottom=1000.0):
    return GliderRates(
        glide_angle=np.full(n, np.deg2rad(angle_deg)), net_buoyancy=np.full(n, buoyancy),
        density=np.full((n, legs), 1027.0), reference_area=np.full(n, 0.1),
        zero_lift_drag=np.full(n, cd0), induced_drag_factor=np.full(n, k),
        max_lift_coefficient=np.full(n, 1.0), pump_efficiency=np.full(n, eta),
        hotel_load=np.full((n, legs), hotel), top_depth=np.zeros((n, legs)),
        bottom_depth=np.full((n, legs), bottom), inflection_energy=np.full(n, 20.0),
        inflection_time=np.zeros(n), drag_increase=np.full(n, drag_increase),
        lift_loss=np.full(n, lift_loss),
    )


def test_clean_glider_range_matches_energy_per_distance():
    # derived: constant rates, so range = A / (energy per horizontal distance) with the
    # closed form of MODEL.md s5 (pump term B tan(gamma)/eta + hotel/u + overhead)
    rates = _glider(1, 1)
    sol = glide.steady_glide(np.deg2rad(25.0), 1.5, 1027.0, 0.1, 0.08, 0.4,
                             max_lift_coefficient=1.0)
    per_m = buoyancy_engine.glider_energy_per_distance(
        np.deg2rad(25.0), sol.horizontal_speed, 1.5, 1000.0, 0.27, 0.4, inflection_energy=20.0)
    out = _fly(rates, _battery(1, 4e6), 500e3, extension=10.0, extension_steps=64)
    np.testing.assert_allclose(out.range, 4e6 / per_m, rtol=1e-9)


def test_glider_fouling_makes_the_commanded_angle_infeasible_where_theory_says():
    # derived: the polar's minimum angle tan(g_min) = 2 sqrt(K' C_D0') (MODEL.md s4) with
    # C_D0' = C_D0 (1 + D phi), K' = K / (1 - L phi)^2; the stop is where phi reaches phi*
    angle, cd0, k, dd, dl = 25.0, 0.08, 0.4, 0.6, 0.3
    onset, tau = 5 * DAY, 20 * DAY
    rates = _glider(1, 1, angle_deg=angle, cd0=cd0, k=k, drag_increase=dd, lift_loss=dl)
    out = _fly(rates, _battery(1, 1e12), 3000e3, onset=onset, tau=tau, steps_per_leg=64)
    assert out.failure_mode[0] == FailureMode.INFEASIBLE_GLIDE
    tan_g = np.tan(np.deg2rad(angle))
    phi_star = optimize.brentq(
        lambda p: 2 * np.sqrt(k / (1 - dl * p) ** 2 * cd0 * (1 + dd * p)) - tan_g, 0.0, 1.0)
    t_star = onset - tau * np.log1p(-phi_star)

    def speed(t):
        p = fouling.fouling_state(t, onset, tau)
        s = glide.steady_glide(np.deg2rad(angle), 1.5, 1027.0, 0.1, cd0 * (1 + dd * p),
                               lift.fouled_induced_drag_factor(k, dl * p),
                               max_lift_coefficient=1.0)
        c = buoyancy_engine.dive_cycle(s.horizontal_speed, s.vertical_speed, 1.5, 0.0, 1000.0,
                                       0.27, 0.4, inflection_energy=20.0)
        return float(c.mean_horizontal_speed)

    x_star, _ = integrate.quad(speed, 0.0, t_star * (1 - 1e-9), limit=200)
    # the stop is located by bisection on a first-order path inside one 47 km step
    assert out.range[0] == pytest.approx(x_star, rel=2e-3)
    assert np.isfinite(out.margin).all() and np.isfinite(out.duration).all()


def test_range_beyond_route_is_followed_and_censored_at_the_cap():
    rates = _propeller(2, 1)
    out = _fly(rates, _battery(2, 1e12), 10e3, extension=1.0)
    assert out.range_censored.all()
    np.testing.assert_allclose(out.range, 20e3)


def _fouling_glider_speed(onset, tau, dd):
    def u_of(t):
        p = fouling.fouling_state(t, onset, tau)
        s = glide.steady_glide(np.deg2rad(35.0), 1.5, 1027.0, 0.1, 0.08 * (1 + dd * p), 0.4,
                               max_lift_coefficient=1.0)
        c = buoyancy_engine.dive_cycle(s.horizontal_speed, s.vertical_speed, 1.5, 0.0, 1000.0,
                                       0.27, 0.4, inflection_energy=20.0)
        return float(c.mean_horizontal_speed)

    return u_of


def test_glider_fouling_into_a_cross_current_loses_headway_where_theory_says():
    # derived: the glide stays feasible, but fouling slows the glider until its cycle-mean
    # speed u(phi) equals the cross current; the stop distance is Int_0^t* u_g dt with
    # u_g = sqrt(u^2 - c_x^2) (MODEL.md s6), by scipy quad; at the default 8 steps per leg
    onset, tau, dd = 2 * DAY, 15 * DAY, 0.8
    rates = _glider(1, 1, angle_deg=35.0, drag_increase=dd)
    u_of = _fouling_glider_speed(onset, tau, dd)
    clean, fouled = u_of(0.0), u_of(1e9)
    c_x = fouled + 0.6 * (clean - fouled)
    out = _fly(rates, _battery(1, 1e12), 3000e3, across=c_x, onset=onset, tau=tau,
               min_ground_speed=0.0)  # the bare u_g -> 0 rule, to compare with quad
    assert out.failure_mode[0] == FailureMode.NO_HEADWAY
    t_star = optimize.brentq(lambda t: u_of(t) - c_x, onset, 1e9)
    x_star, _ = integrate.quad(lambda t: np.sqrt(max(u_of(t) ** 2 - c_x**2, 0.0)), 0.0, t_star,
                               limit=200)
    assert out.range[0] == pytest.approx(x_star, rel=1e-3)
    assert out.duration[0] == pytest.approx(t_star, rel=1e-3)


def test_time_limit_passed_before_a_stop_is_the_failure():
    onset, tau, dd = 2 * DAY, 15 * DAY, 0.8
    rates = _glider(1, 1, angle_deg=35.0, drag_increase=dd)
    u_of = _fouling_glider_speed(onset, tau, dd)
    c_x = u_of(1e9) + 0.6 * (u_of(0.0) - u_of(1e9))
    free = _fly(rates, _battery(1, 1e12), 3000e3, across=c_x, onset=onset, tau=tau)
    assert free.failure_mode[0] == FailureMode.NO_HEADWAY
    limited = _fly(rates, _battery(1, 1e12), 3000e3, across=c_x, onset=onset, tau=tau,
                   limit=0.9 * free.duration[0])
    assert limited.failure_mode[0] == FailureMode.TIME_LIMIT


def test_empty_budget_at_departure_is_an_energy_failure_at_range_zero():
    rates = _propeller(2, 1)
    battery = BatteryState(nominal_energy=np.array([0.0, 1e7]), cold_derating=np.ones(2),
                           fade_rate=np.zeros(2), usable_fraction=np.ones(2),
                           reserve_fraction=np.array([0.2, 1.0]))
    out = _fly(rates, battery, 15e3)
    assert list(out.failure_mode) == [FailureMode.ENERGY, FailureMode.ENERGY]
    np.testing.assert_array_equal(out.range, [0.0, 0.0])
    assert not out.success.any()


def test_stopped_sample_reports_consistent_margin_and_fraction():
    rates = _propeller(1, 2)
    out = _fly(rates, _battery(1, 1e9), np.array([[10e3, 10e3]]),
               across=np.array([[0.0, 1.6]]))
    assert out.margin[0] == 0.0 and out.margin_fraction[0] == 0.0
    assert not out.reaches_recovery[0]


def test_a_crawl_below_the_minimum_ground_speed_is_no_headway():
    # u_g = sqrt(1.5^2 - 1.4995^2) = 0.039 m/s with a -0.035 m/s head current: 4 mm/s over
    # ground, 100 km in ~290 days - below the 1 cm/s floor, so no headway, not a crawl
    rates = _propeller(1, 1)
    out = _fly(rates, _battery(1, 1e12), 100e3, across=1.4995, along=-0.035)
    assert out.failure_mode[0] == FailureMode.NO_HEADWAY
    bare = fly_route(rates, _battery(1, 1e12), leg_length=np.array([[100e3]]),
                     current_along=np.array([[-0.035]]), current_across=np.array([[1.4995]]),
                     fouling_growth_factor=np.ones((1, 1)), fouling_onset=np.zeros(1),
                     fouling_time_constant=np.full(1, np.inf), min_ground_speed=0.0)
    assert bare.arrived[0] and bare.duration[0] > 200 * DAY  # the bare u_g > 0 rule crawls


def test_per_leg_speeds_energy_per_distance_closed_form():
    # derived (MODEL.md s5): level flight at speed U_j, drag D_j = 1/2 rho U_j^2 C_D A, so
    # energy per metre = D_j / eta_j + P_hotel / U_j on each leg (no current, no fouling).
    speeds = np.array([1.0, 1.4, 1.8])
    drag = 0.5 * 1026.0 * speeds**2 * 0.004 * 2.0
    eta = np.array([0.33, 0.38, 0.41])
    rates = PropellerRates(
        clean_drag=np.tile(drag, (2, 1)), speed=np.tile(speeds, (2, 1)),
        propulsive_efficiency=np.tile(eta, (2, 1)), hotel_load=np.full((2, 3), 40.0),
        drag_increase=np.zeros(2))
    out = _fly(rates, _battery(2, 1e9), 10e3)
    expected = drag / eta + 40.0 / speeds
    np.testing.assert_allclose(out.energy_per_distance, np.tile(expected, (2, 1)), rtol=1e-12)
    np.testing.assert_allclose(out.duration, (10e3 / speeds).sum(), rtol=1e-12)


def test_route_profile_records_every_step_boundary():
    # derived: constant rates, 2 legs of 8 steps -> 17 columns, energy linear in distance
    out = _fly(_propeller(1, 2), _battery(1, 1e9), 8e3)
    prof = out.profile
    assert prof.position.shape == (1, 17)
    np.testing.assert_allclose(prof.position[0], np.linspace(0.0, 16e3, 17), rtol=1e-12)
    power = 20.0 * 1.5 / 0.4 + 30.0
    np.testing.assert_allclose(prof.energy[0], prof.position[0] * power / 1.5, rtol=1e-12)
    assert prof.leg.tolist() == [0] + [0] * 8 + [1] * 8
