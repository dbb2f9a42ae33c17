"""The rare-event stage of the assessment: small failure probabilities by subset simulation.

Plain sampling estimates a probability of failure from the failures it happens to draw; when
the main sample holds only a few of them (or none), or the requirement asks for P(success)
of 0.999 or more, that estimate cannot carry the decision. This stage then estimates
P(fail) = 1 - P(success) by subset simulation (:func:`uq.estimators.rare_events.subset_simulation`)
in standard-normal space through the scenario's Gaussian copula, its model runs streamed
through the same engine and executor as the main sample, and every outcome class of failure
from the same runs (each class lies inside every intermediate level of the failure, so the
last level's share of it times the product of the levels estimates it).

``[analysis] rare_events`` chooses: ``"auto"`` (the default) runs the stage when the main
sample needs it (:func:`rare_event_reason`), ``"always"`` runs it for every assessment,
``"off"`` never. Every number says which estimator gave it: the ``method`` of each interval,
and ``RareEventStage.estimators``.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
from scipy import special

from uq import estimators
from uq.decisions.outcomes import OutcomeClass, classify_outcomes
from uq.estimators.rare_events import RareEventEstimate, failure_limit_state, subset_simulation

__all__ = ["RARE_EVENT_MODES", "MIN_PLAIN_FAILURES", "DEMANDING_REQUIREMENT", "RareEventStage",
           "rare_event_reason", "rare_event_stage", "with_rare_events", "when_it_runs"]

#: ``[analysis] rare_events``: when the subset-simulation stage runs
RARE_EVENT_MODES = ("auto", "always", "off")

#: Fewer failures than this in the main sample and a failure probability is not left to
#: plain sampling (its relative error is then above about 30 %: 1/sqrt(50) = 0.14 sd;
#: common practice, no source).
MIN_PLAIN_FAILURES = 50

#: A required P(success) at or above this asks for P(fail) at 1e-3 or below, which plain
#: sampling of a few thousand runs cannot settle (common practice, no source).
DEMANDING_REQUIREMENT = 0.999

#: subset simulation settings: p0 = LEVEL_PROBABILITY, N = 3,000 per level (Au & Beck 2001;
#: Zuev et al. 2012 for p0), 10 independent runs behind the replicate interval. Measured on a
#: three-input lognormal shortfall (tests/uq/studies/test_rare_assessment.py): P = 1e-4 with
#: 1.25e5 model runs, relative half width 17 %; P = 1e-6 with 1.8e5 runs, 19 % (2,000 per
#: level gave 31 % at 1e-6 on a one-input case, above the 30 % the review asks for)
SAMPLES_PER_LEVEL = 3000
RUNS = 10

#: subset simulation's conditional level probability p0; a failure that may be as common as
#: this gains nothing over plain sampling (the first level already holds it), and a small
#: main sample with a few failures then needs more samples, not a rare-event method
LEVEL_PROBABILITY = 0.1

_FAILURE_CLASSES = tuple(c for c in OutcomeClass if c != OutcomeClass.SUCCESS)


@dataclass(frozen=True)
class RareEventStage:
    """P(fail) and each failure class by subset simulation, beside the plain estimates.

    Attributes
    ----------
    reason : str
        Why the stage ran (the mode and the figure that asked for it).
    failure : RareEventEstimate
        P(fail) = 1 - P(success) with its replicate interval, and the classes in ``events``.
    p_success : ProbabilityEstimate
        ``1 - P(fail)``: the P(success) the verdict is judged on.
    plain_p_success : ProbabilityEstimate
        The main sample's P(success), kept for comparison.
    """

    reason: str
    failure: RareEventEstimate
    p_success: estimators.ProbabilityEstimate
    plain_p_success: estimators.ProbabilityEstimate

    @property
    def classes(self) -> dict[str, estimators.IntervalEstimate]:
        """Outcome-class key (``lost_under_ice``, ...) -> its probability by subset simulation."""
        return dict(self.failure.events)

    def to_dict(self) -> dict:
        return {"reason": self.reason, "estimator": self.failure.method,
                "p_fail": self.failure.to_dict(),
                "p_success": self.p_success.to_dict(),
                "plain_p_success": self.plain_p_success.to_dict()}


def when_it_runs() -> str:
    """The automatic rule of :func:`rare_event_reason` in one sentence, for the report."""
    return (f"with [analysis] rare_events = \"auto\" it runs when fewer than "
            f"{MIN_PLAIN_FAILURES} samples fail and the main sample's upper bound on P(fail) "
            f"is below {LEVEL_PROBABILITY:g}, or when the requirement is "
            f"{100 * DEMANDING_REQUIREMENT:.1f} % or more and the main sample does not settle it")


def rare_event_reason(mode: str, *, failures: int, samples: int, p_success,
                      required_probability: float) -> str | None:
    """Why the rare-event stage should run, or None when it should not.

    Parameters
    ----------
    mode : {"auto", "always", "off"}
    failures, samples : int
        Failures (samples not successful) and samples of the main sample. Fewer than
        ``MIN_PLAIN_FAILURES`` failures call for the stage when the main sample's upper
        bound on P(fail) is below ``LEVEL_PROBABILITY`` (above it, more plain samples help
        as much).
    p_success : IntervalEstimate
        The main sample's P(success).
    required_probability : float
        The requirement p* [-].
    """
    if mode not in RARE_EVENT_MODES:
        raise estimators.EstimatorError(
            f"rare_events={mode!r}: expected one of {', '.join(RARE_EVENT_MODES)}")
    if mode == "off":
        return None
    if mode == "always":
        return "[analysis] rare_events = \"always\""
    p_fail_upper = 1.0 - p_success.lower
    if failures < MIN_PLAIN_FAILURES and p_fail_upper < LEVEL_PROBABILITY:
        return (f"the main sample holds {failures} failure{'s' if failures != 1 else ''} in "
                f"{samples:,} runs (fewer than {MIN_PLAIN_FAILURES})")
    settled = p_success.lower >= required_probability or p_success.upper < required_probability
    if required_probability >= DEMANDING_REQUIREMENT and not settled:
        return (f"the requirement P(success) >= {required_probability:g} is not settled by "
                "the main sample")
    return None


@dataclass(frozen=True)
class _ClassMarks:
    """Outcome classes of failure as the limit state's sub-event marks (picklable)."""

    def __call__(self, outputs) -> np.ndarray:
        classes = classify_outcomes(outputs)
        return np.stack([classes == c for c in _FAILURE_CLASSES], axis=1)


def _as_success(failure: RareEventEstimate, confidence: float) -> estimators.ProbabilityEstimate:
    """``1 - P(fail)`` as the probability estimate the verdict takes.

    The effective sample size is that of a binomial experiment with the same half width,
    ``p (1 - p) (z / h)^2``, so that planning more runs (``samples_to_settle``) uses the
    precision the estimator has shown.
    """
    p = failure.probability
    z = float(special.ndtri(0.5 + confidence / 2.0))
    spread = p.estimate * (1.0 - p.estimate)
    n_eff = spread * (z / p.half_width) ** 2 if p.half_width > 0 and spread > 0 else float(p.n)
    estimate = 1.0 - p.estimate
    return estimators.ProbabilityEstimate(
        estimate, min(estimate, 1.0 - p.upper), max(estimate, 1.0 - p.lower), confidence,
        f"1 - P(fail) by {failure.method}", failure.model_runs,
        count=0, replicate_fractions=tuple(1.0 - r for r in failure.replicate_estimates),
        effective_n=float(n_eff), interval_kind="wilson")


def rare_event_stage(model, input_model, *, reason: str, plain_p_success, confidence: float,
                     seed: np.random.SeedSequence, executor=None, chunk_blocks: int = 1,
                     block_size: int = 4096, samples_per_level: int | None = None,
                     runs: int | None = None) -> RareEventStage:
    """Subset simulation of the transit model's failure and of each failure class.

    Parameters
    ----------
    model : callable
        The transit model, ``x -> Outcomes`` (picklable).
    input_model : uq.sampling.inputs.InputModel
        Marginals and Gaussian copula of the uncertain inputs.
    reason : str
        Why the stage runs (from :func:`rare_event_reason`), kept in the record.
    plain_p_success : ProbabilityEstimate
        The main sample's P(success).
    confidence : float
        Confidence of the intervals (the per-look level under a sequential rule).
    seed : numpy.random.SeedSequence
        Root of the runs' child streams: the numbers depend on it alone, never on the
        executor, the workers or the block size.
    samples_per_level, runs : int, optional
        Default :data:`SAMPLES_PER_LEVEL` and :data:`RUNS` (read when called).
    """
    limit_state = failure_limit_state(
        model, input_model, keys=("reaches_recovery", "failure_mode", "turned_back",
                                  "lost_under_ice"),
        marks=_ClassMarks(), executor=executor, chunk_blocks=chunk_blocks,
        block_size=block_size)
    failure = subset_simulation(
        limit_state, input_model.dimension,
        samples_per_level=SAMPLES_PER_LEVEL if samples_per_level is None else samples_per_level,
        p0=LEVEL_PROBABILITY, replicates=RUNS if runs is None else runs,
        confidence=confidence, rng=seed,
        event_names=[c.name.lower() for c in _FAILURE_CLASSES])
    return RareEventStage(reason=reason, failure=failure,
                          p_success=_as_success(failure, confidence),
                          plain_p_success=plain_p_success)


def with_rare_events(propagation, stage: RareEventStage):
    """The propagation with P(success) and the outcome rows of failure classes taken from the
    rare-event stage (each row's ``method`` names its estimator; counts stay the sample's)."""
    table = propagation.outcome_table
    if table is not None:
        events = stage.classes
        rows = []
        for row in table.rows:
            if row.code == OutcomeClass.SUCCESS:
                row = dataclasses.replace(row, probability=stage.p_success)
            elif row.key in events:
                row = dataclasses.replace(row, probability=events[row.key])
            rows.append(row)
        table = dataclasses.replace(table, rows=tuple(rows))
    return dataclasses.replace(propagation, p_success=stage.p_success,
                               p_success_replicates=stage.p_success.replicate_fractions,
                               outcome_table=table)

