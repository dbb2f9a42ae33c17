"""Typed, immutable scenario: what a planner wrote in the scenario file, validated once.

A scenario keeps the file's own units (km, days, Wh, degrees) in field names that say them;
conversion to SI happens in :mod:`uq.simulate`, at the boundary to :mod:`physics`.

Any numeric field holds either a ``float`` (a fixed value) or a marginal distribution
(:class:`uq.scenario.distributions.Marginal`) whose ``name`` is the dotted key path of the field, e.g.
``legs.shelf_crossing.current_along_m_s``. ``Scenario.inputs`` lists every uncertain field in
file order; that order is the column order of every sample array.

:func:`load_scenario` and :func:`parse_scenario` are the only way in: they read TOML (data,
never code), check every key, type and physical range, and raise :class:`ScenarioError` on the
first problem with a one-line message ``<file>: <key.path> = <value>: expected <what>``.
A distribution is checked by its support: a normal efficiency is rejected because it can
leave (0, 1]. Choices made here: ``appendage_factor`` >= 1 (appendages only add drag);
in-situ temperature in [-3, 40] degC; practical salinity in (0, 42]; ``samples`` must be a
power of two for the Sobol' scheme and ``sensitivity_base_n`` always; rank correlations must
form a positive-definite matrix both as given and as the normal-copula matrix 2 sin(pi r/6).
"""
from __future__ import annotations


import datetime
import difflib
import hashlib
import math
import os
import re
import stat
import tomllib
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from dataclasses import fields as _dataclass_fields
from typing import Any

import numpy as np

from uq.scenario import envelope as _envelope
from uq.scenario.distributions import Marginal, parse_distribution, unit_from_key
from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.types import (
    Analysis, Battery, CapacityCurve, Decision, DragCoefficient, EfficiencyCurve, Fouling,
    GliderPolar, GliderSetpoint, GliderVehicle, Hardware, HullGeometry, Leg, Limits,
    PropellerSetpoint, PropellerVehicle, RankCorrelation, Recovery, Scenario, Subsystem,
    TestCandidate, UnderIce, Value,
)

__all__ = ["load_scenario", "parse_scenario", "read_text_file", "parse_toml", "MAX_FILE_BYTES",
           "MAX_NESTING"]

#: Largest scenario or study file read [bytes]; real ones are a few kilobytes.
MAX_FILE_BYTES = 4 * 1024 * 1024
#: Deepest nesting of arrays and tables parsed (real files use 3 or 4 levels).
MAX_NESTING = 64
_BOM = "\ufeff"


def read_text_file(path: str | os.PathLike[str], *, what: str = "scenario file",
                   error: type[ScenarioError] = ScenarioError) -> tuple[str, bytes]:
    """Read a UTF-8 text file the safe way: a regular file of at most :data:`MAX_FILE_BYTES`.

    A FIFO, device, socket or folder is refused without reading it (a FIFO is opened
    non-blocking, so nothing hangs); a symbolic link is followed to what it names and judged
    by that. A UTF-8 byte-order mark is accepted and dropped.

    Returns
    -------
    (str, bytes)
        The text and the file's bytes (for the SHA-256 record).

    Raises
    ------
    ScenarioError (or ``error``)
        One line naming the file and what was expected.
    """
    label = os.fspath(path)

    def fail(expected: str, exc: BaseException | None = None):
        raise error(label, None, expected=expected) from exc

    try:
        fd = os.open(label, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        fail(f"a readable {what} ({exc.strerror or exc})", exc)
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            fail(f"a regular {what}, not {_file_kind(info.st_mode)}")
        if info.st_size > MAX_FILE_BYTES:
            fail(f"a {what} of at most {MAX_FILE_BYTES // 1024 // 1024} MiB "
                 f"(this one has {info.st_size:,} bytes)")
        with os.fdopen(os.dup(fd), "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        fail(f"a readable {what} ({exc.strerror or exc})", exc)
    finally:
        os.close(fd)
    if len(data) > MAX_FILE_BYTES:
        fail(f"a {what} of at most {MAX_FILE_BYTES // 1024 // 1024} MiB (it grew while read)")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        fail(f"UTF-8 text, as TOML requires ({exc.reason} at byte {exc.start})", exc)
    return (text[1:] if text.startswith(_BOM) else text), data


def _file_kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a special file"


_OPENERS = frozenset("[{")
_CLOSERS = frozenset("]}")


def _nesting_depth(text: str) -> int:
    """An upper bound of the bracket nesting of TOML text (strings and comments included)."""
    depth = deepest = 0
    for ch in text:
        if ch in _OPENERS:
            depth += 1
            if depth > deepest:
                deepest = depth
        elif ch in _CLOSERS and depth:
            depth -= 1
    return deepest


def parse_toml(text: str, *, source: str,
               error: type[ScenarioError] = ScenarioError) -> dict[str, Any]:
    """Parse TOML text; every failure is one :class:`ScenarioError` (or ``error``) line.

    Nesting deeper than :data:`MAX_NESTING` is refused before parsing (a recursive parser
    would run out of stack); running out of memory, Python's integer-digit limit and
    syntax errors are reported the same way.
    """
    if text.startswith(_BOM):
        text = text[1:]
    if _nesting_depth(text) > MAX_NESTING and _nesting_depth(_strip_strings(text)) > MAX_NESTING:
        raise error(source, None, expected=f"arrays and tables nested at most {MAX_NESTING} deep")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(source, None, expected=f"valid TOML ({exc})") from exc
    except RecursionError as exc:
        raise error(source, None, expected=f"arrays and tables nested at most {MAX_NESTING} deep") from exc
    except MemoryError as exc:
        raise error(source, None, expected="TOML that fits in memory") from exc
    except ValueError as exc:  # tomllib lets int()'s digit limit (4300 digits) through
        raise error(source, None, expected=f"TOML that Python can read ({exc})") from exc


def _strip_strings(text: str) -> str:
    """TOML text without its comments and quoted strings (for the nesting count)."""
    return re.sub(r'"""[\s\S]*?"""|\'\'\'[\s\S]*?\'\'\'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#[^\n]*',
                  "", text)


def load_scenario(path: str | os.PathLike[str]) -> Scenario:
    """Read, validate and type a scenario file.

    Parameters
    ----------
    path : str or path-like
        A TOML scenario file (UTF-8, a byte-order mark is accepted), a regular file of at
        most :data:`MAX_FILE_BYTES`.

    Returns
    -------
    Scenario
        With ``source_path`` and ``source_sha256`` (of the file bytes) recorded.

    Raises
    ------
    ScenarioError
        On the first problem found (one-line message naming file, key path, value and what
        was expected), including an unreadable or special file, or invalid TOML.
    """
    label = os.fspath(path)
    text, data = read_text_file(label)
    scenario = parse_scenario(text, source=label)
    return replace(scenario, source_path=label, source_sha256=hashlib.sha256(data).hexdigest())


def parse_scenario(text_or_mapping: str | Mapping[str, Any], *, source: str = "<string>") -> Scenario:
    """Validate and type a scenario given as TOML text or as an already-parsed mapping.

    Parameters
    ----------
    text_or_mapping : str or Mapping
        TOML text, or a mapping shaped like the parsed TOML.
    source : str, optional
        Label used as the file name in error messages.

    Returns
    -------
    Scenario
        ``source_sha256`` is the SHA-256 of the UTF-8 text (None for a mapping);
        ``source_path`` is None (set by :func:`load_scenario`). ``cautions`` lists the
        implausible values (see :mod:`uq.scenario.envelope`) and the defaults taken.

    Raises
    ------
    ScenarioError
        On the first problem found.  Sections are read in file order and keys in file order
        within a table; cross-references (correlations, tests) are checked last.

    Notes
    -----
    Values are only read, never evaluated: TOML is data, and no string becomes code.
    """
    sha = None
    if isinstance(text_or_mapping, str):
        sha = hashlib.sha256(text_or_mapping.encode("utf-8", "surrogatepass")).hexdigest()
        doc = parse_toml(text_or_mapping, source=source)
    elif isinstance(text_or_mapping, Mapping):
        doc = text_or_mapping
    else:
        raise TypeError(f"parse_scenario() takes TOML text or a mapping, not {type(text_or_mapping).__name__}")
    reader = _Reader(source)
    try:
        scenario = reader.scenario(doc)
    except RecursionError as exc:  # a mapping nested beyond the stack (not from TOML text)
        raise ScenarioError(source, None, expected=f"tables nested at most {MAX_NESTING} deep") from exc
    return replace(scenario, source_sha256=sha, cautions=tuple(reader.cautions))


# =============================================================================== ranges
@dataclass(frozen=True)
class _Range:
    """Physical range of a numeric field and how to word it."""

    what: str
    lo: float = -math.inf
    hi: float = math.inf
    lo_open: bool = True
    hi_open: bool = True
    allow_inf: bool = False  # a fixed +inf is accepted ("never", "no limit")

    def interval(self) -> str:
        return (("(" if self.lo_open else "[") + _num(self.lo) + ", " + _num(self.hi)
                + (")" if self.hi_open else "]"))

    def holds(self, x: float) -> bool:
        above = x > self.lo if self.lo_open else x >= self.lo
        below = x < self.hi if self.hi_open else x <= self.hi
        return above and below

    def holds_support(self, lo: float, hi: float) -> bool:
        # A continuous distribution has no mass at a single point, so its support may touch an
        # open end of the range.
        return lo >= self.lo and hi <= self.hi

    def suggestion(self) -> str:
        if math.isfinite(self.lo) and math.isfinite(self.hi):
            return (f'a bounded distribution, e.g. {{dist = "truncnormal", mean = ..., sd = ..., '
                    f'low = {_num(self.lo)}, high = {_num(self.hi)}}} or {{dist = "pert", min = ..., mode = ..., max = ...}}')
        if math.isfinite(self.lo):
            alt = '{dist = "lognormal", median = ..., log_sd = ...} or ' if self.lo == 0 else ""
            return f'{alt}{{dist = "truncnormal", mean = ..., sd = ..., low = {_num(self.lo)}}}'
        return f'{{dist = "truncnormal", mean = ..., sd = ..., high = {_num(self.hi)}}}'


def _num(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:g}"


_INF = math.inf
EFFICIENCY = _Range("an efficiency", 0.0, 1.0, True, False)
NONNEG_W = _Range("a power [W]", 0.0, lo_open=False)  # 0 W: e.g. a sensor-free ferry leg
POSITIVE_M = _Range("a length [m]", 0.0)
POSITIVE_M2 = _Range("an area [m^2]", 0.0)
POSITIVE_COEFF = _Range("a coefficient", 0.0)
POSITIVE_KM = _Range("a length [km]", 0.0)
POSITIVE_WH = _Range("an energy [Wh]", 0.0)
POSITIVE_N = _Range("a net buoyancy [N]", 0.0)
POSITIVE_SPEED = _Range("a speed through water [m/s]", 0.0)
NONNEG_J = _Range("an energy [J]", 0.0, lo_open=False)
NONNEG_S = _Range("a time [s]", 0.0, lo_open=False)
NONNEG_DAYS = _Range("a time [days]", 0.0, lo_open=False)
NONNEG_DEPTH = _Range("a depth [m]", 0.0, lo_open=False)
POSITIVE_DEPTH = _Range("a depth [m]", 0.0, allow_inf=True)
POSITIVE_DAYS = _Range("a duration [days]", 0.0, allow_inf=True)
APPENDAGE = _Range("an appendage factor (appendages only add drag; to calibrate below the bare-hull estimate give [vehicle.drag])",
                   1.0, lo_open=False)
FRACTION_OPEN0_CLOSED1 = _Range("a fraction", 0.0, 1.0, True, False)
FRACTION_CLOSED0_OPEN1 = _Range("a fraction", 0.0, 1.0, False, True)
FADE = _Range("a capacity fade [1/day]", 0.0, 0.05, False, True)
NONNEG_FRACTION = _Range("a fractional increase", 0.0, lo_open=False)
GROWTH = _Range("a fouling clock rate", 0.0, lo_open=False)
GLIDE_ANGLE = _Range("a glide angle [deg]", 0.0, 90.0)
CURRENT = _Range("a current component [m/s]")
TEMPERATURE = _Range("an in-situ seawater temperature [degC]", -3.0, 40.0, False, False)
SALINITY = _Range("a practical salinity (PSS-78)", 0.0, 42.0, True, False)
PROBABILITY = _Range("a probability", 0.0, 1.0)
SELF_DISCHARGE = _Range("a self-discharge [fraction per month]", 0.0, 0.5, False, True)
OVERHEAD = _Range("a distance overhead (fraction of the leg length)", 0.0, 1.0, False, True)
NONNEG_H = _Range("a time [h]", 0.0, lo_open=False)
NONNEG_KM = _Range("a distance [km]", 0.0, lo_open=False)
HAZARD = _Range("a hazard rate [1/day]", 0.0, 10.0, False, True)
WEIBULL_SHAPE = _Range("a Weibull shape", 0.0, 20.0, True, False)
CHEMISTRY_NAMES = ("lithium-ion", "lithium-primary")
UNDER_ICE_POLICIES = ("continue", "turn-back")
MONEY = _Range("an amount of money", 0.0, lo_open=False)
CORRELATION = _Range("a rank correlation", -1.0, 1.0)
POSITIVE_L = _Range("a volume [L]", 0.0)
DIVES = _Range("a number of dives per surfacing", 0.0, allow_inf=True)
DUTY = _Range("a duty cycle", 0.0, 1.0, False, False)
NONNEG_SPEED = _Range("a speed through water [m/s]", 0.0)
SHIP_DAYS = _Range("a number of days", 0.0, lo_open=False)
FLIGHT_POLICIES = ("hold_angle", "hold_speed", "efficient")
CURRENT_POLICIES = ("crab", "drift", "crab_or_drift")
SHIP_BOOKINGS = ("on_station", "recovery_window")

_LEG_NAME = re.compile(r"[A-Za-z0-9_-]+")
_LEG_KEYS = tuple(f.name for f in _dataclass_fields(Leg) if f.name != "name")  # per-leg keys of a waypoint
_PLAIN_KEY = re.compile(r"[A-Za-z0-9_-]+")
_CURRENCY = re.compile(r"[A-Z]{3}")
SCHEMES = ("sobol", "monte-carlo", "latin-hypercube")
DRAG_REFERENCES = ("frontal", "wetted", "volume^(2/3)")
VEHICLE_KINDS = ("propeller", "glider")


def _join(path: str, key: Any) -> str:
    key = str(key)
    part = key if _PLAIN_KEY.fullmatch(key) else repr(key)
    return f"{path}.{part}" if path else part


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float, np.integer, np.floating)) and not isinstance(x, (bool, np.bool_))


# =============================================================================== reader
#: A field reader: (reader, value, key path) -> parsed value.
_FieldFn = Callable[["_Reader", Any, str], Any]


class _Reader:
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
            out[key] = fields[key](self, value, _join(path, key))
        for key in required:
            if key not in out:
                self.fail(_join(path, key), MISSING, f"a value for required key '{key}' in [{path}]")
        return out

    def unknown(self, key: str, value: Any, path: str, known: list[str], *,
                other_kind: Mapping[str, str] | None = None):
        close = difflib.get_close_matches(str(key), known, n=1, cutoff=0.6)
        where = f"[{path}]" if path else "the top level"
        if other_kind and key in other_kind:
            expected = f"a key of {where} ({key!r} belongs to {other_kind[key]})"
            close = []
        else:
            expected = f"a known key of {where} (one of: {', '.join(known)})"
        self.fail(_join(path, key), value, expected, close[0] if close else None)

    # ------------------------------------------------------------------ scalar fields
    def number(self, value: Any, path: str, rng: _Range, *, uncertain: bool = True) -> Any:
        if isinstance(value, Mapping):
            if not uncertain:
                self.fail(path, value, "a plain number (distributions are not allowed here)")
            return self.distribution(value, path, rng)
        self.check_plain_number(value, path, rng, uncertain=uncertain)
        x = float(value)
        if rng.allow_inf and x == _INF:
            self.fixed.add(path)
            return x
        if not math.isfinite(x):
            self.fail(path, value, f"a finite number ({rng.what} in {rng.interval()})")
        if not rng.holds(x):
            self.fail(path, value, f"{rng.what} in {rng.interval()}")
        self.check_envelope(path, value, x, x, x, x)
        self.fixed.add(path)
        return x

    def check_plain_number(self, value: Any, path: str, rng: _Range, *, uncertain: bool) -> None:
        alt = " or a distribution table {dist = ...}" if uncertain else ""
        if isinstance(value, (bool, np.bool_)):
            self.fail(path, value, f"a number{alt} (true/false is not a number)")
        if isinstance(value, str):
            self.fail(path, value, f"a number{alt}, not a string ({rng.what} in {rng.interval()})")
        if not _is_number(value):
            self.fail(path, value, f"a number{alt} ({rng.what} in {rng.interval()})")
        try:
            x = float(value)
        except OverflowError:  # an integer beyond the float range (TOML integers are unbounded)
            self.fail(path, value, f"a finite number ({rng.what} in {rng.interval()})")
        if math.isnan(x):
            self.fail(path, value, f"a number, not nan ({rng.what} in {rng.interval()})")

    def distribution(self, value: Mapping[str, Any], path: str, rng: _Range) -> Marginal:
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
                      f"[{_num(lo)}, {_num(hi)}] which leaves it; {fix}")
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
            what = (f"a value in [{_num(plo)}, {_num(phi)}]{unit} for a {self.kind} "
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
                f"{_num(alo)} to {_num(ahi)}{unit}: {row.why}); check the value")

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
                key, value, other, bound = a_path, a, b, f"as small as {_num(b_lo)}"
            else:
                key, value, other, bound = b_path, b, a, f"as large as {_num(a_hi)}"
            shown = value.describe() if isinstance(value, Marginal) else value
            if isinstance(other, Marginal):
                relation += f" (which is {other.describe()}, {bound})"
            else:
                relation += f" = {_num(float(other))}"
            self.fail(key, shown, relation)

    # ------------------------------------------------------------------ document
    _SECTIONS = ("scenario", "vehicle", "battery", "setpoint", "fouling", "limits", "legs",
                 "route", "environment", "correlations", "recovery", "under_ice", "hardware",
                 "decision", "analysis")
    _REQUIRED_SECTIONS = ("scenario", "vehicle", "battery", "setpoint", "legs")

    def scenario(self, doc: Mapping[str, Any]) -> Scenario:
        for key, value in doc.items():
            if key not in self._SECTIONS:
                self.unknown(key, value, "", list(self._SECTIONS))
        for key in self._REQUIRED_SECTIONS:
            if key == "legs" and "route" in doc:
                continue  # the legs come from the waypoints (uq.scenario.environment)
            if key not in doc:
                how = "at least one [[legs]] table" if key == "legs" else f"a [{key}] section"
                self.fail(key, MISSING, how)
        vehicle_table = self.table(doc["vehicle"], "vehicle")
        kind = self.choice(vehicle_table.get("kind", MISSING), "vehicle.kind", VEHICLE_KINDS,
                           what="the vehicle kind, stated explicitly (never guessed from the keys)")
        self.kind = kind

        parsed: dict[str, Any] = {}
        for key, value in doc.items():
            if key == "scenario":
                parsed[key] = self.header(value)
            elif key == "vehicle":
                parsed[key] = self.vehicle(vehicle_table, kind)
            elif key == "battery":
                parsed[key] = self.battery(value)
            elif key == "setpoint":
                parsed[key] = self.setpoint(value, kind)
            elif key == "fouling":
                parsed[key] = self.fouling(value)
            elif key == "limits":
                parsed[key] = self.limits(value)
            elif key == "legs":
                parsed[key] = self.legs(value)
            elif key == "correlations":
                parsed[key] = self.correlations_raw(value)
            elif key == "recovery":
                parsed[key] = self.recovery(value)
            elif key == "under_ice":
                parsed[key] = self.under_ice(value)
            elif key == "hardware":
                parsed[key] = self.hardware(value)
            elif key == "decision":
                parsed[key] = self.decision(value)
            elif key == "analysis":
                parsed[key] = self.analysis(value)
        route = self.route(doc, parsed, kind) if "route" in doc or "environment" in doc else None

        if kind == "glider":
            self.glider_windows(parsed["setpoint"], parsed["legs"])
            for i, leg in enumerate(parsed["legs"]):
                for key in ("speed_m_s", "depth_m"):
                    if getattr(leg, key) is not None:
                        self.fail(f"legs.{leg.name}.{key}", getattr(leg, key),
                                  "no per-leg speed or depth for a glider (its setpoint is "
                                  "a glide angle and a dive band)")
            self.glider_policies(parsed["setpoint"], parsed["legs"])
        else:
            self.propeller_windows(parsed["setpoint"], parsed["legs"])
            self.battery_in_hull(parsed["vehicle"], parsed["battery"])
            for i, item in enumerate(doc.get("legs") or ()):  # a waypoint route has no [[legs]]
                for key in ("flight_policy", "dives_per_surfacing", "payload_power_W",
                            "payload_duty_cycle"):
                    if isinstance(item, Mapping) and key in item:
                        self.fail(f"legs.{item.get('name', i)}.{key}", item[key],
                                  "a key of a propeller vehicle's leg ({key!r} belongs to "
                                  "kind = 'glider')".replace("{key!r}", repr(key)))
        if "under_ice" in parsed:
            names = [leg.name for leg in parsed["legs"]]
            for name in parsed["under_ice"].safe_exits_after:
                if name not in names:
                    close = difflib.get_close_matches(name, names, n=1, cutoff=0.6)
                    self.fail("under_ice.safe_exits_after", name, "the name of a leg of this "
                              "route", close[0] if close else None)
        correlations = self.correlations_check(parsed.get("correlations", []) + self.data_correlations(
            route, parsed.get("correlations", [])))
        decision: Decision = parsed.get("decision", Decision())
        for i, test in enumerate(decision.tests):
            for name in test.inputs:
                self.check_name(name, f"decision.tests[{i}].inputs")
        for key in ("knowledge", "variability"):
            for name in getattr(decision, key):
                if name not in self.fixed:  # a fixed number has no nature: ignored (a variant may fix it)
                    self.check_name(name, f"decision.{key}")
        for name in decision.knowledge:
            if name in decision.variability:
                self.fail("decision.variability", name,
                          "an input not also listed in decision.knowledge (an input has one nature)")
        name, description = parsed["scenario"]
        return Scenario(
            name=name,
            description=description,
            vehicle=parsed["vehicle"],
            battery=parsed["battery"],
            setpoint=parsed["setpoint"],
            fouling=parsed.get("fouling", Fouling()),
            legs=parsed["legs"],
            limits=parsed.get("limits", Limits()),
            decision=decision,
            analysis=parsed.get("analysis", Analysis()),
            correlations=correlations,
            recovery=parsed.get("recovery", Recovery()),
            under_ice=parsed.get("under_ice", UnderIce()),
            hardware=parsed.get("hardware", Hardware()),
            inputs=tuple(self.inputs),
            route=route.route if route else (),
            environment=route.sources if route else (),
            data_correlations=route.correlations if route else (),
        )

    def route(self, doc: Mapping[str, Any], parsed: dict[str, Any], kind: str):
        """Legs from ``[route]`` waypoints, their fields from ``[environment]`` data files."""
        from uq.scenario.environment import build_route  # opens files: only when asked

        if "route" not in doc:
            self.fail("route", MISSING, "a [route] of waypoints for the [environment] data to follow")
        if "legs" in doc:
            self.fail("legs", "[[legs]]", "either [[legs]] with lengths or a [route] of waypoints, not both")
        built = build_route(doc["route"], doc.get("environment"), file=self.file,
                            setpoint=parsed["setpoint"], kind=kind, leg_keys=_LEG_KEYS)
        parsed["legs"] = self.legs(list(built.legs))
        return built

    @staticmethod
    def data_correlations(route, given) -> list:
        """Data-derived rank correlations, after the file's own (a pair in the file wins)."""
        if route is None:
            return []
        stated = {frozenset(pair) for _, pair, _ in given}
        return [(len(given) + k, c.inputs, c.rank) for k, c in enumerate(route.correlations)
                if frozenset(c.inputs) not in stated]

    def header(self, value: Any) -> tuple[str, str]:
        table = self.table(value, "scenario")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the scenario name"),
            "description": lambda r, v, p: r.text(v, p, what="a description", nonempty=False),
        }
        out = self.read_fields(table, "scenario", fields, ("name",))
        return out["name"], out.get("description", "")

    # ------------------------------------------------------------------ vehicle
    def vehicle(self, table: Mapping[str, Any], kind: str) -> PropellerVehicle | GliderVehicle:
        common = {
            "name": lambda r, v, p: r.text(v, p, what="the vehicle name"),
            "hotel_load_W": lambda r, v, p: r.number(v, p, NONNEG_W),
        }
        propeller = {
            "propulsive_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
            "hull": lambda r, v, p: r.hull(v, p),
            "drag": lambda r, v, p: r.drag(v, p),
            "efficiency_curve": lambda r, v, p: EfficiencyCurve(*r.curve(
                v, p, ("speed_m_s", "efficiency"), POSITIVE_SPEED, EFFICIENCY)),
            "max_speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
        }
        glider = {
            "pump_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
            "inflection_energy_J": lambda r, v, p: r.number(v, p, NONNEG_J),
            "inflection_time_s": lambda r, v, p: r.number(v, p, NONNEG_S),
            "polar": lambda r, v, p: r.polar(v, p),
            "max_pumped_volume_L": lambda r, v, p: r.number(v, p, POSITIVE_L),
            "hull_volume_L": lambda r, v, p: r.number(v, p, POSITIVE_L),
            "pump_stroke_fixed_energy_J": lambda r, v, p: r.number(v, p, NONNEG_J),
            "surface_time_s": lambda r, v, p: r.number(v, p, NONNEG_S),
            "surface_power_W": lambda r, v, p: r.number(v, p, NONNEG_W),
        }
        mine, theirs, other = (propeller, glider, "glider") if kind == "propeller" else (glider, propeller, "propeller")
        other_kind = {k: f"kind = {other!r}" for k in theirs}
        if kind == "propeller":
            out = self.read_fields(table, "vehicle", {**common, **mine},
                                   ("name", "hotel_load_W", "propulsive_efficiency"),
                                   other_kind=other_kind, skip=("kind",))
            given = [k for k in table if k in ("hull", "drag")]
            if not given:
                self.fail("vehicle.hull", MISSING,
                          "exactly one of [vehicle.hull] (geometry) or [vehicle.drag] (C_D with its reference area)")
            if len(given) > 1:
                self.fail(f"vehicle.{given[1]}", table[given[1]],
                          "exactly one of [vehicle.hull] or [vehicle.drag], not both")
            drag = out.pop(given[0])
            return PropellerVehicle(drag=drag, **out)
        out = self.read_fields(table, "vehicle", {**common, **mine},
                               ("name", "hotel_load_W", "pump_efficiency", "polar"),
                               other_kind=other_kind, skip=("kind",))
        engine = [k for k in ("max_pumped_volume_L", "hull_volume_L") if k in out]
        if len(engine) == 1:
            missing = ({"max_pumped_volume_L", "hull_volume_L"} - set(engine)).pop()
            self.fail(f"vehicle.{missing}", MISSING,
                      f"vehicle.{missing} together with vehicle.{engine[0]} (the trim check "
                      "needs the engine's swing and the hull's displaced volume)")
        return GliderVehicle(**out)

    def hull(self, value: Any, path: str) -> HullGeometry:
        table = self.table(value, path)
        fields = {
            "length_m": lambda r, v, p: r.number(v, p, POSITIVE_M),
            "diameter_m": lambda r, v, p: r.number(v, p, POSITIVE_M),
            "appendage_factor": lambda r, v, p: r.number(v, p, APPENDAGE),
            "wetted_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
        }
        out = self.read_fields(table, path, fields, ("length_m", "diameter_m"))
        self.below(out["diameter_m"], f"{path}.diameter_m", out["length_m"], f"{path}.length_m",
                   blame="a", relation=f"a diameter smaller than {path}.length_m")
        return HullGeometry(**out)

    def drag(self, value: Any, path: str) -> DragCoefficient:
        table = self.table(value, path)
        fields = {
            "coefficient": lambda r, v, p: r.number(v, p, _Range("a drag coefficient", 0.0)),
            "reference_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
            "reference": lambda r, v, p: r.choice(v, p, DRAG_REFERENCES, what="the area the coefficient refers to"),
        }
        out = self.read_fields(table, path, fields, ("coefficient", "reference_area_m2", "reference"))
        return DragCoefficient(**out)

    def polar(self, value: Any, path: str) -> GliderPolar:
        table = self.table(value, path)
        fields = {
            "reference_area_m2": lambda r, v, p: r.number(v, p, POSITIVE_M2),
            "zero_lift_drag": lambda r, v, p: r.number(v, p, _Range("a zero-lift drag coefficient", 0.0)),
            "max_lift_coefficient": lambda r, v, p: r.number(v, p, _Range("a maximum lift coefficient", 0.0)),
            "induced_drag_factor": lambda r, v, p: r.number(v, p, _Range("an induced-drag factor K", 0.0)),
            "aspect_ratio": lambda r, v, p: r.number(v, p, _Range("an aspect ratio", 0.0)),
            "span_efficiency": lambda r, v, p: r.number(v, p, EFFICIENCY),
        }
        out = self.read_fields(table, path, fields,
                               ("reference_area_m2", "zero_lift_drag", "max_lift_coefficient"))
        given = [k for k in table if k in ("induced_drag_factor", "aspect_ratio")]
        if not given:
            self.fail(f"{path}.induced_drag_factor", MISSING,
                      "exactly one of induced_drag_factor (K) or aspect_ratio (with span_efficiency)")
        if len(given) > 1:
            self.fail(f"{path}.{given[1]}", table[given[1]],
                      "exactly one of induced_drag_factor or aspect_ratio, not both")
        if "span_efficiency" in out and given[0] != "aspect_ratio":
            self.fail(f"{path}.span_efficiency", table["span_efficiency"],
                      "span_efficiency only together with aspect_ratio (K = 1/(pi e AR)); "
                      "with induced_drag_factor it has no effect")
        return GliderPolar(**out)

    # ------------------------------------------------------------------ other sections
    def battery(self, value: Any) -> Battery:
        table = self.table(value, "battery")
        fields = {
            "nominal_energy_Wh": lambda r, v, p: r.number(v, p, POSITIVE_WH),
            "cold_derating": lambda r, v, p: r.number(v, p, FRACTION_OPEN0_CLOSED1),
            "fade_per_day": lambda r, v, p: r.number(v, p, FADE),
            "usable_fraction": lambda r, v, p: r.number(v, p, FRACTION_OPEN0_CLOSED1),
            "reserve_fraction": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1),
            "chemistry": lambda r, v, p: r.choice(v, p, CHEMISTRY_NAMES,
                                                  what="the cell chemistry"),
            "capacity_curve": lambda r, v, p: CapacityCurve(*r.curve(
                v, p, ("temperature_C", "fraction"),
                _Range("a cell temperature [degC]", -60.0, 80.0, False, False),
                _Range("a capacity fraction", 0.0, 1.5, True, False))),
            "self_discharge_per_month": lambda r, v, p: r.number(v, p, SELF_DISCHARGE),
        }
        return Battery(**self.read_fields(table, "battery", fields, ("nominal_energy_Wh",)))

    def curve(self, value: Any, path: str, keys: tuple[str, str], x_range: _Range,
              y_range: _Range) -> tuple[tuple[float, ...], tuple[float, ...]]:
        """A table of two equal-length number lists, the first strictly increasing."""
        table = self.table(value, path, how=f"a table {{{keys[0]} = [...], {keys[1]} = [...]}}")
        for key in table:
            if key not in keys:
                self.unknown(key, table[key], path, list(keys))
        columns = []
        for key, rng in zip(keys, (x_range, y_range)):
            sub = _join(path, key)
            items = table.get(key, MISSING)
            if items is MISSING:
                self.fail(sub, MISSING, f"a list of numbers ({rng.what})")
            if not isinstance(items, (list, tuple)) or len(items) < 2:
                self.fail(sub, items, f"a list of two or more numbers ({rng.what})")
            columns.append(tuple(self.number(v, sub, rng, uncertain=False) for v in items))
        if len(columns[0]) != len(columns[1]):
            self.fail(_join(path, keys[1]), list(table[keys[1]]),
                      f"as many values as {path}.{keys[0]} ({len(columns[0])})")
        if any(b <= a for a, b in zip(columns[0], columns[0][1:])):
            self.fail(_join(path, keys[0]), list(table[keys[0]]), "strictly increasing values")
        return columns[0], columns[1]

    def setpoint(self, value: Any, kind: str) -> PropellerSetpoint | GliderSetpoint:
        table = self.table(value, "setpoint")
        propeller = {
            "speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
            "depth_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "min_ground_speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
        }
        glider = {
            "glide_angle_deg": lambda r, v, p: r.number(v, p, GLIDE_ANGLE),
            "net_buoyancy_N": lambda r, v, p: r.number(v, p, POSITIVE_N),
            "top_depth_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "bottom_depth_m": lambda r, v, p: r.number(v, p, _Range("a depth [m]", 0.0)),
            "flight_policy": lambda r, v, p: r.choice(v, p, FLIGHT_POLICIES, what="the flight policy"),
            "horizontal_speed_m_s": lambda r, v, p: r.number(v, p, NONNEG_SPEED),
        }
        if kind == "propeller":
            other = {k: "a glider's [setpoint]" for k in glider}
            out = self.read_fields(table, "setpoint", propeller, ("speed_m_s",), other_kind=other)
            return PropellerSetpoint(**out)
        other = {k: "a propeller vehicle's [setpoint]" for k in propeller}
        out = self.read_fields(table, "setpoint", glider,
                               ("glide_angle_deg", "net_buoyancy_N", "top_depth_m", "bottom_depth_m"),
                               other_kind=other)
        self.below(out["top_depth_m"], "setpoint.top_depth_m", out["bottom_depth_m"], "setpoint.bottom_depth_m",
                   blame="b", relation="a bottom depth deeper than setpoint.top_depth_m")
        return GliderSetpoint(**out)

    def fouling(self, value: Any) -> Fouling:
        table = self.table(value, "fouling")
        fields = {
            "onset_days": lambda r, v, p: r.number(v, p, NONNEG_DAYS),
            "time_constant_days": lambda r, v, p: r.number(v, p, POSITIVE_DAYS),
            "drag_increase": lambda r, v, p: r.number(v, p, NONNEG_FRACTION),
            "lift_loss": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1),
        }
        return Fouling(**self.read_fields(table, "fouling", fields))

    def limits(self, value: Any) -> Limits:
        table = self.table(value, "limits")
        fields = {"max_duration_days": lambda r, v, p: r.number(v, p, POSITIVE_DAYS)}
        return Limits(**self.read_fields(table, "limits", fields))

    def legs(self, value: Any) -> tuple[Leg, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail("legs", value, "an array of tables [[legs]]")
        if not value:
            self.fail("legs", value, "at least one [[legs]] table (the route is empty)")
        fields = {
            "length_km": lambda r, v, p: r.number(v, p, POSITIVE_KM),
            "current_along_m_s": lambda r, v, p: r.number(v, p, CURRENT),
            "current_across_m_s": lambda r, v, p: r.number(v, p, CURRENT),
            "temperature_C": lambda r, v, p: r.number(v, p, TEMPERATURE),
            "practical_salinity": lambda r, v, p: r.number(v, p, SALINITY),
            "ice_ceiling_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "seabed_m": lambda r, v, p: r.number(v, p, POSITIVE_DEPTH),
            "fouling_growth_factor": lambda r, v, p: r.number(v, p, GROWTH),
            "hotel_load_W": lambda r, v, p: r.number(v, p, NONNEG_W),
            "current_policy": lambda r, v, p: r.choice(v, p, CURRENT_POLICIES, what="the current policy"),
            "surface_current_along_m_s": lambda r, v, p: r.number(v, p, CURRENT),
            "surface_current_across_m_s": lambda r, v, p: r.number(v, p, CURRENT),
            "surface_layer_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
            "flight_policy": lambda r, v, p: r.choice(v, p, FLIGHT_POLICIES, what="the flight policy"),
            "dives_per_surfacing": lambda r, v, p: r.number(v, p, DIVES),
            "payload_power_W": lambda r, v, p: r.number(v, p, NONNEG_W),
            "payload_duty_cycle": lambda r, v, p: r.number(v, p, DUTY),
            "speed_m_s": lambda r, v, p: r.number(v, p, POSITIVE_SPEED),
            "depth_m": lambda r, v, p: r.number(v, p, NONNEG_DEPTH),
        }
        seen: dict[str, int] = {}
        legs = []
        for i, item in enumerate(value):
            table = self.table(item, f"legs[{i}]", how="a [[legs]] table")
            name = table.get("name", MISSING)
            if name is MISSING:
                self.fail(f"legs[{i}].name", MISSING, "a leg name (letters, digits, _ and -)")
            if not isinstance(name, str) or not _LEG_NAME.fullmatch(name):
                self.fail(f"legs[{i}].name", name, "a leg name of letters, digits, _ and - only")
            if name in seen:
                self.fail(f"legs[{i}].name", name, f"a unique leg name (legs[{seen[name]}] is already {name!r})")
            seen[name] = i
            path = f"legs.{name}"
            out = self.read_fields(table, path, {"name": lambda r, v, p: v, **fields}, ("length_km",))
            leg = Leg(**out)
            self.leg_water(leg, table, path)
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation=f"a seabed deeper than {path}.ice_ceiling_m")
            legs.append(leg)
        return tuple(legs)

    def leg_water(self, leg: Leg, table: Mapping[str, Any], path: str) -> None:
        """No silent environment: under ice the temperature is required; elsewhere an absent
        temperature or salinity takes the documented default (10 degC, 35) with a caution."""
        under_ice = isinstance(leg.ice_ceiling_m, Marginal) or float(leg.ice_ceiling_m) > 0.0
        if "temperature_C" not in table and under_ice:
            self.fail(f"{path}.temperature_C", MISSING,
                      "the water temperature of a leg under ice (no default: water under ice "
                      "is near its freezing point, about -1.9 degC, not the open-water default)")
        for key, default, unit in (("temperature_C", Leg.temperature_C, " degC"),
                                   ("practical_salinity", Leg.practical_salinity, "")):
            if key not in table:
                self.cautions.append(
                    f"{self.file}: {path}.{key} not given: the default {default:g}{unit} was "
                    "used; state the leg's own value (it sets density and drag)")

    def glider_windows(self, setpoint: GliderSetpoint, legs: tuple[Leg, ...]) -> None:
        """Each leg must leave room to glide between the shallow and the deep limit."""
        for leg in legs:
            path = f"legs.{leg.name}"
            self.below(setpoint.top_depth_m, "setpoint.top_depth_m", leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation="a seabed deeper than setpoint.top_depth_m (no room to glide)")
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", setpoint.bottom_depth_m,
                       "setpoint.bottom_depth_m", blame="a",
                       relation="an ice ceiling shallower than setpoint.bottom_depth_m (no room to glide)")

    def glider_policies(self, setpoint: GliderSetpoint, legs: tuple[Leg, ...]) -> None:
        """A re-trim policy needs the horizontal speed it holds."""
        if setpoint.horizontal_speed_m_s is not None:
            return
        for where, policy in [("setpoint.flight_policy", setpoint.flight_policy)] + [
                (f"legs.{leg.name}.flight_policy", leg.flight_policy) for leg in legs]:
            if policy in ("hold_speed", "efficient"):
                self.fail("setpoint.horizontal_speed_m_s", MISSING,
                          f"a horizontal speed to hold ({where} = {policy!r} re-trims for it)")
    def propeller_windows(self, setpoint: PropellerSetpoint, legs: tuple[Leg, ...]) -> None:
        """The running depth must lie below each leg's ice ceiling and above its seabed."""
        for leg in legs:
            path = f"legs.{leg.name}"
            own = getattr(leg, "depth_m", None)
            depth, where = (own, f"{path}.depth_m") if own is not None else (setpoint.depth_m, "setpoint.depth_m")
            self.below(depth, where, leg.seabed_m, f"{path}.seabed_m",
                       blame="b", relation=f"a seabed at or below {where} (the "
                       "vehicle runs at that depth)", strict=False)
            self.below(leg.ice_ceiling_m, f"{path}.ice_ceiling_m", depth,
                       where, blame="a", relation=f"an ice ceiling at or above "
                       f"{where} (the vehicle runs at that depth)", strict=False)

    def battery_in_hull(self, vehicle: PropellerVehicle, battery: Battery) -> None:
        """The battery's energy per litre of hull must be one a pack can hold."""
        hull = vehicle.drag
        if not isinstance(hull, HullGeometry):
            return

        def ends(v: Value) -> tuple[float, float]:
            return tuple(float(x) for x in v.support) if isinstance(v, Marginal) else (float(v), float(v))

        (d_lo, d_hi), (l_lo, l_hi) = ends(hull.diameter_m), ends(hull.length_m)
        (e_lo, e_hi) = ends(battery.nominal_energy_Wh)
        litres_max = math.pi / 4.0 * d_hi**2 * l_hi * 1000.0
        litres_min = math.pi / 4.0 * d_lo**2 * l_lo * 1000.0
        low, high = _envelope.HULL_ENERGY_DENSITY_WH_PER_L
        if not (math.isfinite(litres_max) and litres_min > 0):
            return
        if e_lo / litres_min > high:
            self.fail("battery.nominal_energy_Wh", battery.nominal_energy_Wh,
                      f"at most {high:g} Wh per litre of hull (lithium packs store up to about "
                      f"700 Wh/L); the hull holds {litres_min:,.4g} L, so at most "
                      f"{high * litres_min:,.4g} Wh")
        if e_hi / litres_max < low:
            self.cautions.append(
                f"{self.file}: battery.nominal_energy_Wh = {e_hi:g}: implausible for a "
                f"{litres_max:,.4g} L hull ({e_hi / litres_max:.3g} Wh per litre; packs hold "
                f"100-700 Wh/L): was kWh written as Wh?")

    def recovery(self, value: Any) -> Recovery:
        table = self.table(value, "recovery")
        fields = {
            "loiter_time_h": lambda r, v, p: r.number(v, p, NONNEG_H),
            "loiter_power_W": lambda r, v, p: r.number(v, p, NONNEG_W),
            "homing_distance_km": lambda r, v, p: r.number(v, p, NONNEG_KM),
        }
        return Recovery(**self.read_fields(table, "recovery", fields))

    def under_ice(self, value: Any) -> UnderIce:
        table = self.table(value, "under_ice")
        fields = {
            "policy": lambda r, v, p: r.choice(v, p, UNDER_ICE_POLICIES,
                                               what="what to do at the point of no return"),
            "safe_exits_after": lambda r, v, p: r.leg_names(v, p),
            "dead_reckoning_overhead": lambda r, v, p: r.number(v, p, OVERHEAD),
        }
        return UnderIce(**self.read_fields(table, "under_ice", fields))

    def leg_names(self, value: Any, path: str) -> tuple[str, ...]:
        if not isinstance(value, (list, tuple)) or not all(isinstance(v, str) for v in value):
            self.fail(path, value, "a list of leg names")
        return tuple(value)

    def hardware(self, value: Any) -> Hardware:
        table = self.table(value, "hardware")
        fields = {"subsystems": lambda r, v, p: r.subsystems(v, p)}
        return Hardware(**self.read_fields(table, "hardware", fields))

    def subsystems(self, value: Any, path: str) -> tuple[Subsystem, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail(path, value, "an array of tables [[hardware.subsystems]]")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the subsystem's name"),
            "rate_per_day": lambda r, v, p: r.number(v, p, HAZARD, uncertain=False),
            "weibull_shape": lambda r, v, p: r.number(v, p, WEIBULL_SHAPE, uncertain=False),
        }
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[hardware.subsystems]] table")
            out.append(Subsystem(**self.read_fields(table, item_path, fields,
                                                    ("name", "rate_per_day"))))
        return tuple(out)

    def correlations_raw(self, value: Any) -> list[tuple[int, tuple[str, str], float]]:
        if not isinstance(value, (list, tuple)):
            self.fail("correlations", value, "an array of tables [[correlations]]")
        fields = {
            "inputs": lambda r, v, p: r.name_list(v, p, length=2),
            "rank": lambda r, v, p: r.number(v, p, CORRELATION, uncertain=False),
        }
        out = []
        for i, item in enumerate(value):
            path = f"correlations[{i}]"
            table = self.table(item, path, how="a [[correlations]] table")
            got = self.read_fields(table, path, fields, ("inputs", "rank"))
            out.append((i, got["inputs"], got["rank"]))
        return out

    def correlations_check(self, raw: list[tuple[int, tuple[str, str], float]]) -> tuple[RankCorrelation, ...]:
        order = [m.name for m in self.inputs]
        seen: dict[frozenset[str], int] = {}
        for i, (a, b), _ in raw:
            for name in (a, b):
                self.check_name(name, f"correlations[{i}].inputs")
            pair = frozenset((a, b))
            if pair in seen:
                self.fail(f"correlations[{i}].inputs", [a, b],
                          f"each pair once (already in correlations[{seen[pair]}])")
            seen[pair] = i
        if not raw:
            return ()
        involved = sorted({n for _, pair, _ in raw for n in pair}, key=order.index)
        index = {n: k for k, n in enumerate(involved)}
        rank = np.eye(len(involved))
        for _, (a, b), r in raw:
            rank[index[a], index[b]] = rank[index[b], index[a]] = r
        # The rank matrix and the normal-copula matrix 2 sin(pi r / 6) (Pearson for normal
        # scores with Spearman r) must both be positive definite.
        for matrix, what in ((rank, "rank-correlation"),
                             (2.0 * np.sin(np.pi * rank / 6.0), "normal-copula (2 sin(pi r/6))")):
            smallest = float(np.linalg.eigvalsh(matrix)[0])
            if smallest <= 1e-10:
                self.fail("correlations", [r for _, _, r in raw],
                          f"a positive-definite {what} matrix over {len(involved)} inputs "
                          f"(smallest eigenvalue {smallest:.3g}); weaken or drop a correlation")
        return tuple(RankCorrelation(inputs=pair, coefficient=r) for _, pair, r in raw)

    def decision(self, value: Any) -> Decision:
        table = self.table(value, "decision")
        plain = lambda rng: (lambda r, v, p: r.number(v, p, rng, uncertain=False))  # noqa: E731
        fields = {
            "required_probability": plain(PROBABILITY),
            "confidence": plain(PROBABILITY),
            "currency": lambda r, v, p: r.currency(v, p),
            "ship_day_rate": plain(MONEY),
            "booking_quantile": plain(PROBABILITY),
            "value_of_success": plain(MONEY),
            "cost_of_failure": plain(MONEY),
            "cost_of_no_go": plain(MONEY),
            "tests": lambda r, v, p: r.tests(v, p),
            "ship_booking": lambda r, v, p: r.choice(v, p, SHIP_BOOKINGS, what="how the ship is booked"),
            "deployment_date": lambda r, v, p: r.date(v, p),
            "recovery_window": lambda r, v, p: r.quantile_pair(v, p),
            "ship_transit_days": plain(SHIP_DAYS),
            "cost_of_reserve_breach": plain(MONEY),
            "cost_of_late_arrival": plain(MONEY),
            "knowledge": lambda r, v, p: r.name_list(v, p),
            "variability": lambda r, v, p: r.name_list(v, p),
            "required_credibility": plain(PROBABILITY),
        }
        out = self.read_fields(table, "decision", fields)
        if out.get("ship_booking") == "recovery_window" and "deployment_date" not in out:
            self.fail("decision.deployment_date", MISSING,
                      "a deployment date (e.g. 2027-04-12) for ship_booking = 'recovery_window'")
        return Decision(**out)

    def date(self, value: Any, path: str) -> datetime.date:
        if isinstance(value, datetime.datetime) or not isinstance(value, datetime.date):
            self.fail(path, value, "a TOML local date such as 2027-04-12 (no quotes, no time)")
        return value

    def quantile_pair(self, value: Any, path: str) -> tuple[float, float]:
        ok = (isinstance(value, (list, tuple)) and len(value) == 2
              and all(_is_number(q) and 0.0 < float(q) < 1.0 for q in value)
              and float(value[0]) < float(value[1]))
        if not ok:
            self.fail(path, value, "two arrival quantiles in (0, 1), earliest first, e.g. [0.05, 0.95]")
        return (float(value[0]), float(value[1]))

    def currency(self, value: Any, path: str) -> str:
        if not isinstance(value, str) or not _CURRENCY.fullmatch(value):
            self.fail(path, value, "an ISO 4217 currency code of three capital letters, e.g. 'EUR'")
        return value

    def tests(self, value: Any, path: str) -> tuple[TestCandidate, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail(path, value, "an array of tables [[decision.tests]]")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the test's name"),
            "cost": lambda r, v, p: r.number(v, p, MONEY, uncertain=False),
            "inputs": lambda r, v, p: r.name_list(v, p),
            "residual_fraction": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1, uncertain=False),
        }
        seen: dict[str, int] = {}
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[decision.tests]] table")
            got = self.read_fields(table, item_path, fields, ("name", "cost", "inputs"))
            if got["name"] in seen:
                self.fail(f"{item_path}.name", got["name"],
                          f"a unique test name ({path}[{seen[got['name']]}] has it already)")
            seen[got["name"]] = i
            out.append(TestCandidate(**got))
        return tuple(out)

    def analysis(self, value: Any) -> Analysis:
        table = self.table(value, "analysis")
        fields = {
            "samples": lambda r, v, p: r.integer(v, p, minimum=1, what="number of samples"),
            "seed": lambda r, v, p: r.integer(v, p, minimum=0, what="random seed"),
            "scheme": lambda r, v, p: r.choice(v, p, SCHEMES, what="the sampling scheme"),
            "replicates": lambda r, v, p: r.integer(v, p, minimum=1, what="independent replicates"),
            "sensitivity_base_n": lambda r, v, p: r.integer(v, p, minimum=2, what="Sobol' base sample size"),
            "rare_events": lambda r, v, p: r.choice(v, p, ("auto", "always", "off"),
                                                    what="when to use the rare-event estimator"),
            "max_looks": lambda r, v, p: r.integer(v, p, minimum=1, what="looks at P(success)"),
        }
        out = self.read_fields(table, "analysis", fields)
        result = Analysis(**out)
        if result.scheme == "sobol" and not _power_of_two(result.samples):
            self.fail("analysis.samples", result.samples,
                      "a power of two for scheme = 'sobol' (scrambled Sobol' points need n = 2^m), e.g. "
                      f"{_next_power_of_two(result.samples)}")
        if not _power_of_two(result.sensitivity_base_n):
            self.fail("analysis.sensitivity_base_n", result.sensitivity_base_n,
                      "a power of two (the Sobol'-index design is built on Sobol' points), e.g. "
                      f"{_next_power_of_two(result.sensitivity_base_n)}")
        return result


def _power_of_two(n: int) -> bool:
    return n >= 1 and n & (n - 1) == 0


def _next_power_of_two(n: int) -> int:
    return 1 << max(0, int(n - 1).bit_length())
