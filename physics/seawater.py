"""Seawater properties: TEOS-10 density (through ``gsw``) and seawater viscosity.

Temperature is the one non-SI quantity in ``physics``: in-situ temperature in degrees
Celsius, as the TEOS-10 functions and the viscosity correlation expect it. Pressure is sea
pressure in dbar, the TEOS-10 convention. Everything else is SI.
"""

import warnings

import gsw
import numpy as np

__all__ = [
    "SeawaterRangeWarning",
    "density",
    "dynamic_viscosity",
    "kinematic_viscosity",
    "reset_range_warning",
]

#: Validity range of the Sharqawy et al. (2010) viscosity fit.
VISCOSITY_TEMPERATURE_RANGE = (0.0, 180.0)  # [degC]
VISCOSITY_SALINITY_RANGE = (0.0, 0.15)  # [kg/kg]

# Reference-composition salinity per unit practical salinity, uPS = 35.16504/35 [g/kg]
# (Millero et al. 2008, Deep-Sea Research I 55:50-72; TEOS-10 manual).
_REFERENCE_SALINITY_PER_PSU = 35.16504 / 35.0


class SeawaterRangeWarning(UserWarning):
    """A seawater correlation was evaluated outside its published validity range."""


_range_warning_emitted = False


def reset_range_warning():
    """Re-arm the once-per-process :class:`SeawaterRangeWarning` (for tests)."""
    global _range_warning_emitted
    _range_warning_emitted = False


def _warn_out_of_range(message):
    global _range_warning_emitted
    if not _range_warning_emitted:
        _range_warning_emitted = True
        warnings.warn(message, SeawaterRangeWarning, stacklevel=3)


def density(practical_salinity, temperature, pressure, *, longitude=None, latitude=None):
    """In-situ seawater density from TEOS-10.

    Parameters
    ----------
    practical_salinity : array_like
        Practical salinity SP [PSS-78, dimensionless].
    temperature : array_like
        In-situ temperature t [degC] (TEOS-10 convention; the one non-SI input).
    pressure : array_like
        Sea pressure p [dbar] (absolute pressure minus 10.1325 dbar; TEOS-10 convention).
    longitude, latitude : array_like, optional
        Position [degrees East, degrees North]. When both are given, absolute salinity uses
        the TEOS-10 composition anomaly at that place; otherwise reference salinity is used.

    Returns
    -------
    ndarray
        In-situ density rho [kg/m3].

    Notes
    -----
    SA = SA_from_SP(SP, p, lon, lat) (or SR = uPS SP without a position),
    CT = CT_from_t(SA, t, p), rho = rho(SA, CT, p), with the 75-term TEOS-10 expression for
    the specific volume as implemented in ``gsw`` [1]_, [2]_.

    References
    ----------
    .. [1] IOC, SCOR and IAPSO, 2010: The international thermodynamic equation of seawater
       - 2010: Calculation and use of thermodynamic properties. Intergovernmental
       Oceanographic Commission, Manuals and Guides No. 56, UNESCO.
    .. [2] McDougall, T.J. and P.M. Barker, 2011: Getting started with TEOS-10 and the Gibbs
       Seawater (GSW) Oceanographic Toolbox. SCOR/IAPSO WG127.
    """
    sp = np.asarray(practical_salinity, dtype=float)
    t = np.asarray(temperature, dtype=float)
    p = np.asarray(pressure, dtype=float)
    if longitude is not None and latitude is not None:
        sa = gsw.SA_from_SP(sp, p, np.asarray(longitude, dtype=float),
                            np.asarray(latitude, dtype=float))
    else:
        sa = gsw.SR_from_SP(sp)
    ct = gsw.CT_from_t(sa, t, p)
    return np.asarray(gsw.rho(sa, ct, p), dtype=float)


def dynamic_viscosity(temperature, practical_salinity):
    """Dynamic viscosity of seawater (Sharqawy, Lienhard & Zubair 2010).

    Parameters
    ----------
    temperature : array_like
        Temperature t [degC].
    practical_salinity : array_like
        Practical salinity SP [PSS-78]; converted to reference salinity S = uPS SP / 1000
        [kg/kg] for the fit.

    Returns
    -------
    ndarray
        Dynamic viscosity mu [Pa s].

    Warns
    -----
    SeawaterRangeWarning
        Once per process, when any value lies outside 0-180 degC or 0-0.15 kg/kg. The fit is
        then extrapolated (e.g. super-cooled water just below 0 degC under ice).

    Notes
    -----
    mu_sw = mu_w (1 + A S + B S^2), with
    A = 1.541 + 1.998e-2 t - 9.52e-5 t^2, B = 7.974 - 7.561e-2 t + 4.724e-4 t^2 and pure-water
    mu_w = 4.2844e-5 + 1 / (0.157 (t + 64.993)^2 - 91.296) ([1]_).
    Stated accuracy +/-1.5 % in 0-180 degC, 0-0.15 kg/kg.

    References
    ----------
    .. [1] Sharqawy, M.H., J.H. Lienhard V and S.M. Zubair, 2010: Thermophysical properties
       of seawater: a review of existing correlations and data. Desalination and Water
       Treatment 16:354-380.
    """
    t = np.asarray(temperature, dtype=float)
    s = np.asarray(practical_salinity, dtype=float) * _REFERENCE_SALINITY_PER_PSU / 1000.0
    t_low, t_high = VISCOSITY_TEMPERATURE_RANGE
    s_low, s_high = VISCOSITY_SALINITY_RANGE
    if np.any((t < t_low) | (t > t_high) | (s < s_low) | (s > s_high)):
        _warn_out_of_range(
            "seawater viscosity evaluated outside 0-180 degC / 0-0.15 kg/kg "
            "(Sharqawy et al. 2010 validity range); the fit is extrapolated"
        )
    mu_water = 4.2844e-5 + 1.0 / (0.157 * (t + 64.993) ** 2 - 91.296)
    a = 1.541 + 1.998e-2 * t - 9.52e-5 * t**2
    b = 7.974 - 7.561e-2 * t + 4.724e-4 * t**2
    return mu_water * (1.0 + a * s + b * s**2)


def kinematic_viscosity(temperature, practical_salinity, density):
    """Kinematic viscosity of seawater.

    Parameters
    ----------
    temperature : array_like
        Temperature t [degC].
    practical_salinity : array_like
        Practical salinity SP [PSS-78].
    density : array_like
        Seawater density rho [kg/m3], e.g. from :func:`density`.

    Returns
    -------
    ndarray
        Kinematic viscosity nu [m2/s].

    Notes
    -----
    nu = mu / rho with mu from :func:`dynamic_viscosity` [1]_.

    References
    ----------
    .. [1] Sharqawy, M.H., J.H. Lienhard V and S.M. Zubair, 2010: Desalination and Water
       Treatment 16:354-380.
    """
    return dynamic_viscosity(temperature, practical_salinity) / np.asarray(density, dtype=float)
