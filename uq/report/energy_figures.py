"""Energy along the route: fan chart of remaining usable energy and per-leg energy split.

A bounded subsample of the assessment's own rows (:func:`uq.route_energy.subsample_rows`) is
re-flown through the same model (:func:`uq.simulate.route_energy`): the chart's end values
are the assessment's margins for those rows. The median-input flight gives the arrival day
at each leg's end for the plan table and the chart's date axis.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass

import numpy as np
import pandas as pd

from uq.report.figures import _BLUE, _GREY, _ORANGE, _RED, _subplots, _text
from uq.route_energy import DEFAULT_ROWS, FAN_QUANTILES, RouteEnergy, subsample_rows
from uq.simulate import nominal_inputs, route_energy

__all__ = ["EnergySection", "energy_section", "fan_chart_figure", "energy_split_figure",
           "TERM_LABELS", "along_route_frame", "by_leg_frame"]

#: how each energy term reads on the page
TERM_LABELS = {"propulsion": "propulsion", "pump": "buoyancy pump",
               "hotel": "hotel load (sensors, computer, payload)",
               "inflections": "inflections", "surfacing": "surfacing (fix and link)",
               "recovery point": "loiter and homing at the recovery point"}
_TERM_COLORS = {"propulsion": _BLUE, "pump": _BLUE, "hotel": _ORANGE, "inflections": "#6a3d9a",
                "surfacing": "#33a02c", "recovery point": _GREY}
_ICE = "#eef1f3"


@dataclass(frozen=True, eq=False)
class EnergySection:
    """What the report's energy section shows."""

    profile: RouteEnergy  # the re-flown subsample
    rows: np.ndarray  # the assessment's row indices re-flown
    samples: int  # the assessment's sample count
    leg_end_days: np.ndarray  # median-input arrival at each leg's end [d], (J,)
    start_date: datetime.date | None
    split_rows: tuple[dict, ...]  # per leg: name, each term [Wh], total [Wh]
    split_samples: int  # re-flown samples behind the split (those that did not turn back)
    terms: tuple[str, ...]
    sentence: str

    def date_text(self, day: float) -> str:
        if not np.isfinite(day):
            return "\u2014"
        if self.start_date is None:
            return f"day {day:.1f}"
        return (self.start_date + datetime.timedelta(days=float(day))).isoformat()


def _wh(x: float) -> str:
    return f"{x:,.0f} Wh".replace("-", "\u2212")


def energy_section(a, *, rows: int = DEFAULT_ROWS) -> EnergySection:
    """Re-fly at most ``rows`` of the assessment's samples and the median-input vehicle."""
    sc = a.scenario
    index = subsample_rows(a.propagation.inputs.shape[0], rows)
    prof = route_energy(sc, a.propagation.inputs[index])
    nominal = route_energy(sc, nominal_inputs(sc))
    steps = (prof.position_km.shape[1] - 1) // len(sc.legs)
    leg_end_days = nominal.elapsed_days[0, steps::steps]
    if not nominal.arrived[0]:  # a stopped median vehicle reaches no leg end after its stop
        reached = nominal.position_km[0, steps::steps] >= prof.planned_position_km()[steps::steps] - 1e-9
        leg_end_days = np.where(reached, leg_end_days, np.nan)
    means = prof.mean_split_Wh()
    terms = tuple(k for k in means if k != "recovery point")
    split_rows = []
    for j, name in enumerate(sc.legs):
        row = {"leg": name.name, **{t: float(means[t][j]) for t in terms}}
        row["total"] = sum(row[t] for t in terms)
        split_rows.append(row)
    recovery = float(means["recovery point"][0])
    if recovery > 0:
        split_rows.append({"leg": "recovery point", **{t: 0.0 for t in terms},
                           "recovery point": recovery, "total": recovery})
        terms = terms + ("recovery point",)
    for row in split_rows:
        row.setdefault("recovery point", 0.0)
    # the one arrival rule (Outcomes.reaches_recovery) of the assessment, for the same rows
    reached = np.asarray(a.propagation.outcomes["reaches_recovery"], dtype=bool)[index]
    end = prof.end_above_reserve_Wh[reached]
    kept = a.propagation.kept
    drawn = "" if kept is None or kept.every_row else f" (drawn from {kept.sentence()})"
    sentence = (f"{index.size:,} of the {a.propagation.samples:,} samples re-flown{drawn}: "
                + (f"of those that reach the recovery point, the median arrives with "
                   f"{_wh(np.median(end))} above the reserve after loiter and homing "
                   f"(5\u201395 %: {_wh(np.quantile(end, 0.05))} to "
                   f"{_wh(np.quantile(end, 0.95))})." if end.size else
                   "none reaches the recovery point."))
    short = prof.turned_back | ~prof.arrived
    if short.any():
        where = np.where(prof.turned_back, prof.turn_position_km, prof.position_km[:, -1])[short]
        sentence += (f" {int(short.sum()):,} turned back or stopped short of it, between "
                     f"{where.min():,.0f} and {where.max():,.0f} km along the route.")
    return EnergySection(profile=prof, rows=index, samples=a.propagation.samples,
                         leg_end_days=leg_end_days, start_date=sc.decision.deployment_date,
                         split_rows=tuple(split_rows),
                         split_samples=int((~prof.turned_back).sum()), terms=terms,
                         sentence=sentence)


def fan_chart_figure(section: EnergySection, *, ax=None, narrow: bool = False):
    """Remaining usable energy against distance: median, 50 % and 90 % bands, the reserve,
    leg boundaries, ice legs shaded, arrival dates on the top axis. Returns the Figure.

    ``narrow``: a smaller canvas for phone-width screens, so its labels stay readable."""
    prof = section.profile
    size = (4.4, 3.8) if narrow else (7.6, 4.4)
    fig, ax = _subplots(size) if ax is None else (ax.figure, ax)
    x = prof.planned_position_km()
    fan = prof.fan()
    flying = prof.flying()
    reserve = np.where(flying, prof.reserve_Wh, np.nan)
    ok = np.sum(flying, axis=0) >= 5
    reserve_median = np.full(x.shape, np.nan)
    reserve_median[ok] = np.nanmedian(reserve[:, ok], axis=0)
    bounds = x[:: (x.size - 1) // len(prof.leg_names)]
    for j, name in enumerate(prof.leg_names):
        if prof.under_ice[j]:
            ax.axvspan(bounds[j], bounds[j + 1], facecolor=_ICE, edgecolor="#b9c4cc",
                       hatch="//", lw=0, label="under ice" if not prof.under_ice[:j].any() else None)
    for b in bounds[1:-1]:
        ax.axvline(b, color=_GREY, lw=0.8, ls=":")
    q = dict(zip(FAN_QUANTILES, fan))
    ax.fill_between(x, q[0.05], q[0.95], color=_BLUE, alpha=0.18, lw=0, label="90 % of samples")
    ax.fill_between(x, q[0.25], q[0.75], color=_BLUE, alpha=0.35, lw=0, label="50 % of samples")
    ax.plot(x, q[0.5], color=_BLUE, lw=1.8, label="median")
    ax.plot(x, reserve_median, color=_RED, ls="--", lw=1.3, label="reserve (policy)")
    left = prof.turned_back | ~prof.arrived  # left the forward flight short of the goal
    if left.any():
        where = np.where(prof.turned_back, prof.turn_position_km, prof.position_km[:, -1])[left]
        ax.plot(where, np.full(where.shape, 0.0), "|", color=_RED, ms=14, mew=1.0,
                transform=ax.get_xaxis_transform(), clip_on=False,
                label=f"turned back or stopped ({int(left.sum())} of {prof.n})")
    ax.set_xlim(0.0, x[-1])
    ax.set_ylim(bottom=min(0.0, float(np.nanmin(fan[0])) if np.isfinite(fan[0]).any() else 0.0))
    ax.set_xlabel("distance along the route [km]")
    ax.set_ylabel("usable energy left [Wh]")
    ax.grid(alpha=0.3)
    top = ax.secondary_xaxis("top")
    top.set_xticks(bounds[1:], [_text(section.date_text(d)) for d in section.leg_end_days],
                   fontsize=6.5 if narrow else 7, rotation=35 if narrow else 0,
                   ha="left" if narrow else "center")
    top.set_xlabel("leg ends: arrival of the median-input vehicle", fontsize=8)
    if narrow:  # legs numbered (the route table names them), legend under the axes
        for j in range(len(prof.leg_names)):
            ax.text(0.5 * (bounds[j] + bounds[j + 1]), 0.03, f"leg {j + 1}", fontsize=7,
                    transform=ax.get_xaxis_transform(), ha="center", va="bottom", color="#333333")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize=7,
                  frameon=False)
    else:
        for j, name in enumerate(prof.leg_names):
            ax.text(0.5 * (bounds[j] + bounds[j + 1]), 0.04, _text(name).replace("_", "\n"),
                    transform=ax.get_xaxis_transform(), ha="center", va="bottom", fontsize=7,
                    color="#333333", linespacing=0.95)
        ax.legend(loc="upper right", fontsize=7.5)
    fig.tight_layout()
    return fig


def energy_split_figure(section: EnergySection, *, ax=None, narrow: bool = False):
    """Mean energy drawn on each leg, stacked by term [Wh]. Returns the Figure.

    ``narrow``: a smaller canvas for phone-width screens, legend below the bars."""
    rows = section.split_rows
    size = (4.4, 0.5 * len(rows) + 2.2) if narrow else (7.6, 0.55 * len(rows) + 1.5)
    fig, ax = _subplots(size) if ax is None else (ax.figure, ax)
    y = np.arange(len(rows))[::-1]
    left = np.zeros(len(rows))
    for term in section.terms:
        values = np.array([r[term] for r in rows])
        if not np.any(values > 0):
            continue
        ax.barh(y, values, left=left, color=_TERM_COLORS.get(term, _GREY), alpha=0.85,
                label=TERM_LABELS.get(term, term), edgecolor="white", lw=0.5)
        left += values
    labels = [_text(r["leg"]).replace("_", "\n" if narrow else "_") for r in rows]
    ax.set_yticks(y, labels, fontsize=7 if narrow else 8)
    ax.set_xlabel("mean energy drawn [Wh]")
    ax.grid(axis="x", alpha=0.3)
    if narrow:
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.25), ncol=2,
                  frameon=False)
    else:
        ax.legend(fontsize=7.5, loc="lower right")
    fig.tight_layout()
    return fig


def along_route_frame(section: EnergySection) -> pd.DataFrame:
    """The fan chart as a table (``energy_along_route.csv``): one row per profile column."""
    prof = section.profile
    fan = prof.fan()
    flying = prof.flying()
    reserve = np.where(flying, prof.reserve_Wh, np.nan)
    count = flying.sum(axis=0)
    frame = pd.DataFrame({
        "distance_km": prof.planned_position_km(),
        "leg": [prof.leg_names[j] for j in prof.column_leg],
        "samples_flying": count,
    })
    for q, row in zip(FAN_QUANTILES, fan):
        frame[f"usable_left_Wh_q{round(100 * q):02d}"] = row
    frame["reserve_Wh_median"] = [float(np.nanmedian(reserve[:, k])) if count[k] else np.nan
                                  for k in range(reserve.shape[1])]
    return frame


def by_leg_frame(section: EnergySection) -> pd.DataFrame:
    """The per-leg split as a table (``energy_by_leg.csv``): mean energy drawn by term [Wh]."""
    return pd.DataFrame([{"leg": r["leg"], **{f"{t.replace(' ', '_')}_Wh": r[t]
                                             for t in section.terms},
                          "total_Wh": r["total"]} for r in section.split_rows])
