"""Sensitivity stage: Saltelli indices streamed through the engine, and the PCE of the margin.

A Saltelli design streamed through the engine (so workers and Dask speed it up) for range,
duration, margin and the failure indicator (correlated inputs grouped, one factor per
group), and a polynomial chaos surrogate of the margin with Sobol indices from its
coefficients, bootstrap intervals, and its leave-one-out / holdout quality.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np

from uq.scenario import Scenario
from uq.simulate import ScenarioModel
from uq.studies.propagation import Propagation, Settings, input_model_of

__all__ = ["SENSITIVITY_OUTPUTS", "Sensitivity", "sensitivity_analysis"]

#: outputs whose Sobol indices are reported, with their units
SENSITIVITY_OUTPUTS = {"range_km": "km", "duration_days": "days", "margin_Wh": "Wh",
                       "failure": "indicator"}


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
        block_size=settings.evaluation_block)
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


def _kept_unit_points(propagation, n: int) -> np.ndarray:
    """Unit points of the first ``n`` kept rows, generated for those rows only."""
    kept = propagation.kept
    per = kept.per_replicate if kept is not None else propagation.designs[0].n
    pieces, left = [], n
    for design in propagation.designs:
        if left <= 0:
            break
        take = min(per, left)
        pieces.append(design.unit_points(0, take))
        left -= take
    return np.concatenate(pieces)


def _margin_surrogate(scenario, settings, propagation, input_model, group_list, *, seed) -> dict:
    """PCE of the energy margin with per-factor indices and their bootstrap intervals."""
    from uq.estimators import pce as pce_module
    from uq.estimators import sensitivity as sens_est

    names, d = scenario.input_names, len(scenario.inputs)
    grouped = any(len(g) > 1 for g in group_list)
    boot_seed = seed.spawn(1)[0]
    # the first rows kept (replicate 0's first rows whenever a replicate has 2,048 of them)
    n_fit = min(propagation.kept_rows, 2048)
    y = propagation.outcomes["margin_Wh"][:n_fit]
    space = "physical inputs"
    if input_model.is_independent:
        dists = [m.to_chaospy() for m in scenario.inputs]
        xs = propagation.inputs[:n_fit]
    else:
        import chaospy

        space = "independent unit variables; correlated inputs by group"
        dists = [chaospy.Uniform(0.0, 1.0) for _ in names]
        xs = _kept_unit_points(propagation, n_fit)[:, :d]
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
