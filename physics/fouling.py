"""Growth of biofouling with a (possibly slowed) fouling clock."""

import numpy as np

__all__ = ["FoulingInputError", "fouling_growth", "fouling_state", "fouling_state_integral"]


class FoulingInputError(ValueError):
    """A fouling-growth parameter is impossible (negative time constant)."""


def _check_time_constant(tau):
    bad = tau < 0.0
    if np.any(bad):
        raise FoulingInputError(
            f"time_constant must be >= 0 [s] (inf = no fouling), got {float(tau[bad].flat[0])!r}"
        )


def fouling_state(clock, onset, time_constant):
    """Fouling state: zero before the onset delay, then saturating growth towards 1.

    Parameters
    ----------
    clock : array_like
        Fouling clock c [s]: elapsed time, possibly run slower on cold or dark legs.
    onset : array_like
        Onset delay c_on [s].
    time_constant : array_like
        Growth time constant tau [s], >= 0; inf means no fouling, 0 a step at the onset.

    Returns
    -------
    ndarray
        phi = 1 - exp(-max(c - c_on, 0) / tau) [-], in [0, 1].

    Notes
    -----
    A first-order saturating growth law (common practice, no single source); fouling of
    sensors within weeks [1]_ and micro/macrofouling within about three months even in
    cold seas [2]_ bound the plausible onset and tau.

    References
    ----------
    .. [1] Delauney, L., C. Compere and M. Lehaitre, 2010: Biofouling protection for marine
       environmental sensors. Ocean Science 6:503-511.
    .. [2] Chava et al., 2021: Oceanography 34(3).
    """
    c = np.asarray(clock, dtype=float)
    on = np.asarray(onset, dtype=float)
    tau = np.asarray(time_constant, dtype=float)
    _check_time_constant(tau)
    age = np.maximum(c - on, 0.0)
    positive = tau > 0.0
    tau_safe = np.where(positive, tau, 1.0)
    return np.where(positive, -np.expm1(-age / tau_safe), np.where(age > 0.0, 1.0, 0.0))


def fouling_state_integral(clock_start, clock_end, onset, time_constant):
    """Integral of the fouling state over the fouling clock, in closed form.

    Parameters
    ----------
    clock_start, clock_end : array_like
        Clock limits c_0, c_1 [s]; c_1 < c_0 gives the negative of the reversed integral.
    onset : array_like
        Onset delay c_on [s].
    time_constant : array_like
        Growth time constant tau [s], >= 0 (inf: no fouling).

    Returns
    -------
    ndarray
        I = integral of phi dc from c_0 to c_1 [s].

    Notes
    -----
    With a = max(c_lo, c_on), b = max(c_hi, c_on) and d = b - a (derived):

        I = d + tau exp(-(a - c_on)/tau) expm1(-d/tau),

    written with ``expm1`` so it stays accurate for tau >> d; tau = inf gives 0 and
    tau = 0 gives d.
    """
    c0 = np.asarray(clock_start, dtype=float)
    c1 = np.asarray(clock_end, dtype=float)
    forward = c1 >= c0
    if np.all(forward):
        return fouling_growth(c0, c1, onset, time_constant)[0]
    integral, _ = fouling_growth(np.minimum(c0, c1), np.maximum(c0, c1), onset, time_constant)
    return np.where(forward, integral, -integral)


def fouling_growth(clock_start, clock_end, onset, time_constant):
    """Integral of the fouling state over the clock and the state at its end, together.

    Parameters
    ----------
    clock_start, clock_end, onset, time_constant : array_like
        As for :func:`fouling_state_integral` [s], with c_0 <= c_1.

    Returns
    -------
    integral : ndarray
        I = integral of phi dc from c_0 to c_1 [s].
    state : ndarray
        phi(c_1) [-], as :func:`fouling_state` gives it.

    Notes
    -----
    With a = max(c_0, c_on), d = max(c_1, c_on) - a, e_a = exp(-(a - c_on)/tau) and
    m = expm1(-d/tau) (derived): I = d + tau e_a m and phi(c_1) = (1 - e_a) - e_a m, one pair
    of exponentials for both (what a transit needs at every profile column).
    """
    c0 = np.asarray(clock_start, dtype=float)
    c1 = np.asarray(clock_end, dtype=float)
    on = np.asarray(onset, dtype=float)
    tau = np.asarray(time_constant, dtype=float)
    _check_time_constant(tau)
    a = np.maximum(c0, on)
    d = np.maximum(c1, on) - a
    growing = np.isfinite(tau) & (tau > 0.0)
    every = bool(np.all(growing))
    tau_safe = tau if every else np.where(growing, tau, 1.0)
    e_a = np.exp((on - a) / tau_safe)
    m = np.expm1(-d / tau_safe)
    integral = d + tau_safe * e_a * m
    state = (1.0 - e_a) - e_a * m
    if not every:
        integral = np.where(growing, integral, np.where(tau == 0.0, d, 0.0))
        state = np.where(growing, state, np.where((tau == 0.0) & (c1 > on), 1.0, 0.0))
    return integral, state
