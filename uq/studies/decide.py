"""The money and knowledge part of the assessment's decisions stage.

Wires a scenario's [decision] section and a propagation's per-sample outcomes into
:mod:`uq.decisions`: the knowledge band, the outcome-class prices and the test ranking in the
scenario's own money. The orchestrator (:mod:`uq.studies.assess`) calls these; no estimation
happens here.
"""
from __future__ import annotations

import dataclasses

import numpy as np

from uq import decisions

__all__ = ["knowledge_band_of", "class_costs", "rank_scenario_tests"]


def knowledge_band_of(scenario, prop, conf: float, *, seed):
    """P(success | knowledge inputs) over what is not yet known (None without inputs)."""
    dec = scenario.decision
    if not prop.input_names:
        return None
    natures = decisions.input_natures(
        prop.input_names, knowledge=dec.knowledge, variability=dec.variability,
        tested=[i for t in dec.tests for i in t.inputs])
    return decisions.knowledge_band(
        prop.outcomes["success"], {n: prop.inputs[:, i] for i, n in enumerate(prop.input_names)},
        natures, required_probability=dec.required_probability,
        required_credibility=dec.required_credibility, confidence=conf,
        rng=np.random.default_rng(seed))


def class_costs(dec) -> dict[int, float]:
    """Net loss of each failure class in the scenario's money.

    A lost vehicle costs ``cost_of_failure``; a reserve breach and a late arrival cost their
    own keys when given; every other failure class (and those two when not given) is priced
    at ``cost_of_failure``.
    """
    oc = decisions.OutcomeClass
    out = {int(c): dec.cost_of_failure for c in oc if c != oc.SUCCESS}
    if dec.cost_of_reserve_breach is not None:
        out[int(oc.RESERVE_BREACH)] = dec.cost_of_reserve_breach
    if dec.cost_of_late_arrival is not None:
        out[int(oc.LATE)] = dec.cost_of_late_arrival
    return out


def rank_scenario_tests(scenario, prop, sens, band, verdict, conf, *, seed):
    """Candidate tests valued in the scenario's money (or ranked by Sobol index without it)."""
    dec = scenario.decision
    catalogue = list(dec.tests)
    if not catalogue:
        return None
    total = None
    if sens is not None:
        # a correlated group's total index is shared out among its members, so that a test
        # pinning the whole group is credited with it once (the fallback ranking adds them)
        from uq.estimators.sensitivity import share_group_totals

        total = share_group_totals(sens.members, sens.sobol["failure"].total)
    nb = None
    if None not in (dec.value_of_success, dec.cost_of_failure):
        nb = decisions.money_net_benefit(
            decisions.classify_outcomes(prop.outcomes), value_of_success=dec.value_of_success,
            class_costs=class_costs(dec), cost_of_no_go=dec.cost_of_no_go or 0.0)
    if nb is None and total is None:
        return None
    band_kw = {}
    if band is not None:
        band_kw = {"band_values": band.sample_values, "knowledge_inputs": band.knowledge_inputs}
    tests = decisions.rank_tests(
        catalogue, net_benefit=nb,
        inputs={n: prop.inputs[:, i] for i, n in enumerate(prop.input_names)},
        total_indices=total, currency=dec.currency, confidence=conf,
        success=prop.outcomes["success"], required_probability=dec.required_probability,
        rng=np.random.default_rng(seed), **band_kw)
    if nb is not None:
        note = decisions.decision_disagreement(
            tests.expected_net_benefit, nb.option_names, verdict.verdict,
            dec.required_probability, dec.currency)
        if note:
            tests = dataclasses.replace(tests, sentence=f"{tests.sentence} {note}")
    return tests
