"""Buoyancy engine of a glider: pumped volume, pump work and the energy of a dive cycle."""

from typing import NamedTuple

import numpy as np

__all__ = [
    "STANDARD_GRAVITY",
    "DiveCycle",
    "dive_cycle",
    "glider_energy_per_distance",
    "net_buoyancy_from_volume",
    "pump_energy",
    "pumped_volume",
]

#: Standard acceleration of gravity g_n [m/s2] (3rd CGPM, 1901).
STANDARD_GRAVITY = 9.80665


class DiveCycle(NamedTuple):
    """One descent-and-ascent cycle; fields have the broadcast shape of the inputs.

    Attributes
    ----------
    time : ndarray
        Cycle duration T_c [s].
    horizontal_distance : ndarray
        Horizontal distance through the water per cycle s_c [m].
    energy : ndarray
        Energy drawn per cycle E_c [J].
    mean_horizontal_speed : ndarray
        s_c / T_c [m/s].
    mean_power : ndarray
        E_c / T_c [W].
    """

    time: np.ndarray
    horizontal_distance: np.ndarray
    energy: np.ndarray
    mean_horizontal_speed: np.ndarray
    mean_power: np.ndarray


def pumped_volume(net_buoyancy, density):
    """Oil volume the engine moves to swing buoyancy from -B to +B.

    Parameters
    ----------
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    density : array_like
        Seawater density rho [kg/m3].

    Returns
    -------
    ndarray
        Delta V = 2 B / (rho g) [m3].
    """
    b = np.asarray(net_buoyancy, dtype=float)
    rho = np.asarray(density, dtype=float)
    return 2.0 * b / (rho * STANDARD_GRAVITY)


def net_buoyancy_from_volume(volume, density):
    """Net buoyancy magnitude reached by pumping a volume (inverse of :func:`pumped_volume`).

    Parameters
    ----------
    volume : array_like
        Pumped volume Delta V [m3] (full swing, -B to +B).
    density : array_like
        Seawater density rho [kg/m3].

    Returns
    -------
    ndarray
        B = rho g Delta V / 2 [N].
    """
    v = np.asarray(volume, dtype=float)
    rho = np.asarray(density, dtype=float)
    return 0.5 * rho * STANDARD_GRAVITY * v


def pump_energy(net_buoyancy, bottom_depth, pump_efficiency):
    """Electrical energy of one buoyancy pump stroke at the bottom of a dive.

    Parameters
    ----------
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    bottom_depth : array_like
        Depth where the pump runs z_b [m].
    pump_efficiency : array_like
        Overall electrical-to-hydraulic efficiency eta [-] (about 0.2-0.35 at depth).

    Returns
    -------
    ndarray
        E_pump = rho g z_b Delta V / eta = 2 B z_b / eta [J].

    Notes
    -----
    Hydraulic work against the gauge pressure rho g z_b for the volume 2B/(rho g); the
    density cancels, so the result needs no density. Bleeding oil back near the surface is
    taken as free. Compressibility of seawater with depth is neglected (a few per mille over
    1000 m).
    """
    b = np.asarray(net_buoyancy, dtype=float)
    z = np.asarray(bottom_depth, dtype=float)
    eta = np.asarray(pump_efficiency, dtype=float)
    return 2.0 * b * z / eta


def dive_cycle(horizontal_speed, vertical_speed, net_buoyancy, top_depth, bottom_depth,
               pump_efficiency, hotel_load, *, inflection_energy=0.0, inflection_time=0.0):
    """Time, distance and energy of one saw-tooth cycle between two depths.

    Parameters
    ----------
    horizontal_speed : array_like
        Steady horizontal speed through water u [m/s] (same on descent and ascent).
    vertical_speed : array_like
        Steady vertical speed magnitude w [m/s].
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    top_depth : array_like
        Depth of the upper inflection z_t [m] (0 at the surface, or below an ice keel).
    bottom_depth : array_like
        Depth of the lower inflection z_b [m], where the pump runs.
    pump_efficiency : array_like
        Pump efficiency eta [-].
    hotel_load : array_like
        Continuous hotel power (sensors, computer) P_hotel [W].
    inflection_energy : array_like, optional
        Energy per inflection beyond the pump work (pitch/roll moves, comms) E_inf [J].
    inflection_time : array_like, optional
        Time spent per inflection t_inf [s].

    Returns
    -------
    DiveCycle
        All fields 0.0 (never NaN) where w <= 0 or z_b <= z_t: no cycle exists and the caller
        flags the failure.

    Notes
    -----
    Delta z = z_b - z_t, two inflections per cycle:
    T_c = 2 Delta z / w + 2 t_inf, s_c = 2 Delta z u / w,
    E_c = 2 B z_b / eta + 2 E_inf + P_hotel T_c (MODEL notes sec. 5; force balance of [1]_).

    References
    ----------
    .. [1] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University.
    """
    u, w, b, z_top, z_bottom, eta, hotel, e_inf, t_inf = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (
            horizontal_speed, vertical_speed, net_buoyancy, top_depth, bottom_depth,
            pump_efficiency, hotel_load, inflection_energy, inflection_time))
    )
    dz = z_bottom - z_top
    valid = (w > 0.0) & (dz > 0.0)
    w_safe = np.where(valid, w, 1.0)
    leg_time = np.where(valid, 2.0 * dz / w_safe, 0.0)
    time = np.where(valid, leg_time + 2.0 * t_inf, 0.0)
    distance = np.where(valid, leg_time * u, 0.0)
    energy = np.where(valid, pump_energy(b, z_bottom, eta) + 2.0 * e_inf + hotel * time, 0.0)
    time_safe = np.where(valid & (time > 0.0), time, 1.0)
    return DiveCycle(
        time=time,
        horizontal_distance=distance,
        energy=energy,
        mean_horizontal_speed=np.where(valid, distance / time_safe, 0.0),
        mean_power=np.where(valid, energy / time_safe, 0.0),
    )


def glider_energy_per_distance(glide_angle, horizontal_speed, net_buoyancy, bottom_depth,
                               pump_efficiency, hotel_load, *, inflection_energy=0.0):
    """Energy per horizontal distance of a glider cycling from the surface (closed form).

    Parameters
    ----------
    glide_angle : array_like
        Glide path angle gamma [rad], in (0, pi/2).
    horizontal_speed : array_like
        Horizontal speed through water u [m/s].
    net_buoyancy : array_like
        Net buoyancy magnitude B [N].
    bottom_depth : array_like
        Dive depth z_b [m].
    pump_efficiency : array_like
        Pump efficiency eta [-].
    hotel_load : array_like
        Hotel power P_hotel [W].
    inflection_energy : array_like, optional
        Energy per inflection E_inf [J] (two per cycle).

    Returns
    -------
    ndarray
        Energy per horizontal distance through water [J/m].

    Notes
    -----
    With z_t = 0 and no inflection time, a cycle of :func:`dive_cycle` covers
    s_c = 2 z_b / tan(gamma) in T_c = 2 z_b / w, with w = u tan(gamma). Dividing
    E_c = 2 B z_b / eta + 2 E_inf + P_hotel T_c by s_c (derived):

        E / s = B tan(gamma) / eta + P_hotel / u + E_inf tan(gamma) / z_b.

    The pump term does not depend on depth; depth only dilutes the inflection overhead.
    """
    tan_gamma = np.tan(np.asarray(glide_angle, dtype=float))
    u = np.asarray(horizontal_speed, dtype=float)
    b = np.asarray(net_buoyancy, dtype=float)
    z = np.asarray(bottom_depth, dtype=float)
    eta = np.asarray(pump_efficiency, dtype=float)
    hotel = np.asarray(hotel_load, dtype=float)
    e_inf = np.asarray(inflection_energy, dtype=float)
    return b * tan_gamma / eta + hotel / u + e_inf * tan_gamma / z
