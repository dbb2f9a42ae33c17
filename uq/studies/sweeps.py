"""Studies over several configurations on shared samples: setpoint sweeps and comparisons.

Common random numbers: one unit-hypercube plan is drawn over the *union* of the input names
of every configuration, and each configuration reads the columns of the inputs it has, by
name. Two configurations that share an input therefore see the same value of it in every row,
so differences between them are differences of the configurations, not sampling noise.
"""
from __future__ import annotations

from uq.errors import InputError

import dataclasses
from dataclasses import dataclass
from typing import Sequence

import numpy as np
import pandas as pd
from scipy import stats

from uq import decisions
from uq.sampling.backends import one_blas_thread
from uq.sampling.inputs import UNIT_CLIP, InputModel, ScipyMarginal
from uq.sampling.plans import SampleDesign
from uq.studies.propagation import _settings
from uq.scenario import Scenario
from uq.simulate import Outcomes, ScenarioModel, deterministic_optimum, nominal

__all__ = [
    "SWEEPABLE",
    "StudyError",
    "shared_unit_points",
    "columns_for",
    "shared_copula",
    "inputs_from_shared",
    "with_setpoint",
    "shared_designs",
    "plan_settings",
    "evaluate_on_shared_samples",
    "SweepResult",
    "sweep_setpoint",
    "ComparisonResult",
    "ROUTE_TOLERANCE",
    "comparability_problem",
    "compare_scenarios",
]

#: setpoint fields a sweep may vary, by vehicle kind, with their units
SWEEPABLE = {
    "propeller": {"setpoint.speed_m_s": ("speed through water", "m/s")},
    "glider": {"setpoint.glide_angle_deg": ("glide angle", "deg"),
               "setpoint.net_buoyancy_N": ("net buoyancy", "N")},
}


class StudyError(InputError):
    """A sweep or comparison that cannot be run as asked."""


def shared_unit_points(names: Sequence[str], n: int, *, seed: int,
                       scheme: str = "sobol") -> np.ndarray:
    """(n, len(names)) unit points of one plan over the union of input names."""
    d = max(len(names), 1)
    design = SampleDesign(scheme=scheme, n=n, dimension=d, seed=seed)
    return design.unit_points()[:, : len(names)]


def columns_for(scenario: Scenario, union: Sequence[str]) -> list[int]:
    """Column indices in the shared plan of each of ``scenario``'s inputs."""
    where = {name: i for i, name in enumerate(union)}
    return [where[name] for name in scenario.input_names]


def with_setpoint(scenario: Scenario, field: str, value: float) -> Scenario:
    """The scenario with one setpoint field fixed at ``value`` (removed from the inputs)."""
    allowed = SWEEPABLE[scenario.vehicle.kind]
    if field not in allowed:
        raise StudyError(
            f"sweep field {field!r} is not a setpoint of a {scenario.vehicle.kind} vehicle; "
            f"expected one of {sorted(allowed)}")
    attribute = field.split(".", 1)[1]
    setpoint = dataclasses.replace(scenario.setpoint, **{attribute: float(value)})
    inputs = tuple(m for m in scenario.inputs if m.name != field)
    correlations = tuple(c for c in scenario.correlations if field not in c.inputs)
    return dataclasses.replace(scenario, setpoint=setpoint, inputs=inputs,
                               correlations=correlations)


def shared_copula(scenarios: Sequence[Scenario], union: Sequence[str]) -> InputModel | None:
    """One Gaussian copula over the union of inputs, from every configuration's correlations.

    Correlating per configuration (in each one's own input order) would give a shared input
    different values in different configurations; one copula over the union keeps them equal.
    """
    pairs: dict[frozenset, float] = {}
    for s in scenarios:
        for c in s.correlations:
            key = frozenset(c.inputs)
            if key in pairs and pairs[key] != c.coefficient:
                raise StudyError(
                    f"configurations disagree on the rank correlation of {sorted(key)}: "
                    f"{pairs[key]} vs {c.coefficient}; expected the same value in both")
            pairs[key] = c.coefficient
    if not pairs:
        return None
    index = {name: i for i, name in enumerate(union)}
    matrix = np.eye(len(union))
    for key, rho in pairs.items():
        a, b = sorted(key)
        matrix[index[a], index[b]] = matrix[index[b], index[a]] = rho
    uniforms = [ScipyMarginal(name, stats.uniform()) for name in union]
    return InputModel(uniforms, rank_correlation=matrix)


def shared_designs(settings, dimension: int) -> list[SampleDesign]:
    """The plan of an assessment with these settings (one design per replicate), over
    ``dimension`` inputs: the same rule as :func:`uq.studies.propagation.propagate`, so a
    configuration whose inputs are the union sees exactly the assessment's rows."""
    per = settings.samples_per_replicate
    return [SampleDesign(scheme=settings.scheme, n=per, dimension=max(dimension, 1),
                         seed=settings.seed, replicate=r,
                         block_size=min(settings.block_size, per))
            for r in range(settings.replicates)]


def evaluate_on_shared_samples(scenarios: Sequence[Scenario], *, samples: int | None = None,
                               seed: int | None = None, scheme: str | None = None,
                               replicates: int | None = None, settings=None,
                               executor=None) -> list[Outcomes]:
    """Outcomes of every scenario on one shared plan (common random numbers by input name).

    The plan is an assessment's plan (``settings``, or the first scenario's ``[analysis]``
    with ``samples``/``seed``/``scheme``/``replicates`` overriding it): the same replicates,
    seed and block size, drawn over the union of the input names (the first scenario's inputs first). A
    configuration whose inputs are that union therefore runs on exactly the rows its own
    assessment runs on, and gets the same P(success). The plan's unit points are correlated
    once over the union; each configuration maps the columns of its own inputs through its own
    marginals, so a shared input has the same probability level in every configuration (the
    same value when the marginals agree). The model runs in blocks of rows, through
    ``executor.map`` when one is given (a process pool,
    :class:`uq.sampling.backends.DaskExecutor`); the numbers do not depend on it. Rows are
    in plan order, replicate after replicate.
    """
    if settings is None:
        settings = plan_settings(scenarios[0], samples=samples, seed=seed, scheme=scheme,
                                 replicates=replicates)
    union: list[str] = []
    for s in scenarios:
        union.extend(name for name in s.input_names if name not in union)
    copula = shared_copula(scenarios, union)
    blocks = []
    for design in shared_designs(settings, len(union)):
        for k in range(design.n_blocks):
            u = design.unit_points(*design.block_rows(k))[:, : len(union)]
            u = np.clip(u, UNIT_CLIP, 1.0 - UNIT_CLIP) if copula is None else copula.transform(u)
            blocks.append(u)
    tasks = []
    for s in scenarios:
        model, columns = ScenarioModel(s), columns_for(s, union)
        tasks.append([(model, inputs_from_shared(s, columns, u)) for u in blocks])
    run = map if executor is None else executor.map
    results = list(run(_evaluate_block, [task for per in tasks for task in per]))
    out, start = [], 0
    for per in tasks:
        out.append(Outcomes.concatenate(results[start:start + len(per)]))
        start += len(per)
    return out


def plan_settings(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
                  scheme: str | None = None, replicates: int | None = None):
    """The settings an assessment of ``scenario`` would run with (the one sizing rule)."""
    return _settings(scenario, samples=samples, seed=seed, scheme=scheme,
                     replicates=replicates)


def _evaluate_block(task):
    """Outcomes of one block of rows: (model, rows) -> model(rows)."""
    model, rows = task
    return model(rows)


def inputs_from_shared(scenario: Scenario, columns: Sequence[int],
                       correlated_unit: np.ndarray) -> np.ndarray:
    """(n, d) physical inputs of ``scenario`` from the union plan's (correlated) unit points:
    each of its inputs reads its column by name through its own marginal."""
    if not columns:
        return np.zeros((correlated_unit.shape[0], 0))
    return np.column_stack([m.ppf(correlated_unit[:, c])
                            for m, c in zip(scenario.inputs, columns)])


@dataclass(frozen=True)
class SweepResult:
    field: str
    values: tuple[float, ...]
    summary: decisions.SweepSummary
    nominal_margin_Wh: tuple[float, ...]  # deterministic margin at each setpoint
    samples: int
    seed: int

    def to_frame(self) -> pd.DataFrame:
        """sweep.csv: the setpoint column is named after the swept field (its unit in the
        name, e.g. ``speed_m_s``), then the rows of the summary."""
        frame = self.summary.to_frame().rename(
            columns={"setpoint": self.field.split(".")[-1]})
        frame["nominal_margin_Wh"] = list(self.nominal_margin_Wh)
        return frame


@one_blas_thread
def sweep_setpoint(scenario: Scenario, field: str, values: Sequence[float], *,
                   samples: int | None = None, seed: int | None = None,
                   scheme: str | None = None, settings=None, reference=None,
                   executor=None) -> SweepResult:
    """P(success), P90 duration and mean margin over setpoint values, on the samples an
    assessment of ``scenario`` runs on (``settings``: an assessment's
    :class:`uq.studies.propagation.Settings`, e.g. ``assessment.settings``; by default the
    scenario's ``[analysis]`` with ``samples``/``seed``/``scheme`` overriding it), through
    the same P(success) rule: at the scenario's own setpoint the sweep repeats its verdict's
    number exactly. ``reference``: the assessment of ``scenario`` itself (its settings are
    then the plan, and the row at its own setpoint states its P(success) estimate, also when
    a rare-event stage gave it) (``executor``: see :func:`evaluate_on_shared_samples`)."""
    values = tuple(float(v) for v in values)
    if not values:
        raise StudyError("a sweep needs at least one setpoint value")
    if reference is not None:
        settings = reference.settings
    if settings is None:
        settings = plan_settings(scenario, samples=samples, seed=seed, scheme=scheme)
    variants = [with_setpoint(scenario, field, v) for v in values]
    outs = evaluate_on_shared_samples(variants, settings=settings, executor=executor)
    name, unit = SWEEPABLE[scenario.vehicle.kind][field]
    summary = decisions.sweep_summary(
        values,
        np.stack([o["success"] for o in outs]),
        np.stack([o["duration_days"] for o in outs]),
        np.stack([o.reaches_recovery for o in outs]),
        np.stack([o["margin_Wh"] for o in outs]),
        required_probability=scenario.decision.required_probability,
        confidence=settings.p_success_confidence,
        setpoint_name=name, unit=unit,
        deterministic_optimum=deterministic_optimum(scenario, field),
        margin_unit="Wh",
        replicates=settings.replicates, randomised=settings.scheme == "sobol",
        reference=_reference_row(scenario, field, values, reference),
    )
    nominal_margins = tuple(float(nominal(v).outcome["margin_Wh"]) for v in variants)
    return SweepResult(field=field, values=values, summary=summary,
                       nominal_margin_Wh=nominal_margins, samples=settings.samples,
                       seed=settings.seed)


def _reference_row(scenario: Scenario, field: str, values, reference):
    """(index of the swept value that is the assessed configuration, its P(success)), or None."""
    if reference is None or field in scenario.input_names:
        return None
    own = getattr(scenario.setpoint, field.split(".", 1)[1], None)
    if not isinstance(own, (int, float)):
        return None
    for i, v in enumerate(values):
        if np.isclose(v, own, rtol=1e-12, atol=0.0):
            return i, reference.propagation.p_success
    return None


@dataclass(frozen=True)
class ComparisonResult:
    names: tuple[str, str]
    comparison: decisions.PairedComparison
    shared_inputs: tuple[str, ...]
    samples: int
    seed: int

    def to_frame(self) -> pd.DataFrame:
        return self.comparison.to_frame()


#: relative difference of route lengths beyond which two configurations are not comparable
ROUTE_TOLERANCE = 0.05  # a reporting choice: 5 % of the longer route (common practice, no source)


def comparability_problem(a: Scenario, b: Scenario) -> str | None:
    """Why ``a`` and ``b`` are not comparable (different vehicle kind, or route lengths more
    than :data:`ROUTE_TOLERANCE` apart), or ``None``."""
    if a.vehicle.kind != b.vehicle.kind:
        return (f"{a.name!r} is a {a.vehicle.kind} vehicle and {b.name!r} a "
                f"{b.vehicle.kind}: expected the same vehicle kind")
    la, lb = float(a.route_length_km), float(b.route_length_km)
    if abs(la - lb) > ROUTE_TOLERANCE * max(la, lb):
        return (f"routes of {la:,.1f} km ({a.name!r}) and {lb:,.1f} km ({b.name!r}) differ by "
                f"more than {ROUTE_TOLERANCE:.0%}: expected the same route")
    return None


@one_blas_thread
def compare_scenarios(a: Scenario, b: Scenario, *, samples: int | None = None,
                      seed: int | None = None, scheme: str | None = None, settings=None,
                      reference=None, force: bool = False,
                      executor=None) -> ComparisonResult:
    """Paired comparison of two configurations on shared samples of their common inputs.

    The plan is the one an assessment of ``a`` runs on (``settings``, see
    :func:`sweep_setpoint`), so A's P(success) is its verdict's number whenever B adds no
    input of its own. Pairs that are not comparable (:func:`comparability_problem`) are
    refused with :class:`StudyError` unless ``force``, which records a caution instead.
    ``reference``: the assessment of ``a`` (its settings are the plan, and A states its
    P(success) estimate and verdict) (``executor``: see :func:`evaluate_on_shared_samples`)."""
    problem = comparability_problem(a, b)
    cautions = ()
    if problem is not None:
        if not force:
            raise StudyError(f"not comparable: {problem} (pass --force to compare anyway)")
        cautions = (f"Compared although not comparable: {problem}.",)
    if reference is not None:
        settings = reference.settings
    if settings is None:
        settings = plan_settings(a, samples=samples, seed=seed, scheme=scheme)
    out_a, out_b = evaluate_on_shared_samples([a, b], settings=settings, executor=executor)
    names = (a.name, b.name) if a.name != b.name else (f"{a.name} (A)", f"{b.name} (B)")
    comparison = decisions.paired_comparison(
        out_a["success"], out_b["success"],
        out_a["route_energy_per_km_Wh"], out_b["route_energy_per_km_Wh"],
        names=names, confidence=settings.p_success_confidence,
        replicates=settings.replicates, randomised=settings.scheme == "sobol",
        required_probability=a.decision.required_probability, cautions=cautions,
        reference_a=None if reference is None else reference.propagation.p_success)
    shared = tuple(n for n in a.input_names if n in b.input_names)
    return ComparisonResult(names=names, comparison=comparison, shared_inputs=shared,
                            samples=settings.samples, seed=settings.seed)
