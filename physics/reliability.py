"""Hardware faults during a mission: survival under constant or Weibull hazards.

Each subsystem (thruster, navigation, power, ...) has a hazard on the mission clock, independent
of the energy budget. The subsystems are in series: the first fault of any one ends the mission.
"""

import numpy as np

__all__ = ["cumulative_hazard", "survival_probability", "first_fault_probability"]


def cumulative_hazard(elapsed, rate, shape=1.0):
    """Cumulative hazard of one subsystem after an operating time.

    Parameters
    ----------
    elapsed : array_like
        Operating time since the start of the mission t [s], >= 0.
    rate : array_like
        Hazard rate lambda [1/s] (constant hazard when ``shape`` = 1); for a Weibull law it is
        the inverse of the characteristic life eta = 1/lambda.
    shape : array_like, optional
        Weibull shape beta [-] (> 0): 1 constant hazard, > 1 wear-out, < 1 infant mortality.

    Returns
    -------
    ndarray
        H(t) = (lambda t)^beta [-].

    Notes
    -----
    Weibull survival S(t) = exp(-(t/eta)^beta) with eta = 1/lambda; beta = 1 gives the
    exponential law exp(-lambda t) of a constant hazard (any reliability text, e.g.
    O'Connor & Kleyner, *Practical Reliability Engineering*, ch. 2).
    """
    t = np.maximum(np.asarray(elapsed, dtype=float), 0.0)
    lam = np.asarray(rate, dtype=float)
    beta = np.asarray(shape, dtype=float)
    if np.any(lam < 0.0) or np.any(beta <= 0.0):
        raise ValueError("hazard rates must be >= 0 and Weibull shapes > 0, got rates "
                         f"{np.ravel(lam).tolist()} and shapes {np.ravel(beta).tolist()}")
    return np.power(lam * t, beta)


def survival_probability(elapsed, rates, shapes=None):
    """Probability that no subsystem has failed by an operating time (series system).

    Parameters
    ----------
    elapsed : array_like
        Operating time t [s], any shape S.
    rates : array_like, (m,)
        Hazard rate of each of m subsystems [1/s].
    shapes : array_like, (m,), optional
        Weibull shape of each subsystem [-]; default all 1 (constant hazards).

    Returns
    -------
    ndarray, shape S
        P(no fault in [0, t]) = exp(-sum_i H_i(t)) [-]; 1 when no subsystem is given.
    """
    lam = np.atleast_1d(np.asarray(rates, dtype=float))
    beta = np.ones_like(lam) if shapes is None else np.atleast_1d(np.asarray(shapes, dtype=float))
    t = np.asarray(elapsed, dtype=float)
    if lam.size == 0:
        return np.ones_like(t)
    total = cumulative_hazard(t[..., None], lam, beta).sum(axis=-1)
    return np.exp(-total)


def first_fault_probability(start, end, rates, shapes=None):
    """Probability that the first fault of the system falls inside an interval of the mission.

    Parameters
    ----------
    start, end : array_like
        Interval [t_a, t_b] on the mission clock [s], t_b >= t_a (e.g. the time under ice).
    rates, shapes : array_like, (m,)
        As in :func:`survival_probability`.

    Returns
    -------
    ndarray
        S(t_a) - S(t_b) [-], >= 0 (0 for an empty interval).
    """
    a = np.asarray(start, dtype=float)
    b = np.maximum(np.asarray(end, dtype=float), a)
    return np.maximum(survival_probability(a, rates, shapes)
                      - survival_probability(b, rates, shapes), 0.0)
