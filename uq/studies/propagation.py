"""Propagation: the main sample streamed through the transit model, and its estimators.

K independently scrambled Sobol' replicates (or one Monte Carlo / Latin hypercube plan) run
through the streaming engine; P(success) with its interval (the one rule of
:func:`uq.estimators.success_probability`), the probability-of-reaching-range curve with
pointwise intervals and a simultaneous DKW band, range/duration quantiles with
order-statistic intervals, the mean energy margin and the outcome table. ``Settings`` are the
numerical settings of one assessment (defaults from the scenario's ``[analysis]``).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from uq import estimators
from uq.decisions.outcome_table import outcome_table as tabulate_outcomes
from uq.sampling.engine import CollectReducer, GroupCountReducer, MultiReducer, stream
from uq.sampling.inputs import InputModel
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign, StackedDesigns, plan_size
from uq.scenario import Scenario
from uq.simulate import Outcomes, ScenarioModel

__all__ = ["OUTPUT_KEYS", "Settings", "Propagation", "input_model_of", "propagate"]

#: per-sample outputs kept from the propagation (plus the input values themselves)
OUTPUT_KEYS = Outcomes.__dataclass_fields__.keys()
_RANGE_QUANTILES = (0.05, 0.1, 0.5, 0.9, 0.95)
_DURATION_QUANTILES = (0.5, 0.9, 0.95)


@dataclass(frozen=True)
class Settings:
    """Numerical settings of one assessment (defaults from the scenario's [analysis])."""

    samples: int  # total samples of the propagation (all replicates)
    seed: int
    scheme: str  # "sobol" | "monte-carlo" | "latin-hypercube"
    replicates: int  # independent scramblings (sobol only; 1 otherwise)
    sensitivity_base_n: int  # Saltelli base N; 0 = skip the sensitivity stage
    confidence: float
    workers: int = 1
    chunk_blocks: int = 1
    block_size: int = DEFAULT_BLOCK_SIZE
    polynomial_chaos: bool = True
    #: predeclared maximum number of looks at P(success) (sequential rule; 1 = one look)
    max_looks: int = 1
    #: when the rare-event stage runs: "auto" | "always" | "off" (uq.studies.rare)
    rare_events: str = "auto"

    @property
    def p_success_confidence(self) -> float:
        """Confidence of the P(success) interval at one look under the sequential rule."""
        return estimators.SequentialRule(self.confidence, self.max_looks).per_look_confidence

    @property
    def evaluation_block(self) -> int:
        """Rows per model call where the stage picks the rows (replicates stacked, Saltelli
        and rare-event rows): ``block_size`` up to 4096, cache-sized for the transit model."""
        return min(self.block_size, 4096)

    @property
    def samples_per_replicate(self) -> int:
        return self.samples // self.replicates

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


def _settings(scenario: Scenario, **overrides) -> Settings:
    a = scenario.analysis
    scheme = overrides.get("scheme") or a.scheme
    replicates = overrides.get("replicates") or a.replicates
    if scheme != "sobol":
        replicates = 1
    _, samples = plan_size(int(overrides.get("samples") or a.samples), scheme=scheme,
                           replicates=int(replicates))
    base_n = overrides.get("sensitivity_base_n")
    base_n = a.sensitivity_base_n if base_n is None else int(base_n)
    seed = overrides.get("seed")
    return Settings(
        samples=samples,
        seed=int(a.seed if seed is None else seed),
        scheme=scheme,
        replicates=int(replicates),
        sensitivity_base_n=base_n,
        confidence=scenario.decision.confidence,
        workers=int(overrides.get("workers") or 1),
        chunk_blocks=int(overrides.get("chunk_blocks") or 1),
        block_size=int(overrides.get("block_size") or DEFAULT_BLOCK_SIZE),
        polynomial_chaos=overrides.get("polynomial_chaos", True),
        rare_events=overrides.get("rare_events") or getattr(a, "rare_events", "auto"),
        max_looks=int(overrides.get("max_looks") or getattr(a, "max_looks", 1)),
    )


def input_model_of(scenario: Scenario) -> InputModel:
    """The scenario's named marginals with their rank correlations (Gaussian copula)."""
    names = scenario.input_names
    if not scenario.correlations:
        return InputModel(scenario.inputs)
    index = {name: i for i, name in enumerate(names)}
    matrix = np.eye(len(names))
    for c in scenario.correlations:
        i, j = index[c.inputs[0]], index[c.inputs[1]]
        matrix[i, j] = matrix[j, i] = c.coefficient
    return InputModel(scenario.inputs, rank_correlation=matrix)


@dataclass(frozen=True)
class _ModelWithInputs:
    """Model function that also returns its physical inputs (kept for value of information)."""

    model: ScenarioModel

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        out = dict(self.model(x))
        out["inputs"] = x
        return out


@dataclass(frozen=True)
class Propagation:
    """Per-sample outcomes of the main sample and the estimators built on them."""

    designs: tuple[SampleDesign, ...]
    outcomes: Outcomes  # pooled over replicates, plan order
    inputs: np.ndarray  # (n, d) physical input values, same rows
    input_names: tuple[str, ...]
    p_success: estimators.IntervalEstimate
    p_success_replicates: tuple[float, ...]
    p_arrive: estimators.IntervalEstimate
    range_curve: estimators.ExceedanceCurve
    range_quantiles: tuple[estimators.QuantileInterval, ...]
    duration_quantiles: tuple[estimators.QuantileInterval, ...]
    mean_margin_Wh: estimators.IntervalEstimate
    route_km: float
    outcome_table: Any = None  # uq.decisions.OutcomeTable: classes, point of no return, faults

    @property
    def samples(self) -> int:
        return int(self.outcomes["success"].size)


def _proportion(counts: list[tuple[int, int]], scheme: str, confidence: float):
    """The one P(success) rule (:func:`uq.estimators.success_probability`) in the
    ``(estimate, replicate fractions)`` form the outcome table takes."""
    est = estimators.success_probability(counts, randomised=scheme == "sobol",
                                         confidence=confidence)
    return est, est.replicate_fractions


def _quantiles(values: np.ndarray, qs, confidence: float):
    out = []
    for q in qs:
        try:
            out.append(estimators.quantile_interval(values, q, confidence=confidence))
        except estimators.EstimatorError:
            continue  # too few values for a distribution-free interval at this level
    return tuple(out)


def propagate(scenario: Scenario, settings: Settings, *, executor=None,
              progress: Callable[[int], None] | None = None) -> Propagation:
    """Stream the main sample through the transit model and estimate the headline figures."""
    model = _ModelWithInputs(ScenarioModel(scenario))
    input_model = input_model_of(scenario)
    d = len(scenario.inputs)
    per = settings.samples_per_replicate
    designs = tuple(
        SampleDesign(scheme=settings.scheme, n=per, dimension=max(d, 1), seed=settings.seed,
                     replicate=r, block_size=min(settings.block_size, per))
        for r in range(settings.replicates)
    )
    # the replicates stacked into one plan: the model sees blocks of evaluation_block rows
    # (cache-sized, several replicates a call) instead of one small call per replicate; the
    # rows and every count are the same as replicate by replicate
    plan = StackedDesigns(designs, block_size=min(settings.evaluation_block, sum(
        dz.n for dz in designs)))
    offsets = plan.offsets
    reducer = MultiReducer({
        "rows": CollectReducer(tuple(OUTPUT_KEYS) + ("inputs",), plan.n),
        "success": GroupCountReducer("success", offsets),
        "arrived": GroupCountReducer("reaches_recovery", offsets),
    })
    result = stream(plan, _DimensionGuard(model, d), reducer,
                    input_model=input_model if d else None,
                    chunk_blocks=settings.chunk_blocks, executor=executor, progress=progress)
    counts = [(c.count, c.n) for c in result["success"]]
    arrive_counts = [(c.count, c.n) for c in result["arrived"]]
    rows = result["rows"]
    pieces = [{k: v[lo:hi] for k, v in rows.items()}
              for lo, hi in zip(offsets[:-1], offsets[1:])]
    outcomes = Outcomes.from_columns({k: rows[k] for k in OUTPUT_KEYS})
    inputs = rows["inputs"][:, :d]
    conf = settings.confidence
    randomised = settings.scheme == "sobol"
    p_conf = settings.p_success_confidence
    p_success = estimators.success_probability(counts, randomised=randomised, confidence=p_conf)
    p_arrive = estimators.success_probability(arrive_counts, randomised=randomised,
                                              confidence=p_conf)
    route = scenario.route_length_km
    cap = float(np.max(outcomes["range_km"]))
    grid = np.linspace(0.0, max(cap, route) * 1.0, 241)
    curve = estimators.exceedance_curve(outcomes["range_km"], grid, confidence=conf)
    durations = outcomes["duration_days"][outcomes["reaches_recovery"]]
    return Propagation(
        designs=designs,
        outcomes=outcomes,
        inputs=inputs,
        input_names=scenario.input_names,
        p_success=p_success,
        p_success_replicates=p_success.replicate_fractions,
        p_arrive=p_arrive,
        range_curve=curve,
        range_quantiles=_quantiles(outcomes["range_km"], _RANGE_QUANTILES, conf),
        duration_quantiles=_quantiles(durations, _DURATION_QUANTILES, conf),
        mean_margin_Wh=estimators.replicated_mean([p["margin_Wh"] for p in pieces],
                                                  randomised=randomised, confidence=conf),
        route_km=route,
        outcome_table=tabulate_outcomes(
            outcomes, replicate_sizes=[d.n for d in designs], scheme=settings.scheme,
            confidence=conf, proportion=_proportion,
            subsystems=len(scenario.hardware.subsystems)),
    )


@dataclass(frozen=True)
class _DimensionGuard:
    """Lets a scenario with no uncertain input run on the engine's 1-column plan."""

    model: Any
    dimension: int

    def __call__(self, x):
        return self.model(x[:, : self.dimension])
