"""Write a report folder: index.html, summary.json, CSV tables and figures — atomically.

Everything is built in a temporary sibling folder (``tempfile.mkdtemp(dir=parent)``) and
renamed into place only when complete; on any exception or interrupt the temporary folder is
removed, so a reader never sees half a report. An existing report is replaced only with
``overwrite=True``.
"""
from __future__ import annotations

import base64
import os
import time
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from uq.report import figures as fig_mod
from uq.report import energy_figures
from uq.report.plan import plan_summary
from uq.report.verdict_panel import verdict_panel
from uq.report._format import Formatter
from uq.report.files import (
    REPORTS_ROOT, ReportExistsError, default_output_dir, safe_folder_name, write_csv,
    write_folder, write_json,
)
from uq.report.pages import render_page
from uq.report.summary import build_summary, nominal_dict, run_cautions
from uq.report.exports import write_sample_exports
from uq.simulate import glide_operating_point
from uq.studies.rare import when_it_runs

__all__ = ["ReportExistsError", "safe_folder_name", "default_report_dir", "write_report",
           "CAUTIONS", "MODEL_ASSUMPTIONS", "SECTION_IDS"]

#: ids of the report's sections, in page order (sweep, comparison and glide polar only when
#: they apply)
SECTION_IDS = ("verdict", "plan", "energy", "range-curve", "failures", "sensitivity", "tests",
               "contingency", "sweep", "comparison", "glide-polar", "inputs", "surrogate",
               "baseline", "estimators", "assumptions", "cautions", "run-record")

CAUTIONS = (
    "This report is a planning aid, not a guarantee: the probabilities are only as good as "
    "the scenario's input distributions and the transit model behind them.",
    "Verify the energy and speed figures with the vehicle's own trials (bench, tank and sea) "
    "before relying on them.",
    "Follow the operator's procedures, local regulations and licensed practice for under-ice "
    "and other high-risk operations; this tool replaces none of them.",
)

MODEL_ASSUMPTIONS = (
    "Each leg is flown at a fixed setpoint; currents, water temperature and salinity are "
    "constant along a leg (one value per sample), and the track is held by crabbing.",
    "Propeller vehicles: neutrally buoyant level flight, power = drag \u00d7 speed / "
    "propulsive efficiency + hotel load; hull drag from the ITTC-1957 line with a Hoerner "
    "form factor and an appendage factor, or a given drag coefficient.",
    "Gliders: steady glide on a quadratic polar (C_D = C_D0 + K C_L\u00b2); pump work "
    "2 B z_bottom / pump efficiency per cycle plus inflection energy and hotel load; dives "
    "are limited by the ice ceiling and the seabed of each leg.",
    "Battery: usable energy = nominal \u00d7 cold derating \u00d7 (1 \u2212 fade \u00d7 days) "
    "\u00d7 usable fraction; the vehicle must arrive with the reserve fraction left.",
    "Fouling grows after an onset delay as 1 \u2212 exp(\u2212t/\u03c4), with a per-leg clock "
    "rate; it multiplies drag (and, for gliders, reduces lift slope).",
    "Seawater density from TEOS-10 (gsw); viscosity from Sharqawy et al. (2010), "
    "extrapolated below 0 \u00b0C.",
    "Not modelled: surfacing for navigation or communication, detours around ice or "
    "obstacles, faults, transients, and tides varying within a leg.",
    "Inputs are independent except for the rank correlations the scenario declares "
    "(normal copula).",
    "Intervals express sampling uncertainty of the estimates only; they do not include "
    "model-form error or errors in the input distributions.",
)

# ======================================================================== writing
def write_report(assessment, out_dir: str | os.PathLike, *, overwrite: bool = False,
                 sweep=None, comparison=None,
                 progress: Callable[[str], None] | None = None,
                 notes: Callable[[str], None] | None = None) -> Path:
    """Write the report of ``assessment`` into the folder ``out_dir``, atomically.

    Parameters
    ----------
    assessment : uq.studies.assess.Assessment
    out_dir : path-like
        The report folder to create (its parent is created if missing).
    overwrite : bool, optional
        Replace an existing report folder that transit-risk wrote. Anything else (a file, a
        folder without the tool's marker) is refused even with ``overwrite``; see
        :func:`uq.report.files.check_output_folder`.
    sweep : uq.studies.SweepResult or uq.decisions.SweepSummary, optional
    comparison : uq.studies.ComparisonResult or uq.decisions.PairedComparison, optional
    progress : callable(str), optional
        Called with a short description before each step.
    notes : callable(str), optional
        Told when a partial folder of a killed run is removed or an old report put back.

    Returns
    -------
    pathlib.Path
        The report folder.

    Raises
    ------
    ReportExistsError
        ``out_dir`` exists and ``overwrite`` is False, or it is not a report folder.
    OSError
        The folder cannot be written.
    """
    def build(folder: Path) -> None:
        _build(assessment, folder, sweep=sweep, comparison=comparison, progress=progress)

    return write_folder(out_dir, build, kind="report", overwrite=overwrite, notes=notes)


def default_report_dir(scenario_name: str, *, root: str | os.PathLike = REPORTS_ROOT,
                       suffix: str = "") -> Path:
    """``<root>/<safe scenario name><suffix>`` (suffix sanitised too)."""
    return default_output_dir(scenario_name, root=root, suffix=suffix)


def _step(progress, text):
    if progress is not None:
        progress(text)


def _build(a, folder: Path, *, sweep, comparison, progress) -> None:
    t0 = time.perf_counter()
    figdir = folder / "figures"
    figdir.mkdir()
    sweep_summary = getattr(sweep, "summary", sweep) if sweep is not None else None
    pair = getattr(comparison, "comparison", comparison) if comparison is not None else None

    _step(progress, "tables")
    _write_tables(a, folder, sweep=sweep, sweep_summary=sweep_summary, comparison=comparison,
                  pair=pair)
    write_sample_exports(a, folder)  # samples.nc / samples.parquet with the ocean extra
    energy, energy_images = _energy_along_route(a, folder, figdir, progress)

    _step(progress, "figures")
    images = _make_figures(a, figdir, sweep_summary=sweep_summary, pair=pair)
    report_s = time.perf_counter() - t0

    _step(progress, "summary.json")
    summary = build_summary(a, sweep=sweep, comparison=comparison)
    summary["timings_s"]["report_tables_and_figures"] = report_s
    write_json(folder / "summary.json", summary)

    _step(progress, "index.html")
    html = render_html(a, images={**images, **energy_images}, sweep_summary=sweep_summary,
                       pair=pair, extra_timings={"report_tables_and_figures": report_s},
                       energy=energy)
    (folder / "index.html").write_text(html, encoding="utf-8")


def _energy_along_route(a, folder: Path, figdir: Path, progress):
    """The energy section: a bounded subsample re-flown, its CSVs and figures (a narrow
    variant of each for phone-width screens); returns the section and base64 PNGs."""
    _step(progress, "energy along the route")
    energy = energy_figures.energy_section(a)
    _csv(energy_figures.along_route_frame(energy), folder / "energy_along_route.csv")
    _csv(energy_figures.by_leg_frame(energy), folder / "energy_by_leg.csv")
    images = {}
    for stem, make in (("energy_fan", energy_figures.fan_chart_figure),
                       ("energy_split", energy_figures.energy_split_figure)):
        images[stem] = _b64(fig_mod.save_figure(make(energy), figdir, stem))
        images[stem + "_narrow"] = _b64(fig_mod.save_figure(make(energy, narrow=True), figdir,
                                                            stem + "_narrow"))
    return energy, images


# ------------------------------------------------------------------------ tables
_csv = write_csv


def inputs_frame(scenario, pinned: dict | None = None) -> pd.DataFrame:
    """One row per uncertain input: distribution, unit, 5/50/95 % values."""
    rows = []
    for m in scenario.inputs:
        row = {"input": m.name, "distribution": m.describe(), "unit": m.unit,
               "q05": m.quantile(0.05), "q50": m.quantile(0.5), "q95": m.quantile(0.95)}
        if pinned and m.name in pinned:
            prow = pinned[m.name].rows
            for r in prow:
                key = f"p_success_near_q{int(round(100 * r.quantile)):02d}"
                row[key] = r.probability_of_success
                row[key + "_low"] = r.probability_low
                row[key + "_high"] = r.probability_high
        rows.append(row)
    return pd.DataFrame(rows, columns=None if rows else
                        ["input", "distribution", "unit", "q05", "q50", "q95"])


#: CSV column renames so that every column name carries its unit (``_money``: the scenario's
#: currency, named in the ``currency`` column)
RANGE_CURVE_COLUMNS = {"threshold": "range_km"}


def _write_tables(a, folder, *, sweep, sweep_summary, comparison, pair) -> None:
    _csv(a.propagation.range_curve.to_frame().rename(columns=RANGE_CURVE_COLUMNS),
         folder / "range_curve.csv")
    if a.sensitivity is not None:
        _csv(a.sensitivity.sobol.to_frame().reset_index(), folder / "sensitivity.csv")
    else:
        _csv(pd.DataFrame(columns=["output", "factor", "status", "first", "first_low",
                                   "first_high", "total", "total_low", "total_high"]),
             folder / "sensitivity.csv")
    if a.tests is not None:
        frame = a.tests.to_frame()
        frame.insert(0, "basis", a.tests.ranking_basis)
        frame.insert(1, "currency", a.tests.currency)
        _csv(frame, folder / "tests.csv")
    else:
        _csv(pd.DataFrame(columns=["rank", "name", "inputs", "cost_money"]), folder / "tests.csv")
    if a.contingency is not None:
        frame = a.contingency.to_frame()
        frame.insert(1, "currency", a.contingency.currency)
        _csv(frame, folder / "contingency.csv")
    elif a.recovery is not None:
        _csv(a.recovery.to_frame(), folder / "recovery_window.csv")
        _csv(pd.DataFrame(columns=["quantile", "booking_days"]), folder / "contingency.csv")
    else:
        _csv(pd.DataFrame(columns=["quantile", "booking_days"]), folder / "contingency.csv")
    _csv(a.failures.to_frame(), folder / "failures.csv")
    _csv(inputs_frame(a.scenario, a.pinned), folder / "inputs.csv")
    if sweep_summary is not None:
        frame = sweep.to_frame() if hasattr(sweep, "to_frame") else sweep_summary.to_frame()
        _csv(frame, folder / "sweep.csv")
    if pair is not None:
        _csv(comparison_frame(pair), folder / "comparison.csv")
        _csv(comparison_energy_frame(pair), folder / "comparison_energy.csv")


def comparison_frame(pair) -> pd.DataFrame:
    """comparison.csv: one row per configuration: its successes, P(success) with its
    interval and verdict, and the paired difference to the other configuration [-]
    (``p_success_minus_other``: A - B on A's row, B - A on B's) with its interval."""
    rows = []
    for k, (name, suffix, verdict) in enumerate(((pair.names[0], "a", pair.verdict_a),
                                                 (pair.names[1], "b", pair.verdict_b))):
        sign = 1.0 if k == 0 else -1.0
        lo, hi = pair.difference_low, pair.difference_high
        if sign < 0:
            lo, hi = (None if hi is None else -hi), (None if lo is None else -lo)
        rows.append({"configuration": name, "samples": pair.samples,
                     "successes": getattr(pair, f"successes_{suffix}"),
                     "p_success": getattr(pair, f"p_success_{suffix}"),
                     "p_success_low": getattr(pair, f"p_success_{suffix}_low"),
                     "p_success_high": getattr(pair, f"p_success_{suffix}_high"),
                     "verdict": verdict,
                     "p_success_minus_other": sign * pair.difference,
                     "p_success_minus_other_low": lo, "p_success_minus_other_high": hi})
    return pd.DataFrame(rows)


def comparison_energy_frame(pair) -> pd.DataFrame:
    """comparison_energy.csv: quantiles of the per-sample ratio of energy per km A / B [-]."""
    return pd.DataFrame([{"quantile": q.quantile, "energy_per_km_ratio": q.ratio,
                          "energy_per_km_ratio_low": q.ratio_low,
                          "energy_per_km_ratio_high": q.ratio_high}
                         for q in pair.energy_ratio_quantiles],
                        columns=["quantile", "energy_per_km_ratio", "energy_per_km_ratio_low",
                                 "energy_per_km_ratio_high"])


# ------------------------------------------------------------------------ figures
def reached_durations(a) -> np.ndarray:
    """Arrival times [days] of the samples that reached the recovery point (the booking's population)."""
    out = a.propagation.outcomes
    return np.asarray(out.duration_days, dtype=float)[np.asarray(out.reaches_recovery, bool)]


def _b64(png: bytes) -> str:
    return base64.b64encode(png).decode("ascii")


def _make_figures(a, figdir: Path, *, sweep_summary, pair=None) -> dict[str, str]:
    """Every figure as PNG+SVG in ``figdir``; returns base64 PNGs keyed by figure name."""
    images: dict[str, str] = {}
    sc = a.scenario
    images["range_curve"] = _b64(fig_mod.save_figure(fig_mod.range_curve_figure(
        a.propagation.range_curve, route_km=sc.route_length_km,
        required_probability=sc.decision.required_probability,
        p_success=a.verdict.probability_estimate), figdir, "range_curve"))
    images["failures"] = _b64(fig_mod.save_figure(fig_mod.failures_figure(a.failures),
                                                  figdir, "failures"))
    if a.sensitivity is not None:
        for output, title in (("range_km", "range [km]"), ("failure", "failure indicator")):
            images[f"sensitivity_{output}"] = _b64(fig_mod.save_figure(
                fig_mod.sensitivity_figure(a.sensitivity.sobol[output],
                                           title=f"Sobol indices of the {title}"),
                figdir, f"sensitivity_{output}"))
    if a.contingency is not None:
        images["contingency"] = _b64(fig_mod.save_figure(
            fig_mod.contingency_figure(reached_durations(a), a.contingency), figdir,
            "contingency"))
    if sweep_summary is not None:
        images["sweep"] = _b64(fig_mod.save_figure(fig_mod.sweep_figure(sweep_summary),
                                                   figdir, "sweep"))
    op = glide_operating_point(sc)
    if op is not None:
        images["glide_polar"] = _b64(fig_mod.save_figure(fig_mod.glide_polar_figure(
            op.polar, operating_u=op.horizontal_speed if op.feasible else float("nan"),
            operating_w=op.vertical_speed if op.feasible else float("nan"),
            glide_angle_deg=op.glide_angle_deg, net_buoyancy_N=op.net_buoyancy_N),
            figdir, "glide_polar"))
    if pair is not None and hasattr(pair, "p_success_a"):
        images["comparison"] = _b64(fig_mod.save_figure(fig_mod.comparison_figure(pair),
                                                        figdir, "comparison"))
    if getattr(a, "knowledge_band", None) is not None:
        images["knowledge_band"] = _b64(fig_mod.save_figure(
            fig_mod.knowledge_band_figure(a.knowledge_band), figdir, "knowledge_band"))
    return images


# ------------------------------------------------------------------------ HTML
def render_html(a, *, images: dict[str, str], sweep_summary=None, pair=None,
                extra_timings: dict[str, float] | None = None, energy=None) -> str:
    """The self-contained index.html of an assessment (``energy``: its
    :func:`uq.report.energy_figures.energy_section`, computed when not given)."""
    fmt = Formatter()
    energy = energy_figures.energy_section(a) if energy is None else energy
    sc = a.scenario
    op = glide_operating_point(sc)
    timings = dict(a.timings_s)
    timings.update(extra_timings or {})
    sens = a.sensitivity
    margin_vs = []
    if sens is not None and sens.pce_indices is not None:
        saltelli = sens.total_index("margin_Wh")
        pce_total = dict(zip(sens.pce_indices.names, np.asarray(sens.pce_indices.total, float)))
        grouped = {m for g in (sens.groups or ()) if len(g) > 1 for m in g}
        margin_vs = [{"input": n, "saltelli": saltelli.get(n), "pce": pce_total.get(n),
                      "grouped": n in grouped} for n in sc.input_names]
    return render_page(
        "report.html.j2",
        a=a, sc=sc, fmt=fmt, images=images, op=op, sweep=sweep_summary, pair=pair,
        nominal=nominal_dict(a.nominal),
        inputs=inputs_frame(sc, a.pinned).to_dict("records"),
        pinned=a.pinned, margin_vs=margin_vs,
        panel=verdict_panel(a, fmt), energy=energy, term_labels=energy_figures.TERM_LABELS,
        plan=plan_summary(sc, arrival_days=energy.leg_end_days),
        cautions=CAUTIONS, run_cautions=run_cautions(a), assumptions=MODEL_ASSUMPTIONS,
        timings=timings, rare_event_rule=when_it_runs(),
        total_time=sum(timings.values()),
        range_q={round(q.q, 3): q for q in a.propagation.range_quantiles},
        censored_fraction=a.propagation.counts.censored / a.propagation.counts.samples,
        kept=a.propagation.kept,
        range_at_route=fig_mod.curve_at(a.propagation.range_curve, a.propagation.route_km),
    )
