"""Named marginal distributions of uncertain scenario inputs.

A :class:`Marginal` is one uncertain field of a scenario file: its dotted key path, the family
and parameters exactly as the planner wrote them, the unit taken from the key suffix, and a
frozen :mod:`scipy.stats` distribution built once from them.  The same marginal converts to its
:mod:`chaospy` equivalent for polynomial chaos.

Families and their parameters (as written in a scenario file)::

    {dist = "normal",      mean = ..., sd = ...}
    {dist = "truncnormal", mean = ..., sd = ..., low = ..., high = ...}   (one bound may be omitted)
    {dist = "lognormal",   median = ..., log_sd = ...}   or   {..., mean = ..., cv = ...}
    {dist = "uniform",     low = ..., high = ...}
    {dist = "triangular",  min = ..., mode = ..., max = ...}
    {dist = "pert",        min = ..., mode = ..., max = ..., shape = 4}
    {dist = "beta",        alpha = ..., beta = ..., low = 0, high = 1}

A spread of zero (``sd = 0``, ``min == max``) is rejected: a fixed value is written as a plain
number.

References
----------
.. [1] Malcolm, D. G., Roseboom, J. H., Clark, C. E. & Fazar, W. (1959). Application of a
   technique for research and development program evaluation. Operations Research 7(5),
   646-669 (the PERT three-point estimate).
.. [2] Vose, D. (2008). Risk Analysis: A Quantitative Guide, 3rd ed. Wiley (PERT as a scaled
   beta with shape parameter 4).
"""
from __future__ import annotations

from uq.errors import InputError
from uq.scenario.errors import ScenarioError

import difflib
import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats

from uq.scenario.beta_quantile import BetaQuantile

__all__ = [
    "KINDS",
    "DistributionError",
    "FrozenParams",
    "Marginal",
    "parse_distribution",
    "unit_from_key",
]

#: Distribution families and their parameter names: (required, optional-with-default).
KINDS: Mapping[str, tuple[tuple[str, ...], Mapping[str, float]]] = {
    "normal": (("mean", "sd"), {}),
    "truncnormal": (("mean", "sd"), {"low": -math.inf, "high": math.inf}),
    "lognormal": ((), {}),  # exactly one of (median, log_sd) or (mean, cv); checked below
    "uniform": (("low", "high"), {}),
    "triangular": (("min", "mode", "max"), {}),
    "pert": (("min", "mode", "max"), {"shape": 4.0}),
    "beta": (("alpha", "beta"), {"low": 0.0, "high": 1.0}),
}
_LOGNORMAL_PAIRS = (("median", "log_sd"), ("mean", "cv"))

#: Truncation bounds farther than this many sd beyond the mean leave (almost) no mass.
_TRUNCATION_REACH_SD = 6.0

#: Largest beta shape (alpha, beta) and PERT shape accepted. Beta(1e6, 1e6) already has an sd
#: of 3.5e-4 of its range, in effect a fixed value; far beyond it (near 1e20) the inverse
#: incomplete beta function of scipy before 1.17 never returns (measured on 1.13-1.16).
_MAX_SHAPE = 1e6

#: Marks a fast quantile function not built yet (see Marginal.ppf).
_UNBUILT = object()

# Key suffix -> unit; longest suffixes first so "_m_s" wins over "_s" and "_m".
_UNIT_SUFFIXES = (
    ("_per_day", "1/day"),
    ("_per_month", "1/month"),
    ("_h", "h"),
    ("_m_s", "m/s"),
    ("_m2", "m^2"),
    ("_km", "km"),
    ("_Wh", "Wh"),
    ("_days", "day"),
    ("_deg", "deg"),
    ("_m", "m"),
    ("_W", "W"),
    ("_J", "J"),
    ("_s", "s"),
    ("_C", "degC"),
    ("_N", "N"),
    ("_L", "L"),
)


def unit_from_key(key: str) -> str:
    """Unit of a scenario field from its key suffix (``"current_along_m_s"`` -> ``"m/s"``).

    Parameters
    ----------
    key : str
        Field name or dotted key path; only the last component is used.

    Returns
    -------
    str
        The unit, or ``""`` for dimensionless fields (fractions, coefficients, salinity).
    """
    return split_unit(key)[1]


def split_unit(key: str) -> tuple[str, str]:
    """The last component of a key split into its quantity and its unit by the key's suffix:
    ``"legs.a.current_along_m_s"`` -> ``("current_along", "m/s")``; ``("x", "")`` when the
    name carries no unit. The one suffix rule (:func:`unit_from_key` and the report's labels)."""
    last = key.rsplit(".", 1)[-1]
    for suffix, unit in _UNIT_SUFFIXES:
        if last.endswith(suffix):
            return last[: -len(suffix)], unit
    return last, ""


class DistributionError(InputError):
    """A distribution table is malformed; ``key`` is the parameter at fault (or ``"dist"``)."""

    def __init__(self, key: str, value: Any, expected: str, *, suggestion: str | None = None):
        self.key = key
        self.value = value
        self.expected = expected
        self.suggestion = suggestion
        try:
            shown = repr(value)
        except ValueError:  # an integer past Python's digit limit for int -> str (4300 digits)
            shown = f"<{type(value).__name__} too large to show>"
        text = f"{key} = {shown}: expected {expected}"
        if suggestion:
            text += f"; did you mean {suggestion!r}?"
        super().__init__(text)


class FrozenParams(Mapping):
    """Read-only, hashable, picklable mapping of distribution parameters in written order."""

    __slots__ = ("_items",)

    def __init__(self, items: Mapping[str, float] | None = None):
        self._items = tuple((str(k), float(v)) for k, v in dict(items or {}).items())

    def __getitem__(self, key: str) -> float:
        for k, v in self._items:
            if k == key:
                return v
        raise KeyError(key)

    def __iter__(self) -> Iterator[str]:
        return (k for k, _ in self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __hash__(self) -> int:
        return hash(self._items)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Mapping):
            return dict(self._items) == dict(other.items())
        return NotImplemented

    def __repr__(self) -> str:
        return repr(dict(self._items))

    def __reduce__(self):
        return (FrozenParams, (dict(self._items),))


@dataclass(frozen=True)
class Marginal:
    """One uncertain scenario input: a named, frozen univariate distribution.

    Parameters
    ----------
    name : str
        Dotted key path of the field, e.g. ``"legs.shelf_departure.current_along_m_s"``.
    kind : str
        Family: ``"normal"``, ``"truncnormal"``, ``"lognormal"``, ``"uniform"``,
        ``"triangular"``, ``"pert"`` or ``"beta"``.
    params : Mapping[str, float]
        Parameters as written in the scenario file (without ``dist``).
    unit : str
        Unit of the field (from the key suffix), ``""`` if dimensionless.

    Raises
    ------
    DistributionError
        If the family is unknown or the parameters are invalid.

    Notes
    -----
    PERT(min, mode, max; shape lambda) is the beta distribution on [min, max] with
    alpha = 1 + lambda (mode - min)/(max - min), beta = 1 + lambda (max - mode)/(max - min);
    lambda = 4 gives the classic PERT mean (min + 4 mode + max)/6 [1]_, [2]_.
    A lognormal given by (mean, cv) has sigma^2 = ln(1 + cv^2), mu = ln(mean) - sigma^2/2;
    given by (median, log_sd), mu = ln(median) and sigma = log_sd.

    References
    ----------
    .. [1] Malcolm et al. (1959), Operations Research 7(5):646-669.
    .. [2] Vose (2008), Risk Analysis: A Quantitative Guide, 3rd ed.
    """

    name: str
    kind: str
    params: Mapping[str, float] = field(hash=False)
    unit: str = ""
    _frozen: Any = field(init=False, compare=False, repr=False, hash=False)
    _fast_ppf: Any = field(init=False, compare=False, repr=False, hash=False)

    def __post_init__(self) -> None:
        if not isinstance(self.params, Mapping):
            raise DistributionError("params", self.params, "a mapping of parameter names to numbers")
        params = FrozenParams(_check_params(self.kind, self.params))
        object.__setattr__(self, "params", params)
        full = _with_defaults(self.kind, params)
        object.__setattr__(self, "_frozen", _build_scipy(self.kind, full))
        object.__setattr__(self, "_fast_ppf", _UNBUILT)  # built on first use (see ppf)

    def __reduce__(self):
        # pickle what the planner wrote, not the scipy object and tables built from it: a
        # marginal sent to a worker process is a few hundred bytes and is rebuilt there
        return (Marginal, (self.name, self.kind, dict(self.params), self.unit))

    # ---------------------------------------------------------------- evaluation
    def ppf(self, u: Any) -> np.ndarray:
        """Quantile function, vectorized.

        Parameters
        ----------
        u : array_like
            Probabilities in [0, 1] [-].

        Returns
        -------
        numpy.ndarray
            Quantiles, same shape as ``u`` [unit of the field].
        """
        u = np.asarray(u, dtype=float)
        fast = self._fast_ppf
        if fast is _UNBUILT:  # the table costs a few ms; a marginal only read never needs it
            fast = _fast_quantile(self.kind, _with_defaults(self.kind, self.params))
            object.__setattr__(self, "_fast_ppf", fast)
        if fast is not None:
            return fast(u)
        return np.asarray(self._frozen.ppf(u), dtype=float)

    def cdf(self, x: Any) -> np.ndarray:
        """Cumulative distribution function, vectorized.

        Parameters
        ----------
        x : array_like
            Values [unit of the field].

        Returns
        -------
        numpy.ndarray
            P(X <= x), same shape as ``x`` [-].
        """
        x = np.asarray(x, dtype=float)
        return np.asarray(self._frozen.cdf(x), dtype=float)

    def quantile(self, q: float) -> float:
        """The ``q``-quantile as a float [unit of the field]; ``q`` in [0, 1]."""
        q = float(q)
        if not 0.0 <= q <= 1.0:
            raise DistributionError("q", q, "a probability in [0, 1]")
        return float(self._frozen.ppf(q))

    @property
    def median(self) -> float:
        """Median [unit of the field]."""
        return float(self._frozen.median())

    @property
    def mean(self) -> float:
        """Mean [unit of the field]."""
        return float(self._frozen.mean())

    @property
    def std(self) -> float:
        """Standard deviation [unit of the field]."""
        return float(self._frozen.std())

    @property
    def support(self) -> tuple[float, float]:
        """Smallest and largest possible values (may be infinite) [unit of the field]."""
        lo, hi = self._frozen.support()
        return float(lo), float(hi)

    @property
    def scipy(self) -> Any:
        """The frozen :mod:`scipy.stats` distribution (read-only use)."""
        return self._frozen

    # ---------------------------------------------------------------- conversion
    def to_chaospy(self) -> Any:
        """The equivalent :mod:`chaospy` distribution.

        Returns
        -------
        chaospy.Distribution
            Normal, TruncNormal, LogNormal, Uniform, Triangle, or Beta with bounds (for PERT
            and beta).  Note that chaospy cuts an unbounded normal at about +-8.2 sd.
        """
        import chaospy

        p = _with_defaults(self.kind, self.params)
        if self.kind == "normal":
            return chaospy.Normal(mu=p["mean"], sigma=p["sd"])
        if self.kind == "truncnormal":
            return chaospy.TruncNormal(lower=p["low"], upper=p["high"], mu=p["mean"], sigma=p["sd"])
        if self.kind == "lognormal":
            mu, sigma = _lognormal_mu_sigma(p)
            return chaospy.LogNormal(mu=mu, sigma=sigma)
        if self.kind == "uniform":
            return chaospy.Uniform(lower=p["low"], upper=p["high"])
        if self.kind == "triangular":
            return chaospy.Triangle(lower=p["min"], midpoint=p["mode"], upper=p["max"])
        if self.kind == "pert":
            a, b = _pert_alpha_beta(p)
            return chaospy.Beta(a, b, lower=p["min"], upper=p["max"])
        # beta
        return chaospy.Beta(p["alpha"], p["beta"], lower=p["low"], upper=p["high"])

    def describe(self) -> str:
        """Short human description, e.g. ``"PERT(0.30, 0.38, 0.44)"``."""
        p = _with_defaults(self.kind, self.params)
        if self.kind == "normal":
            return "Normal(" + _fmt(p["mean"], p["sd"]) + ")"
        if self.kind == "truncnormal":
            return ("TruncNormal(" + _fmt(p["mean"], p["sd"]) + "; "
                    + _fmt(p["low"], p["high"]) + ")")
        if self.kind == "lognormal":
            if "median" in p:
                return "LogNormal(median " + _fmt(p["median"]) + ", log-sd " + _fmt(p["log_sd"]) + ")"
            return "LogNormal(mean " + _fmt(p["mean"]) + ", cv " + _fmt(p["cv"]) + ")"
        if self.kind == "uniform":
            return "Uniform(" + _fmt(p["low"], p["high"]) + ")"
        if self.kind == "triangular":
            return "Triangular(" + _fmt(p["min"], p["mode"], p["max"]) + ")"
        if self.kind == "pert":
            text = "PERT(" + _fmt(p["min"], p["mode"], p["max"])
            if p["shape"] != 4.0:
                text += ", shape " + _fmt(p["shape"])
            return text + ")"
        return "Beta(" + _fmt(p["alpha"], p["beta"]) + "; " + _fmt(p["low"], p["high"]) + ")"


# -------------------------------------------------------------------- parsing
def parse_distribution(table: Mapping[str, Any], *, name: str, unit: str = "", file: str = "<string>") -> Marginal:
    """Build a :class:`Marginal` from an inline distribution table of a scenario file.

    Parameters
    ----------
    table : Mapping
        The table as read, e.g. ``{"dist": "pert", "min": 0.3, "mode": 0.38, "max": 0.44}``.
    name : str
        Dotted key path of the field (becomes ``Marginal.name`` and prefixes error keys).
    unit : str, optional
        Unit of the field.
    file : str, optional
        Source named in error messages.

    Returns
    -------
    Marginal

    Raises
    ------
    uq.scenario.ScenarioError
        One line naming ``file``, ``name.<parameter>``, the value and what was expected.
    """
    if not isinstance(table, Mapping):
        raise ScenarioError(file=file, key=name, value=table,
                            expected="a distribution table such as {dist = \"pert\", min = ..., mode = ..., max = ...}")
    if "dist" not in table:
        raise ScenarioError(file=file, key=f"{name}.dist", value=_MissingRepr(),
                            expected="a 'dist' key naming the family: " + ", ".join(KINDS))
    kind = table["dist"]
    params = {k: v for k, v in table.items() if k != "dist"}
    try:
        _check_kind(kind)
        checked = _check_params(kind, params)
        return Marginal(name=name, kind=kind, params=FrozenParams(checked), unit=unit)
    except DistributionError as exc:
        raise ScenarioError(file=file, key=f"{name}.{exc.key}", value=exc.value,
                            expected=exc.expected, suggestion=exc.suggestion) from exc


class _MissingRepr:
    def __repr__(self) -> str:
        return "<missing>"


# -------------------------------------------------------------------- internals
def _check_kind(kind: Any) -> None:
    if not isinstance(kind, str) or kind not in KINDS:
        close = difflib.get_close_matches(str(kind), list(KINDS), n=1, cutoff=0.6) if isinstance(kind, str) else []
        raise DistributionError("dist", kind, "one of " + ", ".join(repr(k) for k in KINDS),
                                suggestion=close[0] if close else None)


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float, np.integer, np.floating)) and not isinstance(x, (bool, np.bool_))


def _check_params(kind: str, params: Mapping[str, Any]) -> dict[str, float]:
    """Validate ``params`` of family ``kind``; return them as floats in written order."""
    _check_kind(kind)
    if kind == "lognormal":
        allowed = ("median", "log_sd", "mean", "cv")
    else:
        required, optional = KINDS[kind]
        allowed = tuple(required) + tuple(optional)
    out: dict[str, float] = {}
    for key, value in params.items():
        if key not in allowed:
            close = difflib.get_close_matches(str(key), list(allowed), n=1, cutoff=0.6)
            raise DistributionError(str(key), value,
                                    f"a parameter of {kind} ({', '.join(allowed)})",
                                    suggestion=close[0] if close else None)
        if isinstance(value, (bool, np.bool_)):
            raise DistributionError(key, value, "a number (true/false is not a number)")
        if not _is_number(value):
            raise DistributionError(key, value, "a plain number")
        try:
            v = float(value)
        except OverflowError:  # an integer beyond the float range (TOML integers are unbounded)
            v = math.inf if value > 0 else -math.inf
        if not math.isfinite(v) and not (kind == "truncnormal" and key in ("low", "high") and not math.isnan(v)):
            raise DistributionError(key, value, "a finite number")
        out[key] = v

    if kind == "lognormal":
        given = [pair for pair in _LOGNORMAL_PAIRS if any(k in out for k in pair)]
        if not given:
            raise DistributionError("median", _MissingRepr(),
                                    "lognormal parameters (median, log_sd) or (mean, cv)")
        if len(given) > 1:
            extra = next(k for k in given[1] if k in out)
            raise DistributionError(extra, out[extra],
                                    "only one lognormal parametrisation: (median, log_sd) or (mean, cv), not both")
        for k in given[0]:
            if k not in out:
                raise DistributionError(k, _MissingRepr(),
                                        f"parameter '{k}' of lognormal (given as {given[0][0]}, {given[0][1]})")
        first, spread = given[0]
        if out[first] <= 0:
            raise DistributionError(first, out[first], f"a {first} > 0 (a lognormal is positive)")
        if out[spread] == 0:
            raise DistributionError(spread, out[spread], f"{spread} > 0; for a fixed value write a plain number instead of a distribution")
        if out[spread] < 0:
            raise DistributionError(spread, out[spread], f"{spread} > 0")
        return out

    required, optional = KINDS[kind]
    for key in required:
        if key not in out:
            raise DistributionError(key, _MissingRepr(), f"parameter '{key}' of {kind} (needs {', '.join(required)})")
    p = {**optional, **out}
    if kind in ("normal", "truncnormal"):
        if p["sd"] == 0:
            raise DistributionError("sd", p["sd"], "sd > 0; for a fixed value write a plain number instead of a distribution")
        if p["sd"] < 0:
            raise DistributionError("sd", p["sd"], "sd > 0")
        if kind == "truncnormal":
            if "low" not in out and "high" not in out:
                raise DistributionError("low", _MissingRepr(), "at least one truncation bound (low or high); without bounds use dist = \"normal\"")
            if not p["low"] < p["high"]:
                raise DistributionError("high", p["high"], f"high > low = {p['low']!r}")
            a = (p["low"] - p["mean"]) / p["sd"]
            b = (p["high"] - p["mean"]) / p["sd"]
            if a > _TRUNCATION_REACH_SD or b < -_TRUNCATION_REACH_SD:
                raise DistributionError("low" if a > _TRUNCATION_REACH_SD else "high",
                                        p["low"] if a > _TRUNCATION_REACH_SD else p["high"],
                                        f"truncation bounds that bracket the bulk of the normal (within "
                                        f"{_TRUNCATION_REACH_SD:g} sd of mean = {p['mean']!r})")
    elif kind in ("uniform", "beta"):
        if kind == "beta":
            for key in ("alpha", "beta"):
                if p[key] <= 0:
                    raise DistributionError(key, p[key], f"{key} > 0")
                if p[key] > _MAX_SHAPE:
                    raise DistributionError(key, p[key], f"{key} <= {_MAX_SHAPE:g} (a narrower "
                                            "beta is a fixed value: write a plain number)")
        if p["low"] == p["high"]:
            raise DistributionError("high", p["high"], "high > low; for a fixed value write a plain number instead of a distribution")
        if p["low"] > p["high"]:
            raise DistributionError("high", p["high"], f"high > low = {p['low']!r}")
    elif kind in ("triangular", "pert"):
        if p["min"] == p["max"]:
            raise DistributionError("max", p["max"], "max > min; for a fixed value write a plain number instead of a distribution")
        if p["min"] > p["max"]:
            raise DistributionError("max", p["max"], f"max > min = {p['min']!r}")
        if not p["min"] <= p["mode"] <= p["max"]:
            raise DistributionError("mode", p["mode"], f"min <= mode <= max, i.e. in [{p['min']!r}, {p['max']!r}]")
        if kind == "pert" and not 0 < p["shape"] <= _MAX_SHAPE:
            raise DistributionError("shape", p["shape"],
                                    f"0 < shape <= {_MAX_SHAPE:g} (4 is the classic PERT)")
    return out


def _with_defaults(kind: str, params: Mapping[str, float]) -> dict[str, float]:
    if kind == "lognormal":
        return dict(params)
    return {**KINDS[kind][1], **dict(params)}


def _pert_alpha_beta(p: Mapping[str, float]) -> tuple[float, float]:
    span = p["max"] - p["min"]
    lam = p["shape"]
    return 1.0 + lam * (p["mode"] - p["min"]) / span, 1.0 + lam * (p["max"] - p["mode"]) / span


def _lognormal_mu_sigma(p: Mapping[str, float]) -> tuple[float, float]:
    if "median" in p:
        return math.log(p["median"]), p["log_sd"]
    cv = p["cv"]
    # log(1 + cv^2) without squaring a large cv (cv**2 overflows past ~1.3e154)
    sigma2 = math.log1p(cv * cv) if cv < 1.0 else 2.0 * math.log(cv) + math.log1p((1.0 / cv) ** 2)
    return math.log(p["mean"]) - 0.5 * sigma2, math.sqrt(sigma2)


def _build_scipy(kind: str, p: Mapping[str, float]) -> Any:
    if kind == "normal":
        return stats.norm(loc=p["mean"], scale=p["sd"])
    if kind == "truncnormal":
        a = (p["low"] - p["mean"]) / p["sd"]
        b = (p["high"] - p["mean"]) / p["sd"]
        return stats.truncnorm(a, b, loc=p["mean"], scale=p["sd"])
    if kind == "lognormal":
        mu, sigma = _lognormal_mu_sigma(p)
        return stats.lognorm(s=sigma, scale=math.exp(mu))
    if kind == "uniform":
        return stats.uniform(loc=p["low"], scale=p["high"] - p["low"])
    if kind == "triangular":
        span = p["max"] - p["min"]
        return stats.triang(c=(p["mode"] - p["min"]) / span, loc=p["min"], scale=span)
    if kind == "pert":
        a, b = _pert_alpha_beta(p)
        return stats.beta(a, b, loc=p["min"], scale=p["max"] - p["min"])
    return stats.beta(p["alpha"], p["beta"], loc=p["low"], scale=p["high"] - p["low"])


def _fast_quantile(kind: str, p: Mapping[str, float]) -> BetaQuantile | None:
    """The fast quantile of a PERT or beta marginal (a, b >= 1), else None (scipy's own)."""
    if kind == "pert":
        a, b = _pert_alpha_beta(p)
        lo, hi = p["min"], p["max"]
    elif kind == "beta":
        a, b, lo, hi = p["alpha"], p["beta"], p["low"], p["high"]
    else:
        return None
    if a < 1.0 or b < 1.0:
        return None
    return BetaQuantile(a, b, lo, hi)


def _fmt(*values: float) -> str:
    """Format numbers with a shared number of decimals (at most 4) that shows them all."""
    finite = [v for v in values if math.isfinite(v)]
    for decimals in range(0, 5):
        if all(abs(round(v, decimals) - v) <= 1e-9 * max(1.0, abs(v)) for v in finite):
            break
    else:
        return ", ".join(f"{v:.4g}" for v in values)
    return ", ".join(f"{v:.{decimals}f}" if math.isfinite(v) else ("inf" if v > 0 else "-inf") for v in values)
