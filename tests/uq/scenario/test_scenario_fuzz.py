"""Property-based fuzzing of the scenario loader.

The property (the loader's documented contract, uq/scenario.py module docstring): for any
document, :func:`uq.scenario.parse_scenario` either returns a :class:`Scenario` or raises
:class:`ScenarioError` whose message is exactly one line and starts with the source label.
No other exception (TypeError, KeyError, OverflowError, a scipy error, ...) may escape.

Documents are mutations of the two demo files (configs/*.toml): keys deleted, unknown keys
added, values replaced by values of any TOML type (and ``None`` and numpy scalars, which a
mapping built in Python may hold), random distribution tables, random leg lists and random
correlation entries; and, on the text side, lines of the demo files deleted, duplicated or
given a new right-hand side. There is no expected number here, so no source to cite: the
oracle is the contract itself.

Examples (hypothesis, derandomized so the run is reproducible): 4 properties x 150 examples
in the default run, 4 x 1500 in the ``slow`` variant.
"""
from __future__ import annotations

import copy
import datetime
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from uq.scenario.distributions import KINDS
from uq.scenario import Scenario, ScenarioError, parse_scenario

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
DEMO_TEXT = {p.name: p.read_text(encoding="utf-8") for p in sorted(CONFIGS.glob("*.toml"))}
DEMO_DOC = {name: tomllib.loads(text) for name, text in DEMO_TEXT.items()}
SOURCES = ("fuzz.toml", "configs/a scenario with spaces.toml")

DEFAULT_EXAMPLES = 150
SLOW_EXAMPLES = 1500


def fuzz_settings(n):
    return settings(max_examples=n, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


# ------------------------------------------------------------------------------ the oracle
def check_contract(document, source):
    """parse_scenario returns a Scenario or raises a one-line ScenarioError naming ``source``."""
    try:
        result = parse_scenario(document, source=source)
    except ScenarioError as exc:
        message = str(exc)
        # splitlines() knows every line boundary (\n, \r, \v, \f, \x1c-\x1e, \x85, \u2028/9)
        assert len(message.splitlines()) == 1, f"not one line: {message!r}"
        assert message.startswith(f"{source}: "), f"source not named first: {message!r}"
        return None
    assert isinstance(result, Scenario)
    names = result.input_names
    assert len(set(names)) == len(names), f"duplicate input names {names}"
    return result


# ------------------------------------------------------------------------------ strategies
SPECIAL_NUMBERS = [0, 0.0, -0.0, 1, -1, 0.5, 1.0, 1e-3, 1e-320, 5e-324, -1e-320, 1e308, -1e308,
                   1.7976931348623157e308, math.inf, -math.inf, math.nan, 2**63, -(2**63),
                   10**400, -(10**400), 2**1024]
numbers = st.one_of(
    st.sampled_from(SPECIAL_NUMBERS),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=-2.0, max_value=2.0),
    st.integers(min_value=-(10**30), max_value=10**30),
    st.integers(min_value=-5, max_value=5).map(lambda k: 10.0 ** (3 * k)),
)
odd_text = st.text(alphabet=st.characters(codec="utf-8"), max_size=12)
line_breaking_text = st.sampled_from(["a\nb", "a\rb", "a\u2028b", "a\x85b", "a\x0bb", "a\x1cb", "", " "])
keys = st.one_of(st.sampled_from(["dist", "name", "kind", "mean", "sd", "low", "high", "min",
                                  "mode", "max", "length_km", "speed_m_s", "glide_angle_deg",
                                  "hull", "drag", "polar", "inputs", "rank", "tests"]),
                 odd_text, line_breaking_text)
scalars = st.one_of(
    numbers, numbers, odd_text, line_breaking_text, st.booleans(), st.none(),
    st.datetimes(min_value=datetime.datetime(1900, 1, 1)), st.dates(), st.times(),
    st.sampled_from([np.float64(0.3), np.int64(7), np.bool_(True), np.float32(1e38),
                     np.float64(np.nan)]),
)
values = st.recursive(
    scalars,
    lambda children: st.one_of(st.lists(children, max_size=4),
                               st.dictionaries(keys, children, max_size=4)),
    max_leaves=8,
)
plausible = st.floats(min_value=-3.0, max_value=3.0, allow_nan=False)


@st.composite
def distribution_tables(draw):
    """A distribution table: a family (known or not) with right, wrong or missing params."""
    style = draw(st.sampled_from(["proper", "proper", "random", "odd-kind"]))
    if style == "odd-kind":
        table = {"dist": draw(st.one_of(values, st.sampled_from(["Normal", "pertt", "gauss"])))}
    else:
        table = {"dist": draw(st.sampled_from(sorted(KINDS)))}
    kind = table["dist"]
    if style == "proper" and kind in KINDS:
        num = st.one_of(plausible, plausible, numbers)
        if kind in ("triangular", "pert"):
            a, b, c = sorted(draw(st.lists(plausible, min_size=3, max_size=3)))
            table.update({"min": a, "mode": b, "max": c})
            if kind == "pert" and draw(st.booleans()):
                table["shape"] = draw(num)
        elif kind == "lognormal":
            first, spread = draw(st.sampled_from([("median", "log_sd"), ("mean", "cv")]))
            table.update({first: draw(num), spread: draw(num)})
        elif kind == "uniform":
            table.update(dict(zip(("low", "high"), sorted(draw(st.lists(plausible, min_size=2, max_size=2))))))
        elif kind == "beta":
            table.update({"alpha": draw(num), "beta": draw(num)})
            if draw(st.booleans()):
                table.update(dict(zip(("low", "high"), sorted(draw(st.lists(plausible, min_size=2, max_size=2))))))
        else:  # normal, truncnormal
            table.update({"mean": draw(num), "sd": draw(num)})
            if kind == "truncnormal":
                for bound in ("low", "high"):
                    if draw(st.booleans()):
                        table[bound] = draw(st.one_of(num, st.sampled_from([math.inf, -math.inf])))
        # sometimes one wrong-typed or extra parameter on top
        if draw(st.integers(0, 4)) == 0:
            table[draw(keys)] = draw(values)
    else:
        names = ["mean", "sd", "low", "high", "median", "log_sd", "cv", "min", "mode", "max",
                 "shape", "alpha", "beta"]
        for name in draw(st.lists(st.sampled_from(names), max_size=5, unique=True)):
            table[name] = draw(st.one_of(numbers, values))
    return table


def _paths(node, prefix=()):
    """Every path (tuple of keys / list indices) below ``node``, parents before children."""
    out = []
    items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
    for key, child in items:
        path = prefix + (key,)
        out.append(path)
        out.extend(_paths(child, path))
    return out


def _container(doc, path):
    node = doc
    for key in path[:-1]:
        node = node[key]
    return node


def _is_numeric_field(value):
    return (isinstance(value, (int, float)) and not isinstance(value, bool)) or (
        isinstance(value, dict) and "dist" in value)


def _uncertain_names(doc):
    """Dotted input names of the distribution tables in a (demo) document."""
    names = []
    for path in _paths(doc):
        value = _container(doc, path)[path[-1]]
        if isinstance(value, dict) and "dist" in value:
            parts = list(path)
            if parts[0] == "legs" and isinstance(parts[1], int):
                leg = doc["legs"][parts[1]]
                parts[1] = leg.get("name", "?") if isinstance(leg, dict) else "?"
            names.append(".".join(str(p) for p in parts))
    return names


@st.composite
def legs_lists(draw, base_legs):
    fields = ["length_km", "current_along_m_s", "current_across_m_s", "temperature_C",
              "practical_salinity", "ice_ceiling_m", "seabed_m", "fouling_growth_factor",
              "hotel_load_W"]
    legs = []
    for i in range(draw(st.integers(0, 4))):
        if base_legs and draw(st.booleans()):
            leg = copy.deepcopy(draw(st.sampled_from(base_legs)))
        else:
            leg = {"name": f"leg{i}", "length_km": draw(st.one_of(plausible, numbers))}
        for name in draw(st.lists(st.sampled_from(fields + ["name", "typo_km"]), max_size=3)):
            leg[name] = draw(st.one_of(numbers, distribution_tables(), values,
                                       st.sampled_from(["leg0", "leg1", "bad name", ""])))
        if draw(st.integers(0, 5)) == 0:
            leg.pop(draw(st.sampled_from(sorted(leg, key=str))), None)
        legs.append(leg)
    if draw(st.integers(0, 6)) == 0:
        legs.append(draw(values))
    return legs


@st.composite
def correlation_lists(draw, names):
    pool = st.one_of(st.sampled_from(names), odd_text) if names else odd_text
    out = []
    for _ in range(draw(st.integers(0, 4))):
        entry = {"inputs": draw(st.one_of(st.lists(pool, min_size=0, max_size=3), values)),
                 "rank": draw(st.one_of(st.floats(-1.0, 1.0), numbers, values))}
        if draw(st.integers(0, 5)) == 0:
            entry.pop(draw(st.sampled_from(["inputs", "rank"])))
        if draw(st.integers(0, 5)) == 0:
            entry[draw(keys)] = draw(values)
        out.append(entry)
    return out


@st.composite
def mutated_documents(draw):
    """A demo document with 1-4 random mutations."""
    doc = copy.deepcopy(DEMO_DOC[draw(st.sampled_from(sorted(DEMO_DOC)))])
    names = _uncertain_names(doc)
    base_legs = copy.deepcopy(doc.get("legs", []))
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["delete", "unknown", "replace", "distribution", "fix",
                                   "legs", "correlations", "kind"]))
        paths = _paths(doc)
        if op == "delete" and paths:
            path = draw(st.sampled_from(paths))
            del _container(doc, path)[path[-1]]
        elif op == "unknown":
            tables = [()] + [p for p in paths if isinstance(_container(doc, p)[p[-1]], dict)]
            path = draw(st.sampled_from(tables))
            node = doc if not path else _container(doc, path)[path[-1]]
            node[draw(keys)] = draw(values)
        elif op == "replace" and paths:
            path = draw(st.sampled_from(paths))
            _container(doc, path)[path[-1]] = draw(values)
        elif op in ("distribution", "fix"):
            numeric = [p for p in paths if _is_numeric_field(_container(doc, p)[p[-1]])]
            if numeric:
                path = draw(st.sampled_from(numeric))
                new = distribution_tables() if op == "distribution" else numbers
                _container(doc, path)[path[-1]] = draw(new)
        elif op == "legs":
            doc["legs"] = draw(legs_lists(base_legs))
        elif op == "correlations":
            doc["correlations"] = draw(correlation_lists(names))
        elif op == "kind" and isinstance(doc.get("vehicle"), dict):
            doc["vehicle"]["kind"] = draw(st.one_of(st.sampled_from(["propeller", "glider"]), values))
    return doc


TOML_LITERALS = ['"text"', '""', "true", "false", "0", "-0.0", "1e-320", "1e999", "-1e999",
                 "inf", "-inf", "nan", "+nan", "99999999999999999999999999", "-99999999999999999999",
                 "1.7976931348623157e308", "[1, 2]", "[]", "{}", '{dist = "normal", mean = 0, sd = 0}',
                 '{dist = "lognormal", mean = 1, cv = 1e200}', '{dist = "pert", min = 1e308, mode = 1e308, max = 1.7e308}',
                 '{dist = "uniform", low = -1e308, high = 1e308}', '{dist = "truncnormal", mean = 0, sd = 1e-320, low = 0}',
                 "9" * 400, "-" + "9" * 400, "9" * 5000, '{dist = "normal", mean = 0, sd = ' + "9" * 400 + "}",
                 "1979-05-27", "07:32:00", "1979-05-27T07:32:00Z", '"a\\u2028b"', '"a\\nb"']


@st.composite
def mutated_texts(draw):
    """A demo file with 1-4 line-level edits (may no longer be valid TOML)."""
    lines = DEMO_TEXT[draw(st.sampled_from(sorted(DEMO_TEXT)))].splitlines()
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["delete", "duplicate", "rhs", "rhs", "insert"]))
        if op == "delete":
            del lines[i]
        elif op == "duplicate":
            lines.insert(i, lines[i])
        elif op == "rhs":
            assignments = [k for k, line in enumerate(lines) if "=" in line and not line.lstrip().startswith("#")]
            k = draw(st.sampled_from(assignments))
            key = lines[k].split("=", 1)[0]
            literal = draw(st.one_of(st.sampled_from(TOML_LITERALS),
                                     st.floats().map(lambda v: repr(v).replace("inf", "inf"))))
            lines[k] = f"{key}= {literal}"
        else:
            lines.insert(i, draw(st.one_of(odd_text, st.sampled_from(
                ["unknown_key = 1", "[unknown_section]", "[[legs]]", "[vehicle]", "kind = 'glider'",
                 "[[correlations]]", "inputs = ['vehicle.hotel_load_W', 'vehicle.hotel_load_W']",
                 "rank = 0.99"]))))
    return "\n".join(lines) + "\n"


# ------------------------------------------------------------------------------ properties
@fuzz_settings(DEFAULT_EXAMPLES)
@given(doc=mutated_documents(), source=st.sampled_from(SOURCES))
def test_mutated_mappings_give_scenario_or_one_line_error(doc, source):
    check_contract(doc, source)


@fuzz_settings(DEFAULT_EXAMPLES)
@given(text=mutated_texts(), source=st.sampled_from(SOURCES))
def test_mutated_toml_text_gives_scenario_or_one_line_error(text, source):
    check_contract(text, source)


@fuzz_settings(DEFAULT_EXAMPLES)
@given(table=distribution_tables(), field=st.sampled_from(
    [("vehicle", "hotel_load_W"), ("battery", "cold_derating"), ("setpoint", "glide_angle_deg"),
     ("fouling", "time_constant_days"), ("legs", 0, "current_across_m_s"), ("legs", 1, "seabed_m")]))
def test_random_distribution_on_a_field_gives_scenario_or_one_line_error(table, field):
    doc = copy.deepcopy(DEMO_DOC["glider_transit.toml"])
    _container(doc, field)[field[-1]] = table
    check_contract(doc, "fuzz.toml")


@fuzz_settings(DEFAULT_EXAMPLES)
@given(doc=st.one_of(st.dictionaries(keys, values, max_size=6),
                     st.fixed_dictionaries({"scenario": values, "vehicle": values, "battery": values,
                                            "setpoint": values, "legs": values})))
def test_arbitrary_mappings_give_scenario_or_one_line_error(doc):
    check_contract(doc, "fuzz.toml")


@pytest.mark.slow
@fuzz_settings(SLOW_EXAMPLES)
@given(doc=mutated_documents(), text=mutated_texts(), table=distribution_tables())
def test_fuzz_many_examples(doc, text, table):
    check_contract(doc, "fuzz.toml")
    check_contract(text, "fuzz.toml")
    glider = copy.deepcopy(DEMO_DOC["glider_transit.toml"])
    glider["vehicle"]["pump_efficiency"] = table
    check_contract(glider, "fuzz.toml")


# ------------------------------------------------------------------------------ regressions
# Cases the fuzzer found (kept as plain tests so they run even if the strategies change).
def _glider_with(path, value):
    doc = copy.deepcopy(DEMO_DOC["glider_transit.toml"])
    _container(doc, path)[path[-1]] = value
    return doc


REGRESSIONS = {
    # a parameter name holding a line break other than \n / \r (U+2028, U+0085, \v) went
    # into the message raw, so str.splitlines() split it
    "line-separator-in-parameter-name": _glider_with(
        ("vehicle", "hotel_load_W"), {"dist": "pert", "min": 0.3, "mode": 0.4, "max": 0.5, "\u2028": 1}),
    # (guards, already handled by repr() of unknown keys)
    "next-line-in-key": _glider_with(("battery", "a\x85b"), 1.0),
    "vertical-tab-in-source-free-key": _glider_with(("setpoint", "x\x0by"), 1.0),
    # an integer past the float range: float(int) raised OverflowError
    "huge-integer-plain": _glider_with(("vehicle", "hotel_load_W"), 10**400),
    "huge-negative-integer-plain": _glider_with(("legs", 0, "current_along_m_s"), -(10**400)),
    "huge-integer-parameter": _glider_with(("vehicle", "hotel_load_W"), {"dist": "normal", "mean": 10**400, "sd": 1}),
    # ... and one past Python's int -> str digit limit: repr() raised ValueError
    "integer-past-digit-limit": _glider_with(("vehicle", "hotel_load_W"), 10**5000),
    "integer-past-digit-limit-parameter": _glider_with(
        ("vehicle", "hotel_load_W"), {"dist": "normal", "mean": 0.3, "sd": 10**5000}),
    # lognormal (mean, cv) with cv > ~1.3e154: cv**2 raised OverflowError
    "lognormal-huge-cv": _glider_with(("vehicle", "hotel_load_W"), {"dist": "lognormal", "mean": 0.3, "cv": 1e200}),
}


@pytest.mark.parametrize("doc", list(REGRESSIONS.values()), ids=list(REGRESSIONS))
def test_regression_mappings(doc):
    check_contract(doc, "fuzz.toml")


@pytest.mark.parametrize("literal", ["9" * 400, "9" * 5000], ids=["400-digits", "5000-digits"])
def test_regression_huge_integer_in_toml_text(literal):
    # tomllib reads integers of any size; past 4300 digits it raises a plain ValueError
    text = DEMO_TEXT["glider_transit.toml"].replace("glide_angle_deg = 26.0", f"glide_angle_deg = {literal}")
    with pytest.raises(ScenarioError, match=r"^fuzz\.toml: ") as caught:
        parse_scenario(text, source="fuzz.toml")
    assert len(str(caught.value).splitlines()) == 1


def test_lognormal_huge_cv_keeps_its_median():
    # derived: a lognormal with mean m and cv has median m / sqrt(1 + cv^2); for cv = 1e200,
    # 0.3 / 1e200 = 3e-201. Tolerance 1e-9 relative: a few rounding steps through log/exp.
    scenario = check_contract(REGRESSIONS["lognormal-huge-cv"], "fuzz.toml")
    marginal = next(m for m in scenario.inputs if m.name == "vehicle.hotel_load_W")
    assert marginal.median == pytest.approx(3e-201, rel=1e-9)


def test_lognormal_small_cv_keeps_its_sd():
    # derived: the sd of a lognormal given by (mean, cv) is mean * cv exactly; the overflow-safe
    # branch must not touch small cv. Tolerance 1e-12: float agreement of a closed form.
    doc = _glider_with(("vehicle", "hotel_load_W"), {"dist": "lognormal", "mean": 0.3, "cv": 1e-4})
    marginal = next(m for m in check_contract(doc, "fuzz.toml").inputs if m.name == "vehicle.hotel_load_W")
    assert marginal.std == pytest.approx(0.3e-4, rel=1e-12)
