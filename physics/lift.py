"""Wing lift for gliders: lift-curve slopes and the induced-drag factor, clean and fouled."""

import numpy as np

__all__ = [
    "MAX_LIFT_LOSS",
    "fouled_induced_drag_factor",
    "induced_drag_factor",
    "lift_curve_slope",
    "lift_curve_slope_low_aspect",
]

#: Lift losses at or above 1 (from sampling tails) are clipped to this value.
MAX_LIFT_LOSS = 0.999


def lift_curve_slope(aspect_ratio, *, span_efficiency=1.0, section_slope=2.0 * np.pi):
    """Lift-curve slope of a finite wing from lifting-line theory.

    Parameters
    ----------
    aspect_ratio : array_like
        Wing aspect ratio AR = b^2 / S [-].
    span_efficiency : array_like, optional
        Span efficiency factor e [-] (1 for an elliptic loading).
    section_slope : array_like, optional
        Two-dimensional section lift slope a0 [1/rad] (2 pi for thin-aerofoil theory).

    Returns
    -------
    ndarray
        Lift-curve slope a [1/rad].

    Notes
    -----
    a = a0 / (1 + a0 / (pi e AR)); with a0 = 2 pi and e = 1 this is 2 pi AR / (AR + 2)
    (Prandtl lifting-line theory, e.g. [1]_).

    References
    ----------
    .. [1] Anderson, J.D., 2011: Fundamentals of Aerodynamics, 5th ed. McGraw-Hill, ch. 5.
    """
    ar = np.asarray(aspect_ratio, dtype=float)
    e = np.asarray(span_efficiency, dtype=float)
    a0 = np.asarray(section_slope, dtype=float)
    return a0 / (1.0 + a0 / (np.pi * e * ar))


def lift_curve_slope_low_aspect(aspect_ratio):
    """Lift-curve slope of a low-aspect-ratio wing (Helmbold).

    Parameters
    ----------
    aspect_ratio : array_like
        Wing aspect ratio AR [-].

    Returns
    -------
    ndarray
        Lift-curve slope a [1/rad].

    Notes
    -----
    a = 2 pi AR / (2 + sqrt(AR^2 + 4)) [1]_. It tends to pi AR / 2 (slender-wing theory) as
    AR -> 0 and to 2 pi as AR -> infinity, so it stays usable for the small wings of gliders.

    References
    ----------
    .. [1] Helmbold, H.B., 1942: Der unverwundene Ellipsenflügel als tragende Fläche.
       Jahrbuch der deutschen Luftfahrtforschung (citation from memory).
    """
    ar = np.asarray(aspect_ratio, dtype=float)
    return 2.0 * np.pi * ar / (2.0 + np.sqrt(ar**2 + 4.0))


def induced_drag_factor(aspect_ratio, span_efficiency=1.0):
    """Induced-drag factor of the parabolic polar C_D = C_D0 + K C_L^2.

    Parameters
    ----------
    aspect_ratio : array_like
        Aspect ratio AR [-].
    span_efficiency : array_like, optional
        Span (Oswald) efficiency e [-].

    Returns
    -------
    ndarray
        K = 1 / (pi e AR) [-].

    References
    ----------
    .. [1] Anderson, J.D., 2011: Fundamentals of Aerodynamics, 5th ed. McGraw-Hill, ch. 5.
    """
    ar = np.asarray(aspect_ratio, dtype=float)
    e = np.asarray(span_efficiency, dtype=float)
    return 1.0 / (np.pi * e * ar)


def fouled_induced_drag_factor(induced_drag_factor, lift_loss):
    """Induced-drag factor after fouling has reduced the lift slope.

    Parameters
    ----------
    induced_drag_factor : array_like
        Clean induced-drag factor K [-].
    lift_loss : array_like
        Fractional loss of lift slope delta_L [-]. Values are clipped to [0, 0.999]
        (``MAX_LIFT_LOSS``) rather than rejected, because they may come from the tails of a
        sampled distribution; a loss of 1 would mean no lift at all.

    Returns
    -------
    ndarray
        K / (1 - delta_L)^2 [-].

    Notes
    -----
    With the lift slope scaled by (1 - delta_L), the angle of attack needed for a given C_L
    grows by 1/(1 - delta_L); drag quadratic in angle of attack then grows by
    1/(1 - delta_L)^2 at fixed C_L (derived).
    """
    k = np.asarray(induced_drag_factor, dtype=float)
    loss = np.clip(np.asarray(lift_loss, dtype=float), 0.0, MAX_LIFT_LOSS)
    return k / (1.0 - loss) ** 2
