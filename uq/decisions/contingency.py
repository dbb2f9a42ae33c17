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

__all__ = ["ArrivalRow", "BookingRow", "RecoveryWindowBooking", "ShipTimeContingency",
           "recovery_window_booking", "ship_time_contingency"]


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
    contingency_cost_money: float
    contingency_cost_money_low: float | None
    contingency_cost_money_high: float | None


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


def _arrival_times(arrival_days, arrived, day_rate: float) -> tuple[np.ndarray, int]:
    """Arrival times of the samples that arrived (finite, sample order) and the number of
    samples; refuses a negative day rate or a sample where none arrived."""
    if not day_rate >= 0:
        raise OutOfRangeError(f"day_rate={day_rate!r}: expected a non-negative cost per day")
    t_all = _as_float_1d(arrival_days, "arrival_days")
    ok = _as_bool_1d(arrived, "arrived")
    n = _same_length(arrival_days=t_all, arrived=ok)
    t = t_all[ok]
    if t.size == 0:
        raise EmptySampleError(f"none of the {n} samples arrived: no arrival time to book against")
    if not np.all(np.isfinite(t)):
        raise DecisionInputError("arrival_days: arrived samples must have finite durations")
    return t, n


def _booking_row(t_sorted: np.ndarray, q: float, nominal_days: float, day_rate: float,
                 confidence: float) -> BookingRow:
    """Ship time at arrival quantile q, the contingency over plan and its cost."""
    b, lo, hi = _quantile_with_interval(t_sorted, q, confidence)
    return BookingRow(
        quantile=q,
        booking_days=b,
        booking_days_low=lo,
        booking_days_high=hi,
        contingency_days=b - nominal_days,
        contingency_days_low=_shift(lo, nominal_days),
        contingency_days_high=_shift(hi, nominal_days),
        contingency_cost_money=(b - nominal_days) * day_rate,
        contingency_cost_money_low=_shift(lo, nominal_days, day_rate),
        contingency_cost_money_high=_shift(hi, nominal_days, day_rate),
    )


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
    t, n = _arrival_times(arrival_days, arrived, day_rate)
    m = t.size
    t_sorted = np.sort(t)
    rows = [_booking_row(t_sorted, q, nominal_days, day_rate, confidence) for q in qs]
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
        f"{cost_word} {_fmt_money(abs(booking.contingency_cost_money))} {currency} at "
        f"{_fmt_money(day_rate)} {currency}/day. Expected idle ship time {_fmt_num(idle, 2)} d "
        f"({pct} CI {_fmt_num(idle_lo, 2)}–{_fmt_num(idle_hi, 2)} d), expected overrun "
        f"{_fmt_num(over, 2)} d ({pct} CI {_fmt_num(over_lo, 2)}–{_fmt_num(over_hi, 2)} d)."
    )
    if m < n:
        sentence += (
            f" {n - m:,} of {n:,} samples did not reach the recovery point; arrival times are "
            f"over the {m:,} that reached it."
        )
    else:
        sentence += f" All {n:,} samples reached the recovery point."
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


@dataclass(frozen=True)
class ArrivalRow:
    """One arrival-time quantile: days after deployment [d] and the calendar date, with the
    distribution-free interval (``None`` bounds when the sample is too small)."""

    quantile: float
    days: float
    days_low: float | None
    days_high: float | None
    date: str
    date_low: str | None
    date_high: str | None


@dataclass(frozen=True)
class RecoveryWindowBooking(_ResultMixin):
    """Ship booked for the recovery window only (the vehicle transits on its own).

    Attributes
    ----------
    deployment_date : str
        ISO date of the deployment.
    window_quantiles : tuple of float
        Arrival quantiles bounding the window [-].
    arrivals : tuple of ArrivalRow
        Arrival at the window's bounds and the median.
    window_days, window_days_low, window_days_high : float
        Length of the window between the two arrival quantiles [d]; the interval is the
        widest and narrowest window the two quantile intervals allow (conservative).
    ship_transit_days : float
        The ship's own passage out and back [d].
    booking_days, booking_days_low, booking_days_high : float
        Ship time booked = window + passage [d].
    booking_cost, booking_cost_low, booking_cost_high : float
        booking x day rate [currency].
    on_station_days : float
        What keeping the ship with the vehicle to the window's late end would book [d]
        (for comparison).
    day_rate : float
    currency : str
    probability_of_arrival, probability_of_arrival_low, probability_of_arrival_high : float
    samples, arrived : int
    confidence : float
    sentence : str
    """

    deployment_date: str
    window_quantiles: tuple[float, float]
    arrivals: tuple[ArrivalRow, ...]
    window_days: float
    window_days_low: float | None
    window_days_high: float | None
    ship_transit_days: float
    booking_days: float
    booking_days_low: float | None
    booking_days_high: float | None
    booking_cost: float
    booking_cost_low: float | None
    booking_cost_high: float | None
    on_station_days: float
    day_rate: float
    currency: str
    probability_of_arrival: float
    probability_of_arrival_low: float
    probability_of_arrival_high: float
    samples: int
    arrived: int
    confidence: float
    sentence: str

    def to_frame(self):
        """Arrival quantiles with their dates (pandas DataFrame)."""
        return _rows_frame(self.arrivals)


def _date_after(start, days: float | None) -> str | None:
    import datetime

    if days is None:
        return None
    return (start + datetime.timedelta(days=float(days))).isoformat()


def recovery_window_booking(
    arrival_days,
    *,
    arrived,
    deployment_date,
    window_quantiles: tuple[float, float],
    ship_transit_days: float,
    day_rate: float,
    currency: str,
    confidence: float,
) -> RecoveryWindowBooking:
    """Ship time for a recovery window between two arrival quantiles, plus the ship's passage.

    Parameters
    ----------
    arrival_days : array_like, shape (n,)
        Transit duration per sample [d]; values of samples that did not arrive are ignored.
    arrived : array_like of bool, shape (n,)
        Whether the sample reaches the recovery point.
    deployment_date : datetime.date
        Day the vehicle is deployed.
    window_quantiles : (float, float)
        Early and late arrival quantiles bounding the window, e.g. (0.05, 0.95) [-].
    ship_transit_days : float
        The ship's own passage to the recovery point and back [d], >= 0.
    day_rate : float
        Ship cost [currency/d], >= 0.
    currency : str
    confidence : float
        Two-sided confidence level of the quantile intervals [-].

    Returns
    -------
    RecoveryWindowBooking

    Notes
    -----
    Booking = T(q_late) - T(q_early) + passage, never the whole transit: the ship sails to
    be on station at the early quantile and stays to the late one. The window's interval
    combines the two order-statistic intervals, [T_late_low - T_early_high,
    T_late_high - T_early_low] (floored at 0), which covers at least at level 1 - 2 alpha.
    """
    confidence = _check_confidence(confidence)
    q_lo = _check_probability_open(window_quantiles[0], "window_quantiles[0]")
    q_hi = _check_probability_open(window_quantiles[1], "window_quantiles[1]")
    if not q_lo < q_hi:
        raise OutOfRangeError(f"window_quantiles={window_quantiles!r}: expected early < late")
    if not ship_transit_days >= 0:
        raise OutOfRangeError(f"ship_transit_days={ship_transit_days!r}: expected >= 0 days")
    t, n = _arrival_times(arrival_days, arrived, day_rate)
    t = np.sort(t)
    m = t.size

    rows = []
    for q in (q_lo, 0.5, q_hi) if q_lo < 0.5 < q_hi else (q_lo, q_hi):
        d, lo, hi = _quantile_with_interval(t, q, confidence)
        rows.append(ArrivalRow(quantile=q, days=d, days_low=lo, days_high=hi,
                               date=_date_after(deployment_date, d),
                               date_low=_date_after(deployment_date, lo),
                               date_high=_date_after(deployment_date, hi)))
    early, late = rows[0], rows[-1]
    window = late.days - early.days
    w_lo = (None if late.days_low is None or early.days_high is None
            else max(late.days_low - early.days_high, 0.0))
    w_hi = (None if late.days_high is None or early.days_low is None
            else late.days_high - early.days_low)
    plus = (lambda x: None if x is None else x + ship_transit_days)
    cost = (lambda x: None if x is None else x * day_rate)
    booking, b_lo, b_hi = window + ship_transit_days, plus(w_lo), plus(w_hi)
    pa_lo, pa_hi = _wilson(m, n, confidence)
    pct = f"{confidence * 100:g} %"
    sentence = (
        f"Book {_fmt_num(booking, 1)} days of ship time ({pct} CI {_fmt_num(b_lo, 1)}–"
        f"{_fmt_num(b_hi, 1)} d): the arrival window {early.date} to {late.date} "
        f"({q_lo * 100:g}–{q_hi * 100:g} % arrival quantiles, {_fmt_num(window, 1)} d) plus "
        f"{_fmt_num(ship_transit_days, 1)} d of passage, costing {_fmt_money(booking * day_rate)} "
        f"{currency} at {_fmt_money(day_rate)} {currency}/day. Median arrival {rows[1].date if len(rows) == 3 else 'n/a'}. "
        f"Keeping the ship with the vehicle to the window's end would book {_fmt_num(late.days, 1)} d."
    )
    if m < n:
        sentence += f" {n - m:,} of {n:,} samples did not reach the recovery point."
    return RecoveryWindowBooking(
        deployment_date=deployment_date.isoformat(),
        window_quantiles=(q_lo, q_hi),
        arrivals=tuple(rows),
        window_days=window, window_days_low=w_lo, window_days_high=w_hi,
        ship_transit_days=float(ship_transit_days),
        booking_days=booking, booking_days_low=b_lo, booking_days_high=b_hi,
        booking_cost=booking * day_rate, booking_cost_low=cost(b_lo), booking_cost_high=cost(b_hi),
        on_station_days=late.days,
        day_rate=float(day_rate), currency=currency,
        probability_of_arrival=m / n, probability_of_arrival_low=float(pa_lo),
        probability_of_arrival_high=float(pa_hi),
        samples=n, arrived=m, confidence=confidence, sentence=sentence,
    )
