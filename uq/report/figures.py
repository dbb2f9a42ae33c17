"""Figures of the report, drawn with matplotlib's object API.

Figures are :class:`matplotlib.figure.Figure` objects rendered straight to PNG and SVG; the
module never selects a backend and never touches pyplot's global state, so importing it (or
writing a report from a notebook) leaves the user's plotting set-up alone.

Each ``*_figure`` function takes already-computed results and returns a matplotlib Figure;
:func:`save_figure` writes it as PNG and SVG and returns the PNG bytes for embedding.
"""
from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from matplotlib.figure import Figure

__all__ = [
    "save_figure",
    "range_curve_figure",
    "failures_figure",
    "sensitivity_figure",
    "contingency_figure",
    "sweep_figure",
    "glide_polar_figure",
    "knowledge_band_figure",
]

_DPI = 110
_BLUE, _ORANGE, _GREY, _RED = "#1f5f9e", "#d9822b", "#8a8a8a", "#b03030"


def _text(label: object) -> str:
    """A scenario string made safe for matplotlib (no mathtext from '$')."""
    return str(label).replace("$", r"\$")


def _subplots(figsize: tuple[float, float]):
    """A new free-standing Figure and its one Axes (no pyplot, no backend switch)."""
    fig = Figure(figsize=figsize)
    return fig, fig.subplots()


def save_figure(fig, folder: Path, stem: str) -> bytes:
    """Write ``fig`` as ``<stem>.png`` and ``<stem>.svg`` in ``folder``; return the PNG bytes."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=_DPI, bbox_inches="tight")
    png = buffer.getvalue()
    (folder / f"{stem}.png").write_bytes(png)
    fig.savefig(folder / f"{stem}.svg", format="svg", bbox_inches="tight")
    return png


def range_curve_figure(curve, *, route_km: float, required_probability: float):
    """P(range >= x) with its pointwise interval and the simultaneous DKW band."""
    fig, ax = _subplots((7.2, 4.2))
    x = np.asarray(curve.grid, dtype=float)
    ax.fill_between(x, curve.band_lower, curve.band_upper, color=_GREY, alpha=0.25, lw=0,
                    label=f"simultaneous {curve.confidence:.0%} band (DKW)")
    ax.fill_between(x, curve.lower, curve.upper, color=_BLUE, alpha=0.35, lw=0,
                    label=f"pointwise {curve.confidence:.0%} interval")
    ax.plot(x, curve.probability, color=_BLUE, lw=1.8, label="estimate")
    ax.axvline(route_km, color=_RED, ls="--", lw=1.2, label=f"route length {route_km:,.1f} km")
    ax.axhline(required_probability, color=_ORANGE, ls=":", lw=1.2,
               label=f"required {required_probability:.0%}")
    ax.set_xlabel("range x [km]")
    ax.set_ylabel("P(range \u2265 x) [-]")
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlim(x.min(), x.max())
    ax.grid(alpha=0.3)
    ax.legend(loc="lower left", fontsize=8)
    fig.tight_layout()
    return fig


def failures_figure(failures):
    """Share of samples failing by mode and by leg, with interval whiskers."""
    rows = [r for r in failures.modes] + [r for r in failures.legs]
    fig, ax = _subplots((7.2, 0.45 * len(rows) + 1.4))
    y = np.arange(len(rows))[::-1]
    share = np.array([r.share_of_samples for r in rows], dtype=float)
    lo = np.array([r.share_of_samples_low for r in rows], dtype=float)
    hi = np.array([r.share_of_samples_high for r in rows], dtype=float)
    colors = [_RED if r.kind == "mode" else _BLUE for r in rows]
    ax.barh(y, 100 * share, color=colors, alpha=0.8)
    ax.errorbar(100 * share, y, xerr=[100 * (share - lo), 100 * (hi - share)], fmt="none",
                ecolor="black", capsize=3, lw=1)
    ax.set_yticks(y, [_text(("mode: " if r.kind == "mode" else "leg: ") + r.name) for r in rows],
                  fontsize=8)
    ax.set_xlabel("share of all samples [%]")
    ax.grid(axis="x", alpha=0.3)
    fig.tight_layout()
    return fig


def sensitivity_figure(indices, *, title: str):
    """First-order and total Sobol indices of one output with interval whiskers."""
    factors = list(indices.factors)
    fig, ax = _subplots((7.2, 0.42 * len(factors) + 1.4))
    y = np.arange(len(factors))[::-1]
    h = 0.38
    for offset, value, interval, color, label in (
        (h / 2, indices.first, indices.first_interval, _BLUE, "first order S_i"),
        (-h / 2, indices.total, indices.total_interval, _ORANGE, "total S_Ti"),
    ):
        v = np.nan_to_num(np.asarray(value, dtype=float))
        lo = np.nan_to_num(np.asarray(interval.low, dtype=float))
        hi = np.nan_to_num(np.asarray(interval.high, dtype=float))
        ax.barh(y + offset, v, height=h, color=color, alpha=0.85, label=label)
        ax.errorbar(v, y + offset, xerr=[np.clip(v - lo, 0, None), np.clip(hi - v, 0, None)],
                    fmt="none", ecolor="black", capsize=2, lw=0.8)
    ax.set_yticks(y, [_text(f).replace("+", "+\n") for f in factors], fontsize=7)
    ax.set_xlabel("Sobol index [-]")
    ax.set_title(_text(title), fontsize=10)
    ax.axvline(0, color="black", lw=0.6)
    ax.grid(axis="x", alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")
    fig.tight_layout()
    return fig


def contingency_figure(durations_days, contingency):
    """Histogram of arrival time with the booking quantiles and the nominal plan marked."""
    d = np.asarray(durations_days, dtype=float)
    d = d[np.isfinite(d)]
    fig, ax = _subplots((7.2, 3.8))
    ax.hist(d, bins=min(60, max(10, int(np.sqrt(d.size)))), color=_BLUE, alpha=0.75)
    ax.axvline(contingency.nominal_days, color="black", ls="--", lw=1.2,
               label=f"nominal plan {contingency.nominal_days:,.2f} d")
    styles = [":", "-.", "-", (0, (5, 1))]
    for row, ls in zip(contingency.table, styles * 2):
        if row.booking_days is None or not np.isfinite(row.booking_days):
            continue
        ax.axvline(row.booking_days, color=_ORANGE, ls=ls, lw=1.3,
                   label=f"{row.quantile:.0%} quantile {row.booking_days:,.2f} d")
    ax.set_xlabel("arrival time [days]")
    ax.set_ylabel("samples [-]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def sweep_figure(summary):
    """P(success) against the swept setpoint with intervals and the requirement."""
    x = np.array([r.setpoint for r in summary.rows], dtype=float)
    p = np.array([r.probability_of_success for r in summary.rows], dtype=float)
    lo = np.array([r.probability_low for r in summary.rows], dtype=float)
    hi = np.array([r.probability_high for r in summary.rows], dtype=float)
    fig, ax = _subplots((7.2, 3.8))
    ax.errorbar(x, 100 * p, yerr=[100 * (p - lo), 100 * (hi - p)], fmt="o-", color=_BLUE,
                capsize=3, label="P(success)")
    ax.axhline(100 * summary.required_probability, color=_ORANGE, ls=":",
               label=f"required {summary.required_probability:.0%}")
    ax.axvline(summary.robust_setpoint, color=_RED, ls="--", lw=1,
               label=f"robust choice {summary.robust_setpoint:g} {_text(summary.unit)}")
    ax.set_xlabel(_text(f"{summary.setpoint_name} [{summary.unit}]"))
    ax.set_ylabel("P(success) [%]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def glide_polar_figure(polar, *, operating_u: float, operating_w: float,
                       glide_angle_deg: float, net_buoyancy_N: float):
    """Glide polar (vertical against horizontal speed) with the operating point."""
    fig, ax = _subplots((6.4, 4.2))
    u = np.asarray(polar.horizontal_speed, dtype=float).ravel()
    w = np.asarray(polar.vertical_speed, dtype=float).ravel()
    ax.plot(u, w, color=_BLUE, lw=1.8, label=f"polar at B = {net_buoyancy_N:g} N")
    best = int(np.argmin(np.asarray(polar.glide_angle).ravel()))
    ax.plot([0, u[best]], [0, w[best]], color=_GREY, ls=":", lw=1,
            label="best glide ratio (tangent)")
    if np.isfinite(operating_u) and np.isfinite(operating_w) and operating_u > 0:
        ax.plot([operating_u], [operating_w], "o", color=_RED, ms=8,
                label=f"operating point, {glide_angle_deg:g}\u00b0 glide")
    ax.set_xlabel("horizontal speed u [m/s]")
    ax.set_ylabel("vertical speed w [m/s]")
    ax.invert_yaxis()  # sink rate downwards, as the trade draws it
    ax.set_xlim(left=0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def knowledge_band_figure(band):
    """Histogram of P(success | knowledge inputs) with p* and the band's 5/50/95 % points."""
    fig, ax = _subplots((6.4, 3.0))
    values = np.asarray(band.sample_values, dtype=float)
    ax.hist(100.0 * values, bins=np.linspace(0.0, 100.0, 51), color=_BLUE, alpha=0.8)
    ax.axvline(100.0 * band.required_probability, color=_RED, ls="--", label="required P(success)")
    for q, v in zip(band.quantiles, band.values):
        ax.axvline(100.0 * v, color=_GREY, lw=1.0)
    ax.set_xlabel("P(success | knowledge inputs) [%]")
    ax.set_ylabel("samples")
    ax.set_title(f"Credibility of reaching the requirement: {100.0 * band.credibility:.1f} %")
    ax.legend(loc="upper left", fontsize=8)
    return fig
