"""Scenario files in, typed and validated scenarios out (the boundary of the data path).

One reader per file kind, one error style (:class:`ScenarioError`, a one-line message naming
the file, the key, the value and what was expected).
"""
from uq.scenario.distributions import Marginal, parse_distribution, unit_from_key
from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.reader import load_scenario, parse_scenario
from uq.scenario.study_file import Study, StudyFileError, Variant, load_study, parse_study
from uq.scenario.types import (
    Analysis,
    Battery,
    Decision,
    DragCoefficient,
    Fouling,
    GliderPolar,
    GliderSetpoint,
    GliderVehicle,
    HullGeometry,
    Leg,
    Limits,
    PropellerSetpoint,
    PropellerVehicle,
    RankCorrelation,
    Scenario,
    TestCandidate,
    Value,
)

__all__ = [
    "load_scenario", "parse_scenario", "ScenarioError", "MISSING", "Marginal",
    "load_study", "parse_study", "Study", "Variant", "StudyFileError",
    "parse_distribution", "unit_from_key",
    "Scenario", "Value", "HullGeometry", "DragCoefficient", "PropellerVehicle", "GliderPolar",
    "GliderVehicle", "Battery", "PropellerSetpoint", "GliderSetpoint", "Fouling", "Leg",
    "Limits", "TestCandidate", "Decision", "RankCorrelation", "Analysis",
]
