"""Decisions from per-sample outcomes: go / no-go, failure breakdown, ship-time contingency,
value of information (which test to fund), setpoint sweeps and paired comparisons.

Pure functions over numpy arrays of per-sample outcomes and already-computed interval
numbers: no vehicle physics, no file reading. Every result is a frozen dataclass with
``to_dict()`` (JSON-ready builtins), ``to_frame()`` where tabular, and a ``sentence`` a
programme manager can act on.
"""

from ._common import (
    DecisionInputError,
    EmptySampleError,
    OutOfRangeError,
    ShapeMismatchError,
    UnknownCodeError,
)
from .breakdown import BreakdownRow, FailureBreakdown, failure_breakdown, failure_breakdown_from_counts
from .outcome_counts import OutcomeCounts, OutcomeTally, mode_leg_counts
from .comparison import (
    PairedComparison,
    RatioQuantile,
    SweepRow,
    SweepSummary,
    format_points,
    mcnemar_exact_p_value,
    paired_comparison,
    replicate_mean,
    replicate_success,
    robust_choice,
    sweep_summary,
)
from .contingency import (
    ArrivalRow,
    BookingRow,
    RecoveryWindowBooking,
    ShipTimeContingency,
    recovery_window_booking,
    ship_time_contingency,
)
from .flight import PilotActionRow, PilotActions, pilot_actions
from .knowledge import (
    KNOWLEDGE,
    VARIABILITY,
    BandAfter,
    KnowledgeBand,
    band_after_test,
    input_natures,
    knowledge_band,
)
from .outcomes import OUTCOME_CLASS_NAMES, OutcomeClass, classify_outcomes
from .pinned import PinnedInputProbabilities, PinnedRow, pinned_input_probabilities
from .ranking import SOBOL_BASIS, VOI_BASIS, TestRanking, TestRankingRow, decision_disagreement, rank_tests
from .value_of_information import (
    FlipProbability,
    NetBenefit,
    ValueOfInformation,
    decision_flip_probability,
    evpi,
    evppi_regression,
    evsi_regression,
    go_no_go_net_benefit,
    money_net_benefit,
)
from uq.scenario.types import TestCandidate
from ._common import format_money, format_money_interval
from .verdict import Verdict, go_no_go, samples_to_settle, verdict_for

__all__ = [
    # errors
    "DecisionInputError",
    "EmptySampleError",
    "OutOfRangeError",
    "ShapeMismatchError",
    "UnknownCodeError",
    # go / no-go
    "Verdict",
    "go_no_go",
    "samples_to_settle",
    "verdict_for",
    # failures
    "BreakdownRow",
    "FailureBreakdown",
    "failure_breakdown",
    "failure_breakdown_from_counts",
    "OutcomeCounts",
    "OutcomeTally",
    "mode_leg_counts",
    # ship time
    "BookingRow",
    "ShipTimeContingency",
    "ship_time_contingency",
    "ArrivalRow",
    "RecoveryWindowBooking",
    "recovery_window_booking",
    # pilot actions (gliders)
    "PilotActionRow",
    "PilotActions",
    "pilot_actions",
    # value of information
    "NetBenefit",
    "ValueOfInformation",
    "FlipProbability",
    "TestCandidate",
    "TestRankingRow",
    "TestRanking",
    "PinnedRow",
    "PinnedInputProbabilities",
    "VOI_BASIS",
    "SOBOL_BASIS",
    "go_no_go_net_benefit",
    "money_net_benefit",
    "decision_disagreement",
    "format_money",
    "format_money_interval",
    # outcome classes
    "OutcomeClass",
    "OUTCOME_CLASS_NAMES",
    "classify_outcomes",
    # knowledge band
    "KNOWLEDGE",
    "VARIABILITY",
    "input_natures",
    "KnowledgeBand",
    "BandAfter",
    "knowledge_band",
    "band_after_test",
    "evpi",
    "evppi_regression",
    "evsi_regression",
    "decision_flip_probability",
    "rank_tests",
    "pinned_input_probabilities",
    # sweeps and comparisons
    "SweepRow",
    "SweepSummary",
    "sweep_summary",
    "RatioQuantile",
    "PairedComparison",
    "paired_comparison",
    "format_points",
    "replicate_success",
    "replicate_mean",
    "robust_choice",
    "mcnemar_exact_p_value",
]
