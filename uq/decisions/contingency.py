"""Ship-time booking and contingency from sampled arrival times."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ._common import (
    DecisionInputError,
    EmptySampleError,
    OutOfRangeError,
    _as_bool_1d,
    _as_float_1d,
    _check_confidence,
    _check_probability_open,
    _fmt_money,
    _fmt_num,
    _fmt_prob,
    _fmt_prob_interval,
    _mean_t_interval,
    _quantile_with_interval,
    _ResultMixin,
    _rows_frame,
    _same_length,
    _wilson,
)

__all__ = ["BookingRow", "ShipTimeContingency", "ship_time_contingency"]


@dataclass(frozen=True)
class BookingRow:
    """Ship-time booking at one quantile of the arrival time (over arrived samples).

    Days are ``*_days`` [d]; costs are ``*_cost`` [currency]. Interval bounds come from
    binomial order statistics (distribution-free) and are ``None`` when the sample is too
    small for them.
    """

    quantile: float
    booking_days: float
    booking_days_low: float | None
    booking_days_high: float | None
    contingency_days: float
    contingency_days_low: float | None
    contingency_days_high: float | None
    contingency_cost: float
    contingency_cost_low: float | None
    contingency_cost_high: float | None


@dataclass(frozen=True)
class ShipTimeContingency(_ResultMixin):
    """Ship-time booking, contingency over the nominal plan and its cost.

    Attributes
    ----------
    nominal_days : float
        Planned (deterministic) transit time [d].
    day_rate : float
        Ship cost per day [currency/d].
    currency : str
    booking_quantile : float
        Quantile of arrival time that is booked [-].
    booking : BookingRow
        The row for ``booking_quantile``.
    table : tuple of BookingRow
        One row per requested quantile (booking quantile included).
    expected_idle_days, expected_idle_days_low, expected_idle_days_high : float
        E[(b - T)+] over arrived samples and its t-interval [d]: ship time booked but not used.
    expected_overrun_days, expected_overrun_days_low, expected_overrun_days_high : float
        E[(T - b)+] over arrived samples and its t-interval [d]: time beyond the booking.
    probability_of_arrival, probability_of_arrival_low, probability_of_arrival_high : float
        Share of samples that arrived and its Wilson interval [-].
    samples, arrived, not_arrived : int
    confidence : float
    sentence : str

    Notes
    -----
    Quantiles are of the arrival time given arrival. The idle/overrun intervals treat the
    booking b as fixed (its own estimation error is in ``booking``).
    """

    nominal_days: float
    day_rate: float
    currency: str
    booking_quantile: float
    booking: BookingRow
    table: tuple[BookingRow, ...]
    expected_idle_days: float
    expected_idle_days_low: float | None
    expected_idle_days_high: float | None
    expected_overrun_days: float
    expected_overrun_days_low: float | None
    expected_overrun_days_high: float | None
    probability_of_arrival: float
    probability_of_arrival_low: float
    probability_of_arrival_high: float
    samples: int
    arrived: int
    not_arrived: int
    confidence: float
    sentence: str

    def to_frame(self):
        """Booking table, one row per quantile (pandas DataFrame)."""
        return _rows_frame(self.table)


def _shift(x: float | None, by: float, scale: float = 1.0) -> float | None:
    return None if x is None else (x - by) * scale


def ship_time_contingency(
    arrival_days,
    *,
    arrived,
    nominal_days: float,
    booking_quantile: float,
    day_rate: float,
    currency: str,
    quantiles: Sequence[float] = (0.5, 0.8, 0.9, 0.95),
    confidence: float,
) -> ShipTimeContingency:
    """Ship time to book, the contingency over plan and its cost.

    Parameters
    ----------
    arrival_days : array_like, shape (n,)
        Transit duration per sample [d]; values of samples that did not arrive are ignored.
    arrived : array_like of bool, shape (n,)
        Whether the sample reached the recovery point.
    nominal_days : float
        Planned transit time [d].
    booking_quantile : float
        Quantile of arrival time to book, e.g. 0.9 [-].
    day_rate : float
        Ship cost [currency/d], >= 0.
    currency : str
        Currency code used in the sentence and the table, e.g. "EUR".
    quantiles : sequence of float
        Further quantiles to tabulate [-].
    confidence : float
        Two-sided confidence level [-].

    Returns
    -------
    ShipTimeContingency
    """
    confidence = _check_confidence(confidence)
    bq = _check_probability_open(booking_quantile, "booking_quantile")
    qs = sorted({_check_probability_open(q, "quantiles entry") for q in quantiles} | {bq})
    if not nominal_days > 0:
        raise OutOfRangeError(f"nominal_days={nominal_days!r}: expected a positive duration [d]")
    if not day_rate >= 0:
        raise OutOfRangeError(f"day_rate={day_rate!r}: expected a non-negative cost per day")
    t_all = _as_float_1d(arrival_days, "arrival_days")
    ok = _as_bool_1d(arrived, "arrived")
    n = _same_length(arrival_days=t_all, arrived=ok)
    t = t_all[ok]
    m = t.size
    if m == 0:
        raise EmptySampleError(f"none of the {n} samples arrived: no arrival time to book against")
    if not np.all(np.isfinite(t)):
        raise DecisionInputError("arrival_days: arrived samples must have finite durations")
    t_sorted = np.sort(t)

    rows = []
    for q in qs:
        b, lo, hi = _quantile_with_interval(t_sorted, q, confidence)
        rows.append(
            BookingRow(
                quantile=q,
                booking_days=b,
                booking_days_low=lo,
                booking_days_high=hi,
                contingency_days=b - nominal_days,
                contingency_days_low=_shift(lo, nominal_days),
                contingency_days_high=_shift(hi, nominal_days),
                contingency_cost=(b - nominal_days) * day_rate,
                contingency_cost_low=_shift(lo, nominal_days, day_rate),
                contingency_cost_high=_shift(hi, nominal_days, day_rate),
            )
        )
    booking = rows[qs.index(bq)]
    b = booking.booking_days
    idle, idle_lo, idle_hi = _mean_t_interval(np.maximum(b - t, 0.0), confidence)
    over, over_lo, over_hi = _mean_t_interval(np.maximum(t - b, 0.0), confidence)
    pa_lo, pa_hi = _wilson(m, n, confidence)

    pct = f"{confidence * 100:g} %"
    dd = 2 if abs(b) < 10 else 1  # short missions: hundredths of a day (~15 min) matter
    ci_b = (f"{pct} CI {_fmt_num(booking.booking_days_low, dd)}–"
            f"{_fmt_num(booking.booking_days_high, dd)} d")
    verb = "contingency over" if booking.contingency_days >= 0 else "less than"
    cost_word = "costing" if booking.contingency_days >= 0 else "saving"
    sentence = (
        f"Book {_fmt_num(b, dd)} days of ship time ({bq * 100:g} % quantile of arrival time, {ci_b}): "
        f"{_fmt_num(abs(booking.contingency_days), dd)} days {verb} the {_fmt_num(nominal_days, dd)}-day plan, "
        f"{cost_word} {_fmt_money(abs(booking.contingency_cost))} {currency} at "
        f"{_fmt_money(day_rate)} {currency}/day. Expected idle ship time {_fmt_num(idle, 2)} d "
        f"({pct} CI {_fmt_num(idle_lo, 2)}–{_fmt_num(idle_hi, 2)} d), expected overrun "
        f"{_fmt_num(over, 2)} d ({pct} CI {_fmt_num(over_lo, 2)}–{_fmt_num(over_hi, 2)} d)."
    )
    if m < n:
        sentence += (
            f" {n - m:,} of {n:,} samples did not arrive (P(arrival) {_fmt_prob(m / n)}, "
            f"{pct} CI {_fmt_prob_interval(float(pa_lo), float(pa_hi))}); arrival times are over "
            f"the {m:,} that did."
        )
    else:
        sentence += f" All {n:,} samples arrived."
    return ShipTimeContingency(
        nominal_days=float(nominal_days),
        day_rate=float(day_rate),
        currency=currency,
        booking_quantile=bq,
        booking=booking,
        table=tuple(rows),
        expected_idle_days=idle,
        expected_idle_days_low=idle_lo,
        expected_idle_days_high=idle_hi,
        expected_overrun_days=over,
        expected_overrun_days_low=over_lo,
        expected_overrun_days_high=over_hi,
        probability_of_arrival=m / n,
        probability_of_arrival_low=float(pa_lo),
        probability_of_arrival_high=float(pa_hi),
        samples=n,
        arrived=m,
        not_arrived=n - m,
        confidence=confidence,
        sentence=sentence,
    )
