"""Checks of the pilot's policies: re-trim, engine limits, trim range, surfacing, drift.

Each expected value is a closed form re-derived here, a TEOS-10 value (gsw), or scipy's own
optimiser: never the package's own output.
"""
import gsw
import numpy as np
import pytest
from scipy import optimize

from physics import buoyancy_engine as be
from physics import currents, glide, seawater

RHO, AREA, CD0, K, CL_MAX = 1027.0, 0.1, 0.08, 0.4, 0.9
G = 9.80665


def _efficient_lift(gamma, cd0, k):
    """Smaller root of K C_L^2 - tan(g) C_L + C_D0 = 0 (MODEL.md s4), the plain formula."""
    t = np.tan(gamma)
    return (t - np.sqrt(t * t - 4 * k * cd0)) / (2 * k)


@pytest.mark.parametrize("fouling", [0.0, 0.5, 1.0])
def test_hold_speed_retrim_keeps_buoyancy_power_equal_to_drag_power(fouling):
    # Leonard & Graver 2001 force balance: B w = D V in a steady glide; here after the policy
    # re-trims B to hold u = 0.30 m/s at 26 deg on a polar fouled by drag x(1 + 0.5 phi) and
    # lift -20 % phi (K / (1 - 0.2 phi)^2, MODEL.md s3)
    cd0 = CD0 * (1 + 0.5 * fouling)
    k = K / (1 - 0.2 * fouling) ** 2
    trim = glide.glide_trim(glide.FLY_HOLD_SPEED, np.deg2rad(26.0), 1.6, 0.30, RHO, AREA,
                            cd0, k, CL_MAX, 50.0)
    assert trim.state == glide.GLIDE_OK
    assert trim.horizontal_speed == pytest.approx(0.30, rel=1e-12)
    v = np.hypot(trim.horizontal_speed, trim.vertical_speed)
    cl = 2 * trim.net_buoyancy * np.cos(trim.glide_angle) / (RHO * AREA * v**2)  # lift = B cos g
    drag = 0.5 * RHO * v**2 * AREA * (cd0 + k * cl**2)
    assert trim.net_buoyancy * trim.vertical_speed == pytest.approx(drag * v, rel=1e-10)
    # and B is the closed form rho S C_L u^2 / (2 cos^3 g) with the plain root (MODEL.md s8)
    g = float(trim.glide_angle)  # 26 deg, or steeper where the fouled polar needs it
    expected = 0.5 * RHO * AREA * _efficient_lift(g, cd0, k) * 0.30**2 / np.cos(g) ** 3
    assert trim.net_buoyancy == pytest.approx(expected, rel=1e-9)


def test_holding_speed_costs_more_pump_energy_per_km_as_the_glider_fouls():
    # derived (MODEL.md s8): at fixed angle C_L rises with C_D0, so B and B tan(g)/eta rise
    b = [float(glide.glide_trim(glide.FLY_HOLD_SPEED, np.deg2rad(30.0), 1.6, 0.30, RHO, AREA,
                                CD0 * (1 + dd), K, CL_MAX, 50.0).net_buoyancy)
         for dd in (0.0, 0.25, 0.5, 1.0)]
    assert all(b1 > b0 for b0, b1 in zip(b, b[1:]))


def test_commanded_angle_below_the_minimum_flies_the_flattest_feasible_angle():
    # MODEL.md s4: tan(g_min) = 2 sqrt(K C_D0) = 0.3578 (19.69 deg); 15 deg is too flat
    trim = glide.glide_trim(glide.FLY_HOLD_ANGLE, np.deg2rad(15.0), 1.6, 0.0, RHO, AREA, CD0,
                            K, CL_MAX, 50.0)
    assert trim.state == glide.GLIDE_OK and trim.retrimmed
    assert np.tan(trim.glide_angle) == pytest.approx(2 * np.sqrt(K * CD0), rel=1e-6)


def test_flattest_angle_against_scipy_with_and_without_stall():
    # scipy.optimize.minimize_scalar of C_D / C_L over (0, C_L,max]
    for cl_max in (0.9, 0.3):
        res = optimize.minimize_scalar(lambda c: (CD0 + K * c * c) / c, bounds=(1e-6, cl_max),
                                       method="bounded", options={"xatol": 1e-10})
        assert glide.flattest_glide_angle(CD0, K, cl_max) == pytest.approx(
            np.arctan(res.fun), rel=1e-7)


def test_engine_limit_fails_fixed_policies_and_caps_the_efficient_one():
    args = (RHO, AREA, CD0, K, CL_MAX, 1.0)  # the engine gives at most 1.0 N on this leg
    hold_angle = glide.glide_trim(glide.FLY_HOLD_ANGLE, np.deg2rad(26.0), 1.6, 0.0, *args)
    hold_speed = glide.glide_trim(glide.FLY_HOLD_SPEED, np.deg2rad(26.0), 1.6, 0.40, *args)
    efficient = glide.glide_trim(glide.FLY_EFFICIENT, np.deg2rad(26.0), 1.6, 0.40, *args)
    assert hold_angle.state == glide.TRIM_ABOVE_ENGINE_LIMIT
    assert hold_speed.state == glide.TRIM_ABOVE_ENGINE_LIMIT
    assert efficient.state == glide.GLIDE_OK and efficient.at_limit
    assert efficient.net_buoyancy == pytest.approx(1.0)
    assert efficient.horizontal_speed < 0.40


def test_efficient_angle_against_scipy():
    # MODEL.md s8: minimise B(g) tan(g) / eta + c_o tan(g) at a held speed, B from the lift
    # balance; scipy's bounded minimiser on the plain formula is the reference. The policy
    # searches a 41-angle grid: its objective is within 0.3 % of the optimum (flat minimum).
    u, eta, c_o = 0.30, 0.27, 0.05

    def objective(g):
        b = 0.5 * RHO * AREA * _efficient_lift(g, CD0, K) * u**2 / np.cos(g) ** 3
        return (b / eta + c_o) * np.tan(g)

    lo = np.arctan(2 * np.sqrt(K * CD0)) + 1e-9
    res = optimize.minimize_scalar(objective, bounds=(lo, np.deg2rad(60.0)), method="bounded")
    trim = glide.glide_trim(glide.FLY_EFFICIENT, np.deg2rad(26.0), 1.6, u, RHO, AREA, CD0, K,
                            CL_MAX, 50.0, pump_efficiency=eta, overhead_per_tan=c_o)
    assert objective(float(trim.glide_angle)) == pytest.approx(res.fun, rel=3e-3)
    assert trim.horizontal_speed == pytest.approx(u, rel=1e-9)


def test_efficient_search_never_misses_the_best_grid_angle():
    # The policy searches the 41-angle grid tan g = tan g_flat (1 + 5 s^2), s in [0, 1]
    # (MODEL.md s8) in two passes (every 4th angle, then a window around the best). Reference:
    # the objective of MODEL.md s8 written out here at all 41 angles, plain numpy; the chosen
    # angle (grid best, refined by a parabola only where that lowers the cost) must cost no
    # more than the best of them (1e-12: rounding), over polars, speeds, engine limits and
    # overheads drawn wide (common practice, no source: a randomised check of a search).
    rng = np.random.default_rng(7)
    n = 4000
    u, rho, area = rng.uniform(0.1, 0.6, n), rng.uniform(1020, 1030, n), rng.uniform(0.05, 0.3, n)
    cd0, k, cl_max = rng.uniform(0.05, 0.5, n), rng.uniform(0.05, 1.0, n), rng.uniform(0.5, 2, n)
    b_max, eta, c_o = rng.uniform(0.5, 30.0, n), rng.uniform(0.2, 0.9, n), rng.uniform(0, 20, n)
    trim = glide.glide_trim(glide.FLY_EFFICIENT, 0.3, 1.0, u, rho, area, cd0, k, cl_max, b_max,
                            pump_efficiency=eta, overhead_per_tan=c_o)
    flat = glide.flattest_glide_angle(cd0, k, cl_max) + 1e-9
    tan_g = np.tan(flat)[:, None] * (1.0 + 5.0 * np.linspace(0.0, 1.0, 41) ** 2)
    g = np.arctan(tan_g)
    b = 0.5 * rho[:, None] * area[:, None] * _efficient_lift(g, cd0[:, None], k[:, None]) \
        * u[:, None] ** 2 / np.cos(g) ** 3
    cost = np.where(b <= b_max[:, None], (b / eta[:, None] + c_o[:, None]) * tan_g, np.inf)
    held = np.isfinite(cost).any(axis=1)
    assert held.mean() > 0.5 and (~held).any()  # both branches are exercised
    ok = held & (trim.state == glide.GLIDE_OK)
    chosen = (trim.net_buoyancy / eta + c_o) * np.tan(trim.glide_angle)
    assert np.all(chosen[ok] <= cost.min(axis=1)[ok] * (1 + 1e-12))
    assert not trim.at_limit[held].any() and trim.at_limit[~held & (trim.state == 0)].all()


def test_pump_work_against_hydrostatic_pressure_matches_teos10_pressure():
    # TEOS-10 (gsw.p_from_z, 1 dbar = 1e4 Pa) at 1000 m, 45 N: the engine's rho g z with the
    # column's mean density is within 0.3 % (gravity varies with latitude and depth; the
    # column is compressed). Work on 0.5 L at eta = 1 is then p dV.
    p_teos = float(gsw.p_from_z(-1000.0, 45.0)) * 1e4  # z is negative below the surface
    rho_mean = float(seawater.density(35.0, 4.0, 500.0))
    p_model = float(be.hydrostatic_pressure(rho_mean, 1000.0))
    assert p_model == pytest.approx(p_teos, rel=3e-3)
    dv = 0.5e-3
    assert be.pump_stroke_energy(p_teos, dv, 1.0) == pytest.approx(p_teos * dv, rel=1e-12)
    # the stroke law at B = rho g dV / 2 equals the closed form 2 B z / eta (MODEL.md s5)
    b = rho_mean * G * dv / 2
    assert be.pump_stroke_energy(p_model, dv, 0.3) == pytest.approx(
        float(be.pump_energy(b, 1000.0, 0.3)), rel=1e-12)


def test_fixed_cost_per_stroke_lowers_efficiency_at_low_pressure():
    # derived by hand: 0.5 L at 10 bar is 500 J of work; /0.5 + 200 J = 1200 J -> 0.4167;
    # at 100 bar: 5000 J / (10000 + 200) = 0.4902
    assert be.pump_stroke_energy(1e6, 5e-4, 0.5, 200.0) == pytest.approx(1200.0)
    assert be.overall_pump_efficiency(1e6, 5e-4, 0.5, 200.0) == pytest.approx(500 / 1200)
    assert be.overall_pump_efficiency(1e7, 5e-4, 0.5, 200.0) == pytest.approx(5000 / 10200)


def test_trim_range_from_teos10_densities():
    # TEOS-10 check values (MODEL.md s1, computed with gsw): SP 35, 0 degC: 1028.11 kg/m3 at
    # the surface, ~1032.8 at 1000 dbar. A 50 L hull flying B = 1.5 N needs a swing of
    # (rho_max - rho_min) g V + 2 B (MODEL.md s8).
    top = seawater.density(35.0, 0.0, 0.0)
    bottom = seawater.density(35.0, 0.0, 1000.0)
    assert float(top) == pytest.approx(1028.11, abs=0.01)
    assert float(bottom) == pytest.approx(1032.8, abs=0.1)
    sa = gsw.SR_from_SP(35.0)
    rho_gsw = gsw.rho(sa, gsw.CT_from_t(sa, 0.0, [0.0, 1000.0]), [0.0, 1000.0])
    need = be.required_swing(bottom, top, 0.050, 1.5)
    assert float(need) == pytest.approx((rho_gsw[1] - rho_gsw[0]) * G * 0.050 + 3.0, rel=1e-9)
    assert float(need) == pytest.approx(4.69 * G * 0.050 + 3.0, abs=0.05)
    # two legs: a warm shallow one, then the cold deep one; the engine (0.8 L) is judged on the
    # range met so far: B_limit = (rho_lo g dV - (rho_hi - rho_lo) g V) / 2
    warm = seawater.density(35.0, 15.0, 0.0)
    limit = be.trim_buoyancy_limit(0.8e-3, 0.050, [[warm, top]], [[warm, bottom]])
    assert limit[0, 0] == pytest.approx(warm * G * 0.8e-3 / 2, rel=1e-12)
    lo, hi = rho_gsw[0] - (1028.11 - float(warm)), rho_gsw[1]
    assert limit[0, 1] == pytest.approx((lo * G * 0.8e-3 - (hi - lo) * G * 0.050) / 2, rel=2e-3)


def test_surfacing_energy_per_km_by_hand():
    # Hand calculation: u = 0.3, w = 0.15 m/s, 0-1000 m: glide time 2*1000/0.15 = 13333.3 s,
    # distance 4000 m; pump 2*1.5*1000/0.3 = 10 kJ; hotel 0.5 W. Surfacing every 4 dives for
    # 900 s at 3 W on top: +225 s and +675 J per cycle. Cycle time 13558.3 s, energy
    # 10000 + 675 + 0.5*13558.33 = 17454.17 J -> 4.36354 J/m = 1.212095 Wh/km.
    c = be.dive_cycle(0.3, 0.15, 1.5, 0.0, 1000.0, 0.3, 0.5, dives_per_surfacing=4,
                      surface_time=900.0, surface_power=3.0)
    assert float(c.time) == pytest.approx(13558.333, rel=1e-6)
    assert float(c.energy / c.horizontal_distance) * 1000 / 3600 == pytest.approx(1.212095,
                                                                                 rel=1e-5)
    assert float(c.surface_fraction) == pytest.approx(225.0 / 13558.333, rel=1e-6)
    never = be.dive_cycle(0.3, 0.15, 1.5, 0.0, 1000.0, 0.3, 0.5, dives_per_surfacing=np.inf,
                          surface_time=900.0, surface_power=3.0)
    assert float(never.time) == pytest.approx(13333.333, rel=1e-6)
    assert float(never.surface_fraction) == 0.0


def test_drift_and_crab_kinematics_closed_form():
    # Velocity triangle: crab u_g = sqrt(u^2 - c_x^2) + c_a; drift: 1 km of track at 0.3 m/s
    # takes 3333.3 s and collects 666.7 m of offset under 0.2 m/s, made good at 0.3 m/s in
    # 2222.2 s: 1000 / 5555.6 = 0.18 m/s = u (u + c_a) / (u + |c_x|)
    crab = currents.track_made_good(0.3, 0.0, 0.2, currents.CRAB)
    drift = currents.track_made_good(0.3, 0.0, -0.2, currents.DRIFT)
    assert float(crab.ground_speed) == pytest.approx(np.sqrt(0.05), rel=1e-12)
    assert float(drift.ground_speed) == pytest.approx(1000 / (1000 / 0.3 + (200 / 0.3) / 0.3))
    assert drift.drifting and not crab.drifting
    # stronger than the vehicle: crabbing has no headway; drifting still progresses
    strong = currents.track_made_good(0.3, 0.05, 0.35, currents.CRAB_OR_DRIFT)
    assert not currents.track_made_good(0.3, 0.05, 0.35, currents.CRAB).headway
    assert strong.headway and strong.drifting
    assert float(strong.ground_speed) == pytest.approx(0.35 * 0.3 / 0.65, rel=1e-12)
    # a head current stronger than the vehicle stops both
    assert not currents.track_made_good(0.3, -0.3, 0.0, currents.DRIFT).headway


def test_layered_current_band_average_and_point_value():
    # derived: 0.4 m/s over the top 200 m, 0.1 below; a 0-1000 m band sees
    # (0.4*200 + 0.1*800)/1000 = 0.16; a vehicle at 50 m sees 0.4, at 300 m 0.1
    assert currents.layered_current(0.4, 0.1, 200.0, 0.0, 1000.0) == pytest.approx(0.16)
    assert currents.layered_current(0.4, 0.1, 200.0, 50.0, 50.0) == pytest.approx(0.4)
    assert currents.layered_current(0.4, 0.1, 200.0, 300.0, 300.0) == pytest.approx(0.1)
    assert currents.layered_current(0.4, 0.1, 200.0, 100.0, 300.0) == pytest.approx(0.25)
