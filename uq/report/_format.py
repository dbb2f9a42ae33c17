"""Number formatting for the report and JSON-safe conversion for summary.json.

No NaN or infinity ever reaches a reader: the HTML shows an em dash (with a note saying what
it means) and the JSON shows ``null``.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

__all__ = ["DASH", "DISPLAY_UNITS", "MINUS", "finite_or_none", "json_safe", "Formatter", "input_label"]

DASH = "\u2014"


def finite_or_none(x: Any) -> float | None:
    """``float(x)`` if it is a finite number, else None."""
    if x is None or isinstance(x, bool):
        return None
    try:
        value = float(x)
    except (TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def json_safe(obj: Any) -> Any:
    """Builtins only, with every non-finite float replaced by None (recursively)."""
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return finite_or_none(obj)
    if isinstance(obj, Mapping):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, np.ndarray):
        return [json_safe(v) for v in obj.tolist()]
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [json_safe(v) for v in obj]
    return str(obj)


#: the minus sign of typeset numbers (U+2212), so that "−3 to −1" never reads as a dash
MINUS = "\u2212"


class Formatter:
    """Formats numbers for the page; remembers whether it had to print a dash."""

    def __init__(self) -> None:
        self.dashes = 0

    def _dash(self) -> str:
        self.dashes += 1
        return DASH

    def num(self, x: Any, digits: int = 2, unit: str = "") -> str:
        """Fixed-point number with thousands separators, then its unit."""
        v = finite_or_none(x)
        if v is None:
            return self._dash()
        text = f"{v:,.{digits}f}"
        if text.startswith("-") and float(text.replace(",", "")) == 0.0:
            text = text[1:]
        return f"{text} {unit}".rstrip() if unit else text

    def sig(self, x: Any, figures: int = 3, unit: str = "") -> str:
        """Number with ``figures`` significant figures (for small indices and ratios)."""
        v = finite_or_none(x)
        if v is None:
            return self._dash()
        text = f"{v:.{figures}g}"
        return f"{text} {unit}".rstrip() if unit else text

    @staticmethod
    def _pct_digits(*values: float) -> int:
        """1 decimal, 2 or 3 near 0 and 1 (exact 0 and 1 do not count)."""
        tails = [min(v, 1.0 - v) for v in values if 0.0 < v < 1.0]
        tail = min(tails) if tails else 1.0
        return 1 if tail >= 0.01 else (2 if tail >= 0.001 else 3)

    @staticmethod
    def _pct_text(v: float, digits: int) -> str:
        """Percent with ``digits`` decimals by the one rounding rule
        (:func:`uq.decisions._common.percent_number`: never "100.000" short of 1)."""
        from uq.decisions._common import percent_number

        return percent_number(v, digits)

    def pct(self, p: Any, digits: int | None = None) -> str:
        """Probability as a percentage; more digits near 0 and 1 ("100 %" when exact)."""
        v = finite_or_none(p)
        if v is None:
            return self._dash()
        if digits is None:
            digits = self._pct_digits(v)
        return f"{self._pct_text(v, digits)} %"

    def interval(self, low: Any, high: Any, digits: int = 2, unit: str = "") -> str:
        """``low–high unit``; ``−a to −b unit`` when an end is negative (never a double
        minus); a dash for a missing end."""
        lo, hi = self.num(low, digits), self.num(high, digits)
        if lo.startswith("-") or hi.startswith("-"):
            text = f"{lo.replace('-', MINUS)} to {hi.replace('-', MINUS)}"
        else:
            text = f"{lo}\u2013{hi}"
        return f"{text} {unit}".rstrip() if unit else text

    @staticmethod
    def label(name: str) -> str:
        """An input's readable label (:func:`input_label`)."""
        return input_label(name)

    @staticmethod
    def ranked(indices) -> list[int]:
        """Positions of a Sobol result's factors, largest total index first (NaN last)."""
        import math

        total = [float(t) for t in indices.total]
        return sorted(range(len(total)),
                      key=lambda i: (-total[i] if math.isfinite(total[i]) else math.inf, i))

    def points(self, x: Any) -> str:
        """A difference of probabilities in signed percentage points, e.g. ``+3.2`` or
        ``\u22120.41``."""
        from uq.decisions import format_points

        v = finite_or_none(x)
        return self._dash() if v is None else format_points(v)

    def money(self, x: Any, currency: str = "") -> str:
        """An amount by the decisions' display rule ("< 1 EUR" for tiny amounts)."""
        from uq.decisions import format_money

        v = finite_or_none(x)
        return self._dash() if v is None else format_money(v, currency)

    def money_interval(self, low: Any, high: Any, currency: str = "") -> str:
        """``a to b EUR`` (no double minus)."""
        from uq.decisions import format_money_interval

        lo, hi = finite_or_none(low), finite_or_none(high)
        if lo is None or hi is None:
            return self._dash()
        return format_money_interval(lo, hi, currency)

    def pct_interval(self, low: Any, high: Any) -> str:
        """``low–high %`` with a common number of decimals."""
        lo, hi = finite_or_none(low), finite_or_none(high)
        if lo is None or hi is None:
            return self._dash()
        digits = self._pct_digits(lo, hi)
        return f"{self._pct_text(lo, digits)}\u2013{self._pct_text(hi, digits)} %"


#: how a page typesets the plain-text units of the scenario's key suffixes
#: (:func:`uq.scenario.distributions.split_unit` is the one suffix rule)
DISPLAY_UNITS = {"degC": "\u00b0C", "deg": "\u00b0", "m^2": "m\u00b2", "day": "d",
                 "1/day": "/d", "1/month": "/month"}

#: plain words for field names whose words alone are not clear
_QUANTITY_WORDS = {"current_along": "current along track", "current_across": "current across track",
                   "hotel_load": "hotel load", "practical_salinity": "practical salinity"}


def input_label(name: str, *, wrap: bool = False) -> str:
    """A readable label for an input's dotted name: leg, quantity, unit.

    ``legs.front_and_recovery.current_along_m_s`` -> ``front and recovery: current along
    track [m/s]``; ``vehicle.hull.appendage_factor`` -> ``hull appendage factor [-]``. A
    correlated group (names joined by ``+``) becomes ``correlated group: a + b``, one member
    a line when ``wrap``.
    """
    parts = [p.strip() for p in str(name).split("+") if p.strip()]
    if len(parts) > 1:
        sep = "\n  + " if wrap else " + "
        return "correlated group:" + ("\n  " if wrap else " ") + sep.join(
            input_label(p) for p in parts)
    from uq.scenario.distributions import split_unit

    path = str(name).split(".")
    field, unit = split_unit(path[-1])
    unit = DISPLAY_UNITS.get(unit, unit) or "-"
    quantity = _QUANTITY_WORDS.get(field, field.replace("_", " "))
    if path[0] == "legs" and len(path) >= 3:
        return f"{path[1].replace('_', ' ')}: {quantity} [{unit}]"
    owner = [p.replace("_", " ") for p in path[1:-1]] if path[0] == "vehicle" and len(path) > 2 \
        else [p.replace("_", " ") for p in path[:-1]]
    return " ".join([*owner, quantity]).strip() + f" [{unit}]"
