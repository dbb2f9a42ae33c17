"""Estimators with confidence intervals: proportions and means (``intervals``), quantiles and
exceedance curves (``quantiles``), the one P(success) rule and mean rule of a replicated plan
(``replicates``), the sequential rule for repeated looks (``sequential``), Sobol indices by
the Saltelli design (``sobol_design``, ``sobol``), from polynomial chaos (``pce_basis``,
``pce``), grouped and ranked (``sensitivity``), small failure probabilities
(``rare_events``), and given rows streamed through the engine (``streamed``).

The interval rules live here once; decisions, studies and reports call them.
"""
from uq.estimators.intervals import *  # noqa: F401,F403 - the interval rules are the package's face
from uq.estimators.intervals import __all__ as _interval_names
from uq.estimators.quantiles import *  # noqa: F401,F403
from uq.estimators.quantiles import __all__ as _quantile_names
from uq.estimators.replicates import *  # noqa: F401,F403
from uq.estimators.replicates import __all__ as _replicate_names
from uq.estimators.sequential import *  # noqa: F401,F403
from uq.estimators.sequential import __all__ as _sequential_names

__all__ = list(_interval_names) + list(_quantile_names) + list(_replicate_names) + list(_sequential_names)
