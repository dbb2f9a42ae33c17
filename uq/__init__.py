"""transit-risk: the probability that an AUV or glider reaches its recovery point with energy
to spare, with the uncertainty quantified.

The front door for scripts and notebooks::

    import uq
    scenario = uq.load_scenario("configs/under_ice_section.toml")
    result = uq.assess(scenario)
    uq.write_report(result, "reports/my-review")

The data path, one subpackage per stage: ``uq.scenario`` (files -> typed scenario),
``uq.sampling`` (input model, sample plans, streaming engine, executors), ``uq.simulate`` (the
only bridge from scenario fields to :mod:`physics`), ``uq.estimators`` (intervals, Sobol, PCE),
``uq.decisions`` (verdict, contingency, value of information), ``uq.studies`` (assessment,
sweeps, comparisons, batch studies), ``uq.report`` (HTML/JSON/CSV) and ``uq.cli``.
Names are imported on first use, so ``import uq`` stays light (no matplotlib until a report).
"""
from __future__ import annotations

import importlib

from uq.errors import InputError, TransitRiskError

__all__ = [
    "TransitRiskError", "InputError",
    "load_scenario", "parse_scenario", "ScenarioError",
    "assess", "Assessment",
    "sweep_setpoint", "compare_scenarios",
    "load_study", "run_study", "write_study",
    "write_report",
]

_LAZY = {
    "load_scenario": "uq.scenario",
    "parse_scenario": "uq.scenario",
    "ScenarioError": "uq.scenario",
    "assess": "uq.studies.assess",
    "Assessment": "uq.studies.assess",
    "sweep_setpoint": "uq.studies.sweeps",
    "compare_scenarios": "uq.studies.sweeps",
    "load_study": "uq.scenario.study_file",
    "run_study": "uq.studies.batch",
    "write_study": "uq.studies.batch",
    "write_report": "uq.report",
}


def __getattr__(name: str):
    if name in _LAZY:
        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'uq' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
