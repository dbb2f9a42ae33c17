"""Propagation: the main sample streamed through the transit model, and its estimators.

K independently scrambled Sobol' replicates (or one Monte Carlo / Latin hypercube plan) run
through the streaming engine; P(success) with its interval (the one rule of
:func:`uq.estimators.success_probability`), the probability-of-reaching-range curve with
pointwise intervals and a simultaneous DKW band, range/duration quantiles with
order-statistic intervals, the mean energy margin and the outcome table. ``Settings`` are the
numerical settings of one assessment (defaults from the scenario's ``[analysis]``).

Kept rows. Up to ``Settings.kept_rows`` samples every row is kept and every figure is computed
from the rows. Beyond it memory stays flat: only the first rows of each replicate are kept
(:class:`KeptRows`; a scrambled Sobol' prefix of power-of-two length is itself a scrambled
Sobol' sample, so the kept rows are a replicated sample too), and the figures that are counts
or means — P(success), P(reached recovery), the outcome classes, failure modes and legs, the
censored share, the mean margin, the hardware risk and the range curve on a grid fixed before
streaming — come from reducers over every sample (:mod:`uq.studies.streamed_figures`). What
needs rows (quantiles, contingency, knowledge band, value of information, the energy fan
chart, the surrogate's fit, the per-sample files) uses the kept rows, and says so.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from uq import estimators
from uq.decisions.outcome_counts import OutcomeCounts
from uq.decisions.outcome_table import outcome_table as tabulate_outcomes
from uq.errors import InputError
from uq.sampling.engine import CollectReducer, GroupCountReducer, MultiReducer, stream
from uq.sampling.inputs import InputModel
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign, StackedDesigns, plan_size
from uq.scenario import Scenario
from uq.scenario.types import DEFAULT_KEPT_ROWS
from uq.simulate import Outcomes, ScenarioModel
from uq.studies import streamed_figures

__all__ = ["OUTPUT_KEYS", "KEPT_ROWS", "Settings", "KeptRows", "Propagation", "input_model_of",
           "propagate"]

#: per-sample outputs kept from the propagation (plus the input values themselves)
OUTPUT_KEYS = Outcomes.__dataclass_fields__.keys()
_RANGE_QUANTILES = (0.05, 0.1, 0.5, 0.9, 0.95)
_DURATION_QUANTILES = (0.5, 0.9, 0.95)

#: Default row limit of a propagation: up to this many samples every row is kept; beyond it
#: only the first ``KEPT_ROWS / replicates`` rows of each replicate. 2^17 rows of outcomes
#: and inputs are ~40 MB (~300 B a row); the demos' default sizes (2^13) and every size the
#: project ran before stay below it, so their numbers do not change; and 2^17 rows pin the
#: 5 % and 95 % quantiles' order-statistic intervals to about +-0.12 percentage points of
#: probability (derived: 1.96 sqrt(q (1 - q) / n) at q = 0.05, n = 2^17), well inside the
#: spread of the inputs that the review cares about.
KEPT_ROWS = DEFAULT_KEPT_ROWS  # 2**17, the default of the scenario's [analysis] kept_rows


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
    #: row limit: above it only the first kept_rows / replicates rows of each replicate are
    #: kept, and counts and means are streamed over every sample (see the module docstring)
    kept_rows: int = KEPT_ROWS

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
        kept_rows=_kept_rows(a.kept_rows if overrides.get("kept_rows") is None
                             else overrides["kept_rows"], int(replicates)),
    )


def _kept_rows(value, replicates: int) -> int:
    """The row limit, refused when it cannot keep a few rows of every replicate."""
    if value is None:
        return KEPT_ROWS
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or \
            value < 2 * replicates:
        raise InputError(f"kept_rows {value!r}: expected an integer of at least 2 rows per "
                         f"replicate ({2 * replicates})")
    return int(value)


@dataclass(frozen=True)
class KeptRows:
    """Which rows of the main sample a propagation keeps: every row, or the first
    ``per_replicate`` rows of each of the ``replicates`` replicates of ``samples``."""

    samples: int
    replicates: int
    per_replicate: int

    @classmethod
    def of(cls, settings: Settings) -> "KeptRows":
        per = settings.samples_per_replicate
        if settings.samples > settings.kept_rows:
            per = settings.kept_rows // settings.replicates
            if settings.scheme == "sobol":  # a power-of-two prefix of each scrambling
                per = 1 << (per.bit_length() - 1)
        return cls(settings.samples, settings.replicates, per)

    @property
    def rows(self) -> int:
        return self.per_replicate * self.replicates

    @property
    def every_row(self) -> bool:
        return self.rows == self.samples

    def ranges(self) -> tuple[tuple[int, int], ...]:
        """Plan rows kept, as ``[start, stop)`` ranges of the stacked replicates."""
        size = self.samples // self.replicates
        return tuple((r * size, r * size + self.per_replicate) for r in range(self.replicates))

    def row_index(self) -> np.ndarray:
        """Plan row number of each kept row, in the order they are kept."""
        return np.concatenate([np.arange(lo, hi) for lo, hi in self.ranges()])

    def sentence(self) -> str:
        """Where the kept rows come from, for the report and summary.json."""
        if self.every_row:
            return f"every one of the {self.samples:,} samples"
        each = "of each replicate" if self.replicates > 1 else "in plan order"
        return (f"a subsample of {self.rows:,} of the {self.samples:,} samples: the first "
                f"{self.per_replicate:,} {each}")

    def caution(self) -> str:
        """What the kept rows are used for, and what counts every sample."""
        return (f"Range and duration quantiles, the ship-time contingency, the point of no "
                f"return, pilot actions, pinned inputs, the knowledge band, the test ranking, "
                f"the energy along the route, the surrogate and the per-sample files use "
                f"{self.sentence()}; P(success), the outcome classes, failure modes and legs, "
                f"the mean margin, the hardware risk and the range curve count every sample.")

    def to_dict(self) -> dict:
        return {"rows": self.rows, "per_replicate": self.per_replicate,
                "samples": self.samples, "every_row": self.every_row,
                "sentence": self.sentence()}


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
    outcomes: Outcomes  # the kept rows (every sample up to the row limit), plan order
    inputs: np.ndarray  # (rows, d) physical input values, same rows
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
    #: outcome classes, failure modes by leg and censored ranges of every sample
    counts: OutcomeCounts | None = None
    #: the rows in ``outcomes`` and ``inputs`` (every sample up to the row limit)
    kept: KeptRows | None = None

    @property
    def samples(self) -> int:
        """Samples of the main plan (all replicates), kept or not."""
        return int(sum(d.n for d in self.designs))

    @property
    def kept_rows(self) -> int:
        """Rows in ``outcomes`` and ``inputs``."""
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
    kept = KeptRows.of(settings)
    reducers = {
        "rows": CollectReducer(tuple(OUTPUT_KEYS) + ("inputs",), kept.rows,
                               ranges=None if kept.every_row else kept.ranges()),
        "success": GroupCountReducer("success", offsets),
        "arrived": GroupCountReducer("reaches_recovery", offsets),
    }
    if not kept.every_row:
        reducers.update(streamed_figures.reducers(scenario, offsets))
    result = stream(plan, _DimensionGuard(model, d), MultiReducer(reducers),
                    input_model=input_model if d else None,
                    chunk_blocks=settings.chunk_blocks, executor=executor, progress=progress)
    counts = [(c.count, c.n) for c in result["success"]]
    arrive_counts = [(c.count, c.n) for c in result["arrived"]]
    rows = result["rows"]
    outcomes = Outcomes.from_columns({k: rows[k] for k in OUTPUT_KEYS})
    inputs = rows["inputs"][:, :d]
    conf = settings.confidence
    randomised = settings.scheme == "sobol"
    p_conf = settings.p_success_confidence
    p_success = estimators.success_probability(counts, randomised=randomised, confidence=p_conf)
    p_arrive = estimators.success_probability(arrive_counts, randomised=randomised,
                                              confidence=p_conf)
    sizes = [kept.per_replicate] * settings.replicates
    if kept.every_row:
        figures = _figures_of_rows(scenario, outcomes, offsets, conf, randomised)
    else:
        figures = streamed_figures.figures(scenario, result, conf, randomised)
    durations = outcomes["duration_days"][outcomes["reaches_recovery"]]
    return Propagation(
        designs=designs,
        outcomes=outcomes,
        inputs=inputs,
        input_names=scenario.input_names,
        p_success=p_success,
        p_success_replicates=p_success.replicate_fractions,
        p_arrive=p_arrive,
        range_curve=figures.range_curve,
        range_quantiles=_quantiles(outcomes["range_km"], _RANGE_QUANTILES, conf),
        duration_quantiles=_quantiles(durations, _DURATION_QUANTILES, conf),
        mean_margin_Wh=figures.mean_margin_Wh,
        route_km=scenario.route_length_km,
        outcome_table=tabulate_outcomes(
            outcomes, replicate_sizes=sizes, scheme=settings.scheme,
            confidence=conf, proportion=_proportion,
            subsystems=len(scenario.hardware.subsystems), counts=figures.counts,
            hardware=figures.hardware),
        counts=figures.counts,
        kept=kept,
    )


def _figures_of_rows(scenario, outcomes: Outcomes, offsets, conf: float, randomised: bool):
    """The range curve, mean margin and counts of every sample, from rows held in memory."""
    route = scenario.route_length_km
    cap = float(np.max(outcomes["range_km"]))
    grid = np.linspace(0.0, max(cap, route) * 1.0, 241)
    margin = np.asarray(outcomes["margin_Wh"])
    pieces = [margin[lo:hi] for lo, hi in zip(offsets[:-1], offsets[1:])]
    return streamed_figures.Figures(
        range_curve=estimators.exceedance_curve(outcomes["range_km"], grid, confidence=conf),
        mean_margin_Wh=estimators.replicated_mean(pieces, randomised=randomised,
                                                  confidence=conf),
        counts=OutcomeCounts.of_rows(outcomes, np.diff(offsets), len(scenario.legs)),
        hardware=None)


@dataclass(frozen=True)
class _DimensionGuard:
    """Lets a scenario with no uncertain input run on the engine's 1-column plan."""

    model: Any
    dimension: int

    def __call__(self, x):
        return self.model(x[:, : self.dimension])
