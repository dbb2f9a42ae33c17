"""Estimators with confidence intervals: proportions, means, quantiles, curves (``intervals``),
the one P(success) rule and mean rule of a replicated plan (``replicates``), the sequential
rule for repeated looks (``sequential``), Sobol indices by the Saltelli design (``sobol``),
from polynomial chaos (``pce``), and small failure probabilities (``rare_events``).

The interval rules live here once; decisions, studies and reports call them.
"""
from uq.estimators.intervals import *  # noqa: F401,F403 - the interval rules are the package's face
from uq.estimators.intervals import __all__ as _interval_names
from uq.estimators.replicates import *  # noqa: F401,F403
from uq.estimators.replicates import __all__ as _replicate_names
from uq.estimators.sequential import *  # noqa: F401,F403
from uq.estimators.sequential import __all__ as _sequential_names

__all__ = list(_interval_names) + list(_replicate_names) + list(_sequential_names)
