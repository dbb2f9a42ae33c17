"""Write a report folder: index.html, summary.json, CSV tables and figures — atomically.

Everything is built in a temporary sibling folder (``tempfile.mkdtemp(dir=parent)``) and
renamed into place only when complete; on any exception or interrupt the temporary folder is
removed, so a reader never sees half a report. An existing report is replaced only with
``overwrite=True``.
"""
from __future__ import annotations

from uq.errors import TransitRiskError

import base64
import json
import os
import re
import shutil
import tempfile
import time
import unicodedata
from datetime import datetime, timezone
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from uq.report import figures as fig_mod
from uq.report._format import Formatter, finite_or_none
from uq.report.exports import write_sample_exports
from uq.report.summary import build_summary, nominal_dict
from uq.simulate import glide_operating_point

__all__ = ["ReportExistsError", "safe_folder_name", "default_report_dir", "write_report",
           "CAUTIONS", "MODEL_ASSUMPTIONS", "SECTION_IDS"]

#: ids of the report's sections, in page order (sweep, comparison and glide polar only when
#: they apply)
SECTION_IDS = ("verdict", "range-curve", "failures", "sensitivity", "tests", "contingency",
               "sweep", "comparison", "glide-polar", "inputs", "surrogate", "baseline",
               "assumptions", "cautions", "run-record")

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

_SAFE_CHARS = re.compile(r"[^A-Za-z0-9._-]+")
_WINDOWS_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
                     *(f"lpt{i}" for i in range(1, 10))}
_MAX_NAME = 80


class ReportExistsError(TransitRiskError, FileExistsError):
    """The report folder already exists and ``overwrite`` was not given."""


def safe_folder_name(name: str) -> str:
    """A single, harmless path component made from a scenario name.

    Letters, digits, ``.``, ``_`` and ``-`` are kept (after Unicode NFKD folding to ASCII);
    every other run of characters becomes ``-``; leading dots and dashes are removed (no
    hidden files, no ``..``); at most 80 characters; "scenario" if nothing is left.
    """
    text = unicodedata.normalize("NFKD", str(name)).encode("ascii", "ignore").decode("ascii")
    text = _SAFE_CHARS.sub("-", text)
    text = re.sub(r"-{2,}", "-", text).strip(".-")[:_MAX_NAME].strip(".-")
    if not text:
        return "scenario"
    if text.split(".")[0].lower() in _WINDOWS_RESERVED:
        text = "scenario-" + text
    return text


def default_report_dir(scenario_name: str, *, root: str | os.PathLike = "reports",
                       suffix: str = "") -> Path:
    """``<root>/<safe scenario name><suffix>`` (suffix sanitised too)."""
    return Path(root) / safe_folder_name(scenario_name + suffix)


# ======================================================================== writing
def write_report(assessment, out_dir: str | os.PathLike, *, overwrite: bool = False,
                 sweep=None, comparison=None,
                 progress: Callable[[str], None] | None = None) -> Path:
    """Write the report of ``assessment`` into the folder ``out_dir``, atomically.

    Parameters
    ----------
    assessment : uq.studies.assess.Assessment
    out_dir : path-like
        The report folder to create (its parent is created if missing).
    overwrite : bool, optional
        Replace an existing report folder. Without it an existing folder (other than an
        empty one) raises :class:`ReportExistsError`.
    sweep : uq.studies.SweepResult or uq.decisions.SweepSummary, optional
    comparison : uq.studies.ComparisonResult or uq.decisions.PairedComparison, optional
    progress : callable(str), optional
        Called with a short description before each step.

    Returns
    -------
    pathlib.Path
        The report folder.

    Raises
    ------
    ReportExistsError
        ``out_dir`` exists and ``overwrite`` is False.
    OSError
        The folder cannot be written.
    """
    out = Path(out_dir)
    parent = out.parent if str(out.parent) else Path(".")
    _refuse_existing(out, overwrite)
    parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name[:40]}.partial-", dir=parent))
    try:
        os.chmod(tmp, 0o777 & ~_current_umask())  # mkdtemp makes it 0700; a report is shared
        _build(assessment, tmp, sweep=sweep, comparison=comparison, progress=progress)
        _refuse_existing(out, overwrite)  # it may have appeared while we were building
        _move_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


def _current_umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _is_empty_dir(path: Path) -> bool:
    return path.is_dir() and not path.is_symlink() and not any(path.iterdir())


def _refuse_existing(out: Path, overwrite: bool) -> None:
    if (out.exists() or out.is_symlink()) and not overwrite and not _is_empty_dir(out):
        raise ReportExistsError(
            f"report folder {str(out)!r} already exists; choose another folder or pass "
            "--overwrite (overwrite=True) to replace it")


def _move_into_place(tmp: Path, out: Path) -> None:
    if not (out.exists() or out.is_symlink()):
        os.rename(tmp, out)
        return
    if _is_empty_dir(out):
        os.rmdir(out)
        os.rename(tmp, out)
        return
    # overwrite: set the old report aside, move the new one in, then delete the old one
    old = Path(tempfile.mkdtemp(prefix=f".{out.name[:40]}.old-", dir=out.parent))
    os.rmdir(old)
    os.rename(out, old)
    try:
        os.rename(tmp, out)
    except BaseException:
        os.rename(old, out)
        raise
    if old.is_dir() and not old.is_symlink():
        shutil.rmtree(old, ignore_errors=True)
    else:
        old.unlink()


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

    _step(progress, "figures")
    images = _make_figures(a, figdir, sweep_summary=sweep_summary)
    report_s = time.perf_counter() - t0

    _step(progress, "summary.json")
    summary = build_summary(a, sweep=sweep, comparison=comparison)
    summary["timings_s"]["report_tables_and_figures"] = report_s
    text = json.dumps(summary, indent=2, ensure_ascii=False, allow_nan=False)
    (folder / "summary.json").write_text(text + "\n", encoding="utf-8")

    _step(progress, "index.html")
    html = render_html(a, images=images, sweep_summary=sweep_summary, pair=pair,
                       extra_timings={"report_tables_and_figures": report_s})
    (folder / "index.html").write_text(html, encoding="utf-8")


# ------------------------------------------------------------------------ tables
def _csv(frame: pd.DataFrame, path: Path) -> None:
    frame = frame.copy()
    for col in frame.columns:
        if frame[col].dtype == object:
            frame[col] = frame[col].map(lambda v: ";".join(map(str, v))
                                        if isinstance(v, (list, tuple)) else v)
    frame = frame.replace([np.inf, -np.inf], np.nan)  # empty cell, never 'inf'
    frame.to_csv(path, index=False)


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


def _write_tables(a, folder, *, sweep, sweep_summary, comparison, pair) -> None:
    _csv(a.propagation.range_curve.to_frame(), folder / "range_curve.csv")
    if a.sensitivity is not None:
        _csv(a.sensitivity.sobol.to_frame().reset_index(), folder / "sensitivity.csv")
    else:
        _csv(pd.DataFrame(columns=["output", "factor", "status", "first", "first_low",
                                   "first_high", "total", "total_low", "total_high"]),
             folder / "sensitivity.csv")
    if a.tests is not None:
        frame = a.tests.to_frame()
        frame.insert(0, "basis", a.tests.ranking_basis)
        _csv(frame, folder / "tests.csv")
    else:
        _csv(pd.DataFrame(columns=["rank", "name", "inputs", "cost"]), folder / "tests.csv")
    if a.contingency is not None:
        _csv(a.contingency.to_frame(), folder / "contingency.csv")
    else:
        _csv(pd.DataFrame(columns=["quantile", "booking_days"]), folder / "contingency.csv")
    _csv(a.failures.to_frame(), folder / "failures.csv")
    _csv(inputs_frame(a.scenario, a.pinned), folder / "inputs.csv")
    if sweep_summary is not None:
        frame = sweep.to_frame() if hasattr(sweep, "to_frame") else sweep_summary.to_frame()
        _csv(frame, folder / "sweep.csv")
    if pair is not None:
        frame = comparison.to_frame() if hasattr(comparison, "to_frame") else pair.to_frame()
        _csv(frame, folder / "comparison.csv")


# ------------------------------------------------------------------------ figures
def reached_durations(a) -> np.ndarray:
    """Arrival times [days] of the samples that reached the recovery point (the booking's population)."""
    out = a.propagation.outcomes
    return np.asarray(out.duration_days, dtype=float)[np.asarray(out.reaches_recovery, bool)]


def _b64(png: bytes) -> str:
    return base64.b64encode(png).decode("ascii")


def _make_figures(a, figdir: Path, *, sweep_summary) -> dict[str, str]:
    """Every figure as PNG+SVG in ``figdir``; returns base64 PNGs keyed by figure name."""
    images: dict[str, str] = {}
    sc = a.scenario
    images["range_curve"] = _b64(fig_mod.save_figure(fig_mod.range_curve_figure(
        a.propagation.range_curve, route_km=sc.route_length_km,
        required_probability=sc.decision.required_probability), figdir, "range_curve"))
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
    return images


# ------------------------------------------------------------------------ HTML
def _environment():
    import jinja2

    return jinja2.Environment(
        loader=jinja2.PackageLoader("uq.report", "templates"),
        autoescape=True,  # every scenario string is escaped
        undefined=jinja2.StrictUndefined,
        trim_blocks=True, lstrip_blocks=True,
    )


def _verdict_scale(p, required: float) -> dict[str, float]:
    """Positions [% of the bar width] of the interval, estimate and requirement."""
    lo_v = finite_or_none(p.lower) or 0.0
    hi_v = finite_or_none(p.upper) or 1.0
    est = finite_or_none(p.estimate) or 0.0
    left = max(0.0, min(lo_v, required) - 0.05)
    right = min(1.0, max(hi_v, required) + 0.05)
    span = max(right - left, 1e-9)

    def pos(v):
        return 100.0 * (v - left) / span

    return {"left": left, "right": right, "lo": pos(lo_v), "hi": pos(hi_v), "est": pos(est),
            "req": pos(required)}


def render_html(a, *, images: dict[str, str], sweep_summary=None, pair=None,
                extra_timings: dict[str, float] | None = None) -> str:
    """The self-contained index.html of an assessment."""
    fmt = Formatter()
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
    template = _environment().get_template("report.html.j2")
    return template.render(
        a=a, sc=sc, fmt=fmt, images=images, op=op, sweep=sweep_summary, pair=pair,
        nominal=nominal_dict(a.nominal),
        inputs=inputs_frame(sc, a.pinned).to_dict("records"),
        pinned=a.pinned, margin_vs=margin_vs,
        scale=_verdict_scale(a.propagation.p_success, sc.decision.required_probability),
        cautions=CAUTIONS, assumptions=MODEL_ASSUMPTIONS, timings=timings,
        total_time=sum(timings.values()),
        generated=datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        range_q={round(q.q, 3): q for q in a.propagation.range_quantiles},
        censored_fraction=float(np.mean(a.propagation.outcomes["range_censored"])),
    )
