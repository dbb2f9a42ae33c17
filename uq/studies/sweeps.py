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
from uq.sampling.inputs import InputModel, ScipyMarginal
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign, plan_size
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
    "evaluate_on_shared_samples",
    "SweepResult",
    "sweep_setpoint",
    "ComparisonResult",
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


def evaluate_on_shared_samples(scenarios: Sequence[Scenario], *, samples: int, seed: int,
                               scheme: str = "sobol", executor=None) -> list[Outcomes]:
    """Outcomes of every scenario on one shared plan (common random numbers by input name).

    The plan's unit points are correlated once over the union of inputs; each configuration
    then maps the columns of its own inputs through its own marginals, so a shared input has
    the same probability level in every configuration (the same value when the marginals agree).
    The model runs in blocks of rows, through ``executor.map`` when one is given (a process
    pool, :class:`uq.sampling.backends.DaskExecutor`); the numbers do not depend on it.
    """
    union: list[str] = []
    for s in scenarios:
        union.extend(name for name in s.input_names if name not in union)
    u = shared_unit_points(union, samples, seed=seed, scheme=scheme)
    copula = shared_copula(scenarios, union)
    if copula is not None:
        u = copula.transform(u)  # correlated uniforms
    tasks = []
    for s in scenarios:
        model, x = ScenarioModel(s), inputs_from_shared(s, columns_for(s, union), u)
        tasks.append([(model, x[i:i + DEFAULT_BLOCK_SIZE])
                      for i in range(0, x.shape[0], DEFAULT_BLOCK_SIZE)])
    run = map if executor is None else executor.map
    results = list(run(_evaluate_block, [task for per in tasks for task in per]))
    out, start = [], 0
    for per in tasks:
        out.append(Outcomes.concatenate(results[start:start + len(per)]))
        start += len(per)
    return out


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
        frame = self.summary.to_frame()
        frame["nominal_margin_Wh"] = list(self.nominal_margin_Wh)
        return frame


def sweep_setpoint(scenario: Scenario, field: str, values: Sequence[float], *,
                   samples: int | None = None, seed: int | None = None,
                   scheme: str = "sobol", executor=None) -> SweepResult:
    """P(success), P90 duration and mean margin over setpoint values, on shared samples
    (``executor``: see :func:`evaluate_on_shared_samples`)."""
    values = tuple(float(v) for v in values)
    if not values:
        raise StudyError("a sweep needs at least one setpoint value")
    samples = int(samples or scenario.analysis.samples)
    samples = plan_size(samples, scheme=scheme)[1]
    seed = int(scenario.analysis.seed if seed is None else seed)
    variants = [with_setpoint(scenario, field, v) for v in values]
    outs = evaluate_on_shared_samples(variants, samples=samples, seed=seed, scheme=scheme,
                                      executor=executor)
    name, unit = SWEEPABLE[scenario.vehicle.kind][field]
    summary = decisions.sweep_summary(
        values,
        np.stack([o["success"] for o in outs]),
        np.stack([o["duration_days"] for o in outs]),
        np.stack([o.reaches_recovery for o in outs]),
        np.stack([o["margin_Wh"] for o in outs]),
        required_probability=scenario.decision.required_probability,
        confidence=scenario.decision.confidence,
        setpoint_name=name, unit=unit,
        deterministic_optimum=deterministic_optimum(scenario, field),
        margin_unit="Wh",
    )
    nominal_margins = tuple(float(nominal(v).outcome["margin_Wh"]) for v in variants)
    return SweepResult(field=field, values=values, summary=summary,
                       nominal_margin_Wh=nominal_margins, samples=samples, seed=seed)


@dataclass(frozen=True)
class ComparisonResult:
    names: tuple[str, str]
    comparison: decisions.PairedComparison
    shared_inputs: tuple[str, ...]
    samples: int
    seed: int

    def to_frame(self) -> pd.DataFrame:
        return self.comparison.to_frame()


def compare_scenarios(a: Scenario, b: Scenario, *, samples: int | None = None,
                      seed: int | None = None, scheme: str = "sobol",
                      executor=None) -> ComparisonResult:
    """Paired comparison of two configurations on shared samples of their common inputs
    (``executor``: see :func:`evaluate_on_shared_samples`)."""
    samples = int(samples or a.analysis.samples)
    samples = plan_size(samples, scheme=scheme)[1]
    seed = int(a.analysis.seed if seed is None else seed)
    out_a, out_b = evaluate_on_shared_samples([a, b], samples=samples, seed=seed, scheme=scheme,
                                              executor=executor)
    names = (a.name, b.name) if a.name != b.name else (f"{a.name} (A)", f"{b.name} (B)")
    comparison = decisions.paired_comparison(
        out_a["success"], out_b["success"],
        out_a["route_energy_per_km_Wh"], out_b["route_energy_per_km_Wh"],
        names=names, confidence=a.decision.confidence)
    shared = tuple(n for n in a.input_names if n in b.input_names)
    return ComparisonResult(names=names, comparison=comparison, shared_inputs=shared,
                            samples=samples, seed=seed)
