"""Propeller-driven, neutrally buoyant vehicle in level flight: power and cost of transport."""

import numpy as np

from .drag import drag_force

__all__ = [
    "efficiency_at_speed",
    "optimal_speed",
    "propeller_energy_per_distance",
    "propulsion_power",
    "speed_to_hold_ground_speed",
]


def propulsion_power(density, speed, drag_coefficient, reference_area, propulsive_efficiency):
    """Electrical power to overcome drag.

    Parameters
    ----------
    density : array_like
        Seawater density rho [kg/m3].
    speed : array_like
        Speed through water U [m/s].
    drag_coefficient : array_like
        Drag coefficient C_D [-] referenced to ``reference_area``.
    reference_area : array_like
        Reference area A [m2].
    propulsive_efficiency : array_like
        Overall electrical-to-thrust-power efficiency eta [-] (typically 0.3-0.5).

    Returns
    -------
    ndarray
        P = D U / eta = rho U^3 C_D A / (2 eta) [W].
    """
    u = np.asarray(speed, dtype=float)
    eta = np.asarray(propulsive_efficiency, dtype=float)
    return drag_force(density, u, drag_coefficient, reference_area) * u / eta


def propeller_energy_per_distance(density, speed, drag_coefficient, reference_area,
                                  propulsive_efficiency, hotel_load):
    """Energy per distance through water (cost of transport) of a propeller vehicle.

    Parameters
    ----------
    density : array_like
        Seawater density rho [kg/m3].
    speed : array_like
        Speed through water U [m/s]; U <= 0 makes no distance and returns +inf.
    drag_coefficient : array_like
        C_D [-] referenced to ``reference_area``.
    reference_area : array_like
        A [m2].
    propulsive_efficiency : array_like
        eta [-].
    hotel_load : array_like
        Hotel power P_hotel [W].

    Returns
    -------
    ndarray
        e = 1/2 rho U^2 C_D A / eta + P_hotel / U [J/m].

    Notes
    -----
    (P + P_hotel) / U with P from :func:`propulsion_power`; the first term grows as U^2,
    the second falls as 1/U, so there is an optimum (:func:`optimal_speed`) [1]_.

    References
    ----------
    .. [1] Phillips et al., 2017: Ocean Engineering, on optimum swimming speeds and cost of
       transport of marine animals and AUVs (citation recalled; verify before quoting).
    """
    u = np.asarray(speed, dtype=float)
    moving = u > 0.0
    u_safe = np.where(moving, u, 1.0)
    drag = drag_force(density, u_safe, drag_coefficient, reference_area)
    per_metre = drag / np.asarray(propulsive_efficiency, dtype=float) + np.asarray(
        hotel_load, dtype=float) / u_safe
    return np.where(moving, per_metre, np.inf)


def optimal_speed(density, drag_coefficient, reference_area, propulsive_efficiency, hotel_load):
    """Speed of least energy per distance.

    Parameters
    ----------
    density : array_like
        rho [kg/m3].
    drag_coefficient : array_like
        C_D [-] referenced to ``reference_area``.
    reference_area : array_like
        A [m2].
    propulsive_efficiency : array_like
        eta [-].
    hotel_load : array_like
        P_hotel [W].

    Returns
    -------
    ndarray
        U* = (eta P_hotel / (rho C_D A))^(1/3) [m/s].

    Notes
    -----
    d/dU [rho U^2 C_D A / (2 eta) + P_hotel / U] = 0 gives rho U^3 C_D A / eta = P_hotel,
    i.e. at U* the propulsion power is half the hotel load (derived; see [1]_).

    References
    ----------
    .. [1] Phillips et al., 2017: Ocean Engineering, on optimum swimming speeds and cost of
       transport (citation recalled; verify before quoting).
    """
    rho = np.asarray(density, dtype=float)
    cd = np.asarray(drag_coefficient, dtype=float)
    area = np.asarray(reference_area, dtype=float)
    eta = np.asarray(propulsive_efficiency, dtype=float)
    hotel = np.asarray(hotel_load, dtype=float)
    return np.cbrt(eta * hotel / (rho * cd * area))


def efficiency_at_speed(speed, reference_efficiency, reference_speed, table_speed,
                        table_efficiency):
    """Propulsive efficiency at a speed from a tabulated curve scaled to a reference value.

    Parameters
    ----------
    speed : array_like
        Speed through water U [m/s].
    reference_efficiency : array_like
        Overall propulsive efficiency at ``reference_speed`` eta_ref [-] (e.g. the uncertain
        value from a bench test at the cruise speed).
    reference_speed : array_like
        Speed at which ``reference_efficiency`` holds U_ref [m/s].
    table_speed : array_like, (m,)
        Tabulated speeds, strictly increasing [m/s].
    table_efficiency : array_like, (m,)
        Efficiency at each tabulated speed, in (0, 1] [-]; only its shape matters.

    Returns
    -------
    ndarray
        eta(U) = eta_ref * T(U) / T(U_ref) [-], with T the piecewise-linear table held at its
        end values outside it. A constant table returns eta_ref exactly.

    Raises
    ------
    ValueError
        If the table is not strictly increasing in speed, has fewer than two points or an
        efficiency outside (0, 1].

    Notes
    -----
    A propeller's open-water efficiency varies with advance ratio, so the overall efficiency
    of a thruster matched to one cruise speed falls off away from it (common practice, no
    source); the curve carries that shape, the reference value its uncertain level.
    """
    ts = np.asarray(table_speed, dtype=float)
    te = np.asarray(table_efficiency, dtype=float)
    if ts.ndim != 1 or ts.shape != te.shape or ts.size < 2:
        raise ValueError(f"efficiency table needs two or more (speed, efficiency) pairs of "
                         f"equal length, got {ts.shape} and {te.shape}")
    if np.any(np.diff(ts) <= 0.0):
        raise ValueError(f"efficiency table speeds must increase strictly, got {ts.tolist()}")
    if np.any((te <= 0.0) | (te > 1.0)):
        raise ValueError(f"efficiency table values must lie in (0, 1], got {te.tolist()}")
    shape = np.interp(np.asarray(speed, dtype=float), ts, te)
    at_reference = np.interp(np.asarray(reference_speed, dtype=float), ts, te)
    return np.asarray(reference_efficiency, dtype=float) * (shape / at_reference)


def speed_to_hold_ground_speed(setpoint_speed, min_ground_speed, current_along, current_across,
                               max_speed):
    """Speed through water under the policy "hold at least a minimum ground speed".

    Parameters
    ----------
    setpoint_speed : array_like
        Commanded speed through water U_set [m/s].
    min_ground_speed : array_like
        Ground speed to hold along the track u_g,min [m/s].
    current_along : array_like
        Current along track c_a [m/s], positive when following.
    current_across : array_like
        Current across track c_x [m/s].
    max_speed : array_like
        Highest speed through water the vehicle may use U_max [m/s].

    Returns
    -------
    ndarray
        U = min(max(U_set, U_req), max(U_max, U_set)) [m/s], with
        U_req = sqrt((u_g,min - c_a)^2 + c_x^2) where u_g,min > c_a, else U_set. Where even
        U_max cannot hold u_g,min, the vehicle flies at U_max (and may lose headway later,
        a named failure state of the transit).

    Notes
    -----
    Inverts the crab triangle u_g = sqrt(U^2 - c_x^2) + c_a (see
    :func:`physics.currents.ground_track`) for U (derived).
    """
    u_set = np.asarray(setpoint_speed, dtype=float)
    g = np.asarray(min_ground_speed, dtype=float)
    c_a = np.asarray(current_along, dtype=float)
    c_x = np.asarray(current_across, dtype=float)
    needed = np.where(g > c_a, np.sqrt(np.square(g - c_a) + np.square(c_x)), u_set)
    ceiling = np.maximum(np.asarray(max_speed, dtype=float), u_set)
    return np.minimum(np.maximum(u_set, needed), ceiling)
