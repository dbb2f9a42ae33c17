"""Orchestration over the same estimators: the assessment (``assess``), setpoint sweeps and
paired comparisons on shared samples (``sweeps``) and batch studies of many variants
(``batch``)."""
from uq.studies.sweeps import (  # noqa: F401
    ComparisonResult,
    SweepResult,
    compare_scenarios,
    sweep_setpoint,
)

__all__ = ["ComparisonResult", "SweepResult", "compare_scenarios", "sweep_setpoint"]
