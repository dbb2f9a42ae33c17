"""Which test to fund: candidate tests ranked by the money their information is worth.

Each candidate test is valued by its expected value of sample information (EVSI; EVPPI for a
perfect test) in the scenario's own money, net of its cost. Beside the money, a ranking row
carries the chance that the test's result would flip the review's verdict under its own rule
(go iff P(success) >= p*) and how much the test would narrow the knowledge band
(:mod:`uq.decisions.knowledge`). Without money, tests are ranked by total Sobol index.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from uq.scenario.types import TestCandidate

from ._common import (
    DecisionInputError,
    OutOfRangeError,
    ShapeMismatchError,
    UnknownCodeError,
    _check_confidence,
    _fmt_prob,
    _ResultMixin,
    _rows_frame,
    _wilson,
    format_money,
    format_money_interval,
)
from ._regression import _as_net_benefit, _check_residual, _option_names, _scores_for_test, _seed_of
from .knowledge import BandAfter, band_after_test, success_given
from .value_of_information import _DEFAULT_UNIT, _regression_voi

__all__ = ["TestRankingRow", "TestRanking", "rank_tests", "VOI_BASIS", "SOBOL_BASIS",
           "decision_disagreement"]

VOI_BASIS = "expected value of information"
SOBOL_BASIS = "variance-based (no costs given): total Sobol index — not a monetary value"


@dataclass(frozen=True)
class TestRankingRow:
    """One candidate test in the ranking; money in [currency], ``None`` where not computed.

    ``value_money`` is the EVSI (EVPPI when ``residual_fraction`` is 0) of the go/no-go
    decision in the scenario's money, ``net_value_money`` = value - cost, both with their
    bootstrap intervals. ``flip_probability`` is the chance that the test's result would
    flip the review's verdict under the p* rule (with an approximate Wilson interval);
    ``money_flip_probability`` the chance it would change the money-optimal decision.
    ``band_after`` is the expected knowledge band after the test (None without a band).
    """

    __test__ = False

    rank: int
    name: str
    inputs: tuple[str, ...]
    residual_fraction: float
    cost_money: float
    value_kind: str | None  # "EVPPI", "EVSI" or None (variance-based fallback)
    value_money: float | None
    value_money_low: float | None
    value_money_high: float | None
    net_value_money: float | None
    net_value_money_low: float | None
    net_value_money_high: float | None
    money_flip_probability: float | None
    flip_probability: float | None
    flip_probability_low: float | None
    flip_probability_high: float | None
    band_after: BandAfter | None
    total_index: float | None  # sum of the inputs' total Sobol indices [-]


@dataclass(frozen=True)
class TestRanking(_ResultMixin):
    """Ranking of candidate tests, best first.

    ``ranking_basis`` is :data:`VOI_BASIS` (net value in money, descending; ties within the
    display precision ordered by flip probability, then by how much the test narrows the
    knowledge band, then by name) or :data:`SOBOL_BASIS` (sum of the total Sobol indices of
    the inputs each test pins, descending; ties by lower cost) — a share of output variance,
    not money. ``fund_none`` is True when no test has a positive net value.
    """

    __test__ = False

    rows: tuple[TestRankingRow, ...]
    ranking_basis: str
    currency: str
    current_option: str | None
    expected_net_benefit: tuple[float, ...] | None
    fund_none: bool
    confidence: float
    seed: int | None
    sentence: str

    def to_frame(self):
        """Ranking table, best first (pandas DataFrame)."""
        return _rows_frame(self.rows)


def _check_tests(tests, inputs, total_indices, need_inputs: bool) -> None:
    if not tests:
        raise DecisionInputError("tests is empty: expected at least one TestCandidate")
    for tc in tests:
        if not tc.cost >= 0:
            raise OutOfRangeError(f"test {tc.name!r}: cost={tc.cost!r}, expected >= 0")
        _check_residual(tc.residual_fraction)
        if not tc.inputs:
            raise DecisionInputError(f"test {tc.name!r} measures no inputs")
        unknown = [i for i in tc.inputs if i not in inputs]
        if need_inputs and unknown:
            raise UnknownCodeError(f"test {tc.name!r} measures {unknown}, not in inputs {sorted(inputs)}")
    if total_indices is not None:
        missing = sorted({i for tc in tests for i in tc.inputs} - set(total_indices))
        if missing:
            raise UnknownCodeError(f"total_indices lacks {missing}")


def _sobol_ranking(tests, st, currency, confidence, seed) -> TestRanking:
    order = sorted(tests, key=lambda tc: (-st(tc), tc.cost, tc.name))
    rows = tuple(
        TestRankingRow(
            rank=i + 1, name=tc.name, inputs=tuple(tc.inputs), residual_fraction=float(tc.residual_fraction),
            cost_money=float(tc.cost), value_kind=None, value_money=None, value_money_low=None,
            value_money_high=None, net_value_money=None, net_value_money_low=None,
            net_value_money_high=None, money_flip_probability=None, flip_probability=None,
            flip_probability_low=None, flip_probability_high=None, band_after=None,
            total_index=st(tc),
        )
        for i, tc in enumerate(order)
    )
    best = rows[0]
    sentence = (
        f"No values or costs were given, so tests are ranked by the total Sobol index of the "
        f"inputs they measure (a share of output variance, not a monetary value): fund "
        f"'{best.name}' first (sum of total indices {best.total_index:.2f})."
    )
    return TestRanking(rows, SOBOL_BASIS, currency, None, None, False, confidence, seed, sentence)


def _tie_key(amount: float, currency: str) -> float:
    """Net value as compared for ranking: to the display precision in a real currency."""
    real = len(currency) == 3 and currency.isalpha() and currency.isupper()
    return float(np.round(amount)) if real else float(amount)


def _score_test(tc, child, *, nb, names, inputs, currency, n_bootstrap, rule, band_values,
                knowledge, method, n_knots, degree, confidence):
    """Money value, p*-rule flip probability and band after of one test, on one simulated result."""
    n = nb.shape[0]
    params = np.column_stack([np.asarray(inputs[i], dtype=float) for i in tc.inputs])
    if params.shape[0] != n:
        raise ShapeMismatchError(f"inputs for test {tc.name!r} have {params.shape[0]} rows, net_benefit {n}")
    r = float(tc.residual_fraction)
    t = _scores_for_test(params, r, child) if r < 1.0 else None
    v = _regression_voi(nb, params, residual_fraction=r, method=method, n_knots=n_knots,
                        degree=degree, confidence=confidence, parameter_names=tc.inputs, scores=t,
                        n_bootstrap=n_bootstrap, currency=currency, option_names=names, rng=child)
    flip = flip_lo = flip_hi = None
    if rule is not None:
        # the review's rule before and after the test: go iff E[success | result] >= p*
        s, p_star = rule
        go_now = bool(s.mean() >= p_star)
        go_after = go_now if t is None else success_given(s, t) >= p_star
        flip = float(np.mean(go_after != go_now))
        lo, hi = _wilson(flip * n, n, confidence)
        flip_lo, flip_hi = float(lo), float(hi)
    after = None
    if band_values is not None:
        cols = [j for j, name in enumerate(tc.inputs) if name in knowledge]
        after = band_after_test(band_values, None if t is None or not cols else t[:, cols],
                                method=method, n_knots=n_knots, degree=degree)
    return tc, v, flip, flip_lo, flip_hi, after


def rank_tests(
    tests: Sequence[TestCandidate],
    *,
    net_benefit,
    inputs: Mapping[str, np.ndarray],
    total_indices: Mapping[str, float] | None = None,
    currency: str = _DEFAULT_UNIT,
    option_names: Sequence[str] | None = None,
    success=None,
    required_probability: float | None = None,
    band_values: np.ndarray | None = None,
    knowledge_inputs: Sequence[str] = (),
    method: str = "spline",
    n_knots: int = 7,
    degree: int = 3,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
    rng=None,
) -> TestRanking:
    """Rank candidate tests by net value of information in money (or, without money, by Sobol).

    Parameters
    ----------
    tests : sequence of TestCandidate
    net_benefit : array_like (n, k), NetBenefit or None
        Net benefit per sample and option in the scenario's money [currency]
        (:func:`uq.decisions.money_net_benefit`); ``None`` when the scenario gives no values
        or costs (then ``total_indices`` is required).
    inputs : mapping str -> array (n,)
        Sampled inputs by name, rows matching ``net_benefit``.
    total_indices : mapping str -> float, optional
        Total Sobol index of each input [-]; shown beside the value, and the ranking key
        when ``net_benefit`` is None.
    currency : str
    option_names : sequence of str, optional
    success : array_like of bool (n,), optional
        Per-sample success; with ``required_probability`` gives each test's chance of
        flipping the review's verdict under the rule go iff P(success) >= p*.
    required_probability : float, optional
        p* [-].
    band_values : array (n,), optional
        P(success | knowledge inputs) at every sample (:func:`uq.decisions.knowledge_band`);
        with ``knowledge_inputs`` gives each test's expected band after it.
    knowledge_inputs : sequence of str
    method, n_knots, degree, n_bootstrap, confidence
        As in :func:`uq.decisions.evppi_regression`. A test that measures several inputs is
        valued by one joint regression on all of them.
    rng : None, int or numpy.random.Generator
        Each test gets its own child stream (``Generator.spawn``, in list order); its
        simulated result serves the money value, the flip probability and the band after.

    Returns
    -------
    TestRanking
    """
    confidence = _check_confidence(confidence)
    _check_tests(tests, inputs, total_indices, net_benefit is not None)

    def st(tc):
        return None if total_indices is None else float(sum(total_indices[i] for i in tc.inputs))

    seed = _seed_of(rng)
    if net_benefit is None:
        if total_indices is None:
            raise DecisionInputError(
                "net_benefit is None and total_indices is None: expected money (net_benefit) or Sobol total indices to rank by"
            )
        return _sobol_ranking(tests, st, currency, confidence, seed)

    nb = _as_net_benefit(net_benefit)
    n = nb.shape[0]
    names = _option_names(option_names, nb.shape[1], net_benefit)
    rule = None
    if success is not None and required_probability is not None:
        s = np.asarray(success, dtype=bool)
        if s.shape != (n,):
            raise ShapeMismatchError(f"success has shape {s.shape}: expected ({n},) to match net_benefit")
        rule = (s, float(required_probability))
    knowledge = set(knowledge_inputs)
    children = np.random.default_rng(rng).spawn(len(tests))
    options = dict(method=method, n_knots=n_knots, degree=degree, confidence=confidence)
    scored = [
        _score_test(tc, child, nb=nb, names=names, inputs=inputs, currency=currency,
                    n_bootstrap=n_bootstrap, rule=rule, band_values=band_values,
                    knowledge=knowledge, **options)
        for tc, child in zip(tests, children)
    ]

    def key(item):
        tc, v, flip, _, _, after = item
        narrowing = 0.0 if after is None else after.share_removed
        return (-_tie_key(v.value - tc.cost, currency), -(flip or 0.0), -narrowing, tc.name)

    scored.sort(key=key)
    rows = tuple(
        TestRankingRow(
            rank=i + 1, name=tc.name, inputs=tuple(tc.inputs), residual_fraction=float(tc.residual_fraction),
            cost_money=float(tc.cost), value_kind=v.kind, value_money=v.value, value_money_low=v.value_low,
            value_money_high=v.value_high, net_value_money=v.value - tc.cost,
            net_value_money_low=None if v.value_low is None else v.value_low - tc.cost,
            net_value_money_high=None if v.value_high is None else v.value_high - tc.cost,
            money_flip_probability=v.flip_probability, flip_probability=flip,
            flip_probability_low=flip_lo, flip_probability_high=flip_hi, band_after=after,
            total_index=st(tc),
        )
        for i, (tc, v, flip, flip_lo, flip_hi, after) in enumerate(scored)
    )
    current = scored[0][1].current_option
    expected = scored[0][1].expected_net_benefit
    fund_none = not rows[0].net_value_money > 0
    sentence = _ranking_sentence(rows, current, currency, confidence, fund_none)
    return TestRanking(rows, VOI_BASIS, currency, current, expected, fund_none, confidence, seed, sentence)


def _ranking_sentence(rows, current, currency, confidence, fund_none) -> str:
    best = rows[0]
    pct = f"{confidence * 100:g} %"

    def worth(r):
        ci = "" if r.value_money_low is None else (
            f" ({pct} CI {format_money_interval(r.value_money_low, r.value_money_high, currency)})")
        return f"{format_money(r.value_money, currency)}{ci}"

    if not fund_none:
        text = (
            f"Fund '{best.name}' first: its {best.value_kind} is {worth(best)} per decision against "
            f"a cost of {format_money(best.cost_money, currency)}, a net value of "
            f"{format_money(best.net_value_money, currency)}.")
    elif max(r.value_money for r in rows) == 0.0:
        text = (
            f"Fund none and decide now (the money favours '{current}'): no candidate test's "
            f"result would change that decision (every test's value of information is "
            f"{format_money(0.0, currency)}), so none is worth its cost.")
    else:
        top = max(rows, key=lambda r: r.value_money)
        text = (
            f"Fund none and decide now (the money favours '{current}'): no candidate test is "
            f"worth its cost; the "
            f"most valuable, '{top.name}', is worth {worth(top)} per decision against a cost of "
            f"{format_money(top.cost_money, currency)}.")
    flips = [r for r in rows if r.flip_probability is not None]
    if flips:
        f = max(flips, key=lambda r: (r.flip_probability, r.name == best.name))
        text += (
            f" The test most likely to flip the review's verdict under its P(success) rule is "
            f"'{f.name}' ({_fmt_prob(f.flip_probability)} chance).")
    return text


def decision_disagreement(expected_net_benefit: Sequence[float], option_names: Sequence[str],
                          verdict: str, required_probability: float, currency: str) -> str | None:
    """One sentence when the money-optimal decision and the review's p* verdict disagree.

    Parameters
    ----------
    expected_net_benefit : sequence of float
        E[NB] of each option [currency].
    option_names : sequence of str
        Names matching, containing "go" and "no-go".
    verdict : {"go", "no-go", "undecided"}
        The review's verdict on the confidence bound.
    required_probability : float
        p* [-].
    currency : str

    Returns
    -------
    str or None
        None when they agree (an UNDECIDED verdict agrees with neither and is not flagged).
    """
    values = dict(zip(option_names, (float(v) for v in expected_net_benefit)))
    best = max(values, key=values.get)
    if verdict not in ("go", "no-go") or best == verdict:
        return None
    rule = f"go iff P(success) >= {_fmt_prob(required_probability)} on the confidence bound"
    return (
        f"The scenario's own money favours '{best}' (expected net benefit "
        f"{format_money(values[best], currency)} against {format_money(values[verdict], currency)} "
        f"for '{verdict}'), while the review's rule ({rule}) gives {verdict.upper()}: the "
        f"stated values and costs imply a different break-even P(success) than the rule's.")
