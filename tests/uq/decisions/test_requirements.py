"""The GO requirement: root finding on a step function, against a closed form."""
import math

import pytest
from scipy import stats

from uq.decisions.requirements import go_requirement


def _probit_bounds(x, n=2000):
    # a stand-in for a re-run on common random numbers: P(success) = Phi(x - 3) counted on n
    # samples (a step function of x), with a +-0.02 interval
    p = math.floor(n * stats.norm.cdf(x - 3.0)) / n
    return max(p - 0.02, 0.0), p, min(p + 0.02, 1.0)


def test_go_requirement_finds_the_step_where_the_lower_bound_meets_p_star():
    # derived: the lower bound Phi(x - 3) - 0.02 reaches 0.9 at x = 3 + Phi^-1(0.92); the
    # upper bound reaches it at x = 3 + Phi^-1(0.88); tolerance xtol plus one step of 1/n
    res = go_requirement(_probit_bounds, lever="battery.nominal_energy_Wh", label="nominal battery energy",
                         unit="Wh", current_value=3.0, search=[1.0, 3.0, 8.0], required_probability=0.9,
                         samples=2000, xtol=1e-3)
    truth = 3.0 + stats.norm.ppf(0.92)
    slope = stats.norm.pdf(truth - 3.0)
    assert res.required_value == pytest.approx(truth, abs=1e-3 + 1 / 2000 / slope)
    assert res.direction == "at least"
    # re-run at the found value: GO, with the lower bound within one step (+ xtol) of p*
    lower = _probit_bounds(res.required_value)[0]
    assert 0.9 <= lower <= 0.9 + 1 / 2000 + slope * 1e-3
    low = 3.0 + stats.norm.ppf(0.88)
    assert res.interval_low == pytest.approx(low, abs=1e-3 + 1 / 2000 / stats.norm.pdf(low - 3.0))
    assert "GO needs a nominal battery energy of at least" in res.sentence


def test_go_requirement_reports_unreachable():
    res = go_requirement(lambda x: (0.5, 0.52, 0.54), lever="battery.reserve_fraction", label="reserve fraction",
                         unit="", current_value=0.15, search=[0.0, 0.15, 0.3], required_probability=0.9,
                         samples=100, xtol=1e-3)
    assert res.required_value is None and "not reachable within [0, 0.3]" in res.sentence
