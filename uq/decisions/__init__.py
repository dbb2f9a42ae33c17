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
from .breakdown import BreakdownRow, FailureBreakdown, failure_breakdown
from .comparison import (
    PairedComparison,
    RatioQuantile,
    SweepRow,
    SweepSummary,
    mcnemar_exact_p_value,
    paired_comparison,
    sweep_summary,
)
from .contingency import BookingRow, ShipTimeContingency, ship_time_contingency
from .value_of_information import (
    SOBOL_BASIS,
    VOI_BASIS,
    FlipProbability,
    NetBenefit,
    PinnedInputProbabilities,
    PinnedRow,
    TestCandidate,
    TestRanking,
    TestRankingRow,
    ValueOfInformation,
    decision_flip_probability,
    evpi,
    evppi_regression,
    evsi_regression,
    go_no_go_net_benefit,
    pinned_input_probabilities,
    rank_tests,
)
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
    # ship time
    "BookingRow",
    "ShipTimeContingency",
    "ship_time_contingency",
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
    "mcnemar_exact_p_value",
]
