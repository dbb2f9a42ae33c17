"""The outcome table: class counts, probabilities with intervals, point of no return, hardware.

Expected values are counted by hand from a constructed set of outcomes; intervals are checked
against scipy.stats.binomtest (Clopper & Pearson 1934) and the mean of per-sample fault
probabilities against exp(-lambda t) (any reliability text).
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from physics.states import FailureMode
from uq.decisions.outcome_table import outcome_table
from uq.decisions.outcomes import OutcomeClass, classify_outcomes
from uq.estimators import proportion_interval


def _outcomes(n_success=6, n_breach=2, n_returned=3, n_lost_ice=1, n_stranded=1):
    n = n_success + n_breach + n_returned + n_lost_ice + n_stranded
    success = np.zeros(n, bool)
    reaches = np.zeros(n, bool)
    turned = np.zeros(n, bool)
    lost = np.zeros(n, bool)
    mode = np.full(n, FailureMode.ENERGY, dtype=np.int8)
    i = 0
    success[i:i + n_success] = reaches[i:i + n_success] = True
    mode[i:i + n_success] = FailureMode.NONE
    i += n_success
    reaches[i:i + n_breach] = True
    i += n_breach
    turned[i:i + n_returned] = True
    mode[i:i + n_returned] = FailureMode.TURNED_BACK
    i += n_returned
    lost[i:i + n_lost_ice] = True
    i += n_lost_ice
    mode[i:] = FailureMode.NO_HEADWAY
    pnr = np.where(np.arange(n) % 2 == 0, 150.0 + np.arange(n), np.inf)
    t_days = np.full(n, 2.0)
    lam = 0.01
    return {"success": success, "reaches_recovery": reaches, "failure_mode": mode,
            "turned_back": turned, "lost_under_ice": lost, "point_of_no_return_km": pnr,
            "p_no_fault": np.exp(-lam * t_days), "p_fault_under_ice": np.full(n, 0.015),
            "p_fault_open_water": 1 - np.exp(-lam * t_days) - 0.015}


def _binomial(counts, scheme, confidence):
    k = sum(c for c, _ in counts)
    n = sum(m for _, m in counts)
    return proportion_interval(k, n, confidence=confidence, method="clopper-pearson"), (k / n,)


def test_classes_counted_by_hand():
    out = _outcomes()
    classes = classify_outcomes(out)
    # counted by construction: 6 successes, 2 breaches, 3 returned, 1 lost under ice,
    # 1 stopped by a current in open water (lost, not under ice)
    assert np.bincount(classes, minlength=6).tolist() == [6, 1, 2, 0, 3, 1]


def test_table_rows_and_intervals():
    out = _outcomes()
    table = outcome_table(out, replicate_sizes=[13], scheme="monte-carlo", confidence=0.95,
                          proportion=_binomial, subsystems=2)
    lost = table.row(OutcomeClass.LOST_UNDER_ICE)
    assert lost.count == 1 and lost.probability.estimate == pytest.approx(1 / 13)
    ref = stats.binomtest(1, 13).proportion_ci(0.95, method="exact")  # Clopper-Pearson
    assert lost.probability.lower == pytest.approx(ref.low, rel=1e-9)
    assert lost.probability.upper == pytest.approx(ref.high, rel=1e-9)
    assert sum(r.count for r in table.rows) == 13
    assert table.share_with_point_of_no_return == pytest.approx(7 / 13)
    # hardware: every sample has the same 2-day mission: P(no fault) = exp(-0.02)
    hw = table.hardware
    assert hw.no_fault.estimate == pytest.approx(np.exp(-0.02), rel=1e-12)
    # derived: successes without a fault 6/13 * exp(-0.02); lost by any cause: the energy
    # loss unless an open-water fault came first, plus a fault under ice for the other 12
    assert hw.success_without_fault.estimate == pytest.approx(6 / 13 * np.exp(-0.02), rel=1e-12)
    p_open = 1 - np.exp(-0.02) - 0.015
    assert hw.lost_any_cause.estimate == pytest.approx((1 - p_open + 12 * 0.015) / 13,
                                                       rel=1e-12)
    rows = table.to_dicts()
    assert [r["class"] for r in rows] == ["success", "lost", "reserve_breach", "late",
                                         "turned_back_to_safe_exit", "lost_under_ice"]
