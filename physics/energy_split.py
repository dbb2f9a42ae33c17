"""Where the energy of a transit goes: the energy drawn on each leg split by what drew it.

:func:`physics.mission.fly_route` integrates one total power; this module reads its route
profile afterwards and splits the energy drawn between two profile columns into the terms of
that power, so the parts add up to the energy the transit drew (nothing is integrated twice):

- propeller vehicle: P = D U / eta + P_hotel -> ``propulsion`` and ``hotel``;
- glider, per dive cycle of time T_c: E_c = (2 B z_b / eta_pump + E_fixed) + 2 E_inf
  + P_s t_s / N + P_hotel T_c -> ``pump``, ``inflections``, ``surfacing`` and ``hotel``
  (the hotel load includes the sensor payload).

The hotel part of a step is exact, P_hotel dt / c (c the capacity factor of the leg, as
:func:`fly_route` counts energy against the rated capacity). The rest of the step's energy is
shared among the other terms in proportion to their power at the fouling state of the step's
midpoint: exact for a propeller vehicle (one term), and for a glider exact wherever the trim
does not change within the step.
"""
from __future__ import annotations

import numpy as np

from physics import buoyancy_engine as _engine
from physics.mission import GliderRates, PropellerRates, RouteProfile, _on_leg

__all__ = ["PROPELLER_TERMS", "GLIDER_TERMS", "power_terms", "leg_energy_split"]

#: names of the energy terms of each vehicle kind, hotel last
PROPELLER_TERMS = ("propulsion", "hotel")
GLIDER_TERMS = ("pump", "inflections", "surfacing", "hotel")


def power_terms(rates, leg: int, phi) -> dict[str, np.ndarray]:
    """Cycle-mean power of every term but the hotel load on leg ``leg`` at fouling ``phi`` [W].

    Parameters
    ----------
    rates : PropellerRates or GliderRates
    leg : int
        Leg index.
    phi : array_like, (n,)
        Fouling state [-].

    Returns
    -------
    dict of str to ndarray (n,)
        ``{"propulsion": D U / eta}`` for a propeller vehicle;
        ``{"pump": (2 B z_b / eta + E_fixed) / T_c, "inflections": 2 E_inf / T_c,
        "surfacing": P_s t_s / (N T_c)}`` for a glider (0 where no cycle exists).
    """
    phi = np.asarray(phi, dtype=float)
    if isinstance(rates, PropellerRates):
        base, fouled, _ = rates.power_terms(leg)
        return {"propulsion": base - rates.hotel_load[:, leg] + fouled * np.clip(phi, 0.0, 1.0)}
    if not isinstance(rates, GliderRates):
        raise TypeError(f"no energy terms for {type(rates).__name__}")
    trim, cycle, _, _ = rates.cycle_at(leg, phi)
    ok = cycle.time > 0.0
    t_c = np.where(ok, cycle.time, 1.0)
    n_dives = _on_leg(rates.dives_per_surfacing, leg)
    surfaces = np.isfinite(n_dives) & (n_dives > 0)
    per_cycle = np.where(surfaces, rates.surface_time / np.where(surfaces, n_dives, 1.0), 0.0)
    pump = (_engine.pump_energy(trim.net_buoyancy, rates.bottom_depth[:, leg],
                                rates.pump_efficiency) + rates.stroke_fixed_energy)
    return {
        "pump": np.where(ok, pump / t_c, 0.0),
        "inflections": np.where(ok, 2.0 * rates.inflection_energy / t_c, 0.0)
        * np.ones_like(phi),
        "surfacing": np.where(ok, rates.surface_power * per_cycle / t_c, 0.0)
        * np.ones_like(phi),
    }


def leg_energy_split(rates, profile: RouteProfile, n_legs: int,
                     capacity_factor=1.0) -> dict[str, np.ndarray]:
    """Energy drawn on each leg, split by term [J], each (n, J); the terms add up to the
    energy the profile records on the leg.

    Parameters
    ----------
    rates : PropellerRates or GliderRates
        The vehicle as flown by :func:`physics.mission.fly_route`.
    profile : RouteProfile
        The flight's profile (any number of columns per leg).
    n_legs : int
        Number of legs J.
    capacity_factor : array_like, (n, J), optional
        As passed to :func:`fly_route`: energy is counted against the rated capacity as E / c.

    Returns
    -------
    dict of str to ndarray (n, J)
        :data:`PROPELLER_TERMS` or :data:`GLIDER_TERMS` [J, rated capacity].
    """
    n = profile.energy.shape[0]
    charge = np.broadcast_to(np.asarray(capacity_factor, dtype=float), (n, n_legs))
    names = PROPELLER_TERMS if isinstance(rates, PropellerRates) else GLIDER_TERMS
    out = {name: np.zeros((n, n_legs)) for name in names}
    for k in range(1, profile.energy.shape[1]):
        leg = int(profile.leg[k])
        drawn = profile.energy[:, k] - profile.energy[:, k - 1]
        dt = profile.elapsed[:, k] - profile.elapsed[:, k - 1]
        if not np.any(dt > 0.0):
            continue
        hotel = np.minimum(rates.hotel_load[:, leg] * dt / charge[:, leg], drawn)
        terms = power_terms(rates, leg, 0.5 * (profile.fouling[:, k - 1] + profile.fouling[:, k]))
        total = sum(terms.values())
        rest = drawn - hotel
        share_base = np.where(total > 0.0, total, 1.0)
        for name, power in terms.items():
            share = np.where(total > 0.0, power / share_base, 1.0 / len(terms))
            out[name][:, leg] += rest * share
        out["hotel"][:, leg] += hotel
    return out
