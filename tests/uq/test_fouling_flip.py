"""Glider vs propeller on the same hull: the comparison flips as fouling grows.

Fact of the trade (common practice, no source): on one torpedo-shaped hull, gliding is roughly
20-25 % more transit-efficient than propelling when clean, while heavily fouled the propeller is
roughly 50 % more efficient. The mechanism in this model: fouling raises C_D0 and cuts the lift
slope (K grows as 1/(1 - dL)^2), so the polar's minimum glide angle rises and the glider must
fly steeper, paying B tan(gamma)/eta_pump per metre, while the propeller only pays the larger
hull drag. Checked qualitatively: the ratio rises with fouling and changes side.

Assumed values (common practice, no source): a small thruster at glider speeds (0.2-0.3 m/s)
has an overall propulsive efficiency near 0.15; a buoyancy pump about 0.3; hotel load 0.5 W.
"""
import numpy as np

from physics import drag, glide, lift, propulsion

RHO, NU = 1027.0, 1.3e-6
LENGTH, DIAMETER = 2.0, 0.22  # m
WING_AREA, ASPECT_RATIO, SPAN_EFFICIENCY = 0.1, 6.0, 0.8
HOTEL, ETA_PROP, ETA_PUMP, BUOYANCY = 0.5, 0.15, 0.3, 1.5
WETTED = float(drag.spheroid_wetted_area(LENGTH, DIAMETER)) * 1.15  # + parallel mid-body


def _hull_cd(speed):
    return drag.hull_drag_coefficient(speed, LENGTH, DIAMETER, NU, appendage_factor=1.2)


def propeller_energy_per_m(drag_increase):
    """At its own energy-optimal speed (closed form, iterated for C_D(Re))."""
    u = 0.5
    for _ in range(30):
        cd = _hull_cd(u) * (1 + drag_increase)
        u = float(propulsion.optimal_speed(RHO, cd, WETTED, ETA_PROP, HOTEL))
    return float(propulsion.propeller_energy_per_distance(RHO, u, cd, WETTED, ETA_PROP, HOTEL))


def glider_energy_per_m(drag_increase, lift_loss):
    """At its best feasible glide angle, same hull plus wings (profile C_D 0.012 on the wing)."""
    angles = np.deg2rad(np.linspace(5.0, 70.0, 651))
    speed = np.full_like(angles, 0.4)
    k = lift.fouled_induced_drag_factor(
        lift.induced_drag_factor(ASPECT_RATIO, SPAN_EFFICIENCY) + 0.15, lift_loss)
    for _ in range(15):  # C_D0 depends on the glide speed through Re
        cd0 = (_hull_cd(np.maximum(speed, 0.05)) * WETTED / WING_AREA + 0.012) * (1 + drag_increase)
        sol = glide.steady_glide(angles, BUOYANCY, RHO, WING_AREA, cd0, k, max_lift_coefficient=1.0)
        speed = np.where(sol.state == glide.GLIDE_OK, sol.speed, 0.4)
    ok = sol.state == glide.GLIDE_OK
    per_m = BUOYANCY * np.tan(angles[ok]) / ETA_PUMP + HOTEL / sol.horizontal_speed[ok]
    return float(per_m.min())


def test_gliding_wins_clean_and_loses_heavily_fouled():
    levels = [(0.0, 0.0), (0.5, 0.2), (1.0, 0.3), (1.5, 0.4)]
    ratios = [glider_energy_per_m(dd, dl) / propeller_energy_per_m(dd) for dd, dl in levels]
    assert all(b > a for a, b in zip(ratios, ratios[1:]))  # fouling hurts the glider more
    assert ratios[0] < 1.0  # clean: gliding is the more efficient transit
    assert ratios[-1] > 1.0  # heavy fouling: propelling is
    # Magnitudes are NOT asserted: with these assumed values the model gives the glider a 4 %
    # edge clean and the propeller a 27 % edge at drag x2.5 / lift -40 %, smaller gaps than the
    # trade's rough 20-25 % and ~50 %. The model holds the propulsive efficiency constant with
    # speed; real small thrusters lose efficiency at glider speeds, which would widen both.
