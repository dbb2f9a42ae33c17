"""Batch studies: many variants of one base scenario on shared samples, on any backend.

The study file and its variants are read by :mod:`uq.scenario.study_file` (its docstring
describes the file); this module runs them.

Common random numbers: one plan is drawn over the union of the variants' input names and
each variant reads the columns of its inputs by name (:mod:`uq.studies`), through its own
marginals and rank correlations. All variants are evaluated inside one task on the same
block of the plan (one model call per variant per block), so a task's work is "one block x
every variant" and the engine's chunking, executors and bit-for-bit invariance apply
unchanged. With several RQMC replicates, one :func:`uq.sampling.engine.stream` runs per replicate;
given an executor, the replicate streams are submitted together (from a small thread pool)
so the workers are never idle between replicates.
"""
from __future__ import annotations

from uq.errors import InputError

import math
import threading
import time
from collections.abc import Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np
import pandas as pd
from scipy import stats

from uq import decisions, estimators
from uq.studies.assess import package_versions
from uq.sampling.backends import one_blas_thread
from uq.sampling.engine import CollectReducer, CountReducer, MultiReducer, SumReducer, stream
from uq.sampling.plans import DEFAULT_BLOCK_SIZE, SampleDesign
from uq.scenario import Scenario
from uq.scenario.study_file import (
    Study, StudySettingsError, Variant, _check_settings, load_study, override_label,
)
from uq.simulate import ScenarioModel, nominal
from uq.studies.sweeps import columns_for, inputs_from_shared, shared_copula

__all__ = [
    "StudyOutputError",
    "RANKING_ROWS",
    "STUDY_BLOCK_SIZE",
    "VariantResult",
    "StudyResult",
    "run_study",
]

#: Rows of the plan (pooled over replicates) on which input rankings are computed.
RANKING_ROWS = 2**15
#: Rows per streaming block of a study (part of a Monte Carlo plan's definition).
STUDY_BLOCK_SIZE = DEFAULT_BLOCK_SIZE  # the same plan as an assessment from the same seed
_RANKING_LABEL = "largest |Spearman rank correlation| between an input and the energy margin"


# =============================================================================== errors
class StudyOutputError(InputError):
    """The output folder exists and ``overwrite`` was not given, or cannot be written."""


# =============================================================================== running
@dataclass(frozen=True)
class _VariantModel:
    scenario: Scenario
    columns: tuple[int, ...]


@dataclass(frozen=True)
class _StudyModel:
    """Model function of one block for every variant: unit points -> per-variant outcomes.

    The union's copula (uq.studies.shared_copula) correlates the block once, so a shared
    input has the same probability level in every variant; each variant then reads its
    columns through its own marginals. Top-level and frozen, so process pools and Dask can
    pickle it.
    """

    variants: tuple[_VariantModel, ...]
    copula: Any  # uq.sampling.inputs.InputModel over the union, or None when nothing is correlated

    def __call__(self, u: np.ndarray) -> list[dict[str, np.ndarray]]:
        if self.copula is not None:
            u = self.copula.transform(u[:, : self.copula.dimension])
        out = []
        for v in self.variants:
            x = inputs_from_shared(v.scenario, v.columns, u)
            r = ScenarioModel(v.scenario)(x)
            # the same arrivals as uq.studies.assess: every vehicle reaching the recovery point
            reached = r["reaches_recovery"]
            out.append({"success": r["success"], "margin_Wh": r["margin_Wh"],
                        "duration_days": r["duration_days"], "reached": reached, "inputs": x})
        return out


class _PerVariantReducer:
    """Routes variant ``i``'s outputs of a block to reducer ``i`` (list in, list out)."""

    def __init__(self, reducers: Sequence[Any]) -> None:
        self.reducers = list(reducers)

    def prepare(self, design: SampleDesign) -> "_PerVariantReducer":
        return _PerVariantReducer([r.prepare(design) if hasattr(r, "prepare") else r
                                   for r in self.reducers])

    def map(self, block_index: int, outputs: list) -> list:
        return [r.map(block_index, o) for r, o in zip(self.reducers, outputs)]

    def reduce(self, partials: list) -> list:
        return [r.reduce([p[i] for p in partials]) for i, r in enumerate(self.reducers)]


@dataclass(frozen=True)
class VariantResult:
    """Headline figures of one variant (all on the study's shared samples).

    ``p_success`` uses Wilson's interval for Monte Carlo / Latin hypercube plans (Wilson
    1927) and the Student-t interval over RQMC replicates for scrambled Sobol' (Owen 1997);
    ``mean_margin_Wh`` likewise (t-interval over samples or over replicates).
    ``top_input`` is the input with the largest |Spearman rank correlation| with the energy
    margin over the first :data:`RANKING_ROWS` rows (pooled over replicates); a first-order
    screening measure of monotone influence, not a variance-based index.
    """

    name: str
    overrides: tuple[tuple[str, Any], ...]
    samples: int
    p_success: estimators.IntervalEstimate
    p_success_replicates: tuple[float, ...]
    verdict: decisions.Verdict
    contingency: decisions.ShipTimeContingency | None
    mean_margin_Wh: estimators.IntervalEstimate
    nominal_margin_Wh: float
    input_ranking: tuple[tuple[str, float], ...]  # (input, Spearman rho), by |rho| descending
    ranking_rows: int

    @property
    def top_input(self) -> str | None:
        return self.input_ranking[0][0] if self.input_ranking else None

    @property
    def top_input_rank_correlation(self) -> float | None:
        return self.input_ranking[0][1] if self.input_ranking else None

    def row(self, fields: Sequence[str]) -> dict[str, Any]:
        """One flat table row (used by :meth:`StudyResult.to_frame`)."""
        given = dict(self.overrides)
        c = self.contingency
        b = c.booking if c is not None else None
        row: dict[str, Any] = {"variant": self.name}
        for f in fields:
            v = given.get(f, None)
            row[f] = v if v is None or isinstance(v, (int, float, str, bool)) else override_label(v)
        row.update({
            "samples": self.samples,
            "p_success": self.p_success.estimate,
            "p_success_low": self.p_success.lower,
            "p_success_high": self.p_success.upper,
            "p_success_method": self.p_success.method,
            "verdict": self.verdict.verdict,
            "required_probability": self.verdict.required_probability,
            "confidence": self.verdict.confidence,
            "booking_quantile": c.booking_quantile if c is not None else None,
            "booking_days": b.booking_days if b is not None else None,
            "contingency_days": b.contingency_days if b is not None else None,
            "contingency_days_low": b.contingency_days_low if b is not None else None,
            "contingency_days_high": b.contingency_days_high if b is not None else None,
            "contingency_cost_money": b.contingency_cost_money if b is not None else None,
            "mean_margin_Wh": self.mean_margin_Wh.estimate,
            "mean_margin_Wh_low": self.mean_margin_Wh.lower,
            "mean_margin_Wh_high": self.mean_margin_Wh.upper,
            "nominal_margin_Wh": self.nominal_margin_Wh,
            "top_input": self.top_input,
            "top_input_spearman": self.top_input_rank_correlation,
        })
        return row


@dataclass(frozen=True)
class StudyResult:
    """Every variant's figures and the record needed to reproduce them."""

    study: Study
    samples: int
    seed: int
    scheme: str
    replicates: int
    block_size: int
    input_names: tuple[str, ...]
    designs: tuple[SampleDesign, ...]
    variants: tuple[VariantResult, ...]
    elapsed_s: float

    def to_frame(self) -> pd.DataFrame:
        """One row per variant: the varied fields, then the figures."""
        return pd.DataFrame([v.row(self.study.fields) for v in self.variants])

    def __repr__(self) -> str:
        counts = {}
        for v in self.variants:
            counts[v.verdict.verdict] = counts.get(v.verdict.verdict, 0) + 1
        tally = ", ".join(f"{n} {k.upper()}" for k, n in sorted(counts.items()))
        return (f"<StudyResult {self.study.name!r}: {len(self.variants)} variants ({tally}); "
                f"{self.samples:,} samples each, seed {self.seed}>")

    def _repr_html_(self) -> str:
        """Rich display in a notebook: one row per variant."""
        frame = self.to_frame()
        keep = [*self.study.fields, "p_success", "p_success_low", "p_success_high", "verdict"]
        return frame[["variant", *[c for c in keep if c in frame]]].to_html(index=False)

    def variant(self, name: str) -> VariantResult:
        for v in self.variants:
            if v.name == name:
                return v
        raise KeyError(f"no variant named {name!r}; variants: {[v.name for v in self.variants]}")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record: settings, plan records, inputs, and per-variant results."""
        s = self.study
        return {
            "study": {"name": s.name, "description": s.description, "file": s.source,
                      "layout": s.layout, "fields": list(s.fields),
                      "scenario": s.scenario_path, "scenario_sha256": s.scenario_sha256},
            "settings": {"samples": self.samples, "seed": self.seed, "scheme": self.scheme,
                         "replicates": self.replicates, "block_size": self.block_size},
            "designs": [d.to_dict() for d in self.designs],
            "input_names": list(self.input_names),
            "ranking": {"measure": _RANKING_LABEL,
                        "rows": self.variants[0].ranking_rows if self.variants else 0},
            "variants": [{
                "name": v.name,
                "overrides": {p: _jsonable(val) for p, val in v.overrides},
                "row": _jsonable(v.row(s.fields)),
                "p_success": v.p_success.to_dict(),
                "p_success_replicates": list(v.p_success_replicates),
                "verdict": v.verdict.to_dict(),
                "contingency": v.contingency.to_dict() if v.contingency is not None else None,
                "mean_margin_Wh": v.mean_margin_Wh.to_dict(),
                "input_ranking": [{"input": n, "spearman": r} for n, r in v.input_ranking],
            } for v in self.variants],
            "elapsed_s": self.elapsed_s,
            "versions": package_versions(),
        }


def _jsonable(x: Any) -> Any:
    if isinstance(x, Mapping):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        return float(x) if math.isfinite(x) else None
    return x


def _proportion(counts: list[tuple[int, int]], scheme: str, confidence: float):
    est = estimators.success_probability(counts, randomised=scheme == "sobol",
                                         confidence=confidence)
    return est, est.replicate_fractions


def _mean(sums: list, scheme: str, confidence: float) -> estimators.IntervalEstimate:
    return estimators.replicated_mean(sums, randomised=scheme == "sobol", confidence=confidence)


def _spearman_ranking(names: Sequence[str], inputs: np.ndarray, margin: np.ndarray):
    """(name, rho) sorted by |rho|; constant columns (no rank information) are left out."""
    if not names or margin.size < 3:
        return ()
    rm = stats.rankdata(margin)
    rm = rm - rm.mean()
    if not np.any(rm):
        return ()
    rx = stats.rankdata(inputs, axis=0)
    rx = rx - rx.mean(axis=0)
    norms = np.sqrt((rx * rx).sum(axis=0)) * math.sqrt(float(rm @ rm))
    with np.errstate(invalid="ignore", divide="ignore"):
        rho = (rx.T @ rm) / norms
    pairs = [(n, float(r)) for n, r in zip(names, rho) if np.isfinite(r)]
    return tuple(sorted(pairs, key=lambda p: (-abs(p[1]), names.index(p[0]))))


def _resolve(study: Study, samples, seed) -> tuple[int, int]:
    samples = study.samples if samples is None else samples
    seed = study.seed if seed is None else seed
    _check_settings(samples, study.scheme, study.replicates)
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise StudySettingsError(f"seed = {seed!r}: expected an integer >= 0")
    return int(samples), int(seed)


@one_blas_thread
def run_study(study: Study, *, samples: int | None = None, seed: int | None = None,
              executor=None, progress: Callable[[int], None] | None = None,
              chunk_blocks: int = 1, block_size: int = STUDY_BLOCK_SIZE,
              ranking_rows: int = RANKING_ROWS) -> StudyResult:
    """Evaluate every variant of ``study`` on one shared plan and summarise each.

    Parameters
    ----------
    study : Study
        From :func:`load_study` / :func:`parse_study`.
    samples, seed : int, optional
        Override the study's settings (``samples`` per variant; for scheme "sobol" a
        multiple ``replicates x 2^m``).
    executor : object with an ordered ``.map(fn, iterable)``, optional
        E.g. from :func:`uq.sampling.backends.local_executor` or :func:`uq.sampling.backends.dask_executor`;
        None runs in this process. The numbers do not depend on it.
    progress : callable, optional
        ``progress(rows_done)`` [samples of the plan, every variant evaluated on them].
    chunk_blocks : int, default 1
        Blocks per task (does not change the numbers).
    block_size : int, default STUDY_BLOCK_SIZE
        Rows per block; part of a Monte Carlo plan's definition (recorded).
    ranking_rows : int, default RANKING_ROWS
        Rows on which the input ranking is computed.

    Returns
    -------
    StudyResult

    Raises
    ------
    StudySettingsError
        Invalid ``samples``, ``seed``, ``block_size`` or ``ranking_rows``.
    """
    samples, seed = _resolve(study, samples, seed)
    for value, name, low in ((block_size, "block_size", 1), (ranking_rows, "ranking_rows", 0)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < low:
            raise StudySettingsError(f"{name} = {value!r}: expected an integer >= {low}")
    t0 = time.perf_counter()
    union = study.input_names
    specs = tuple(_VariantModel(v.scenario, tuple(columns_for(v.scenario, union)))
                  for v in study.variants)
    model = _StudyModel(specs, shared_copula([v.scenario for v in study.variants], union))
    k = study.replicates
    per = samples // k
    designs = tuple(SampleDesign(scheme=study.scheme, n=per, dimension=max(len(union), 1),
                                 seed=seed, replicate=r, block_size=min(int(block_size), per))
                    for r in range(k))
    rank_per = -(-int(ranking_rows) // k)

    def reducer(design):
        return _PerVariantReducer([MultiReducer({
            "success": CountReducer("success"),
            "margin": SumReducer("margin_Wh"),
            "arrival": CollectReducer(("duration_days", "reached"), design.n),
            "ranking": CollectReducer(("margin_Wh", "inputs"), min(rank_per, design.n)),
        }) for _ in specs])

    done = [0] * k
    lock = threading.Lock()

    def run(r: int):
        def tick(rows: int) -> None:
            if progress is None:
                return
            with lock:
                done[r] = rows
                progress(sum(done))
        return stream(designs[r], model, reducer(designs[r]), chunk_blocks=chunk_blocks,
                      executor=executor, progress=tick)

    if executor is None or k == 1:
        per_replicate = [run(r) for r in range(k)]
    else:
        with ThreadPoolExecutor(max_workers=k, thread_name_prefix="study-replicate") as threads:
            per_replicate = list(threads.map(run, range(k)))

    results = []
    for i, v in enumerate(study.variants):
        parts = [rep[i] for rep in per_replicate]
        results.append(_summarise(v, parts, study.scheme, specs[i].scenario))
    return StudyResult(study=study, samples=samples, seed=seed, scheme=study.scheme,
                       replicates=k, block_size=designs[0].block_size, input_names=union,
                       designs=designs, variants=tuple(results),
                       elapsed_s=time.perf_counter() - t0)


def _summarise(variant: Variant, parts: list[dict], scheme: str, scenario: Scenario) -> VariantResult:
    dec = scenario.decision
    conf = dec.confidence
    p, fractions = _proportion([(q["success"].count, q["success"].n) for q in parts], scheme, conf)
    n = p.n
    verdict = decisions.verdict_for(p, required_probability=dec.required_probability)
    durations = np.concatenate([q["arrival"]["duration_days"] for q in parts])
    reached = np.concatenate([q["arrival"]["reached"] for q in parts]).astype(bool)
    base = nominal(scenario)
    contingency = None
    nominal_days = float(base.outcome["duration_days"])
    if reached.sum() >= 2 and nominal_days > 0 and math.isfinite(nominal_days):
        contingency = decisions.ship_time_contingency(
            durations, arrived=reached, nominal_days=nominal_days,
            booking_quantile=dec.booking_quantile, day_rate=dec.ship_day_rate,
            currency=dec.currency, confidence=conf)
    margin = np.concatenate([q["ranking"]["margin_Wh"] for q in parts])
    ranking: tuple = ()
    if scenario.inputs and margin.size:
        inputs = np.concatenate([q["ranking"]["inputs"].reshape(-1, len(scenario.inputs))
                                 for q in parts])
        ranking = _spearman_ranking(list(scenario.input_names), inputs, margin)
    return VariantResult(
        name=variant.name, overrides=variant.overrides, samples=n, p_success=p,
        p_success_replicates=fractions, verdict=verdict, contingency=contingency,
        mean_margin_Wh=_mean([q["margin"] for q in parts], scheme, conf),
        nominal_margin_Wh=float(base.outcome["margin_Wh"]), input_ranking=ranking,
        ranking_rows=int(margin.size))
