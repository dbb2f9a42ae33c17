"""Estimators with confidence intervals: proportions, means, quantiles, curves (``intervals``),
Sobol indices by the Saltelli design (``sobol``) and from polynomial chaos (``pce``).

The interval rules live here once; decisions, studies and reports call them.
"""
from uq.estimators.intervals import *  # noqa: F401,F403 - the interval rules are the package's face
from uq.estimators.intervals import __all__ as _interval_names

__all__ = list(_interval_names)
