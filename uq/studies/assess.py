"""The main job: a full probabilistic assessment of one scenario.

``assess(scenario)`` runs, in order:

1. propagation (:mod:`uq.studies.propagation`) — K independently scrambled Sobol' replicates
   (or one Monte Carlo / Latin hypercube plan) streamed through the transit model; P(success)
   with its interval (the one rule of :func:`uq.estimators.success_probability`), the
   probability-of-reaching-range curve, range/duration quantiles, the mean energy margin and
   the outcome table; optionally repeated looks under the sequential rule;
   rare events (:mod:`uq.studies.rare`) — when the main sample holds too few failures for
   them (or the requirement asks for 0.999 or more), P(fail) and every failure class by
   subset simulation, which then give P(success) and the outcome rows;
2. sensitivity (:mod:`uq.studies.sensitivity_stage`) — Saltelli indices streamed through the
   engine for range, duration, margin and the failure indicator (correlated inputs grouped),
   and a polynomial chaos surrogate of the margin with its indices and quality;
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
from uq.sampling.backends import one_blas_thread
from uq.sampling.plans import DEFAULT_BLOCK_SIZE
from uq.scenario import Scenario
from uq.simulate import (FAILURE_MODE_NAMES, FailureMode, NominalResult, ScenarioModel, nominal,
                         possible_failure_modes)
from uq.studies.decide import knowledge_band_of, rank_scenario_tests
from uq.studies.extension import ExtensionError, extension_settings, recorded_run
from uq.studies.propagation import (OUTPUT_KEYS, Propagation, Settings, _settings,
                                    input_model_of, propagate)
from uq.studies.rare import RareEventStage, rare_event_reason, rare_event_stage, with_rare_events
from uq.studies.sensitivity_stage import SENSITIVITY_OUTPUTS, Sensitivity, sensitivity_analysis

__all__ = [
    "OUTPUT_KEYS",
    "SENSITIVITY_OUTPUTS",
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
    #: P(fail) and the failure classes by subset simulation (None when the stage did not run)
    rare_events: RareEventStage | None = None

    def estimators(self) -> dict[str, str]:
        """Which estimator gave each headline probability: ``p_success``, ``p_reached_recovery`` and
        ``outcomes.<class>`` -> the method of its interval."""
        prop = self.propagation
        out = {"p_success": prop.p_success.method,
               "p_reached_recovery": prop.p_arrive.method}
        if prop.outcome_table is not None:
            out.update({f"outcomes.{r.key}": r.probability.method
                        for r in prop.outcome_table.rows})
        return out

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


@one_blas_thread
def assess(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
           scheme: str | None = None, replicates: int | None = None,
           sensitivity_base_n: int | None = None, workers: int = 1, chunk_blocks: int = 1,
           block_size: int = DEFAULT_BLOCK_SIZE, polynomial_chaos: bool = True,
           target_half_width: float | None = None, max_samples: int = 2**20,
           rare_events: str | None = None, max_looks: int | None = None,
           extends: Any = None, kept_rows: int | None = None,
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
    ``max_looks`` (default the scenario's ``[analysis] max_looks``, 1) declares how many looks
    at P(success) this run may take, so that ``extends`` — the recorded run's parsed
    ``summary.json`` or its Assessment — can take the next one with more samples under the
    same rule (:mod:`uq.studies.extension`); every look's interval is at ``1 - alpha / L``.
    ``rare_events`` ("auto", "always" or "off"; default the scenario's ``[analysis]``)
    chooses when P(fail) and the failure classes are estimated by subset simulation
    (:mod:`uq.studies.rare`); ``Assessment.estimators()`` names the estimator of each number.
    ``kept_rows`` (default :data:`uq.studies.propagation.KEPT_ROWS`) is the row limit: up
    to it every sample's row is kept; above it only the first ``kept_rows / replicates`` rows
    of each replicate, P(success), the outcome classes, failure modes, the mean margin and the
    range curve are streamed over every sample, and what needs rows says it used the subsample
    (``Propagation.kept``), so memory does not grow with ``samples``.
    ``progress(stage, done, total)`` is called as the stages advance (for a progress bar).
    """
    options = dict(samples=samples, seed=seed, scheme=scheme, replicates=replicates,
                   sensitivity_base_n=sensitivity_base_n, workers=workers,
                   chunk_blocks=chunk_blocks, block_size=block_size,
                   polynomial_chaos=polynomial_chaos, rare_events=rare_events,
                   max_looks=max_looks, kept_rows=kept_rows)
    settings, look = _settings(scenario, **options), None
    if extends is not None:
        settings, look = _extension(scenario, extends, options, target_half_width)
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
        t0 = time.perf_counter()
        rare = _rare_events(scenario, settings, prop, seed=stage_seeds[2], executor=executor,
                            progress=progress, cautions=cautions)
        if rare is not None:
            prop = with_rare_events(prop, rare)
            timings["rare_events"] = time.perf_counter() - t0
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
    if not prop.kept.every_row:
        cautions.append(prop.kept.caution())
    looks_taken = sequential.looks if look is None else look
    if sequential.rule.max_looks > 1:
        cautions.append(sequential.rule.describe(looks_taken))
    elif parts["verdict"].verdict == "undecided" and target_half_width is None:
        cautions.append(
            "A re-run with more samples is a second look at the same question and raises the "
            "false-GO rate: declare looks with [analysis] max_looks before the first run and "
            "extend it from its summary.json, or use auto-convergence (target_half_width).")
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
        sequential=sequential.rule.to_dict(looks_taken), rare_events=rare, **parts)


def _extension(scenario, extends, options: dict, target_half_width):
    """Settings of the next look of a recorded run, and that look's number."""
    recorded = recorded_run(extends)
    if target_half_width is not None:
        raise ExtensionError("extend a recorded run or converge to a half-width target, not "
                             "both: auto-convergence declares its own looks")
    for key in ("seed", "scheme", "replicates"):
        given = options.get(key)
        if given is not None and given != getattr(recorded, key):
            raise ExtensionError(f"{key} {given!r}: the recorded run used "
                                 f"{getattr(recorded, key)!r}; an extension repeats it")
    options = dict(options, seed=recorded.seed, scheme=recorded.scheme,
                   replicates=recorded.replicates, max_looks=recorded.max_looks)
    return extension_settings(recorded, _settings(scenario, **options),
                              scenario_sha256=scenario.source_sha256)


def _rare_events(scenario, settings: Settings, prop: Propagation, *, seed, executor,
                 progress, cautions: list[str]) -> RareEventStage | None:
    """The rare-event stage when ``settings.rare_events`` and the main sample ask for it."""
    if not scenario.inputs:
        return None
    reason = rare_event_reason(
        settings.rare_events, failures=int(prop.p_success.n - prop.p_success.count),
        samples=int(prop.p_success.n), p_success=prop.p_success,
        required_probability=scenario.decision.required_probability)
    if reason is None:
        return None
    if progress:
        progress("rare events", 0, 1)
    try:
        stage = rare_event_stage(
            ScenarioModel(scenario), input_model_of(scenario), reason=reason,
            plain_p_success=prop.p_success, confidence=settings.p_success_confidence,
            seed=seed, executor=executor, chunk_blocks=settings.chunk_blocks,
            block_size=settings.evaluation_block)
    except estimators.EstimatorError as exc:
        cautions.append(f"Rare-event stage ({reason}) gave no estimate: {exc}; P(success) "
                        "is the main sample's.")
        return None
    finally:
        if progress:
            progress("rare events", 1, 1)
    cautions.append(
        f"P(fail) {stage.failure.probability.estimate:.2e} (interval "
        f"{stage.failure.probability.lower:.2e} to {stage.failure.probability.upper:.2e}) and "
        f"the failure classes are estimated by {stage.failure.method}, "
        f"{stage.failure.model_runs:,} model runs, because {reason}; the main sample gave "
        f"P(success) {prop.p_success.estimate:.5f}.")
    return stage


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
        # one look, at the per-look level of the looks the run declared ([analysis] max_looks)
        looks = settings.max_looks
        estimate = run(settings.samples, settings.p_success_confidence)
        return last["prop"], last["settings"], estimators.ConvergenceResult(
            estimate=estimate, n=settings.samples, converged=True,
            history=((settings.samples, estimate),),
            rule=estimators.SequentialRule(settings.confidence, looks))
    start, end = settings.samples, max(int(max_samples), settings.samples)
    looks = estimators.planned_looks(start, end)
    result = estimators.grow_until(run, target_half_width=float(target_half_width),
                                   n_start=start, n_max=end, confidence=settings.confidence)
    return last["prop"], last["settings"], result


def _mode_names(scenario, codes) -> dict[int, str]:
    """The failure modes possible for the vehicle kind and route, plus any that occurred
    (``codes``: the codes that occurred)."""
    names = possible_failure_modes(scenario)
    for code in codes:
        if int(code) not in names and int(code) != 0:
            names[int(code)] = FAILURE_MODE_NAMES[FailureMode(int(code))]
    return dict(sorted(names.items()))


def _decide(scenario, settings, prop: Propagation, sens: Sensitivity | None,
            base: NominalResult, *, seed: np.random.SeedSequence) -> dict:
    dec = scenario.decision
    conf = settings.confidence
    out = prop.outcomes
    p = prop.p_success
    verdict = decisions.verdict_for(p, required_probability=dec.required_probability)
    # counts of every sample (the kept rows' own when every row is kept)
    failures = decisions.failure_breakdown_from_counts(
        prop.counts.mode_leg(), mode_names=_mode_names(scenario, prop.counts.present_modes()),
        leg_names=[leg.name for leg in scenario.legs], confidence=conf,
        failure_probability=(1.0 - p.estimate, 1.0 - p.upper, 1.0 - p.lower))
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
