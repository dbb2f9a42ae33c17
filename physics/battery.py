"""Battery energy available to a mission: derating, capacity fade and the arrival reserve."""

import numpy as np

__all__ = ["energy_above_reserve", "usable_energy"]


def usable_energy(nominal_energy, *, cold_derating=1.0, fade_rate=0.0, elapsed=0.0,
                  usable_fraction=1.0):
    """Energy the battery can deliver after derating and fade.

    Parameters
    ----------
    nominal_energy : array_like
        Nominal (rated) pack energy E_nom [J].
    cold_derating : array_like, optional
        Fraction of capacity kept at the operating temperature and rate [-]
        (lithium cells near 0 degC at low rates keep roughly 0.8-0.95, from memory).
    fade_rate : array_like, optional
        Linear capacity fade or self-discharge rate f [1/s] (a few % per month for
        rechargeable Li-ion, from memory: 0.03 / 2.63e6 s ~ 1.1e-8 1/s).
    elapsed : array_like, optional
        Time since the pack was full t [s].
    usable_fraction : array_like, optional
        Fraction the power system can draw before cut-off [-].

    Returns
    -------
    ndarray
        E_use = E_nom c_cold max(1 - f t, 0) u_frac, clipped at >= 0 [J].

    Notes
    -----
    A deliberately simple budget model (common practice, no single source): multiplicative
    derating factors and a linear fade.
    """
    nominal = np.asarray(nominal_energy, dtype=float)
    cold = np.asarray(cold_derating, dtype=float)
    fade = np.asarray(fade_rate, dtype=float)
    t = np.asarray(elapsed, dtype=float)
    fraction = np.asarray(usable_fraction, dtype=float)
    remaining = np.maximum(1.0 - fade * t, 0.0)
    return np.maximum(nominal * cold * remaining * fraction, 0.0)


def energy_above_reserve(usable, reserve_fraction):
    """Energy that may be spent before the arrival reserve is touched.

    Parameters
    ----------
    usable : array_like
        Usable energy E_use [J], e.g. from :func:`usable_energy`.
    reserve_fraction : array_like
        Fraction of usable energy to keep on arrival r [-] (policy; 0.1-0.3 in practice).

    Returns
    -------
    ndarray
        E_use (1 - r) [J].
    """
    e = np.asarray(usable, dtype=float)
    r = np.asarray(reserve_fraction, dtype=float)
    return e * (1.0 - r)
