"""Figures of the report, drawn with matplotlib's object API.

Figures are :class:`matplotlib.figure.Figure` objects rendered straight to PNG and SVG; the
module never selects a backend and never touches pyplot's global state, so importing it (or
writing a report from a notebook) leaves the user's plotting set-up alone.

Each ``*_figure`` function takes already-computed results and an optional ``ax=`` (a
matplotlib Axes to draw on, e.g. from a notebook's ``plt.subplots()``); without one it draws
on a new free-standing Figure. It returns the Axes it drew on (``ax.figure`` is its Figure).
:func:`save_figure` writes a Figure (or an Axes' Figure) as PNG and SVG and returns the PNG
bytes for embedding.
"""
from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from matplotlib.figure import Figure

__all__ = [
    "save_figure",
    "png_bytes",
    "range_curve_figure",
    "curve_at",
    "failures_figure",
    "sensitivity_figure",
    "contingency_figure",
    "sweep_figure",
    "comparison_figure",
    "study_heatmap",
    "study_heatmaps_figure",
    "glide_polar_figure",
    "knowledge_band_figure",
]

_DPI = 110
_BLUE, _ORANGE, _GREY, _RED = "#1f5f9e", "#d9822b", "#8a8a8a", "#b03030"


def _text(label: object) -> str:
    """A scenario string made safe for matplotlib (no mathtext from '$')."""
    return str(label).replace("$", r"\$")


def _subplots(figsize: tuple[float, float], ax=None):
    """``ax`` and its Figure, or a new free-standing Figure and its one Axes (no pyplot, no
    backend switch)."""
    if ax is not None:
        return ax.figure, ax
    fig = Figure(figsize=figsize)
    return fig, fig.subplots()


def _finish(fig, ax, own: bool):
    """Tight layout on a Figure this module made; the caller's layout is left alone."""
    if own:
        fig.tight_layout()
    return ax


def png_bytes(fig) -> bytes:
    """The PNG of a Figure (or of an Axes' Figure) as embedded in the pages."""
    fig = getattr(fig, "figure", fig) if not isinstance(fig, Figure) else fig
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=_DPI, bbox_inches="tight")
    return buffer.getvalue()


def save_figure(fig, folder: Path, stem: str) -> bytes:
    """Write ``fig`` (a Figure, or an Axes whose Figure is written) as ``<stem>.png`` and
    ``<stem>.svg`` in ``folder``; return the PNG bytes."""
    fig = getattr(fig, "figure", fig) if not isinstance(fig, Figure) else fig
    png = png_bytes(fig)
    (folder / f"{stem}.png").write_bytes(png)
    fig.savefig(folder / f"{stem}.svg", format="svg", bbox_inches="tight")
    return png


def range_curve_figure(curve, *, route_km: float, required_probability: float,
                       p_success: float | None = None, ax=None):
    """P(range >= x) with its pointwise interval and the simultaneous DKW band.

    The curve is on energy alone; when ``p_success`` (the verdict's estimate [-]) is given,
    the figure states both numbers at the route length, so the curve is never read as the
    verdict. An inset expands the probability axis near the requirement, where a
    go/no-go is decided.
    """
    own = ax is None
    fig, ax = _subplots((7.2, 5.0), ax)
    x = np.asarray(curve.grid, dtype=float)
    _draw_range_curve(ax, curve, x, route_km, required_probability, legend=True)
    ax.set_xlabel("range x [km]")
    ax.set_ylabel("P(range \u2265 x) on energy alone [-]")
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlim(x.min(), x.max())
    at_route = curve_at(curve, route_km)
    text = f"at the route length: P(range \u2265 route) = {at_route:.1%} (energy alone)"
    if p_success is not None:
        text += (f"\nverdict: P(success) = {p_success:.1%} (also counts turning back, "
                 "headway and the duration limit)")
    ax.set_title(_text(text), fontsize=8.5, loc="left")
    ax.plot([route_km], [at_route], "o", color=_RED, ms=5, zorder=5)
    _decision_inset(ax, curve, x, route_km, required_probability)
    return _finish(fig, ax, own)


def curve_at(curve, x: float) -> float:
    """The estimate of P(range >= x) [-] read off the curve at ``x`` [km] (linear between
    grid points): what the figure and the page state at the route length."""
    return float(np.interp(x, np.asarray(curve.grid, dtype=float),
                           np.asarray(curve.probability, dtype=float)))


def _draw_range_curve(ax, curve, x, route_km, required_probability, *, legend: bool):
    ax.fill_between(x, curve.band_lower, curve.band_upper, color=_GREY, alpha=0.25, lw=0,
                    label=f"simultaneous {curve.confidence:.0%} band (DKW)")
    ax.fill_between(x, curve.lower, curve.upper, color=_BLUE, alpha=0.35, lw=0,
                    label=f"pointwise {curve.confidence:.0%} interval")
    ax.plot(x, curve.probability, color=_BLUE, lw=1.8, label="estimate")
    ax.axvline(route_km, color=_RED, ls="--", lw=1.2, label=f"route length {route_km:,.1f} km")
    ax.axhline(required_probability, color=_ORANGE, ls=":", lw=1.2,
               label=f"required {required_probability:.0%}")
    ax.grid(alpha=0.3)
    if legend:  # below the axes: it never hides the curve
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=3, fontsize=8,
                  frameon=False)


def _decision_inset(ax, curve, x, route_km, required_probability):
    """An inset with the probability axis from just below the requirement to 1, over the
    ranges where the curve passes through that region."""
    p = np.asarray(curve.probability, dtype=float)
    bottom = max(0.0, required_probability - 0.1)
    inside = np.flatnonzero((p >= bottom) & (p < 1.0))
    if inside.size == 0:
        return None
    lo_x = x[max(inside[0] - 2, 0)]
    hi_x = x[min(inside[-1] + 2, x.size - 1)]
    lo_x, hi_x = min(lo_x, route_km), max(hi_x, route_km)
    pad = 0.05 * (hi_x - lo_x or 1.0)
    # the lower left (short ranges, low P) is empty under any survival curve
    inset = ax.inset_axes([0.09, 0.1, 0.4, 0.42])
    _draw_range_curve(inset, curve, x, route_km, required_probability, legend=False)
    inset.set_xlim(lo_x - pad, hi_x + pad)
    inset.set_ylim(bottom, 1.0 + 0.01 * (1.0 - bottom))
    inset.set_title(f"near the requirement ({bottom:.0%}\u2013100 %)", fontsize=7)
    inset.tick_params(labelsize=7)
    inset.patch.set_alpha(0.95)
    return inset


def failures_figure(failures, *, ax=None):
    """Share of samples failing by mode and by leg, with interval whiskers (only the modes
    the breakdown lists: those possible for the vehicle kind and route)."""
    own = ax is None
    rows = [r for r in failures.modes] + [r for r in failures.legs]
    fig, ax = _subplots((7.2, 0.45 * len(rows) + 1.4), ax)
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
    return _finish(fig, ax, own)


def sensitivity_figure(indices, *, title: str, ax=None):
    """First-order and total Sobol indices of one output with interval whiskers, ranked by
    the total index (largest on top), labelled in words (leg, quantity, unit); a correlated
    group is one bar labelled as a group."""
    from uq.report._format import input_label

    own = ax is None
    factors = list(indices.factors)
    total = np.asarray(indices.total, dtype=float)
    order = sorted(range(len(factors)),
                   key=lambda i: (-total[i] if np.isfinite(total[i]) else np.inf, i))
    fig, ax = _subplots((7.6, 0.5 * len(factors) + 1.4), ax)
    y = np.arange(len(factors))[::-1]
    h = 0.38
    for offset, value, interval, color, label in (
        (h / 2, indices.first, indices.first_interval, _BLUE, "first order S_i"),
        (-h / 2, indices.total, indices.total_interval, _ORANGE, "total S_Ti"),
    ):
        v = np.nan_to_num(np.asarray(value, dtype=float))[order]
        lo = np.nan_to_num(np.asarray(interval.low, dtype=float))[order]
        hi = np.nan_to_num(np.asarray(interval.high, dtype=float))[order]
        ax.barh(y + offset, v, height=h, color=color, alpha=0.85, label=label)
        ax.errorbar(v, y + offset, xerr=[np.clip(v - lo, 0, None), np.clip(hi - v, 0, None)],
                    fmt="none", ecolor="black", capsize=2, lw=0.8)
    ax.set_yticks(y, [_text(input_label(factors[i], wrap=True)) for i in order], fontsize=7.5)
    ax.set_xlabel(f"Sobol index [-] (whiskers: {getattr(indices, 'confidence', 0.95):.0%} "
                  "bootstrap intervals)")
    ax.set_title(_text(title), fontsize=10)
    ax.axvline(0, color="black", lw=0.6)
    ax.grid(axis="x", alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")
    return _finish(fig, ax, own)


def contingency_figure(durations_days, contingency, *, ax=None):
    """Histogram of arrival time with the booking quantiles and the nominal plan marked."""
    own = ax is None
    d = np.asarray(durations_days, dtype=float)
    d = d[np.isfinite(d)]
    fig, ax = _subplots((7.2, 3.8), ax)
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
    return _finish(fig, ax, own)


def sweep_figure(summary, *, ax=None):
    """P(success) against the swept setpoint with intervals and the requirement."""
    own = ax is None
    x = np.array([r.setpoint for r in summary.rows], dtype=float)
    p = np.array([r.p_success for r in summary.rows], dtype=float)
    lo = np.array([r.p_success_low for r in summary.rows], dtype=float)
    hi = np.array([r.p_success_high for r in summary.rows], dtype=float)
    fig, ax = _subplots((7.2, 3.8), ax)
    ax.errorbar(x, 100 * p, yerr=[100 * (p - lo), 100 * (hi - p)], fmt="o-", color=_BLUE,
                capsize=3, label="P(success)")
    ax.axhline(100 * summary.required_probability, color=_ORANGE, ls=":",
               label=f"required {summary.required_probability:.0%}")
    if summary.recommended_setpoint is not None:
        ax.axvline(summary.recommended_setpoint, color=_RED, ls="--", lw=1,
                   label=f"recommended {summary.recommended_setpoint:g} {_text(summary.unit)}")
    else:
        ax.set_title("no swept value meets the requirement", fontsize=9)
    ax.set_xlabel(_text(f"{summary.setpoint_name} [{summary.unit}]"))
    ax.set_ylabel("P(success) [%]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    return _finish(fig, ax, own)


def comparison_figure(pair, *, ax=None):
    """P(success) of each configuration with its interval, the requirement, and the paired
    difference A - B with its interval (percentage points, right-hand axis)."""
    own = ax is None
    fig, ax = _subplots((7.2, 3.0), ax)
    names = [_text(n) for n in pair.names]
    p = np.array([pair.p_success_a, pair.p_success_b], dtype=float)
    lo = np.array([pair.p_success_a_low, pair.p_success_b_low], dtype=float)
    hi = np.array([pair.p_success_a_high, pair.p_success_b_high], dtype=float)
    y = np.array([2.0, 1.0])
    ax.errorbar(100 * p, y, xerr=[100 * (p - lo), 100 * (hi - p)], fmt="o", color=_BLUE,
                capsize=4, label="P(success) and interval")
    if pair.required_probability is not None:
        ax.axvline(100 * pair.required_probability, color=_ORANGE, ls=":",
                   label=f"required {pair.required_probability:.0%}")
    ax.set_yticks(y, names, fontsize=8)
    ax.set_ylim(0.4, 2.6)
    ax.set_xlabel("P(success) [%]")
    ax.grid(axis="x", alpha=0.3)
    ax.legend(fontsize=8, loc="lower left")
    from uq.decisions import format_points

    d = pair.difference
    dl = pair.difference_low if pair.difference_low is not None else d
    dh = pair.difference_high if pair.difference_high is not None else d
    ax.set_title(f"paired difference {names[0]} \u2212 {names[1]}: {format_points(d)} "
                 f"percentage points ({pair.confidence:.0%} interval {format_points(dl)} to "
                 f"{format_points(dh)})", fontsize=8.5)
    return _finish(fig, ax, own)


def glide_polar_figure(polar, *, operating_u: float, operating_w: float,
                       glide_angle_deg: float, net_buoyancy_N: float, ax=None):
    """Glide polar (vertical against horizontal speed) with the operating point."""
    own = ax is None
    fig, ax = _subplots((6.4, 4.2), ax)
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
    return _finish(fig, ax, own)


def knowledge_band_figure(band, *, ax=None):
    """Histogram of P(success | knowledge inputs) with p* and the band's 5/50/95 % points."""
    own = ax is None
    fig, ax = _subplots((6.4, 3.0), ax)
    values = np.asarray(band.sample_values, dtype=float)
    ax.hist(100.0 * values, bins=np.linspace(0.0, 100.0, 51), color=_BLUE, alpha=0.8)
    ax.axvline(100.0 * band.required_probability, color=_RED, ls="--", label="required P(success)")
    for q, v in zip(band.quantiles, band.values):
        ax.axvline(100.0 * v, color=_GREY, lw=1.0)
    ax.set_xlabel("P(success | knowledge inputs) [%]")
    ax.set_ylabel("samples")
    ax.set_title(f"Credibility of reaching the requirement: {100.0 * band.credibility:.1f} %")
    ax.legend(loc="upper left", fontsize=8)
    return _finish(fig, ax, own)


def study_heatmap(frame, x_field: str, y_field: str, *, required_probability: float,
                  x_label: str = "", y_label: str = "", title: str = "", ax=None):
    """P(success) [%] over a 2-D grid of a study as a heat map, one cell per variant.

    ``frame`` holds one row per variant with the columns ``x_field``, ``y_field``,
    ``p_success``, ``p_success_low`` and ``verdict`` (:meth:`StudyResult.to_frame`, the
    other grid fields fixed). A cell reads the estimate and the verdict; a heavy outline
    marks the cells whose lower bound meets the requirement.
    """
    own = ax is None
    xs = list(dict.fromkeys(str(v) for v in frame[x_field]))
    ys = list(dict.fromkeys(str(v) for v in frame[y_field]))
    fig, ax = _subplots((1.3 * len(xs) + 2.6, 0.7 * len(ys) + 1.6), ax)
    grid = np.full((len(ys), len(xs)), np.nan)
    for _, r in frame.iterrows():
        i, j = ys.index(str(r[y_field])), xs.index(str(r[x_field]))
        grid[i, j] = 100.0 * float(r["p_success"])
        ok = r["p_success_low"] is not None and float(r["p_success_low"]) >= required_probability
        ax.text(j, i, f"{grid[i, j]:.1f} %\n{str(r['verdict']).upper()}", ha="center",
                va="center", fontsize=7.5, color="black")
        if ok:
            ax.add_patch(_outline(j, i))
    image = ax.imshow(grid, cmap="RdYlGn", vmin=0.0, vmax=100.0, aspect="auto")
    ax.set_xticks(range(len(xs)), [_text(v) for v in xs], fontsize=7.5)
    ax.set_yticks(range(len(ys)), [_text(v) for v in ys], fontsize=7.5)
    ax.set_xlabel(_text(x_label or x_field), fontsize=8.5)
    ax.set_ylabel(_text(y_label or y_field), fontsize=8.5)
    if title:
        ax.set_title(_text(title), fontsize=8.5)
    if own:
        fig.colorbar(image, ax=ax, label="P(success) [%]")
    return _finish(fig, ax, own)


def _outline(j, i):
    from matplotlib.patches import Rectangle

    return Rectangle((j - 0.5, i - 0.5), 1.0, 1.0, fill=False, lw=2.2, ec="#1b1b1b")


def study_heatmaps_figure(frame, fields, *, required_probability: float, labels=None,
                          max_panels: int = 6):
    """Heat maps of P(success) over a study grid: the two fields with the most values are
    the axes, one panel per combination of the other fields (at most ``max_panels``;
    ``None`` when there are more, or fewer than two fields with two or more values)."""
    labels = labels or {}
    counts = {f: frame[f].astype(str).nunique() for f in fields}
    varied = sorted((f for f in fields if counts[f] > 1), key=lambda f: -counts[f])
    if len(varied) < 2:
        return None
    x_field, y_field, rest = varied[0], varied[1], varied[2:]
    groups = list(frame.groupby([frame[f].astype(str) for f in rest], sort=False)) if rest \
        else [((), frame)]
    if len(groups) > max_panels:
        return None
    cols = 1 if counts[x_field] >= 4 else min(2, len(groups))
    rows = -(-len(groups) // cols)
    nx, ny = counts[x_field], counts[y_field]
    fig = Figure(figsize=(cols * (1.2 * nx + 2.4), rows * (0.65 * ny + 1.9)))
    axes = np.atleast_1d(fig.subplots(rows, cols, squeeze=False).ravel())
    for ax, (key, part) in zip(axes, groups):
        key = key if isinstance(key, tuple) else (key,)
        title = "; ".join(f"{labels.get(f, f)} = {v}" for f, v in zip(rest, key))
        study_heatmap(part, x_field, y_field, required_probability=required_probability,
                      x_label=labels.get(x_field, x_field), y_label=labels.get(y_field, y_field),
                      title=title, ax=ax)
    for ax in axes[len(groups):]:
        ax.set_visible(False)
    fig.suptitle("P(success) by variant (outlined: the lower bound meets the requirement)",
                 fontsize=9)
    fig.tight_layout()
    return fig
