"""What the pilot did: shares of samples that re-trimmed, flew at the engine's limit, drifted,
and how often they surfaced."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from physics.states import FLIGHT_EVENT_NAMES

from ._common import (
    _as_float_1d,
    _check_confidence,
    _quantile_with_interval,
    _ResultMixin,
    _rows_frame,
    _wilson,
)

__all__ = ["PilotActionRow", "PilotActions", "pilot_actions"]


@dataclass(frozen=True)
class PilotActionRow:
    """One action: how many samples took it, their share [-] and its Wilson interval."""

    action: str
    count: int
    share_of_samples: float
    share_of_samples_low: float
    share_of_samples_high: float


@dataclass(frozen=True)
class PilotActions(_ResultMixin):
    """Policy actions along the route over all samples.

    Attributes
    ----------
    rows : tuple of PilotActionRow
        Re-trimmed, flew at the engine's limit, drifted across the track.
    surfacings_median, surfacings_low, surfacings_high : float
        Median number of surfacings on the route and its order-statistic interval [-].
    surfacings_p05, surfacings_p95 : float
        5 % and 95 % quantiles of the number of surfacings [-].
    samples : int
    confidence : float
    sentence : str
    """

    rows: tuple[PilotActionRow, ...]
    surfacings_median: float
    surfacings_low: float | None
    surfacings_high: float | None
    surfacings_p05: float
    surfacings_p95: float
    samples: int
    confidence: float
    sentence: str

    def to_frame(self):
        """One row per action (pandas DataFrame)."""
        return _rows_frame(self.rows)


def pilot_actions(flight_events, surfacings, *, confidence: float) -> PilotActions:
    """Shares of samples by pilot action, and the number of surfacings.

    Parameters
    ----------
    flight_events : array_like of int, shape (n,)
        :class:`physics.states.FlightEvent` bits per sample.
    surfacings : array_like, shape (n,)
        Surfacings on the route per sample [-].
    confidence : float
        Two-sided confidence level [-].

    Returns
    -------
    PilotActions
    """
    confidence = _check_confidence(confidence)
    events = np.asarray(flight_events).astype(np.int64).ravel()
    count_surf = np.sort(_as_float_1d(surfacings, "surfacings"))
    n = events.size
    rows = []
    for bit, name in FLIGHT_EVENT_NAMES.items():
        k = int(np.count_nonzero(events & int(bit)))
        lo, hi = _wilson(k, n, confidence)
        rows.append(PilotActionRow(action=name, count=k, share_of_samples=k / n,
                                   share_of_samples_low=float(lo),
                                   share_of_samples_high=float(hi)))
    med, med_lo, med_hi = _quantile_with_interval(count_surf, 0.5, confidence)
    p05 = float(np.quantile(count_surf, 0.05))
    p95 = float(np.quantile(count_surf, 0.95))
    parts = [f"{r.action} {r.share_of_samples:.1%}" for r in rows]
    sentence = (f"Of {n:,} samples: " + ", ".join(parts)
                + f"; surfacings on the route: median {med:,.0f} (5–95 %: {p05:,.0f}–{p95:,.0f}).")
    return PilotActions(rows=tuple(rows), surfacings_median=med, surfacings_low=med_lo,
                        surfacings_high=med_hi, surfacings_p05=p05, surfacings_p95=p95,
                        samples=n, confidence=confidence, sentence=sentence)
