"""Buoyancy engine of a glider: pumped volume, pump work and the energy of a dive cycle."""

from typing import NamedTuple

import numpy as np

__all__ = [
    "STANDARD_GRAVITY",
    "DiveCycle",
    "dive_cycle",
    "glider_energy_per_distance",
    "hydrostatic_pressure",
    "net_buoyancy_from_volume",
    "overall_pump_efficiency",
    "pump_energy",
    "pump_stroke_energy",
    "pumped_volume",
    "required_swing",
    "trim_buoyancy_limit",
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
    surface_fraction : ndarray
        Share of the cycle time spent at the surface (position fix, communications) [-].
    """

    time: np.ndarray
    horizontal_distance: np.ndarray
    energy: np.ndarray
    mean_horizontal_speed: np.ndarray
    mean_power: np.ndarray
    surface_fraction: np.ndarray


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


def hydrostatic_pressure(density, depth):
    """Gauge (sea) pressure of a water column.

    Parameters
    ----------
    density : array_like
        Mean seawater density over the column rho [kg/m3].
    depth : array_like
        Depth z [m], positive down.

    Returns
    -------
    ndarray
        p = rho g z [Pa] (hydrostatics; g the standard gravity).
    """
    return np.asarray(density, dtype=float) * STANDARD_GRAVITY * np.asarray(depth, dtype=float)


def pump_stroke_energy(pressure, volume, efficiency, fixed_energy=0.0):
    """Electrical energy of one pump stroke against a pressure, with a fixed cost per stroke.

    Parameters
    ----------
    pressure : array_like
        Gauge pressure the pump works against p [Pa].
    volume : array_like
        Oil volume pumped Delta V [m3].
    efficiency : array_like
        Hydraulic-over-electrical efficiency of the pumping itself eta [-], in (0, 1].
    fixed_energy : array_like, optional
        Fixed electrical cost of a stroke (motor start, valves, sensing) E_fixed [J].

    Returns
    -------
    ndarray
        E_stroke = p Delta V / eta + E_fixed [J].

    Notes
    -----
    The fixed cost makes the overall efficiency fall at low pressure
    (:func:`overall_pump_efficiency`), as measured on float and glider pumps (MODEL notes
    sec. 8; common practice, no source for a general law).
    """
    p = np.asarray(pressure, dtype=float)
    v = np.asarray(volume, dtype=float)
    eta = np.asarray(efficiency, dtype=float)
    return p * v / eta + np.asarray(fixed_energy, dtype=float)


def overall_pump_efficiency(pressure, volume, efficiency, fixed_energy=0.0):
    """Hydraulic work over electrical energy of one stroke, p Delta V / E_stroke [-].

    Parameters are those of :func:`pump_stroke_energy`; 0.0 where no work is done.
    """
    work = np.asarray(pressure, dtype=float) * np.asarray(volume, dtype=float)
    energy = pump_stroke_energy(pressure, volume, efficiency, fixed_energy)
    return np.divide(work, energy, out=np.zeros(np.broadcast(work, energy).shape),
                     where=energy > 0.0)


def required_swing(density_max, density_min, hull_volume, net_buoyancy):
    """Buoyancy swing the engine must give to fly across a density range.

    Parameters
    ----------
    density_max, density_min : array_like
        Densest and lightest water met (in situ, at the dive band's pressures) [kg/m3].
    hull_volume : array_like
        Displaced volume of the vehicle V_hull [m3].
    net_buoyancy : array_like
        Net buoyancy magnitude to fly with B [N].

    Returns
    -------
    ndarray
        (rho_max - rho_min) g V_hull + 2 B [N].

    Notes
    -----
    Ballasted once, the vehicle must be able to be B heavy in the lightest water and B light
    in the densest (MODEL notes sec. 8). Hull compressibility and thermal expansion are
    ignored: they shrink the range for a hull built to follow seawater, so this is
    conservative for such hulls.
    """
    d_max = np.asarray(density_max, dtype=float)
    d_min = np.asarray(density_min, dtype=float)
    return ((d_max - d_min) * STANDARD_GRAVITY * np.asarray(hull_volume, dtype=float)
            + 2.0 * np.asarray(net_buoyancy, dtype=float))


def trim_buoyancy_limit(max_pumped_volume, hull_volume, density_top, density_bottom):
    """Largest net buoyancy the engine can give on each leg, ballasted for the route so far.

    Parameters
    ----------
    max_pumped_volume : array_like, shape (n,) or (n, 1)
        Largest oil volume the engine can move (its full swing) Delta V_max [m3].
    hull_volume : array_like, shape (n,) or (n, 1)
        Displaced volume of the vehicle V_hull [m3].
    density_top, density_bottom : array_like, shape (n, J)
        In-situ density at the top and the bottom of each leg's dive band [kg/m3].

    Returns
    -------
    ndarray, shape (n, J)
        B_limit = (rho_lo g Delta V_max - (rho_hi - rho_lo) g V_hull) / 2 [N], with rho_hi and
        rho_lo the densest and lightest water from the first leg up to each leg. Zero or
        below: the engine cannot trim the vehicle on that leg.

    Notes
    -----
    Inverse of :func:`required_swing` with the engine's swing rho_lo g Delta V_max (the
    lightest water gives the smallest force: conservative).
    """
    top = np.atleast_2d(np.asarray(density_top, dtype=float))
    bottom = np.atleast_2d(np.asarray(density_bottom, dtype=float))
    lightest = np.minimum.accumulate(np.minimum(top, bottom), axis=-1)
    densest = np.maximum.accumulate(np.maximum(top, bottom), axis=-1)
    dv = np.asarray(max_pumped_volume, dtype=float)
    vh = np.asarray(hull_volume, dtype=float)
    if dv.ndim == 1:
        dv = dv[:, None]
    if vh.ndim == 1:
        vh = vh[:, None]
    swing = lightest * STANDARD_GRAVITY * dv
    return 0.5 * (swing - (densest - lightest) * STANDARD_GRAVITY * vh)


def dive_cycle(horizontal_speed, vertical_speed, net_buoyancy, top_depth, bottom_depth,
               pump_efficiency, hotel_load, *, inflection_energy=0.0, inflection_time=0.0,
               stroke_fixed_energy=0.0, dives_per_surfacing=np.inf, surface_time=0.0,
               surface_power=0.0):
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
    stroke_fixed_energy : array_like, optional
        Fixed electrical cost of one pump stroke (motor start, valves) E_fixed [J].
    dives_per_surfacing : array_like, optional
        The vehicle surfaces once every N dive cycles (inf: never, e.g. under ice) [-].
    surface_time : array_like, optional
        Time at the surface per surfacing t_s (position fix, satellite link) [s].
    surface_power : array_like, optional
        Power drawn at the surface on top of the hotel load P_s [W].

    Returns
    -------
    DiveCycle
        All fields 0.0 (never NaN) where w <= 0 or z_b <= z_t: no cycle exists and the caller
        flags the failure.

    Notes
    -----
    Delta z = z_b - z_t, two inflections per cycle:
    T_c = 2 Delta z / w + 2 t_inf + t_s / N, s_c = 2 Delta z u / w,
    E_c = 2 B z_b / eta + E_fixed + 2 E_inf + P_s t_s / N + P_hotel T_c (MODEL notes
    sec. 5 and 8; force balance of [1]_). A surfacing every N dives is spread evenly over the
    cycles (N need not be an integer: a mean rate).

    References
    ----------
    .. [1] Graver, J.G., 2005: Underwater gliders: dynamics, control and design. PhD thesis,
       Princeton University.
    """
    (u, w, b, z_top, z_bottom, eta, hotel, e_inf, t_inf, e_fixed, n_dives, t_surf,
     p_surf) = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
         horizontal_speed, vertical_speed, net_buoyancy, top_depth, bottom_depth,
         pump_efficiency, hotel_load, inflection_energy, inflection_time,
         stroke_fixed_energy, dives_per_surfacing, surface_time, surface_power)))
    dz = z_bottom - z_top
    valid = (w > 0.0) & (dz > 0.0)
    w_safe = np.where(valid, w, 1.0)
    leg_time = np.where(valid, 2.0 * dz / w_safe, 0.0)
    surfaces = np.isfinite(n_dives) & (n_dives > 0.0)
    surface_per_cycle = np.where(surfaces, t_surf / np.where(surfaces, n_dives, 1.0), 0.0)
    time = np.where(valid, leg_time + 2.0 * t_inf + surface_per_cycle, 0.0)
    distance = np.where(valid, leg_time * u, 0.0)
    energy = np.where(valid, pump_energy(b, z_bottom, eta) + e_fixed + 2.0 * e_inf
                      + p_surf * surface_per_cycle + hotel * time, 0.0)
    time_safe = np.where(valid & (time > 0.0), time, 1.0)
    return DiveCycle(
        time=time,
        horizontal_distance=distance,
        energy=energy,
        mean_horizontal_speed=np.where(valid, distance / time_safe, 0.0),
        mean_power=np.where(valid, energy / time_safe, 0.0),
        surface_fraction=np.where(valid, surface_per_cycle / time_safe, 0.0),
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
