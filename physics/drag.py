"""Hull drag of a streamlined body of revolution: friction lines, form factor, roughness.

All drag coefficients here are referenced to the wetted area unless a function says
otherwise; a drag coefficient must always travel with its reference area.
"""

import numpy as np

__all__ = [
    "drag_force",
    "fouling_drag_multiplier",
    "friction_with_roughness",
    "hoerner_form_factor",
    "hull_drag_coefficient",
    "ittc1957_friction",
    "reynolds_number",
    "rough_friction",
    "roughness_reynolds_number",
    "spheroid_wetted_area",
]

#: Roughness Reynolds number below which a surface is hydraulically smooth.
HYDRAULICALLY_SMOOTH_LIMIT = 5.0
#: Roughness Reynolds number above which the flow is fully rough.
FULLY_ROUGH_LIMIT = 70.0


def reynolds_number(speed, length, kinematic_viscosity):
    """Length Reynolds number.

    Parameters
    ----------
    speed : array_like
        Speed through water U [m/s].
    length : array_like
        Reference length L, the hull length [m].
    kinematic_viscosity : array_like
        Kinematic viscosity nu [m2/s].

    Returns
    -------
    ndarray
        Reynolds number Re = U L / nu [-].
    """
    u = np.asarray(speed, dtype=float)
    length = np.asarray(length, dtype=float)
    nu = np.asarray(kinematic_viscosity, dtype=float)
    return u * length / nu


def ittc1957_friction(reynolds):
    """ITTC-1957 model-ship correlation line.

    Parameters
    ----------
    reynolds : array_like
        Length Reynolds number Re [-]; meaningful for Re well above 1e5.

    Returns
    -------
    ndarray
        Frictional resistance coefficient C_F [-], referenced to wetted area.
        Re = 0 (vehicle at rest) returns 0.0 without a warning.

    Notes
    -----
    C_F = 0.075 / (log10 Re - 2)^2 [1]_, [2]_. The line is singular at Re = 100, far below
    any vehicle operating point.

    References
    ----------
    .. [1] ITTC, 1957: Proceedings of the 8th International Towing Tank Conference, Madrid.
    .. [2] Morrall, A., 1970: NPL Ship Report 142, National Physical Laboratory.
    """
    re = np.asarray(reynolds, dtype=float)
    with np.errstate(divide="ignore"):
        return 0.075 / (np.log10(re) - 2.0) ** 2


def hoerner_form_factor(length, diameter):
    """Form factor of a streamlined body of revolution (wetted-area based).

    Parameters
    ----------
    length : array_like
        Hull length l [m].
    diameter : array_like
        Maximum hull diameter d [m].

    Returns
    -------
    ndarray
        Form factor (1 + k) [-], the ratio of total viscous drag to flat-plate friction.

    Notes
    -----
    1 + k = 1 + 1.5 (d/l)^1.5 + 7 (d/l)^3 (Hoerner 1965, ch. 6 [1]_).

    References
    ----------
    .. [1] Hoerner, S.F., 1965: Fluid-Dynamic Drag. Published by the author, Midland Park NJ.
    """
    ratio = np.asarray(diameter, dtype=float) / np.asarray(length, dtype=float)
    return 1.0 + 1.5 * ratio**1.5 + 7.0 * ratio**3


def _asin_over_x(x):
    """arcsin(x)/x, accurate near x = 0."""
    small = x < 1e-4
    safe = np.where(small, 1.0, x)
    return np.where(small, 1.0 + x**2 / 6.0 + 3.0 * x**4 / 40.0, np.arcsin(safe) / safe)


def _atanh_over_x(x):
    """artanh(x)/x, accurate near x = 0."""
    small = x < 1e-4
    safe = np.where(small, 0.5, x)
    return np.where(small, 1.0 + x**2 / 3.0 + x**4 / 5.0, np.arctanh(safe) / safe)


def spheroid_wetted_area(length, diameter):
    """Surface area of the spheroid with the hull's length and diameter.

    Parameters
    ----------
    length : array_like
        Hull length l (axis of revolution) [m].
    diameter : array_like
        Maximum diameter d [m].

    Returns
    -------
    ndarray
        Surface area S [m2].

    Notes
    -----
    Prolate case (l >= d), semi-axes a = l/2, b = d/2, eccentricity e = sqrt(1 - b^2/a^2):
    S = 2 pi b^2 (1 + a arcsin(e) / (b e)). Oblate case (l < d), with a = d/2, c = l/2,
    e = sqrt(1 - c^2/a^2): S = 2 pi a^2 (1 + (1 - e^2) artanh(e) / e). Both tend to the
    sphere 4 pi r^2 as e -> 0 (standard geometry, e.g. [1]_).

    A torpedo-shaped hull with a parallel mid-body has more wetted area than the spheroid of
    the same length and diameter, so this is a low estimate (typically 10-25 % low); give the
    measured wetted area when it is known.

    References
    ----------
    .. [1] Beyer, W.H. (ed.), 1987: CRC Standard Mathematical Tables, 28th ed. CRC Press.
    """
    length = np.asarray(length, dtype=float)
    diameter = np.asarray(diameter, dtype=float)
    length, diameter = np.broadcast_arrays(length, diameter)
    prolate = length >= diameter
    major = np.where(prolate, length, diameter) / 2.0
    minor = np.where(prolate, diameter, length) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(major > 0.0, minor / np.where(major > 0.0, major, 1.0), 1.0)
    e = np.sqrt(np.clip(1.0 - ratio**2, 0.0, 1.0))
    prolate_area = 2.0 * np.pi * minor**2 + 2.0 * np.pi * minor * major * _asin_over_x(e)
    oblate_area = 2.0 * np.pi * major**2 * (
        1.0 + (1.0 - e**2) * _atanh_over_x(np.minimum(e, 1.0 - 1e-15))
    )
    return np.where(prolate, prolate_area, oblate_area)


def hull_drag_coefficient(speed, length, diameter, kinematic_viscosity, *, appendage_factor=1.0):
    """Viscous drag coefficient of a bare or appended hull, referenced to wetted area.

    Parameters
    ----------
    speed : array_like
        Speed through water U [m/s].
    length : array_like
        Hull length l [m].
    diameter : array_like
        Maximum hull diameter d [m].
    kinematic_viscosity : array_like
        Kinematic viscosity nu [m2/s].
    appendage_factor : array_like, optional
        Multiplier for fins, antennas and sensors [-] (1.0 = bare hull).

    Returns
    -------
    ndarray
        Drag coefficient C_D [-] referenced to the wetted area.

    Notes
    -----
    C_D = C_F(Re) (1 + k) f_app, with C_F from :func:`ittc1957_friction` [1]_ and
    (1 + k) from :func:`hoerner_form_factor` [2]_.

    References
    ----------
    .. [1] ITTC, 1957: Proceedings of the 8th International Towing Tank Conference.
    .. [2] Hoerner, S.F., 1965: Fluid-Dynamic Drag, ch. 6.
    """
    re = reynolds_number(speed, length, kinematic_viscosity)
    return (
        ittc1957_friction(re)
        * hoerner_form_factor(length, diameter)
        * np.asarray(appendage_factor, dtype=float)
    )


def drag_force(density, speed, drag_coefficient, reference_area):
    """Drag force.

    Parameters
    ----------
    density : array_like
        Seawater density rho [kg/m3].
    speed : array_like
        Speed through water U [m/s].
    drag_coefficient : array_like
        Drag coefficient C_D [-], referenced to ``reference_area``.
    reference_area : array_like
        Reference area A matching the coefficient [m2].

    Returns
    -------
    ndarray
        Drag D = 1/2 rho U^2 C_D A [N].
    """
    rho = np.asarray(density, dtype=float)
    u = np.asarray(speed, dtype=float)
    cd = np.asarray(drag_coefficient, dtype=float)
    area = np.asarray(reference_area, dtype=float)
    return 0.5 * rho * u**2 * cd * area


def fouling_drag_multiplier(fouling_state, drag_increase):
    """Drag multiplier of the fouling penalty route.

    Parameters
    ----------
    fouling_state : array_like
        Fouling state phi [-]; clipped to [0, 1].
    drag_increase : array_like
        Fractional drag increase at full fouling Delta_D [-] (0.5 = +50 %).

    Returns
    -------
    ndarray
        Multiplier 1 + Delta_D phi [-].
    """
    phi = np.clip(np.asarray(fouling_state, dtype=float), 0.0, 1.0)
    return 1.0 + np.asarray(drag_increase, dtype=float) * phi


def rough_friction(length, roughness):
    """Friction coefficient of a fully rough flat plate.

    Parameters
    ----------
    length : array_like
        Plate (hull) length L [m].
    roughness : array_like
        Equivalent sand-grain roughness k_s [m], > 0.

    Returns
    -------
    ndarray
        C_F [-] referenced to wetted area. k_s = 0 gives 0.0 (the law has no smooth limit).

    Notes
    -----
    C_F = (1.89 + 1.62 log10(L / k_s))^-2.5, valid only in the fully rough regime
    (k+ >~ 70), where friction is independent of Reynolds number [1]_.

    References
    ----------
    .. [1] Schlichting, H., 1979: Boundary-Layer Theory, 7th ed. McGraw-Hill (rough flat
       plate, after Prandtl & Schlichting 1934).
    """
    length = np.asarray(length, dtype=float)
    ks = np.asarray(roughness, dtype=float)
    with np.errstate(divide="ignore"):
        return (1.89 + 1.62 * np.log10(length / ks)) ** -2.5


def roughness_reynolds_number(speed, roughness, kinematic_viscosity, friction_coefficient):
    """Roughness Reynolds number k+.

    Parameters
    ----------
    speed : array_like
        Speed through water U [m/s].
    roughness : array_like
        Equivalent sand-grain roughness k_s [m].
    kinematic_viscosity : array_like
        Kinematic viscosity nu [m2/s].
    friction_coefficient : array_like
        Skin-friction coefficient C_F [-] used to estimate the friction velocity.

    Returns
    -------
    ndarray
        k+ = u_tau k_s / nu [-], with u_tau = U sqrt(C_F / 2).

    Notes
    -----
    Regimes: k+ < 5 hydraulically smooth, 5-70 transitional, > 70 fully rough [1]_.

    References
    ----------
    .. [1] Schlichting, H., 1979: Boundary-Layer Theory, 7th ed. McGraw-Hill.
    """
    u = np.asarray(speed, dtype=float)
    ks = np.asarray(roughness, dtype=float)
    nu = np.asarray(kinematic_viscosity, dtype=float)
    cf = np.asarray(friction_coefficient, dtype=float)
    return u * np.sqrt(cf / 2.0) * ks / nu


def friction_with_roughness(speed, length, kinematic_viscosity, roughness):
    """Skin friction of a hull with equivalent sand roughness, smooth to fully rough.

    Parameters
    ----------
    speed : array_like
        Speed through water U [m/s].
    length : array_like
        Hull length L [m].
    kinematic_viscosity : array_like
        Kinematic viscosity nu [m2/s].
    roughness : array_like
        Equivalent sand-grain roughness k_s [m] (0 = smooth).

    Returns
    -------
    ndarray
        C_F [-] referenced to wetted area; never below the smooth ITTC-1957 value, and
        exactly that value when k_s = 0 or k+ <= 5.

    Notes
    -----
    k+ is evaluated with the friction velocity of the smooth line, u_tau = U sqrt(C_F0/2),
    C_F0 = ITTC-1957 (no iteration). With w = clip(ln(k+/5) / ln(70/5), 0, 1) (linear in
    log k+ across the transitional range):

        C_F = C_F0 + w max(C_F,rough - C_F0, 0),

    C_F,rough from :func:`rough_friction` [1]_. The blend is this project's interpolation,
    not a published transitional law.

    Validity: typical sand-equivalent roughness by fouling condition (Schultz 2007 table
    [2]_, values from memory): coating as applied 30 um, light slime 100 um, heavy slime
    300 um, small calcareous 1 mm, medium 3 mm, heavy 10 mm. At glider speeds slime stays
    hydraulically smooth. Ship roughness-allowance correlations (Bowden-Davison, Townsin)
    are fitted at ship length and Reynolds number and are not valid at vehicle scale
    (L ~ 1-5 m); they are deliberately not offered.

    References
    ----------
    .. [1] Schlichting, H., 1979: Boundary-Layer Theory, 7th ed. McGraw-Hill.
    .. [2] Schultz, M.P., 2007: Effects of coating roughness and biofouling on ship
       resistance and powering. Biofouling 23(5):331-341.
    """
    u = np.asarray(speed, dtype=float)
    length = np.asarray(length, dtype=float)
    nu = np.asarray(kinematic_viscosity, dtype=float)
    ks = np.asarray(roughness, dtype=float)
    smooth = ittc1957_friction(reynolds_number(u, length, nu))
    rough_wall = ks > 0.0
    ks_safe = np.where(rough_wall, ks, 1.0)
    k_plus = roughness_reynolds_number(u, ks_safe, nu, smooth)
    with np.errstate(divide="ignore"):
        weight = np.log(k_plus / HYDRAULICALLY_SMOOTH_LIMIT) / np.log(
            FULLY_ROUGH_LIMIT / HYDRAULICALLY_SMOOTH_LIMIT
        )
    weight = np.where(rough_wall, np.clip(weight, 0.0, 1.0), 0.0)
    excess = np.maximum(rough_friction(length, ks_safe) - smooth, 0.0)
    return smooth + weight * excess
