"""Battery energy available to a mission: derating, capacity by temperature, fade, reserve."""

from typing import NamedTuple

import numpy as np

__all__ = [
    "CapacityTable",
    "LITHIUM_ION",
    "LITHIUM_PRIMARY",
    "CHEMISTRIES",
    "capacity_fraction",
    "energy_above_reserve",
    "self_discharge_rate",
    "usable_energy",
]

#: seconds in a mean month (365.25 / 12 days)
_SECONDS_PER_MONTH = 365.25 / 12.0 * 86400.0


class CapacityTable(NamedTuple):
    """Deliverable capacity of a cell at low discharge rate against cell temperature.

    Attributes
    ----------
    temperature : tuple of float
        Cell temperatures, strictly increasing [degC].
    fraction : tuple of float
        Capacity at each temperature as a fraction of the rated (about 20 degC) capacity [-].
    self_discharge_per_month : float
        Typical self-discharge of the chemistry, fraction of capacity per month [-].
    source : str
        Where the numbers come from.
    """

    temperature: tuple
    fraction: tuple
    self_discharge_per_month: float
    source: str


#: Rechargeable lithium-ion at low rates. Values from memory (general trade knowledge: about
#: 80-90 % near 0 degC, 60-75 % near -20 degC; a few % self-discharge a month); use the cell
#: maker's datasheet curve for a real vehicle.
LITHIUM_ION = CapacityTable(
    temperature=(-30.0, -20.0, -10.0, 0.0, 10.0, 20.0, 45.0),
    fraction=(0.55, 0.68, 0.77, 0.85, 0.94, 1.0, 1.0),
    self_discharge_per_month=0.03,
    source="from memory: generic lithium-ion at low rate; replace with the datasheet curve",
)

#: Lithium primary (Li-SOCl2 class) at low rates. Values from memory (similar to or better than
#: lithium-ion in the cold at low rates; self-discharge below 1-2 % a year); use the cell
#: maker's datasheet curve for a real vehicle.
LITHIUM_PRIMARY = CapacityTable(
    temperature=(-30.0, -20.0, -10.0, 0.0, 10.0, 20.0, 45.0),
    fraction=(0.65, 0.75, 0.83, 0.90, 0.96, 1.0, 1.0),
    self_discharge_per_month=0.015 / 12.0,
    source="from memory: generic lithium primary (Li-SOCl2) at low rate; replace with the "
           "datasheet curve",
)

#: the documented default tables by chemistry name
CHEMISTRIES = {"lithium-ion": LITHIUM_ION, "lithium-primary": LITHIUM_PRIMARY}


def capacity_fraction(temperature, table_temperature, table_fraction):
    """Deliverable capacity at a cell temperature, interpolated in a table.

    Parameters
    ----------
    temperature : array_like
        Cell temperature T [degC] (taken as the surrounding water's on a long leg).
    table_temperature : array_like, (m,)
        Tabulated temperatures, strictly increasing [degC].
    table_fraction : array_like, (m,)
        Capacity fraction at each tabulated temperature, in (0, 1.5] [-].

    Returns
    -------
    ndarray
        c(T) [-], piecewise linear between the table's points and held at the end values
        outside them (no extrapolation of a measured curve).

    Raises
    ------
    ValueError
        If the table has fewer than two points, is not strictly increasing, or holds a
        fraction outside (0, 1.5].

    Notes
    -----
    Piecewise-linear interpolation of a datasheet curve (common practice, no source).
    """
    tt = np.asarray(table_temperature, dtype=float)
    tf = np.asarray(table_fraction, dtype=float)
    if tt.ndim != 1 or tt.shape != tf.shape or tt.size < 2:
        raise ValueError(f"capacity table needs two or more (temperature, fraction) pairs of "
                         f"equal length, got {tt.shape} and {tf.shape}")
    if np.any(np.diff(tt) <= 0.0):
        raise ValueError(f"capacity table temperatures must increase strictly, got {tt.tolist()}")
    if np.any((tf <= 0.0) | (tf > 1.5)):
        raise ValueError(f"capacity fractions must lie in (0, 1.5], got {tf.tolist()}")
    return np.interp(np.asarray(temperature, dtype=float), tt, tf)


def self_discharge_rate(per_month):
    """Linear self-discharge rate from a fraction per month.

    Parameters
    ----------
    per_month : array_like
        Fraction of capacity lost per month (mean month of 365.25/12 days) [-].

    Returns
    -------
    ndarray
        Rate f [1/s], to add to the capacity fade of :func:`usable_energy`.
    """
    return np.asarray(per_month, dtype=float) / _SECONDS_PER_MONTH


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
