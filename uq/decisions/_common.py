"""Shared private helpers of :mod:`uq.decisions`.

Binomial (Wilson) intervals, distribution-free quantile intervals from binomial order
statistics, Student-t intervals for means, rank-based normal scores, validation errors,
JSON conversion of result dataclasses and the number formatting used in sentences.
"""

from __future__ import annotations

from uq.errors import InputError

import dataclasses
import math
from typing import Any

import numpy as np

from uq import estimators as _estimators
from scipy import stats

__all__ = [
    "DecisionInputError",
    "ShapeMismatchError",
    "OutOfRangeError",
    "UnknownCodeError",
    "EmptySampleError",
    "format_money",
    "format_money_interval",
]


# --------------------------------------------------------------------------- errors
class DecisionInputError(InputError):
    """Base class: an input to a decision function is not what it must be."""


class ShapeMismatchError(DecisionInputError):
    """Arrays that must share a shape (or a sample axis) do not."""


class OutOfRangeError(DecisionInputError):
    """A number lies outside its admissible range (probability, confidence, cost ...)."""


class UnknownCodeError(DecisionInputError):
    """An integer code (failure mode, leg index) has no name, or a name is unknown."""


class EmptySampleError(DecisionInputError):
    """There are no samples to estimate from (e.g. no sample arrived)."""


# --------------------------------------------------------------------------- validation
def _check_confidence(confidence: float) -> float:
    """The estimators' confidence check (:func:`uq.estimators.check_confidence`), raising
    this layer's :class:`OutOfRangeError`."""
    return _estimators.check_confidence(confidence, error=OutOfRangeError)


def _check_probability_open(value: float, name: str) -> float:
    v = float(value)
    if not 0.0 < v < 1.0:
        raise OutOfRangeError(f"{name}={value!r}: expected a probability strictly between 0 and 1")
    return v


def _as_bool_1d(x: Any, name: str) -> np.ndarray:
    a = np.asarray(x)
    if a.ndim != 1:
        raise ShapeMismatchError(f"{name} has shape {a.shape}: expected a 1-D array of samples")
    if a.dtype != bool:
        if not np.all(np.isin(a, (0, 1))):
            raise DecisionInputError(f"{name}: expected booleans (or 0/1), got other values")
        a = a.astype(bool)
    return a


def _as_float_1d(x: Any, name: str) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    if a.ndim != 1:
        raise ShapeMismatchError(f"{name} has shape {a.shape}: expected a 1-D array of samples")
    return a


def _same_length(**arrays: np.ndarray) -> int:
    lengths = {k: len(v) for k, v in arrays.items()}
    if len(set(lengths.values())) != 1:
        raise ShapeMismatchError(f"sample arrays differ in length: {lengths}")
    return next(iter(lengths.values()))


# --------------------------------------------------------------------------- intervals
def _z(confidence: float) -> float:
    """Two-sided standard-normal critical value for ``confidence``."""
    return float(stats.norm.ppf(0.5 + 0.5 * confidence))


def _wilson(k: Any, n: Any, confidence: float) -> tuple[np.ndarray, np.ndarray]:
    """Wilson score interval (Wilson 1927, JASA 22:209) via :func:`uq.estimators.wilson_bounds`.

    ``k`` may be non-integer (``p_hat * n``) for planning; where ``n == 0`` the interval is
    the whole of [0, 1].
    """
    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    safe_n = np.where(n > 0, n, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        low, high = _estimators.wilson_bounds(np.where(n > 0, k, 0.0), safe_n,
                                              confidence=confidence)
    return np.where(n > 0, low, 0.0), np.where(n > 0, high, 1.0)


def _quantile_with_interval(
    x_sorted: np.ndarray, q: float, confidence: float
) -> tuple[float, float | None, float | None]:
    """Sample quantile and its distribution-free order-statistic interval
    (:func:`uq.estimators.quantile_interval`); bounds are ``None`` when the sample is too
    small to give them at this confidence.
    """
    try:
        est = _estimators.quantile_interval(x_sorted, q, confidence=confidence)
    except _estimators.InsufficientSamplesError:
        return float(np.quantile(x_sorted, q)), None, None
    return est.estimate, est.lower, est.upper


def _mean_t_interval(x: np.ndarray, confidence: float) -> tuple[float, float | None, float | None]:
    """Sample mean with a Student-t interval; bounds ``None`` for fewer than 2 values."""
    if x.size < 2:
        return float(np.mean(x)), None, None
    est = _estimators.mean_interval(x, confidence=confidence)
    return est.estimate, est.lower, est.upper


def _normal_scores(x: np.ndarray) -> np.ndarray:
    """Rank-based normal scores Phi^-1((rank - 1/2) / n) along axis 0 (ties averaged)."""
    n = x.shape[0]
    ranks = stats.rankdata(x, method="average", axis=0)
    return stats.norm.ppf((ranks - 0.5) / n)


# --------------------------------------------------------------------------- conversion
def _plain(value: Any) -> Any:
    """Convert a result (dataclass, tuples, numpy scalars) to JSON-ready builtins.

    Non-finite floats become ``None`` (JSON has no NaN/inf).
    """
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return [_plain(v) for v in value.tolist()]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return v if math.isfinite(v) else None
    return value


class _ResultMixin:
    """``to_dict`` for frozen result dataclasses; ``to_frame`` for tabular ones."""

    def to_dict(self) -> dict[str, Any]:
        """Return the result as JSON-ready builtins (floats, ints, str, lists, dicts)."""
        return _plain(self)


def _rows_frame(rows: tuple[Any, ...]):
    import pandas as pd  # local import keeps `import uq.decisions` light

    return pd.DataFrame([_plain(r) for r in rows])


# --------------------------------------------------------------------------- formatting
def percent_number(p: float, digits: int) -> str:
    """``100 p`` with ``digits`` decimals (no unit); a probability short of 1 never prints as
    100 ("> 99.999"), one above 0 never as 0 ("< 0.001"); exact 0 and 1 print as 0 and 100.
    The one rounding rule of every percentage on the page and in sentences."""
    if p <= 0.0:
        return "0"
    if p >= 1.0:
        return "100"
    text = f"{100.0 * p:.{digits}f}"
    step = 10.0 ** -digits
    if float(text) >= 100.0:
        return f"> {100.0 - step:.{digits}f}"
    if float(text) <= 0.0:
        return f"< {step:.{digits}f}"
    return text


def _fmt_prob(p: float | None) -> str:
    """Probability as a percentage with enough digits near 0 and 1, e.g. '96.2 %'."""
    if p is None:
        return "n/a"
    tail = min(p, 1.0 - p)
    digits = 1 if tail >= 0.01 else (2 if tail >= 0.001 else 3)
    return f"{percent_number(p, digits)} %"


def _fmt_prob_interval(low: float | None, high: float | None) -> str:
    return f"{_fmt_prob(low).replace(' %', '')}–{_fmt_prob(high)}"


def _fmt_num(x: float | None, digits: int = 1) -> str:
    if x is None:
        return "n/a"
    return f"{x:,.{digits}f}"


def _fmt_money(x: float | None) -> str:
    """Amount with thousands separators; 3 significant digits below 100."""
    if x is None:
        return "n/a"
    if abs(x) >= 100 or x == 0:
        return f"{x:,.0f}"
    return f"{x:.3g}"


def _is_currency_code(unit: str) -> bool:
    return len(unit) == 3 and unit.isalpha() and unit.isupper()


def format_money(x: float | None, currency: str = "") -> str:
    """An amount as shown to a user, with its unit.

    In a real currency (an ISO 4217 code such as ``"EUR"``) amounts are shown to the whole
    unit with thousands separators; a non-zero amount that would round to 0 prints as
    ``"< 1 EUR"`` (``"> -1 EUR"`` below zero), never as a run of rounding noise. In abstract
    net-benefit units three significant figures are kept below 100.

    Parameters
    ----------
    x : float or None
        Amount [currency]; None prints "n/a".
    currency : str
        ISO 4217 code or a unit name; "" for a bare number.
    """
    unit = f" {currency}" if currency else ""
    if x is None or not math.isfinite(x):
        return "n/a"
    if _is_currency_code(currency):
        if x != 0 and abs(x) < 0.5:
            return f"< 1{unit}" if x > 0 else f"> -1{unit}"
        text = f"{x:,.0f}"
        return ("0" if text in ("-0", "0") else text) + unit
    return _fmt_money(x) + unit


def format_money_interval(low: float | None, high: float | None, currency: str = "") -> str:
    """An interval of amounts as ``"a to b EUR"`` (no double minus, one unit at the end)."""
    def bare(x):
        text = format_money(x, currency)
        return text[: -len(currency) - 1] if currency and text.endswith(f" {currency}") else text

    unit = f" {currency}" if currency else ""
    return f"{bare(low)} to {bare(high)}{unit}"
