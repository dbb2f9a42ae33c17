"""The main job: a full probabilistic assessment of one scenario.

``assess(scenario)`` runs, in order:

1. propagation — K independently scrambled Sobol' replicates (or one Monte Carlo / Latin
   hypercube plan) streamed through the transit model; P(success) with its interval (the one
   rule of :func:`uq.estimators.success_probability`), the probability-of-reaching-range curve
   with pointwise intervals and a simultaneous DKW band, range/duration quantiles with
   order-statistic intervals, the mean energy margin;
2. sensitivity — a Saltelli design streamed through the engine (so workers and Dask speed it
   up) for range, duration, margin and the failure indicator (correlated inputs grouped, one
   factor per group), and a polynomial chaos surrogate of the margin with Sobol indices from
   its coefficients, bootstrap intervals, and its leave-one-out / holdout quality;
3. decisions — go/no-go on the confidence bound, failure modes and legs, ship-time
   contingency, P(success) with each input pinned at its 10th/90th percentile, and the
   ranking of candidate tests by value of information (or by total Sobol index when the
   scenario gives no values and costs);
4. the deterministic baseline (every input at its median) for comparison.

Everything is reproducible from the recorded seed: child seeds of the stages are spawned
from it, and the sampling engine makes every number independent of chunking and workers.
"""
from __future__ import annotations

import dataclasses
import time
import warnings
from concurrent.futures import ProcessPoolExecutor
from contextlib import nullcontext
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from uq import decisions, estimators
from uq.decisions.outcome_table import outcome_table as tabulate_outcomes
from uq.sampling.engine import CollectReducer, CountReducer, MultiReducer, stream
from uq.sampling.inputs import InputModel
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign, plan_size
from uq.scenario import Scenario
from uq.simulate import FAILURE_MODE_NAMES, NominalResult, Outcomes, ScenarioModel, nominal
from uq.studies.decide import knowledge_band_of, rank_scenario_tests

__all__ = [
    "OUTPUT_KEYS",
    "Settings",
    "Propagation",
    "Sensitivity",
    "Assessment",
    "input_model_of",
    "propagate",
    "sensitivity_analysis",
    "assess",
    "package_versions",
]

#: per-sample outputs kept from the propagation (plus the input values themselves)
OUTPUT_KEYS = Outcomes.__dataclass_fields__.keys()
_RANGE_QUANTILES = (0.05, 0.1, 0.5, 0.9, 0.95)
_DURATION_QUANTILES = (0.5, 0.9, 0.95)
#: outputs whose Sobol indices are reported, with their units
SENSITIVITY_OUTPUTS = {"range_km": "km", "duration_days": "days", "margin_Wh": "Wh",
                       "failure": "indicator"}


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

    @property
    def p_success_confidence(self) -> float:
        """Confidence of the P(success) interval at one look under the sequential rule."""
        return estimators.SequentialRule(self.confidence, self.max_looks).per_look_confidence

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
    pieces, counts, arrive_counts = [], [], []
    done = 0
    for design in designs:
        reducer = MultiReducer({
            "rows": CollectReducer(tuple(OUTPUT_KEYS) + ("inputs",), design.n),
            "success": CountReducer("success"),
            "arrived": CountReducer("reaches_recovery"),
        })

        def _progress(rows, _base=done):
            if progress is not None:
                progress(_base + rows)

        result = stream(design, _DimensionGuard(model, d), reducer,
                        input_model=input_model if d else None,
                        chunk_blocks=settings.chunk_blocks, executor=executor,
                        progress=_progress)
        done += design.n
        pieces.append(result["rows"])
        counts.append((result["success"].count, result["success"].n))
        arrive_counts.append((result["arrived"].count, result["arrived"].n))
    outcomes = Outcomes.from_columns({k: np.concatenate([p[k] for p in pieces]) for k in OUTPUT_KEYS})
    inputs = np.concatenate([p["inputs"] for p in pieces])[:, :d]
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


@dataclass(frozen=True)
class Sensitivity:
    """Variance-based sensitivity of the outputs (Saltelli) and the PCE surrogate of the margin.

    A factor is an input, or a group of correlated inputs (one factor, named by its
    members); only a group's indices are defined, so its members are never ranked one by one.
    """

    sobol: Any  # uq.estimators.sobol.SobolResults, keyed by output, one entry per factor
    factors: tuple[str, ...]  # input names or correlated-group labels
    groups: tuple[tuple[str, ...], ...] | None
    base_n: int
    runs: int
    pce: Any | None  # uq.estimators.pce.PolynomialChaos of margin_Wh
    pce_indices: Any | None  # per input (a group member shows its group's value)
    pce_space: str  # "physical inputs" | "independent unit variables"
    notes: tuple[str, ...] = ()
    pce_factors: Any | None = None  # uq.estimators.sensitivity.GroupIndices, with intervals
    #: output -> exact (lower, upper) bounds of the total index of a 0/1 output
    indicator_bounds: dict | None = None

    @property
    def members(self) -> tuple[tuple[str, ...], ...]:
        """Member inputs of each factor, in the order of ``factors``."""
        return tuple(self._members(label) for label in self.factors)

    def total_index(self, output: str) -> dict[str, float]:
        """Total index per input name, for display beside an input (a group's index is
        shown beside each of its members; rank with :meth:`ranking`, not with this)."""
        res = self.sobol[output]
        out = {}
        for label, st in zip(res.factors, np.asarray(res.total, dtype=float)):
            for m in self._members(label):
                out[m] = float(st)
        return out

    def ranking(self, output: str = "failure", tiebreak: str = "range_km"):
        """Factors ranked by the total index of ``output``, each with its interval.

        Returns
        -------
        uq.estimators.sensitivity.FactorRanking
        """
        from uq.estimators import sensitivity as sens_est

        res = self.sobol[output]
        total_low = np.asarray(res.total_interval.low, dtype=float)
        total_high = np.asarray(res.total_interval.high, dtype=float)
        if self.indicator_bounds is not None and output in self.indicator_bounds:
            lo, hi = self.indicator_bounds[output]
            total_low, total_high = np.minimum(total_low, lo), np.maximum(total_high, hi)
        first, total = np.asarray(res.first, float), np.asarray(res.total, float)
        return sens_est.rank_factors(
            self.factors, self.members, first,
            np.minimum(res.first_interval.low, first), np.maximum(res.first_interval.high, first),
            total, np.minimum(total_low, total), np.maximum(total_high, total),
            base_n=self.base_n, output=output,
            tiebreak=np.asarray(self.sobol[tiebreak].total, float) if tiebreak else None)

    def _members(self, label: str) -> tuple[str, ...]:
        if self.groups is None:
            return (label,)
        for g in self.groups:
            if "+".join(g) == label or (len(g) == 1 and g[0] == label):
                return g
        return (label,)


def sensitivity_analysis(scenario: Scenario, settings: Settings, propagation: Propagation,
                         *, seed: np.random.SeedSequence, executor=None) -> Sensitivity | None:
    """Saltelli indices of the outputs (streamed through the engine) and the PCE of the margin."""
    d = len(scenario.inputs)
    if d == 0 or settings.sensitivity_base_n <= 0:
        return None
    from uq.estimators import sensitivity as sens_est
    from uq.estimators import sobol as sa

    input_model = input_model_of(scenario)
    names = scenario.input_names
    group_list = [tuple(g) for g in input_model.groups()]
    grouped = any(len(g) > 1 for g in group_list)
    design_seed, boot_seed, pce_seed = seed.spawn(3)
    design = sa.saltelli_design(
        names, base_n=settings.sensitivity_base_n, second_order=False,
        seed=int(design_seed.generate_state(1)[0]),
        groups=group_list if grouped else None,
    )
    out = sens_est.evaluate_saltelli(
        design, ScenarioModel(scenario), ("range_km", "duration_days", "margin_Wh", "success"),
        input_model=input_model, executor=executor, chunk_blocks=settings.chunk_blocks,
        block_size=min(settings.block_size, 4096))
    outputs = {
        "range_km": out["range_km"],
        "duration_days": out["duration_days"],
        "margin_Wh": out["margin_Wh"],
        "failure": (~out["success"]).astype(float),
    }
    sobol = sa.sobol_indices(design, outputs, confidence=settings.confidence,
                             seed=int(boot_seed.generate_state(1)[0]))
    bounds = {"failure": sens_est.indicator_total_bounds(outputs["failure"], design.n_factors,
                                                         confidence=settings.confidence)}
    pce_part = _margin_surrogate(scenario, settings, propagation, input_model, group_list,
                                 seed=pce_seed) if settings.polynomial_chaos else {}
    return Sensitivity(
        sobol=sobol, factors=tuple(sobol["range_km"].factors),
        groups=tuple(group_list) if grouped else None, base_n=settings.sensitivity_base_n,
        runs=design.n_runs, indicator_bounds=bounds,
        **({"pce": None, "pce_indices": None, "pce_space": "physical inputs"} | pce_part))


def _margin_surrogate(scenario, settings, propagation, input_model, group_list, *, seed) -> dict:
    """PCE of the energy margin with per-factor indices and their bootstrap intervals."""
    from uq.estimators import pce as pce_module
    from uq.estimators import sensitivity as sens_est

    names, d = scenario.input_names, len(scenario.inputs)
    grouped = any(len(g) > 1 for g in group_list)
    boot_seed = seed.spawn(1)[0]
    n_fit = min(propagation.samples, 2048)
    y = propagation.outcomes["margin_Wh"][:n_fit]
    space = "physical inputs"
    if input_model.is_independent:
        dists = [m.to_chaospy() for m in scenario.inputs]
        xs = propagation.inputs[:n_fit]
    else:
        import chaospy

        space = "independent unit variables; correlated inputs by group"
        dists = [chaospy.Uniform(0.0, 1.0) for _ in names]
        xs = np.concatenate([dz.unit_points() for dz in propagation.designs])[:n_fit, :d]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", pce_module.PolynomialChaosQualityWarning)
        pce = pce_module.fit_polynomial_chaos(
            dists, xs, y, max_degree=3 if d > 10 else 5,
            seed=int(seed.generate_state(1)[0]), names=names)
    factors = sens_est.pce_group_indices(
        pce, xs, y, group_list, confidence=settings.confidence, n_bootstrap=100,
        rng=np.random.default_rng(boot_seed))
    indices = pce.sobol_indices()
    if grouped:
        indices = sens_est.members_show_group(indices, factors)
    notes = []
    if pce.quality != "good":
        notes.append(
            f"The polynomial chaos surrogate of the energy margin is poor (LOO error "
            f"{pce.loo_error:.3f}, holdout Q2 {pce.q2_holdout:.3f}); its indices are shown "
            "for reference only - rely on the Saltelli estimates.")
    return {"pce": pce, "pce_indices": indices, "pce_space": space, "pce_factors": factors,
            "notes": tuple(notes)}


@dataclass(frozen=True)
class Assessment:
    """Everything a go/no-go review needs, with the run record."""

    scenario: Scenario
    settings: Settings
    propagation: Propagation
    sensitivity: Sensitivity | None
    nominal: NominalResult
    verdict: decisions.Verdict
    failures: decisions.FailureBreakdown
    contingency: decisions.ShipTimeContingency | None
    pinned: dict[str, Any]
    tests: decisions.TestRanking | None
    cautions: tuple[str, ...]
    timings_s: dict[str, float]
    knowledge_band: decisions.KnowledgeBand | None = None
    #: smallest change of each lever that gives GO (None when not computed)
    go_requirements: tuple[Any, ...] | None = None
    versions: dict[str, str] = field(default_factory=dict)
    #: (samples, P(success) half-width) of each propagation size tried
    convergence: tuple[tuple[int, float], ...] = ()
    #: ship booked for the recovery window only (scenario's ship_booking = "recovery_window")
    recovery: decisions.RecoveryWindowBooking | None = None
    #: what the pilot did (gliders): re-trims, drifting, surfacings
    flight: decisions.PilotActions | None = None
    #: the sequential rule behind the P(success) interval: rule, max_looks, looks_taken, ...
    sequential: dict = field(default_factory=dict)

    @property
    def p_success(self) -> estimators.IntervalEstimate:
        return self.propagation.p_success

    def __repr__(self) -> str:
        # a notebook echoes the object: one line, not the 60,000 characters of every array
        p = self.propagation.p_success
        return (f"<Assessment {self.scenario.name!r}: {self.verdict.verdict.upper()}, "
                f"P(success) {p.estimate:.1%} ({p.confidence:.0%} CI {p.lower:.1%} to "
                f"{p.upper:.1%}) against {self.scenario.decision.required_probability:.1%} "
                f"required; {self.propagation.samples:,} samples, seed {self.settings.seed}>")

    def _repr_html_(self) -> str:
        """Rich display in a notebook: the verdict sentence and the headline figures."""
        import html

        p = self.propagation.p_success
        rows = [("verdict", self.verdict.verdict.upper()),
                ("P(success)", f"{p.estimate:.1%} ({p.confidence:.0%} CI {p.lower:.1%} to {p.upper:.1%})"),
                ("required", f"{self.scenario.decision.required_probability:.1%}"),
                ("samples / seed", f"{self.propagation.samples:,} / {self.settings.seed}")]
        if self.contingency is not None:
            rows.append(("ship time", self.contingency.sentence))
        body = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th>"
                       f"<td style='text-align:left'>{html.escape(v)}</td></tr>" for k, v in rows)
        return (f"<div><strong>{html.escape(self.scenario.name)}</strong>: "
                f"{html.escape(self.verdict.sentence)}<table>{body}</table></div>")

    def sensitivity_ranking(self) -> list[dict]:
        """Factors (inputs or correlated groups, one row each) ranked by the total index of
        the failure indicator (then of range), each index with its interval.

        Each row keeps the keys ``input`` (the factor label), ``total_index_failure`` and
        ``total_index_range``, and adds ``members``, the first and total indices of failure
        with their bounds, the total index of range with its bounds, and
        ``resolved_from_next`` (False where this row's interval overlaps the next one's).
        """
        if self.sensitivity is None:
            return []
        ranking = self.sensitivity.ranking("failure", tiebreak="range_km")
        rng_ = self.sensitivity.sobol["range_km"]
        at = {f: i for i, f in enumerate(rng_.factors)}
        rows = []
        for r in ranking.rows:
            k = at[r.factor]
            rows.append({
                "input": r.factor, "members": list(r.members),
                "total_index_failure": r.total, "total_index_failure_low": r.total_low,
                "total_index_failure_high": r.total_high,
                "first_index_failure": r.first, "first_index_failure_low": r.first_low,
                "first_index_failure_high": r.first_high,
                "total_index_range": float(rng_.total[k]),
                "total_index_range_low": float(min(rng_.total_interval.low[k], rng_.total[k])),
                "total_index_range_high": float(max(rng_.total_interval.high[k], rng_.total[k])),
                "resolved_from_next": r.resolved_from_next,
            })
        return rows

    def sensitivity_order(self):
        """Whether the ranking's order is resolved, the suggested base N and the sentence
        (:class:`uq.estimators.sensitivity.FactorRanking`), or None without the stage."""
        if self.sensitivity is None:
            return None
        return self.sensitivity.ranking("failure", tiebreak="range_km")


def package_versions() -> dict[str, str]:
    from importlib import metadata

    out = {}
    for dist in ("transit-risk", "numpy", "scipy", "chaospy", "SALib", "pandas",
                 "matplotlib", "gsw"):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "not installed"
    return out


def assess(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
           scheme: str | None = None, replicates: int | None = None,
           sensitivity_base_n: int | None = None, workers: int = 1, chunk_blocks: int = 1,
           block_size: int = DEFAULT_BLOCK_SIZE, polynomial_chaos: bool = True,
           target_half_width: float | None = None, max_samples: int = 2**20,
           progress: Callable[[str, int, int], None] | None = None,
           executor=None) -> Assessment:
    """Full assessment of ``scenario`` (see the module docstring).

    ``executor``: any object with an ordered ``.map(fn, iterable)`` (e.g. from
    :func:`uq.sampling.backends.dask_executor`); when given, ``workers`` is not used. The
    numbers do not depend on the executor, the worker count or ``chunk_blocks``.

    With ``target_half_width`` the propagation doubles its sample size until the half-width
    of the P(success) interval is at most that (e.g. 0.01) or ``max_samples`` is reached; the
    sizes tried and their half-widths are in ``Assessment.convergence``. Those doublings are
    repeated looks at one question, so the number of looks is declared before the first and
    each look's interval is widened by the sequential rule (``Assessment.sequential`` and a
    caution name the rule and the looks taken); the verdict keeps its nominal false-GO rate.
    ``progress(stage, done, total)`` is called as the stages advance (for a progress bar).
    """
    settings = _settings(scenario, samples=samples, seed=seed, scheme=scheme,
                         replicates=replicates, sensitivity_base_n=sensitivity_base_n,
                         workers=workers, chunk_blocks=chunk_blocks, block_size=block_size,
                         polynomial_chaos=polynomial_chaos)
    # stage streams on their own spawn key, apart from the plans' (seed, replicate, block) keys
    stage_seeds = np.random.SeedSequence(settings.seed, spawn_key=(2**31,)).spawn(3)
    timings: dict[str, float] = {}
    cautions: list[str] = []
    pool = (nullcontext(executor) if executor is not None
            else ProcessPoolExecutor(settings.workers) if settings.workers > 1 else nullcontext())
    with warnings.catch_warnings(record=True) as caught, pool as executor:
        warnings.simplefilter("always")
        t0 = time.perf_counter()
        prop, settings, sequential = _propagate_to_target(
            scenario, settings, executor=executor, target_half_width=target_half_width,
            max_samples=max_samples, progress=progress)
        convergence = [(n, est.half_width) for n, est in sequential.history]
        timings["propagation"] = time.perf_counter() - t0
        if progress:
            progress("sensitivity", 0, 1)
        t0 = time.perf_counter()
        sens = sensitivity_analysis(scenario, settings, prop, seed=stage_seeds[0],
                                    executor=executor)
        timings["sensitivity"] = time.perf_counter() - t0
        if progress:
            progress("sensitivity", 1, 1)
            progress("decisions", 0, 1)
        t0 = time.perf_counter()
        base = nominal(scenario)
        parts = _decide(scenario, settings, prop, sens, base, seed=stage_seeds[1])
        timings["decisions"] = time.perf_counter() - t0
        if progress:
            progress("decisions", 1, 1)
    for w in caught:
        if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
            continue  # a library's note to its developers, not a caution about the mission
        text = str(w.message).split("\n")[0]
        if text not in cautions:
            cautions.append(text)
            if issubclass(w.category, UserWarning):  # e.g. a physics fit's range: pass it on
                # to the caller's warning handling too (the CLI prints one caution line)
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    if sens is not None:
        cautions.extend(sens.notes)
    if settings.scheme == "sobol":
        cautions.append(
            "P(success) and the mean margin carry replicate intervals over independent "
            "scramblings; the range-curve bands, quantile intervals and failure shares treat "
            "the pooled scrambled points as independent samples, which is conservative for "
            "randomised quasi-Monte Carlo.")
    if sequential.rule.max_looks > 1:
        cautions.append(sequential.rule.describe(sequential.looks))
    if target_half_width is not None and convergence[-1][1] > target_half_width:
        cautions.append(
            f"The P(success) half-width target {target_half_width:g} was not reached within "
            f"{max_samples:,} samples (half-width {convergence[-1][1]:.4f} at "
            f"{convergence[-1][0]:,}).")
    cautions.extend(parts.pop("notes"))
    return Assessment(
        scenario=scenario, settings=settings, propagation=prop, sensitivity=sens,
        nominal=base, cautions=tuple(cautions), timings_s=timings,
        versions=package_versions(), convergence=tuple(convergence),
        sequential=sequential.rule.to_dict(sequential.looks), **parts)


def _propagate_to_target(scenario, settings: Settings, *, executor, target_half_width,
                         max_samples: int, progress):
    """One propagation, or (with a half-width target) doublings under the sequential rule.

    With ``target_half_width`` the maximum number of looks (doublings up to
    ``max_samples``) is declared before the first one and every look's P(success) interval
    is computed at the rule's per-look confidence (:func:`uq.estimators.grow_until`), so the
    interval at whichever look stops keeps its nominal coverage.
    """
    last = {}

    def run(n: int, confidence: float):
        current = dataclasses.replace(settings, samples=n, max_looks=looks)
        prop = propagate(
            scenario, current, executor=executor,
            progress=(lambda rows, _n=n: progress("propagation", rows, _n)) if progress else None)
        last.update(prop=prop, settings=current)
        return prop.p_success

    if target_half_width is None:
        looks = 1
        start = end = settings.samples
        target = float("inf")
    else:
        start, end = settings.samples, max(int(max_samples), settings.samples)
        looks = estimators.planned_looks(start, end)
        target = float(target_half_width)
    result = estimators.grow_until(run, target_half_width=target, n_start=start, n_max=end,
                                   confidence=settings.confidence)
    return last["prop"], last["settings"], result


def _decide(scenario, settings, prop: Propagation, sens: Sensitivity | None,
            base: NominalResult, *, seed: np.random.SeedSequence) -> dict:
    dec = scenario.decision
    conf = settings.confidence
    out = prop.outcomes
    p = prop.p_success
    verdict = decisions.verdict_for(p, required_probability=dec.required_probability)
    failures = decisions.failure_breakdown(
        out["failure_mode"], out["failing_leg"],
        mode_names={int(k): v for k, v in FAILURE_MODE_NAMES.items()},
        leg_names=[leg.name for leg in scenario.legs], confidence=conf)
    # every vehicle that reaches the recovery point, on its reserve if need be, must be met
    reached = out["reaches_recovery"]
    contingency = recovery = None
    if reached.sum() >= 2 and dec.ship_booking == "recovery_window":
        recovery = decisions.recovery_window_booking(
            out["duration_days"], arrived=reached, deployment_date=dec.deployment_date,
            window_quantiles=dec.recovery_window, ship_transit_days=dec.ship_transit_days,
            day_rate=dec.ship_day_rate, currency=dec.currency, confidence=conf)
    elif reached.sum() >= 2:
        contingency = decisions.ship_time_contingency(
            out["duration_days"], arrived=reached,
            nominal_days=float(base.outcome["duration_days"]),
            booking_quantile=dec.booking_quantile, day_rate=dec.ship_day_rate,
            currency=dec.currency, confidence=conf)
    success = out["success"]
    pinned = {}
    voi_seed, rank_seed, band_seed = seed.spawn(3)
    for i, name in enumerate(prop.input_names):
        pinned[name] = decisions.pinned_input_probabilities(
            success, prop.inputs[:, i], confidence=conf, parameter_name=name,
            unit=scenario.inputs[i].unit)
    notes: list[str] = []
    band = knowledge_band_of(scenario, prop, conf, seed=band_seed)
    tests = rank_scenario_tests(scenario, prop, sens, band, verdict, conf, seed=rank_seed)
    flight = None
    if scenario.vehicle.kind == "glider":
        flight = decisions.pilot_actions(out["flight_events"], out["surfacings"], confidence=conf)
    return {"verdict": verdict, "failures": failures, "contingency": contingency,
            "recovery": recovery, "flight": flight, "pinned": pinned, "tests": tests,
            "knowledge_band": band, "notes": notes}
