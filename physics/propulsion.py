"""Propeller-driven, neutrally buoyant vehicle in level flight: power and cost of transport."""

import numpy as np

from .drag import drag_force

__all__ = ["optimal_speed", "propeller_energy_per_distance", "propulsion_power"]


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
