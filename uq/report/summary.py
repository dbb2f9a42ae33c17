"""The machine-readable summary of an assessment (``summary.json``).

:func:`build_summary` returns JSON-ready builtins with no NaN or infinity (they become
``null``); the keys are documented in the project README ("summary.json").
"""
from __future__ import annotations

from typing import Any

from uq.report._format import json_safe

__all__ = ["SCHEMA_VERSION", "build_summary", "interval_dict", "nominal_dict", "run_cautions", "contingency_dict"]

SCHEMA_VERSION = 1


def interval_dict(est) -> dict[str, Any]:
    """An IntervalEstimate / QuantileInterval as {estimate, lower, upper, confidence, method, n[, q]}."""
    out = {"estimate": est.estimate, "lower": est.lower, "upper": est.upper,
           "confidence": est.confidence, "method": est.method, "n": getattr(est, "n", None)}
    if hasattr(est, "q"):
        out = {"q": est.q, **out}
    return out


def run_cautions(assessment) -> list[str]:
    """The scenario's cautions (implausible values, defaults taken), then the run's."""
    scenario = getattr(assessment.scenario, "cautions", ())
    return list(dict.fromkeys([*scenario, *assessment.cautions]))


def nominal_dict(nominal) -> dict[str, Any]:
    """The deterministic (every input at its median) result in report units."""
    row = nominal.outcome
    return {
        "range_km": row["range_km"],
        "range_censored": bool(row["range_censored"]),
        "route_km": nominal.route_km,
        "duration_days": row["duration_days"],
        "margin_Wh": row["margin_Wh"],
        "margin_fraction": row["margin_fraction"],
        "reached_route_end": bool(row["arrived"]),  # without a stop; maybe on the reserve
        "reached_recovery": bool(row["reaches_recovery"]),
        "success": bool(row["success"]),
        "failure_mode": str(row["failure_mode"]),
        "failing_leg": str(row["failing_leg"]) or None,
        "energy_per_km_Wh": dict(nominal.energy_per_km_Wh),
    }


def contingency_dict(contingency) -> dict[str, Any] | None:
    """The contingency (or recovery-window booking) in summary.json's words: ``reached_recovery`` (count) for the samples
    that reached the recovery point; its probability is the one at ``p_reached_recovery``
    (one computation), so the contingency carries no second copy of it."""
    if contingency is None:
        return None
    out = contingency.to_dict()
    for key in ("probability_of_arrival", "probability_of_arrival_low",
                "probability_of_arrival_high"):
        out.pop(key, None)
    out["reached_recovery"] = out.pop("arrived")
    if "not_arrived" in out:
        out["not_reached_recovery"] = out.pop("not_arrived")
    return out


def _sweep_summary(sweep):
    return getattr(sweep, "summary", sweep)


def _comparison(comparison):
    return getattr(comparison, "comparison", comparison)


def _order(a):
    order = a.sensitivity_order() if hasattr(a, "sensitivity_order") else None
    if order is None:
        return None
    return {"order_resolved": order.order_resolved, "suggested_base_n": order.suggested_base_n,
            "sentence": order.sentence}


def _outcome_keys(prop) -> dict[str, Any]:
    """``outcomes``, ``point_of_no_return_km`` and ``hardware_risk`` of a propagation."""
    table = getattr(prop, "outcome_table", None)
    if table is None:
        return {"outcomes": None, "point_of_no_return_km": None, "hardware_risk": None}
    return {
        "outcomes": table.to_dicts(),
        "point_of_no_return_km": {
            "share_with_point": table.share_with_point_of_no_return,
            "quantiles": [interval_dict(q) for q in table.point_of_no_return_km]},
        "hardware_risk": table.hardware.to_dict() if table.hardware is not None else None,
    }


#: summary.json keys computed from the kept rows (every sample up to the row limit; above it
#: the first rows of each replicate): everything else is a count or mean of every sample
FROM_KEPT_ROWS = ("range_km.quantiles", "duration_days", "contingency", "recovery_window",
                  "pilot_actions", "point_of_no_return_km", "knowledge_band", "test_ranking",
                  "pinned_inputs", "surrogate", "surrogate_factor_indices")


def kept_rows_dict(prop) -> dict[str, Any] | None:
    """summary.json's ``kept_rows``: the rows behind the figures that need rows."""
    kept = getattr(prop, "kept", None)
    if kept is None:
        return None
    return {**kept.to_dict(), "used_for": list(FROM_KEPT_ROWS)}


def build_summary(assessment, *, sweep=None, comparison=None) -> dict[str, Any]:
    """Headline figures, decisions and run record of ``assessment`` as JSON-ready builtins.

    Parameters
    ----------
    assessment : uq.studies.assess.Assessment
    sweep : uq.studies.SweepResult or uq.decisions.SweepSummary, optional
    comparison : uq.studies.ComparisonResult or uq.decisions.PairedComparison, optional

    Returns
    -------
    dict
        See the README section "summary.json" for every key; non-finite numbers are None.
    """
    a = assessment
    sc = a.scenario
    st = a.settings
    prop = a.propagation
    sens = a.sensitivity
    pce = None
    if sens is not None and sens.pce is not None:
        pce = {"degree": sens.pce.degree, "loo_error": sens.pce.loo_error,
               "q2_holdout": sens.pce.q2_holdout, "quality": sens.pce.quality,
               "space": sens.pce_space, "output": "margin_Wh"}
    indices = None
    if sens is not None:
        indices = {}
        for output, res in sens.sobol.items():
            indices[output] = {
                "status": res.status,
                "factors": [
                    {"factor": f, "first": res.first[i], "first_low": res.first_interval.low[i],
                     "first_high": res.first_interval.high[i], "total": res.total[i],
                     "total_low": res.total_interval.low[i],
                     "total_high": res.total_interval.high[i]}
                    for i, f in enumerate(res.factors)
                ],
            }
    tests = None
    if a.tests is not None:
        t = a.tests.to_dict()
        tests = {"basis": t.get("ranking_basis"), "currency": t.get("currency"),
                 "current_option": t.get("current_option"), "sentence": t.get("sentence"),
                 "expected_net_benefit": t.get("expected_net_benefit"),
                 "fund_none": t.get("fund_none"), "rows": t.get("rows", [])}
    band = getattr(a, "knowledge_band", None)
    reached = int(prop.duration_quantiles[0].n) if prop.duration_quantiles else 0
    out = {
        "schema_version": SCHEMA_VERSION,
        "scenario": {
            "name": sc.name, "description": sc.description, "file": sc.source_path,
            "sha256": sc.source_sha256, "vehicle_kind": sc.vehicle.kind,
            "vehicle_name": sc.vehicle.name, "route_km": sc.route_length_km,
            "legs": [leg.name for leg in sc.legs],
        },
        "verdict": a.verdict.verdict,
        "verdict_sentence": a.verdict.sentence,
        "required_probability": sc.decision.required_probability,
        "confidence": st.confidence,
        "p_success": interval_dict(prop.p_success),
        "p_reached_recovery": interval_dict(prop.p_arrive),
        "samples_to_settle": a.verdict.samples_to_settle,
        "samples": st.samples,
        "kept_rows": kept_rows_dict(prop),
        "seed": st.seed,
        "scheme": st.scheme,
        "replicates": st.replicates,
        "sensitivity_base_n": st.sensitivity_base_n,
        "sensitivity_runs": sens.runs if sens is not None else 0,
        "range_km": {"route_km": prop.route_km,
                     "quantiles": [interval_dict(q) for q in prop.range_quantiles]},
        "duration_days": {"reached": reached,
                          "quantiles": [interval_dict(q) for q in prop.duration_quantiles]},
        "mean_margin_Wh": interval_dict(prop.mean_margin_Wh),
        "contingency": contingency_dict(a.contingency),
        "recovery_window": contingency_dict(a.recovery),
        "pilot_actions": a.flight.to_dict() if a.flight is not None else None,
        "sensitivity_ranking": a.sensitivity_ranking(),
        "sensitivity_order": _order(a),
        "surrogate_factor_indices": (sens.pce_factors.to_rows()
                                     if sens is not None and sens.pce_factors is not None else None),
        "sequential_rule": dict(getattr(a, "sequential", {}) or {}),
        "estimators": a.estimators() if hasattr(a, "estimators") else None,
        "rare_events": a.rare_events.to_dict() if getattr(a, "rare_events", None) else None,
        "sensitivity_indices": indices,
        "surrogate": pce,
        "test_ranking": tests,
        "knowledge_band": band.to_dict() if band is not None else None,
        "go_requirements": ([r.to_dict() for r in a.go_requirements]
                            if getattr(a, "go_requirements", None) is not None else None),
        "failure_modes": a.failures.to_dict(),
        **_outcome_keys(prop),
        "pinned_inputs": {k: v.to_dict() for k, v in a.pinned.items()},
        "nominal": nominal_dict(a.nominal),
        "inputs": [
            {"name": m.name, "distribution": m.describe(), "unit": m.unit,
             "q05": m.quantile(0.05), "q50": m.quantile(0.5), "q95": m.quantile(0.95)}
            for m in sc.inputs
        ],
        "sweep": _sweep_summary(sweep).to_dict() if sweep is not None else None,
        "comparison": _comparison(comparison).to_dict() if comparison is not None else None,
        "cautions": run_cautions(a),
        "versions": dict(a.versions),
        "timings_s": dict(a.timings_s),
        "settings": st.to_dict(),
    }
    return json_safe(out)
