"""Steady gliding flight of a buoyancy-driven glider: glide states, speeds and the glide polar.

The vehicle has a parabolic polar C_D = C_D0 + K C_L^2 referenced to one area S. Net
buoyancy B (magnitude) drives it down a path at angle gamma below the horizontal, or up at
gamma above it; the force balance is the same on both legs.
"""

from typing import NamedTuple

import numpy as np

from physics.efficient_trim import efficient_trim as _efficient_trim

__all__ = [
    "FLY_EFFICIENT",
    "FLY_HOLD_ANGLE",
    "FLY_HOLD_SPEED",
    "FLIGHT_POLICIES",
    "GLIDE_BELOW_MINIMUM_ANGLE",
    "GLIDE_OK",
    "GLIDE_STALL",
    "TRIM_ABOVE_ENGINE_LIMIT",
    "GlideInputError",
    "GlidePolar",
    "GlideSolution",
    "GlideTrim",
    "flattest_glide_angle",
    "glide_polar",
    "glide_trim",
    "minimum_glide_angle",
    "net_buoyancy_for_speed",
    "steady_glide",
]

#: A steady glide exists on the requested branch.
GLIDE_OK = 0
#: tan(gamma) < 2 sqrt(K C_D0): the polar cannot be this flat at any lift coefficient.
GLIDE_BELOW_MINIMUM_ANGLE = 1
#: The required lift coefficient exceeds the maximum (stall).
GLIDE_STALL = 2

#: The net buoyancy the state needs exceeds what the buoyancy engine can give.
TRIM_ABOVE_ENGINE_LIMIT = 3

#: Flight policy codes (how a pilot trims the glider on a leg).
FLY_HOLD_ANGLE = 0  #: fixed commanded angle and net buoyancy (steepened if the polar needs it)
FLY_HOLD_SPEED = 1  #: commanded angle, net buoyancy re-trimmed to hold the horizontal speed
FLY_EFFICIENT = 2  #: hold the horizontal speed at the angle of least energy per distance
#: policy names as written in a scenario, by code
FLIGHT_POLICIES = {FLY_HOLD_ANGLE: "hold_angle", FLY_HOLD_SPEED: "hold_speed",
                   FLY_EFFICIENT: "efficient"}

_BRANCHES = ("efficient", "slow")
_ANGLE_MARGIN = 1e-9  # [rad] kept above the flattest angle so the root stays real


class GlideInputError(ValueError):
    """A glide input is physically impossible (negative drag, area, buoyancy, ...)."""


class GlideSolution(NamedTuple):
    """Steady glide state; every field has the broadcast shape of the inputs.

    Attributes
    ----------
    speed : ndarray
        Speed along the glide path V [m/s] (0.0 when infeasible).
    horizontal_speed : ndarray
        u = V cos(gamma) [m/s].
    vertical_speed : ndarray
        w = V sin(gamma) [m/s], a magnitude.
    lift_coefficient : ndarray
        C_L [-] (0.0 when infeasible).
    drag_coefficient : ndarray
        C_D = C_D0 + K C_L^2 [-] (0.0 when infeasible).
    state : ndarray of int8
        GLIDE_OK, GLIDE_BELOW_MINIMUM_ANGLE or GLIDE_STALL.
    """

    speed: np.ndarray
    horizontal_speed: np.ndarray
    vertical_speed: np.ndarray
    lift_coefficient: np.ndarray
    drag_coefficient: np.ndarray
    state: np.ndarray


class GlidePolar(NamedTuple):
    """Glide polar sampled along the lift coefficient (last axis).

    Attributes
    ----------
    lift_coefficient : ndarray
        C_L [-].
    glide_angle : ndarray
        gamma = atan(C_D / C_L) [rad].
    horizontal_speed : ndarray
        u [m/s].
    vertical_speed : ndarray
        w [m/s].
    """

    lift_coefficient: np.ndarray
    glide_angle: np.ndarray
    horizontal_speed: np.ndarray
    vertical_speed: np.ndarray


def _require(values, ok, name, expected):
    """Raise GlideInputError naming the first offending value of ``name``."""
    bad = ~ok
    if np.any(bad):
        first = np.asarray(values)[bad].flat[0]
        raise GlideInputError(f"{name} must be {expected}, got {float(first)!r}")


def _check_polar_inputs(net_buoyancy, density, reference_area, zero_lift_drag,
                        induced_drag_factor):
    _require(net_buoyancy, net_buoyancy >= 0.0, "net_buoyancy", "a magnitude >= 0 [N]")
    _require(density, density > 0.0, "density", "> 0 [kg/m3]")
    _require(reference_area, reference_area > 0.0, "reference_area", "> 0 [m2]")
    _require(zero_lift_drag, zero_lift_drag > 0.0, "zero_lift_drag",
             "> 0 (a drag-free body would glide infinitely fast)")
    _require(induced_drag_factor, induced_drag_factor >= 0.0, "induced_drag_factor", ">= 0")


def minimum_glide_angle(zero_lift_drag, induced_drag_factor):
    """Flattest steady glide angle of a parabolic polar.

    Parameters
    ----------
    zero_lift_drag : array_like
        Zero-lift drag coefficient C_D0 [-].
    induced_drag_factor : array_like
        Induced-drag factor K [-].

    Returns
    -------
    ndarray
        gamma_min = atan(2 sqrt(K C_D0)) [rad].

    Notes
    -----
    The minimum of C_D/C_L = C_D0/C_L + K C_L is 2 sqrt(K C_D0), at C_L = sqrt(C_D0/K) [1]_.

    References
    ----------
    .. [1] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University, ch. 2.
    """
    cd0 = np.asarray(zero_lift_drag, dtype=float)
    k = np.asarray(induced_drag_factor, dtype=float)
    return np.arctan(2.0 * np.sqrt(k * cd0))


def steady_glide(glide_angle, net_buoyancy, density, reference_area, zero_lift_drag,
                 induced_drag_factor, *, max_lift_coefficient=np.inf, branch="efficient"):
    """Steady straight glide at a commanded path angle.

    Parameters
    ----------
    glide_angle : array_like
        Glide path angle gamma below (descent) or above (ascent) the horizontal [rad],
        in [0, pi/2].
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    density : array_like
        Seawater density rho [kg/m3].
    reference_area : array_like
        Reference area S of the lift and drag coefficients [m2].
    zero_lift_drag : array_like
        Zero-lift drag coefficient C_D0 [-], > 0.
    induced_drag_factor : array_like
        Induced-drag factor K [-], >= 0.
    max_lift_coefficient : array_like, optional
        Stall limit C_L,max [-] (default: none).
    branch : {"efficient", "slow"}, optional
        Which of the two lift coefficients that give the same angle: "efficient" is the
        smaller C_L (lower angle of attack, faster), "slow" the larger.

    Returns
    -------
    GlideSolution
        Speeds, coefficients and an int8 state code, broadcast over all inputs. Infeasible
        elements have speeds and coefficients 0.0, never NaN, and no warning is emitted.

    Raises
    ------
    GlideInputError
        For a negative buoyancy, non-positive density/area/C_D0, negative K, an angle outside
        [0, pi/2] or an unknown branch.

    Notes
    -----
    Lift L = B cos(gamma), drag D = B sin(gamma), hence C_D / C_L = tan(gamma) and
    K C_L^2 - tan(gamma) C_L + C_D0 = 0 [1]_, [2]_. The roots are
    C_L = (tan(gamma) -/+ sqrt(tan^2(gamma) - 4 K C_D0)) / (2K); the smaller one is computed
    as 2 C_D0 / (tan(gamma) + sqrt(disc)), which has no cancellation and stays finite for
    K -> 0 and gamma -> pi/2. No root exists when the discriminant is negative
    (GLIDE_BELOW_MINIMUM_ANGLE; with K = 0 this is gamma = 0); a root above C_L,max is
    GLIDE_STALL (for K = 0 the slow root is infinite, hence always a stall).
    Speed V = sqrt(2 B cos(gamma) / (rho S C_L)), u = V cos(gamma), w = V sin(gamma).

    References
    ----------
    .. [1] Leonard, N.E. and J.G. Graver, 2001: Model-based feedback control of autonomous
       underwater gliders. IEEE J. Oceanic Eng. 26(4):633-645.
    .. [2] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University.
    """
    if branch not in _BRANCHES:
        raise GlideInputError(f"branch must be one of {_BRANCHES}, got {branch!r}")
    gamma, b, rho, area, cd0, k, cl_max = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (
            glide_angle, net_buoyancy, density, reference_area, zero_lift_drag,
            induced_drag_factor, max_lift_coefficient))
    )
    _require(gamma, (gamma >= 0.0) & (gamma <= np.pi / 2.0), "glide_angle",
             "a magnitude in [0, pi/2] [rad]")
    _check_polar_inputs(b, rho, area, cd0, k)

    tan_gamma = np.tan(gamma)
    disc = tan_gamma**2 - 4.0 * k * cd0
    # tan(gamma) > 0 is implied by disc >= 0 when K > 0; it matters for K = 0.
    angle_ok = (disc >= 0.0) & (tan_gamma > 0.0)
    root = np.sqrt(np.where(angle_ok, disc, 0.0))
    if branch == "efficient":
        denominator = np.where(angle_ok, tan_gamma + root, 1.0)
        cl = 2.0 * cd0 / denominator
    else:
        has_k = k > 0.0
        cl = np.where(has_k, (tan_gamma + root) / (2.0 * np.where(has_k, k, 1.0)), np.inf)
    state = np.where(angle_ok, GLIDE_OK, GLIDE_BELOW_MINIMUM_ANGLE).astype(np.int8)
    stalled = angle_ok & ~(np.isfinite(cl) & (cl <= cl_max))
    state = np.where(stalled, GLIDE_STALL, state).astype(np.int8)
    ok = state == GLIDE_OK

    cl = np.where(ok, cl, 0.0)
    cd = np.where(ok, cd0 + k * cl**2, 0.0)
    cos_gamma = np.cos(gamma)
    speed = np.where(
        ok, np.sqrt(2.0 * b * cos_gamma / (rho * area * np.where(ok, cl, 1.0))), 0.0
    )
    return GlideSolution(
        speed=speed,
        horizontal_speed=speed * cos_gamma,
        vertical_speed=speed * np.sin(gamma),
        lift_coefficient=cl,
        drag_coefficient=cd,
        state=state,
    )


def glide_polar(net_buoyancy, density, reference_area, zero_lift_drag, induced_drag_factor,
                *, max_lift_coefficient=1.0, n=200):
    """Glide polar: horizontal against vertical speed over the lift-coefficient range.

    Parameters
    ----------
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    density : array_like
        Seawater density rho [kg/m3].
    reference_area : array_like
        Reference area S [m2].
    zero_lift_drag : array_like
        C_D0 [-], > 0.
    induced_drag_factor : array_like
        K [-], >= 0.
    max_lift_coefficient : float, optional
        Upper end of the C_L range [-].
    n : int, optional
        Number of points, evenly spaced in C_L over (0, C_L,max].

    Returns
    -------
    GlidePolar
        Arrays of shape broadcast(inputs) + (n,).

    Notes
    -----
    For each C_L: gamma = atan((C_D0 + K C_L^2) / C_L), V = sqrt(2 B cos(gamma) /
    (rho S C_L)), u = V cos(gamma), w = V sin(gamma) [1]_. The point of smallest gamma is the
    best glide ratio; the point of smallest w is the minimum-sink state.

    References
    ----------
    .. [1] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University.
    """
    n = int(n)
    if n < 1:
        raise GlideInputError(f"n must be a positive number of points, got {n}")
    if not max_lift_coefficient > 0.0:
        raise GlideInputError(f"max_lift_coefficient must be > 0, got {max_lift_coefficient!r}")
    b, rho, area, cd0, k = (
        np.asarray(x, dtype=float)[..., np.newaxis]
        for x in (net_buoyancy, density, reference_area, zero_lift_drag, induced_drag_factor)
    )
    _check_polar_inputs(b, rho, area, cd0, k)
    cl = float(max_lift_coefficient) * np.arange(1, n + 1) / n
    gamma = np.arctan((cd0 + k * cl**2) / cl)
    speed = np.sqrt(2.0 * b * np.cos(gamma) / (rho * area * cl))
    shape = np.broadcast_shapes(gamma.shape, speed.shape)
    return GlidePolar(
        lift_coefficient=np.broadcast_to(cl, shape).copy(),
        glide_angle=np.broadcast_to(gamma, shape).copy(),
        horizontal_speed=speed * np.cos(gamma),
        vertical_speed=speed * np.sin(gamma),
    )


def flattest_glide_angle(zero_lift_drag, induced_drag_factor, max_lift_coefficient=np.inf):
    """Flattest steady glide angle the polar allows below the stall.

    Parameters
    ----------
    zero_lift_drag : array_like
        C_D0 [-], > 0.
    induced_drag_factor : array_like
        K [-], >= 0.
    max_lift_coefficient : array_like, optional
        Stall limit C_L,max [-] (default: none).

    Returns
    -------
    ndarray
        gamma_flat = atan(min over 0 < C_L <= C_L,max of (C_D0 + K C_L^2) / C_L) [rad].

    Notes
    -----
    C_D / C_L is least at C_L* = sqrt(C_D0 / K), where it is 2 sqrt(K C_D0)
    (:func:`minimum_glide_angle`); when C_L* is beyond the stall the flattest angle is at
    C_L,max (derived from the parabolic polar).
    """
    cd0, k, cl_max = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
        zero_lift_drag, induced_drag_factor, max_lift_coefficient)))
    best_cl = np.sqrt(cd0 / np.where(k > 0.0, k, 1.0))
    unconstrained = (k > 0.0) & (best_cl <= cl_max)
    cl = np.where(np.isfinite(cl_max) & (cl_max > 0.0), cl_max, 1.0)
    at_stall = np.arctan((cd0 + k * cl**2) / cl)
    return np.where(unconstrained, minimum_glide_angle(cd0, k), at_stall)


def net_buoyancy_for_speed(glide_angle, horizontal_speed, density, reference_area,
                           zero_lift_drag, induced_drag_factor, *, max_lift_coefficient=np.inf):
    """Net buoyancy that flies a given horizontal speed at a given glide angle.

    Parameters
    ----------
    glide_angle : array_like
        Glide path angle gamma [rad], in (0, pi/2).
    horizontal_speed : array_like
        Horizontal speed through water u [m/s].
    density, reference_area, zero_lift_drag, induced_drag_factor : array_like
        As in :func:`steady_glide` [kg/m3], [m2], [-], [-].
    max_lift_coefficient : array_like, optional
        Stall limit C_L,max [-].

    Returns
    -------
    buoyancy : ndarray
        B = rho S C_L u^2 / (2 cos^3 gamma) [N] (0.0 where no glide exists).
    state : ndarray of int8
        GLIDE_OK, GLIDE_BELOW_MINIMUM_ANGLE or GLIDE_STALL.

    Notes
    -----
    With V = u / cos(gamma) the lift balance B cos(gamma) = rho S C_L V^2 / 2 gives B, where
    C_L is the efficient root at gamma (MODEL notes sec. 8, from the force balance of [1]_).
    At a fixed angle C_L grows with C_D0, so holding a speed costs more buoyancy (and pump
    energy) as the vehicle fouls.

    References
    ----------
    .. [1] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University.
    """
    gamma = np.asarray(glide_angle, dtype=float)
    u = np.asarray(horizontal_speed, dtype=float)
    rho = np.asarray(density, dtype=float)
    area = np.asarray(reference_area, dtype=float)
    unit = steady_glide(gamma, 1.0, rho, area, zero_lift_drag, induced_drag_factor,
                        max_lift_coefficient=max_lift_coefficient)
    ok = unit.state == GLIDE_OK
    b = 0.5 * rho * area * unit.lift_coefficient * u**2 / np.cos(gamma) ** 3
    return np.where(ok, b, 0.0), unit.state


class GlideTrim(NamedTuple):
    """How the glider is trimmed on a leg; fields have the broadcast shape of the inputs.

    Attributes
    ----------
    glide_angle : ndarray
        Path angle flown [rad].
    net_buoyancy : ndarray
        Net buoyancy magnitude flown [N].
    horizontal_speed, vertical_speed : ndarray
        Steady glide speeds u, w [m/s].
    retrimmed : ndarray of bool
        The angle or the net buoyancy differs from the commanded setpoint.
    at_limit : ndarray of bool
        The engine's limit caps the net buoyancy (the speed is not held).
    state : ndarray of int8
        GLIDE_OK, or TRIM_ABOVE_ENGINE_LIMIT when the policy needs more net buoyancy than the
        engine can give and may not fall back (hold_angle, hold_speed).
    """

    glide_angle: np.ndarray
    net_buoyancy: np.ndarray
    horizontal_speed: np.ndarray
    vertical_speed: np.ndarray
    retrimmed: np.ndarray
    at_limit: np.ndarray
    state: np.ndarray


def glide_trim(policy, commanded_angle, commanded_buoyancy, commanded_speed, density,
               reference_area, zero_lift_drag, induced_drag_factor, max_lift_coefficient,
               max_net_buoyancy, *, pump_efficiency=1.0, overhead_per_tan=0.0):
    """Trim of a glider under a flight policy, within the buoyancy engine's limit.

    Parameters
    ----------
    policy : array_like of int
        FLY_HOLD_ANGLE, FLY_HOLD_SPEED or FLY_EFFICIENT per element.
    commanded_angle : array_like
        Commanded path angle [rad]; an angle flatter than the polar allows is flown at the
        flattest feasible angle (:func:`flattest_glide_angle`).
    commanded_buoyancy : array_like
        Commanded net buoyancy [N] (hold_angle).
    commanded_speed : array_like
        Horizontal speed through water to hold [m/s] (hold_speed, efficient).
    density, reference_area, zero_lift_drag, induced_drag_factor, max_lift_coefficient
        The (fouled) polar and the water [kg/m3], [m2], [-], [-], [-].
    max_net_buoyancy : array_like
        Largest net buoyancy the engine can give on this leg after trimming for the route's
        density range [N] (:func:`physics.buoyancy_engine.trim_buoyancy_limit`).
    pump_efficiency : array_like, optional
        Pump efficiency eta [-] (efficient policy's objective).
    overhead_per_tan : array_like, optional
        Energy of the per-cycle overheads per unit of tan(gamma) per metre [J/m]: the cycle
        overhead energy divided by twice the dive's depth range (efficient policy's
        objective).

    Returns
    -------
    GlideTrim

    Notes
    -----
    hold_angle flies B_cmd at max(gamma_cmd, gamma_flat); B_cmd above the limit is
    TRIM_ABOVE_ENGINE_LIMIT. hold_speed flies gamma = max(gamma_cmd, gamma_flat) with
    B = rho S C_L u^2 / (2 cos^3 gamma) (:func:`net_buoyancy_for_speed`); B above the limit is
    TRIM_ABOVE_ENGINE_LIMIT. efficient minimises the energy per distance
    B tan(gamma) / eta + overhead_per_tan tan(gamma) (+ P_hotel / u, constant at a held
    speed) over feasible angles (MODEL notes sec. 8) on a grid of 41 angles from gamma_flat to
    atan(6 tan gamma_flat), refined by a parabola through the best three; when no angle holds the speed within the limit it flies the limit
    at the angle of the highest horizontal speed (the speed drops, ``at_limit``), and fails
    only when the limit leaves no net buoyancy at all.
    """
    (policy, gamma_cmd, b_cmd, u_cmd, rho, area, cd0, k, cl_max, b_max, eta,
     overhead) = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
         policy, commanded_angle, commanded_buoyancy, commanded_speed, density,
         reference_area, zero_lift_drag, induced_drag_factor, max_lift_coefficient,
         max_net_buoyancy, pump_efficiency, overhead_per_tan)))
    flat = flattest_glide_angle(cd0, k, cl_max) + _ANGLE_MARGIN
    gamma = np.array(np.maximum(gamma_cmd, flat), dtype=float)
    b = np.array(b_cmd, dtype=float)
    holds_speed = policy == FLY_HOLD_SPEED
    if np.any(holds_speed):  # the speed-holding buoyancy only where a leg holds a speed
        b_speed, _ = net_buoyancy_for_speed(gamma, u_cmd, rho, area, cd0, k,
                                            max_lift_coefficient=cl_max)
        b = np.array(np.where(holds_speed, b_speed, b_cmd), dtype=float)
    at_limit = np.zeros(gamma.shape, dtype=bool)
    efficient = policy == FLY_EFFICIENT
    if np.any(efficient):
        g_e, b_e, lim_e = _efficient_trim(u_cmd[efficient], rho[efficient], area[efficient],
                                          cd0[efficient], k[efficient], cl_max[efficient],
                                          b_max[efficient], eta[efficient],
                                          overhead[efficient], flat[efficient])
        gamma[efficient], b[efficient], at_limit[efficient] = g_e, b_e, lim_e
    state = np.where((b > b_max) | (b_max <= 0.0), TRIM_ABOVE_ENGINE_LIMIT,
                     GLIDE_OK).astype(np.int8)
    ok = state == GLIDE_OK
    sol = steady_glide(gamma, np.where(ok, b, 0.0), rho, area, cd0, k,
                       max_lift_coefficient=cl_max)
    state = np.where(ok, sol.state, state).astype(np.int8)
    ok = state == GLIDE_OK
    retrimmed = (np.abs(gamma - gamma_cmd) > 1e-6) | (np.abs(b - b_cmd) > 1e-3 * b_cmd)
    return GlideTrim(
        glide_angle=gamma,
        net_buoyancy=np.where(ok, b, 0.0),
        horizontal_speed=np.where(ok, sol.horizontal_speed, 0.0),
        vertical_speed=np.where(ok, sol.vertical_speed, 0.0),
        retrimmed=ok & retrimmed,
        at_limit=ok & at_limit,
        state=state,
    )
