"""The generic half of the scenario reader: tables, keys in file order, numbers and
distributions checked against their range and the plausibility envelope, names, choices.

:class:`FieldReader` holds the state of one pass over a document (the file label, the
uncertain inputs found so far in file order, the fixed fields, the vehicle kind, the cautions)
and raises :class:`~uq.scenario.errors.ScenarioError` on the first problem. The section readers
(:mod:`uq.scenario.read_vehicle`, :mod:`uq.scenario.read_route`,
:mod:`uq.scenario.read_decision`) build on it.
"""
from __future__ import annotations

import difflib
import math
import warnings
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np

from uq.scenario import envelope as _envelope
from uq.scenario.distributions import Marginal, parse_distribution, unit_from_key
from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.field_table import section
from uq.scenario.fields import INF, Range, fmt_bound, is_number, join_key

__all__ = ["FieldReader"]

#: A field reader: (reader, value, key path) -> parsed value.
_FieldFn = Callable[["FieldReader", Any, str], Any]


class FieldReader:
    """One pass over a parsed TOML document; raises the first problem found."""

    def __init__(self, file: str):
        self.file = file
        self.inputs: list[Marginal] = []
        self.fixed: set[str] = set()
        self.kind: str | None = None  # the vehicle kind, once read (selects the envelope)
        self.cautions: list[str] = []

    def fail(self, key: str | None, value: Any, expected: str, suggestion: str | None = None):
        raise ScenarioError(self.file, key, value, expected, suggestion)

    # ------------------------------------------------------------------ generic pieces
    def table(self, value: Any, path: str, *, how: str | None = None) -> Mapping[str, Any]:
        if not isinstance(value, Mapping):
            self.fail(path, value, how or f"a table [{path}]")
        return value

    def read_fields(self, table: Mapping[str, Any], path: str, fields: Mapping[str, _FieldFn],
                    required: tuple[str, ...] = (), *, other_kind: Mapping[str, str] | None = None,
                    skip: tuple[str, ...] = ()) -> dict[str, Any]:
        """Parse the keys of ``table`` in file order; unknown keys and missing required fail."""
        out: dict[str, Any] = {}
        for key, value in table.items():
            if key in skip:
                continue
            if key not in fields:
                self.unknown(key, value, path, list(fields) + list(skip), other_kind=other_kind)
            out[key] = fields[key](self, value, join_key(path, key))
        for key in required:
            if key not in out:
                self.fail(join_key(path, key), MISSING, f"a value for required key '{key}' in [{path}]")
        return out

    def read_section(self, table: Mapping[str, Any], name: str) -> dict[str, Any]:
        """:meth:`read_fields` with the keys of section ``name`` from the field table
        (:mod:`uq.scenario.field_table`); the section name is also the key path."""
        keys = section(name, self.kind)
        return self.read_fields(table, name, keys.fields, keys.required, other_kind=keys.other_kind or None)

    def plain_section(self, value: Any, name: str, cls):
        """Section ``name`` read as a table of its field-table keys into ``cls`` (a section
        with no rule beyond its keys' own)."""
        return cls(**self.read_section(self.table(value, name), name))

    def unknown(self, key: str, value: Any, path: str, known: list[str], *,
                other_kind: Mapping[str, str] | None = None):
        close = difflib.get_close_matches(str(key), known, n=1, cutoff=0.6)
        where = f"[{path}]" if path else "the top level"
        if other_kind and key in other_kind:
            expected = f"a key of {where} ({key!r} belongs to {other_kind[key]})"
            close = []
        else:
            expected = f"a known key of {where} (one of: {', '.join(known)})"
        self.fail(join_key(path, key), value, expected, close[0] if close else None)

    # ------------------------------------------------------------------ scalar fields
    def number(self, value: Any, path: str, rng: Range, *, uncertain: bool = True) -> Any:
        if isinstance(value, Mapping):
            if not uncertain:
                self.fail(path, value, "a plain number (distributions are not allowed here)")
            return self.distribution(value, path, rng)
        self.check_plain_number(value, path, rng, uncertain=uncertain)
        x = float(value)
        if rng.allow_inf and x == INF:
            self.fixed.add(path)
            return x
        if not math.isfinite(x):
            self.fail(path, value, f"a finite number ({rng.what} in {rng.interval()})")
        if not rng.holds(x):
            self.fail(path, value, f"{rng.what} in {rng.interval()}")
        self.check_envelope(path, value, x, x, x, x)
        self.fixed.add(path)
        return x

    def check_plain_number(self, value: Any, path: str, rng: Range, *, uncertain: bool) -> None:
        alt = " or a distribution table {dist = ...}" if uncertain else ""
        if isinstance(value, (bool, np.bool_)):
            self.fail(path, value, f"a number{alt} (true/false is not a number)")
        if isinstance(value, str):
            self.fail(path, value, f"a number{alt}, not a string ({rng.what} in {rng.interval()})")
        if not is_number(value):
            self.fail(path, value, f"a number{alt} ({rng.what} in {rng.interval()})")
        try:
            x = float(value)
        except OverflowError:  # an integer beyond the float range (TOML integers are unbounded)
            self.fail(path, value, f"a finite number ({rng.what} in {rng.interval()})")
        if math.isnan(x):
            self.fail(path, value, f"a number, not nan ({rng.what} in {rng.interval()})")

    def distribution(self, value: Mapping[str, Any], path: str, rng: Range) -> Marginal:
        try:
            # a parameter that overflows the float range is this key's problem, not a crash
            with warnings.catch_warnings(), np.errstate(all="raise"):
                warnings.simplefilter("error", RuntimeWarning)
                marginal = parse_distribution(value, name=path, unit=unit_from_key(path),
                                              file=self.file)
                lo, hi = marginal.support
                reach = self.reach(marginal)
        except (OverflowError, FloatingPointError, ZeroDivisionError, RuntimeWarning) as exc:
            self.fail(path, dict(value), "a distribution whose parameters and quantiles are "
                      f"finite numbers ({rng.what}; {type(exc).__name__}: {exc})")
        if not rng.holds_support(lo, hi):
            fix = (f"narrow it to lie within {rng.interval()}" if math.isfinite(lo) and math.isfinite(hi)
                   else f"use {rng.suggestion()}")
            self.fail(path, dict(value),
                      f"{rng.what} in {rng.interval()}, but {marginal.describe()} has support "
                      f"[{fmt_bound(lo)}, {fmt_bound(hi)}] which leaves it; {fix}")
        self.check_envelope(path, dict(value), *reach, shown=marginal.describe())
        self.inputs.append(marginal)
        return marginal

    @staticmethod
    def reach(m: Marginal) -> tuple[float, float, float, float]:
        """(low, high) reach — the support, or the 1e-6 / 1-1e-6 quantiles where it is
        unbounded — and the 1 % / 99 % quantiles of a distribution."""
        lo, hi = m.support
        tail = _envelope.TAIL_PROBABILITY
        if not math.isfinite(lo):
            lo = m.quantile(tail)
        if not math.isfinite(hi):
            hi = m.quantile(1.0 - tail)
        q_lo, q_hi = (m.quantile(q) for q in _envelope.PLAUSIBLE_QUANTILES)
        return float(lo), float(hi), float(q_lo), float(q_hi)

    def check_envelope(self, path: str, value: Any, lo: float, hi: float, q_lo: float,
                       q_hi: float, *, shown: str | None = None) -> None:
        """Refuse a value the envelope calls impossible; note one it calls implausible.

        ``lo``/``hi`` is the value's reach (a fixed value: the value itself), ``q_lo``/``q_hi``
        the range checked against the plausible bounds.
        """
        row = _envelope.limit_for(self.kind or "", path)
        if row is None:
            return
        plo, phi = row.possible
        if math.isinf(lo) and math.isinf(hi) and lo == hi and hi > 0 and math.isinf(phi):
            return  # a fixed "never"/"no limit"
        if lo < plo or hi > phi:
            unit = "" if row.unit == "-" else f" {row.unit}"
            what = (f"a value in [{fmt_bound(plo)}, {fmt_bound(phi)}]{unit} for a {self.kind} "
                    f"({row.why})")
            if shown is not None:
                beyond = lo if lo < plo else hi
                what += (f", but {shown} reaches {beyond:.6g}{unit} with probability "
                         f"{_envelope.TAIL_PROBABILITY:g}; narrow or bound the distribution")
            self.fail(path, value, what)
        alo, ahi = row.plausible
        if q_lo < alo or q_hi > ahi:
            unit = "" if row.unit == "-" else f" {row.unit}"
            text = (f"{shown}, whose 1-99 % range is {q_lo:.4g} to {q_hi:.4g}{unit}"
                    if shown is not None else f"{q_lo:.6g}{unit}")
            self.cautions.append(
                f"{self.file}: {path} = {text}: implausible for a {self.kind} (usual range "
                f"{fmt_bound(alo)} to {fmt_bound(ahi)}{unit}: {row.why}); check the value")

    def integer(self, value: Any, path: str, *, minimum: int, what: str) -> int:
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
            self.fail(path, value, f"an integer ({what})")
        if value < minimum:
            self.fail(path, value, f"an integer >= {minimum} ({what})")
        return int(value)

    def text(self, value: Any, path: str, *, what: str, nonempty: bool = True) -> str:
        if not isinstance(value, str):
            self.fail(path, value, f"a string ({what})")
        if nonempty and not value.strip():
            self.fail(path, value, f"a non-empty string ({what})")
        return value

    def choice(self, value: Any, path: str, options: tuple[str, ...], *, what: str) -> str:
        if not isinstance(value, str) or value not in options:
            close = (difflib.get_close_matches(value, list(options), n=1, cutoff=0.6)
                     if isinstance(value, str) else [])
            self.fail(path, value, f"{what}: one of " + ", ".join(repr(o) for o in options),
                      close[0] if close else None)
        return value

    def name_list(self, value: Any, path: str, *, length: int | None = None) -> tuple[str, ...]:
        need = f"a list of exactly {length} input names" if length else "a non-empty list of input names"
        if not isinstance(value, (list, tuple)) or not value:
            self.fail(path, value, f"{need} (dotted paths such as 'battery.cold_derating')")
        if length is not None and len(value) != length:
            self.fail(path, value, need)
        for item in value:
            if not isinstance(item, str):
                self.fail(path, value, f"{need}; {item!r} is not a string")
        if len(set(value)) != len(value):
            self.fail(path, value, f"{need} without repeats")
        return tuple(value)

    def check_name(self, name: str, path: str) -> None:
        """``name`` must be an uncertain input of this scenario."""
        known = [m.name for m in self.inputs]
        if name in known:
            return
        if name in self.fixed:
            self.fail(path, name, f"the name of an uncertain input ({name!r} is a fixed number in this scenario)")
        close = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
        self.fail(path, name, "the name of an uncertain input of this scenario", close[0] if close else None)

    def below(self, a: Any, a_path: str, b: Any, b_path: str, *, blame: str, relation: str,
              strict: bool = True) -> None:
        """Require a < b for every possible value (support-wise for distributions).

        ``blame`` is the path reported ("a" or "b" side); ``relation`` words the expectation.
        """
        a_hi = a.support[1] if isinstance(a, Marginal) else float(a)
        b_lo = b.support[0] if isinstance(b, Marginal) else float(b)
        both_fixed = not isinstance(a, Marginal) and not isinstance(b, Marginal)
        if a_hi > b_lo or (a_hi == b_lo and both_fixed and strict):
            if blame == "a":
                key, value, other, bound = a_path, a, b, f"as small as {fmt_bound(b_lo)}"
            else:
                key, value, other, bound = b_path, b, a, f"as large as {fmt_bound(a_hi)}"
            shown = value.describe() if isinstance(value, Marginal) else value
            if isinstance(other, Marginal):
                relation += f" (which is {other.describe()}, {bound})"
            else:
                relation += f" = {fmt_bound(float(other))}"
            self.fail(key, shown, relation)
