"""Steady gliding flight of a buoyancy-driven glider: glide states, speeds and the glide polar.

The vehicle has a parabolic polar C_D = C_D0 + K C_L^2 referenced to one area S. Net
buoyancy B (magnitude) drives it down a path at angle gamma below the horizontal, or up at
gamma above it; the force balance is the same on both legs.
"""

from typing import NamedTuple

import numpy as np

__all__ = [
    "GLIDE_BELOW_MINIMUM_ANGLE",
    "GLIDE_OK",
    "GLIDE_STALL",
    "GlideInputError",
    "GlidePolar",
    "GlideSolution",
    "glide_polar",
    "minimum_glide_angle",
    "steady_glide",
]

#: A steady glide exists on the requested branch.
GLIDE_OK = 0
#: tan(gamma) < 2 sqrt(K C_D0): the polar cannot be this flat at any lift coefficient.
GLIDE_BELOW_MINIMUM_ANGLE = 1
#: The required lift coefficient exceeds the maximum (stall).
GLIDE_STALL = 2

_BRANCHES = ("efficient", "slow")


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
