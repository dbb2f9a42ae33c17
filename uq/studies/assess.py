"""The main job: a full probabilistic assessment of one scenario.

``assess(scenario)`` runs, in order:

1. propagation — K independently scrambled Sobol' replicates (or one Monte Carlo / Latin
   hypercube plan) streamed through the transit model; P(success) with its interval (replicate
   t-interval for randomised QMC, Wilson for MC/LHS), the probability-of-reaching-range curve
   with pointwise intervals and a simultaneous DKW band, range/duration quantiles with
   order-statistic intervals, the mean energy margin;
2. sensitivity — a Saltelli design through SALib for range, duration, margin and the failure
   indicator (correlated inputs grouped), and a polynomial chaos surrogate of the margin with
   Sobol indices from its coefficients and its leave-one-out / holdout quality;
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
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign
from uq.scenario import Scenario
from uq.simulate import FAILURE_MODE_NAMES, NominalResult, Outcomes, ScenarioModel, nominal

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
    samples = int(overrides.get("samples") or a.samples)
    if scheme == "sobol":
        per = max(samples // replicates, 2)
        per = 1 << int(round(np.log2(per)))  # Sobol' replicates need n = 2^m
        samples = per * replicates
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
    k = sum(c for c, _ in counts)
    n = sum(m for _, m in counts)
    fractions = [c / m for c, m in counts]
    if scheme == "sobol" and len(counts) >= 2 and len(set(fractions)) > 1:
        est = estimators.replicate_interval(fractions, confidence=confidence)
        # a proportion's interval never leaves [0, 1]
        return estimators.IntervalEstimate(
            estimate=est.estimate, lower=max(0.0, est.lower), upper=min(1.0, est.upper),
            confidence=est.confidence, method=est.method,
            n=n), tuple(fractions)
    if scheme == "sobol" and len(counts) >= 2:
        # every replicate gave the same fraction (e.g. all succeed): the replicate spread says
        # nothing, so fall back to the exact binomial interval on the pooled counts
        return estimators.proportion_interval(k, n, confidence=confidence,
                                              method="clopper-pearson"), tuple(fractions)
    return estimators.proportion_interval(k, n, confidence=confidence), (k / n,)


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
    p_success, per_rep = _proportion(counts, settings.scheme, conf)
    p_arrive, _ = _proportion(arrive_counts, settings.scheme, conf)
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
        p_success_replicates=per_rep,
        p_arrive=p_arrive,
        range_curve=curve,
        range_quantiles=_quantiles(outcomes["range_km"], _RANGE_QUANTILES, conf),
        duration_quantiles=_quantiles(durations, _DURATION_QUANTILES, conf),
        mean_margin_Wh=(
            estimators.replicate_interval([p["margin_Wh"].mean() for p in pieces],
                                          confidence=conf)
            if settings.scheme == "sobol" and len(pieces) >= 2
            else estimators.mean_interval(outcomes["margin_Wh"], confidence=conf)),
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
    """Variance-based sensitivity of the outputs (SALib) and the PCE surrogate of the margin."""

    sobol: Any  # uq.estimators.sobol.SobolResults, keyed by output
    factors: tuple[str, ...]  # input names or correlated-group labels
    groups: tuple[tuple[str, ...], ...] | None
    base_n: int
    runs: int
    pce: Any | None  # uq.estimators.pce.PolynomialChaos of margin_Wh
    pce_indices: Any | None
    pce_space: str  # "physical inputs" | "independent unit variables"
    notes: tuple[str, ...] = ()

    def total_index(self, output: str) -> dict[str, float]:
        """Total index per input name (a group's index is given to each of its members)."""
        res = self.sobol[output]
        out = {}
        for label, st in zip(res.factors, np.asarray(res.total, dtype=float)):
            members = self._members(label)
            for m in members:
                out[m] = float(st)
        return out

    def _members(self, label: str) -> tuple[str, ...]:
        if self.groups is None:
            return (label,)
        for g in self.groups:
            if "+".join(g) == label or (len(g) == 1 and g[0] == label):
                return g
        return (label,)


def _evaluate_rows(scenario: Scenario, x: np.ndarray, block: int = 2**14) -> dict:
    model = ScenarioModel(scenario)
    parts = [model(x[i:i + block]) for i in range(0, x.shape[0], block)]
    return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}


def sensitivity_analysis(scenario: Scenario, settings: Settings, propagation: Propagation,
                         *, seed: np.random.SeedSequence) -> Sensitivity | None:
    """Saltelli/SALib indices of the outputs and the PCE of the margin."""
    d = len(scenario.inputs)
    if d == 0 or settings.sensitivity_base_n <= 0:
        return None
    from uq.estimators import pce as pce_module
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
    x = input_model.transform(np.asarray(design.unit_points))
    out = _evaluate_rows(scenario, x)
    outputs = {
        "range_km": out["range_km"],
        "duration_days": out["duration_days"],
        "margin_Wh": out["margin_Wh"],
        "failure": (~out["success"]).astype(float),
    }
    sobol = sa.sobol_indices(design, outputs, confidence=settings.confidence,
                             seed=int(boot_seed.generate_state(1)[0]))
    notes = []
    pce = pce_indices = None
    space = "physical inputs"
    if settings.polynomial_chaos:
        n_fit = min(propagation.samples, 2048)
        y = propagation.outcomes["margin_Wh"][:n_fit]
        if input_model.is_independent:
            dists = [m.to_chaospy() for m in scenario.inputs]
            xs = propagation.inputs[:n_fit]
        else:
            import chaospy

            space = "independent unit variables"
            dists = [chaospy.Uniform(0.0, 1.0) for _ in names]
            xs = np.concatenate([dz.unit_points() for dz in propagation.designs])[:n_fit, :d]
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", pce_module.PolynomialChaosQualityWarning)
            pce = pce_module.fit_polynomial_chaos(
                dists, xs, y, max_degree=3 if d > 10 else 5, seed=int(pce_seed.generate_state(1)[0]),
                names=names)
        pce_indices = pce.sobol_indices()
        if grouped:
            pce_indices = _grouped_pce_indices(pce, pce_indices, names, group_list)
            space = "independent unit variables; correlated inputs by group"
        if pce.quality != "good":
            notes.append(
                f"The polynomial chaos surrogate of the energy margin is poor (LOO error "
                f"{pce.loo_error:.3f}, holdout Q2 {pce.q2_holdout:.3f}); its indices are shown "
                "for reference only - rely on the Saltelli estimates.")
    return Sensitivity(
        sobol=sobol, factors=tuple(sobol["range_km"].factors),
        groups=tuple(group_list) if grouped else None, base_n=settings.sensitivity_base_n,
        runs=design.n_runs, pce=pce, pce_indices=pce_indices, pce_space=space,
        notes=tuple(notes),
    )


def _grouped_pce_indices(pce, indices, names, groups):
    """Sobol indices of correlated groups from the PCE coefficients (Sudret 2008).

    In the independent unit space a correlated pair's split between its members depends on
    the Cholesky order, so only the group's indices mean something: first = terms whose
    variables all lie in the group, total = terms touching it. Each member carries its
    group's values (the convention of the Saltelli group indices).
    """
    from uq.estimators.pce import PolynomialChaosIndices

    alpha = np.asarray(pce.multi_indices) > 0
    c2 = np.asarray(pce.coefficients, dtype=float) ** 2
    nonconstant = alpha.any(axis=1)
    variance = float(c2[nonconstant].sum())
    column = {n: i for i, n in enumerate(names)}
    first = np.asarray(indices.first, dtype=float).copy()
    total = np.asarray(indices.total, dtype=float).copy()
    for g in groups:
        if len(g) < 2 or variance <= 0:
            continue
        cols = [column[m] for m in g]
        inside = alpha[:, cols].any(axis=1)
        only = nonconstant & ~np.delete(alpha, cols, axis=1).any(axis=1)
        for m in cols:
            first[m] = float(c2[only].sum() / variance)
            total[m] = float(c2[inside].sum() / variance)
    return PolynomialChaosIndices(names=tuple(names), first=first, total=total,
                                  second=np.zeros((len(names), len(names))),
                                  variance=indices.variance, status=indices.status,
                                  quality=indices.quality)


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
    versions: dict[str, str] = field(default_factory=dict)
    #: (samples, P(success) half-width) of each propagation size tried
    convergence: tuple[tuple[int, float], ...] = ()

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
        """Inputs ranked by total index of the failure indicator (then of range)."""
        if self.sensitivity is None:
            return []
        fail = self.sensitivity.total_index("failure")
        rng_ = self.sensitivity.total_index("range_km")
        rows = [{"input": n, "total_index_failure": fail.get(n, 0.0),
                 "total_index_range": rng_.get(n, 0.0)} for n in self.scenario.input_names]
        rows.sort(key=lambda r: (-r["total_index_failure"], -r["total_index_range"]))
        return rows


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
    sizes tried and their half-widths are in ``Assessment.convergence``.
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
        convergence = []
        while True:
            prop = propagate(
                scenario, settings, executor=executor,
                progress=(lambda rows, _n=settings.samples: progress("propagation", rows, _n))
                if progress else None)
            convergence.append((prop.samples, prop.p_success.half_width))
            if (target_half_width is None or prop.p_success.half_width <= target_half_width
                    or settings.samples * 2 > max_samples):
                break
            settings = dataclasses.replace(settings, samples=settings.samples * 2)
        timings["propagation"] = time.perf_counter() - t0
        if progress:
            progress("sensitivity", 0, 1)
        t0 = time.perf_counter()
        sens = sensitivity_analysis(scenario, settings, prop, seed=stage_seeds[0])
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
        text = str(w.message).split("\n")[0]
        if text not in cautions:
            cautions.append(text)
    if sens is not None:
        cautions.extend(sens.notes)
    if settings.scheme == "sobol":
        cautions.append(
            "P(success) and the mean margin carry replicate intervals over independent "
            "scramblings; the range-curve bands, quantile intervals and failure shares treat "
            "the pooled scrambled points as independent samples, which is conservative for "
            "randomised quasi-Monte Carlo.")
    if target_half_width is not None and convergence[-1][1] > target_half_width:
        cautions.append(
            f"The P(success) half-width target {target_half_width:g} was not reached within "
            f"{max_samples:,} samples (half-width {convergence[-1][1]:.4f} at "
            f"{convergence[-1][0]:,}).")
    cautions.extend(parts.pop("notes"))
    return Assessment(
        scenario=scenario, settings=settings, propagation=prop, sensitivity=sens,
        nominal=base, cautions=tuple(cautions), timings_s=timings,
        versions=package_versions(), convergence=tuple(convergence), **parts)


def _decide(scenario, settings, prop: Propagation, sens: Sensitivity | None,
            base: NominalResult, *, seed: np.random.SeedSequence) -> dict:
    dec = scenario.decision
    conf = settings.confidence
    out = prop.outcomes
    p = prop.p_success
    verdict = decisions.go_no_go(p.lower, p.upper, p.estimate,
                                 required_probability=dec.required_probability,
                                 confidence=conf, samples=prop.samples)
    failures = decisions.failure_breakdown(
        out["failure_mode"], out["failing_leg"],
        mode_names={int(k): v for k, v in FAILURE_MODE_NAMES.items()},
        leg_names=[leg.name for leg in scenario.legs], confidence=conf)
    # every vehicle that reaches the recovery point, on its reserve if need be, must be met
    reached = out["reaches_recovery"]
    contingency = None
    if reached.sum() >= 2:
        contingency = decisions.ship_time_contingency(
            out["duration_days"], arrived=reached,
            nominal_days=float(base.outcome["duration_days"]),
            booking_quantile=dec.booking_quantile, day_rate=dec.ship_day_rate,
            currency=dec.currency, confidence=conf)
    success = out["success"]
    pinned = {}
    voi_seed, rank_seed = seed.spawn(2)
    for i, name in enumerate(prop.input_names):
        pinned[name] = decisions.pinned_input_probabilities(
            success, prop.inputs[:, i], confidence=conf, parameter_name=name,
            unit=scenario.inputs[i].unit)
    tests = None
    notes: list[str] = []
    catalogue = list(dec.tests)
    total = None
    if sens is not None:
        # a correlated group's total index is shared out among its members, so that a test
        # pinning the whole group is credited with it once (the fallback ranking adds them)
        total = sens.total_index("failure")
        for g in sens.groups or ():
            for m in g:
                total[m] = total[m] / len(g)
    if catalogue:
        has_values = None not in (dec.value_of_success, dec.cost_of_failure)
        nb = None
        if has_values:
            # Value information for the rule the review applies - go iff P(success) >= p* -
            # at the scenario's stakes: NB(go) - NB(no-go) = (V + C_f) (s - p*), so the
            # break-even is p* itself and the "current choice" agrees with the verdict.
            stakes = dec.value_of_success + dec.cost_of_failure
            go = stakes * (success.astype(float) - dec.required_probability)
            nb = np.column_stack([go, np.zeros_like(go)])
            if dec.cost_of_no_go is not None:
                implied = (dec.cost_of_failure - dec.cost_of_no_go) / stakes
                if abs(implied - dec.required_probability) > 0.01:
                    notes.append(
                        f"The scenario's values and costs alone would put the break-even "
                        f"P(success) at {implied:.1%}, not the required "
                        f"{dec.required_probability:.1%}; the test ranking values information "
                        f"for the review's rule (go iff P(success) >= "
                        f"{dec.required_probability:.1%}) at stakes of {stakes:,.0f} "
                        f"{dec.currency} (value of success + cost of failure).")
        if nb is not None or total is not None:
            tests = decisions.rank_tests(
                catalogue, net_benefit=nb,
                inputs={n: prop.inputs[:, i] for i, n in enumerate(prop.input_names)},
                total_indices=total, currency=dec.currency, confidence=conf,
                option_names=("go", "no-go") if nb is not None else None,
                rng=np.random.default_rng(rank_seed))
    return {"verdict": verdict, "failures": failures, "contingency": contingency,
            "pinned": pinned, "tests": tests, "notes": notes}
