"""Scenario files: parsing and one-line validation errors (distributions: test_distributions.py)."""
from __future__ import annotations

import dataclasses
import hashlib
import math
import re
import tomllib
from pathlib import Path

import pytest

from uq.scenario import (
    GliderVehicle,
    HullGeometry,
    PropellerVehicle,
    Scenario,
    ScenarioError,
    load_scenario,
    parse_scenario,
)

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
UNDER_ICE = CONFIGS / "under_ice_section.toml"
GLIDER = CONFIGS / "glider_transit.toml"


# ------------------------------------------------------------------------ small base files
PROPELLER = """
[scenario]
name = "test-propeller"

[vehicle]
kind = "propeller"
name = "test AUV"
hotel_load_W = 40.0
propulsive_efficiency = {dist = "pert", min = 0.30, mode = 0.38, max = 0.44}

[vehicle.hull]
length_m = 4.0
diameter_m = 0.5
appendage_factor = 1.2

[battery]
nominal_energy_Wh = 10000.0
cold_derating = {dist = "uniform", low = 0.85, high = 0.95}
reserve_fraction = 0.15

[setpoint]
speed_m_s = 1.5

[[legs]]
name = "first"
length_km = 50.0
current_along_m_s = {dist = "normal", mean = 0.0, sd = 0.05}
ice_ceiling_m = 10.0
seabed_m = 200.0

[[legs]]
name = "second"
length_km = 80.0
current_along_m_s = {dist = "normal", mean = 0.05, sd = 0.05}

[[correlations]]
inputs = ["legs.first.current_along_m_s", "legs.second.current_along_m_s"]
rank = 0.4

[decision]
required_probability = 0.9
ship_day_rate = 30000.0

[[decision.tests]]
name = "bench"
cost = 10000.0
inputs = ["vehicle.propulsive_efficiency"]
residual_fraction = 0.2

[analysis]
samples = 1024
seed = 1
scheme = "sobol"
sensitivity_base_n = 256
"""

GLIDER_BASE = """
[scenario]
name = "test-glider"

[vehicle]
kind = "glider"
name = "test glider"
hotel_load_W = 0.4
pump_efficiency = {dist = "pert", min = 0.20, mode = 0.27, max = 0.35}

[vehicle.polar]
reference_area_m2 = 0.1
zero_lift_drag = 0.08
induced_drag_factor = 0.4
max_lift_coefficient = 0.9

[battery]
nominal_energy_Wh = 3000.0

[setpoint]
glide_angle_deg = 26.0
net_buoyancy_N = 1.6
top_depth_m = 0.0
bottom_depth_m = 1000.0

[[legs]]
name = "only"
length_km = 500.0
"""


def edit(base: str, old: str, new: str) -> str:
    """Replace exactly one occurrence of ``old`` (so a stale edit fails loudly)."""
    assert base.count(old) == 1, f"edit target {old!r} occurs {base.count(old)} times"
    return base.replace(old, new)


def parse(text: str) -> Scenario:
    return parse_scenario(text, source="case.toml")


# ------------------------------------------------------------------------ demos
def test_both_demos_load():
    ice = load_scenario(UNDER_ICE)
    glider = load_scenario(GLIDER)
    assert isinstance(ice.vehicle, PropellerVehicle) and ice.vehicle.kind == "propeller"
    assert isinstance(ice.vehicle.drag, HullGeometry)
    assert isinstance(glider.vehicle, GliderVehicle) and glider.vehicle.kind == "glider"
    # the brief asks for a transit of at least 1,600 km
    assert glider.route_length_km >= 1600.0
    for scenario, path in ((ice, UNDER_ICE), (glider, GLIDER)):
        assert scenario.source_path == str(path)
        # reference: hashlib over the file bytes
        assert scenario.source_sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_dotted_names_use_the_leg_name():
    ice = load_scenario(UNDER_ICE)
    names = ice.input_names
    assert "legs.skerrow_ice_crossing.current_along_m_s" in names
    assert "legs.skerrow_ice_crossing.hotel_load_W" in names
    assert "vehicle.hull.appendage_factor" in names
    assert "battery.cold_derating" in names
    assert not any(re.search(r"legs\.\d", n) for n in names)
    leg = ice.legs[1]
    assert leg.current_along_m_s.name == "legs.skerrow_ice_crossing.current_along_m_s"
    assert leg.current_along_m_s.unit == "m/s"


def _distribution_paths_in_file_order(doc, prefix=""):
    """Independent walk over tomllib's (insertion-ordered) tables."""
    out = []
    for key, value in doc.items():
        if prefix == "" and key in ("decision", "analysis", "correlations"):
            continue
        if isinstance(value, dict) and "dist" in value:
            out.append(f"{prefix}{key}")
        elif isinstance(value, dict):
            out += _distribution_paths_in_file_order(value, f"{prefix}{key}.")
        elif key == "legs":
            for leg in value:
                out += _distribution_paths_in_file_order(
                    {k: v for k, v in leg.items() if k != "name"}, f"legs.{leg['name']}.")
    return out


@pytest.mark.parametrize("path", [UNDER_ICE, GLIDER], ids=["under_ice", "glider"])
def test_inputs_are_every_distribution_in_file_order(path):
    expected = _distribution_paths_in_file_order(tomllib.loads(path.read_text()))
    assert load_scenario(path).input_names == tuple(expected)


def test_glider_demo_names_the_required_uncertain_inputs():
    names = set(load_scenario(GLIDER).input_names)
    # the brief: drag, pump efficiency, fouling rate, current speed, battery, hotel load
    assert {
        "vehicle.polar.zero_lift_drag",
        "vehicle.pump_efficiency",
        "fouling.time_constant_days",
        "legs.boundary_current_crossing.current_across_m_s",
        "battery.cold_derating",
        "vehicle.hotel_load_W",
    } <= names


def test_mapping_and_text_give_the_same_scenario():
    from_text = parse(PROPELLER)
    from_mapping = parse_scenario(tomllib.loads(PROPELLER), source="case.toml")
    assert dataclasses.replace(from_text, source_sha256=None) == from_mapping
    assert from_text.source_sha256 == hashlib.sha256(PROPELLER.encode()).hexdigest()


def test_defaults_and_fixed_values():
    s = parse(GLIDER_BASE)
    assert s.legs[0].seabed_m == math.inf  # dataclass default: no seabed limit
    assert s.vehicle.polar.span_efficiency == 1.0
    assert s.inputs == (s.vehicle.pump_efficiency,)
    assert s.description == ""


def test_name_and_description_are_kept_verbatim():
    text = edit(PROPELLER, 'name = "test-propeller"',
                'name = "  <b>odd</b> & name  "\ndescription = """two\nlines"""')
    s = parse(text)
    assert s.name == "  <b>odd</b> & name  "
    assert s.description == "two\nlines"


def test_string_is_never_evaluated():
    text = edit(PROPELLER, "length_m = 4.0", "length_m = \"__import__('os').getcwd()\"")
    with pytest.raises(ScenarioError, match=r"vehicle\.hull\.length_m = .*expected a number"):
        parse(text)


def test_correlations_and_tests_are_typed():
    s = parse(PROPELLER)
    (corr,) = s.correlations
    assert corr.inputs == ("legs.first.current_along_m_s", "legs.second.current_along_m_s")
    assert corr.coefficient == 0.4
    (test,) = s.decision.tests
    assert test.inputs == ("vehicle.propulsive_efficiency",) and test.residual_fraction == 0.2


# ------------------------------------------------------------------------ bad inputs
# (base, old, new, expected match). Every match names the key path and the expectation.
BAD = [
    # structure and keys
    ("prop-unknown-section", PROPELLER, "[battery]", "[batery]",
     r"batery = .*expected a known key of the top level.*did you mean 'battery'\?"),
    ("prop-unknown-key", PROPELLER, "hotel_load_W = 40.0", "hotel_load_w = 40.0",
     r"vehicle\.hotel_load_w = 40\.0: expected a known key of \[vehicle\].*did you mean 'hotel_load_W'\?"),
    ("prop-missing-kind", PROPELLER, 'kind = "propeller"\n', "",
     r"vehicle\.kind = <missing>: expected the vehicle kind, stated explicitly"),
    ("prop-misspelt-kind", PROPELLER, 'kind = "propeller"', 'kind = "propellor"',
     r"vehicle\.kind = 'propellor': expected the vehicle kind.*did you mean 'propeller'\?"),
    ("prop-glider-key", PROPELLER, "hotel_load_W = 40.0", "hotel_load_W = 40.0\npump_efficiency = 0.3",
     r"vehicle\.pump_efficiency = 0\.3: expected a key of \[vehicle\] \('pump_efficiency' belongs to kind = 'glider'\)$"),
    ("prop-missing-required", PROPELLER, "hotel_load_W = 40.0\n", "",
     r"vehicle\.hotel_load_W = <missing>: expected a value for required key 'hotel_load_W' in \[vehicle\]"),
    ("missing-section", PROPELLER, "[battery]\nnominal_energy_Wh = 10000.0\n"
     'cold_derating = {dist = "uniform", low = 0.85, high = 0.95}\nreserve_fraction = 0.15\n', "",
     r"case\.toml: battery = <missing>: expected a \[battery\] section"),
    ("toml-syntax", PROPELLER, "speed_m_s = 1.5", "speed_m_s = = 1.5",
     r"^case\.toml: expected valid TOML \(.*line \d+"),
    ("prop-hull-and-drag", PROPELLER, "[battery]",
     '[vehicle.drag]\ncoefficient = 0.1\nreference_area_m2 = 0.2\nreference = "frontal"\n\n[battery]',
     r"vehicle\.drag = .*expected exactly one of \[vehicle\.hull\] or \[vehicle\.drag\], not both"),
    ("prop-no-hull", PROPELLER, "[vehicle.hull]\nlength_m = 4.0\ndiameter_m = 0.5\nappendage_factor = 1.2\n", "",
     r"vehicle\.hull = <missing>: expected exactly one of \[vehicle\.hull\] \(geometry\) or \[vehicle\.drag\]"),
    ("prop-drag-reference", PROPELLER, "[vehicle.hull]\nlength_m = 4.0\ndiameter_m = 0.5\nappendage_factor = 1.2\n",
     '[vehicle.drag]\ncoefficient = 0.1\nreference_area_m2 = 0.2\nreference = "frontl"\n',
     r"vehicle\.drag\.reference = 'frontl': expected the area the coefficient refers to.*did you mean 'frontal'\?"),
    # types
    ("bool-is-not-a-number", PROPELLER, "hotel_load_W = 40.0", "hotel_load_W = true",
     r"vehicle\.hotel_load_W = True: expected a number or a distribution table .*\(true/false is not a number\)"),
    ("string-is-not-a-number", PROPELLER, "length_m = 4.0", 'length_m = "4.0"',
     r"vehicle\.hull\.length_m = '4\.0': expected a number or a distribution table .*, not a string"),
    ("nan", PROPELLER, "speed_m_s = 1.5", "speed_m_s = nan",
     r"setpoint\.speed_m_s = nan: expected a number, not nan"),
    ("inf-where-finite", PROPELLER, "length_km = 50.0", "length_km = inf",
     r"legs\.first\.length_km = inf: expected a finite number \(a length \[km\] in \(0, inf\)\)"),
    ("integer-expected", PROPELLER, "samples = 1024", "samples = 1024.0",
     r"analysis\.samples = 1024\.0: expected an integer \(number of samples\)"),
    # impossible fixed values
    ("efficiency-above-one", PROPELLER, "propulsive_efficiency = {dist = \"pert\", min = 0.30, mode = 0.38, max = 0.44}",
     "propulsive_efficiency = 1.2", r"vehicle\.propulsive_efficiency = 1\.2: expected an efficiency in \(0, 1\]"),
    ("appendage-below-one", PROPELLER, "appendage_factor = 1.2", "appendage_factor = 0.9",
     r"vehicle\.hull\.appendage_factor = 0\.9: expected an appendage factor .* in \[1, inf\)"),
    ("diameter-over-length", PROPELLER, "diameter_m = 0.5", "diameter_m = 5.0",
     r"vehicle\.hull\.diameter_m = 5\.0: expected a diameter smaller than vehicle\.hull\.length_m"),
    ("zero-energy", PROPELLER, "nominal_energy_Wh = 10000.0", "nominal_energy_Wh = 0",
     r"battery\.nominal_energy_Wh = 0: expected an energy \[Wh\] in \(0, inf\)"),
    ("reserve-one", PROPELLER, "reserve_fraction = 0.15", "reserve_fraction = 1.0",
     r"battery\.reserve_fraction = 1\.0: expected a fraction in \[0, 1\)"),
    ("fade-too-fast", PROPELLER, "reserve_fraction = 0.15", "reserve_fraction = 0.15\nfade_per_day = 0.06",
     r"battery\.fade_per_day = 0\.06: expected a capacity fade \[1/day\] in \[0, 0\.05\)"),
    ("ice-below-seabed", PROPELLER, "ice_ceiling_m = 10.0", "ice_ceiling_m = 250.0",
     r"legs\.first\.seabed_m = 200\.0: expected a seabed deeper than legs\.first\.ice_ceiling_m = 250$"),
    ("uncertain-ice-below-seabed", PROPELLER, "ice_ceiling_m = 10.0",
     'ice_ceiling_m = {dist = "pert", min = 5.0, mode = 10.0, max = 220.0}',
     r"legs\.first\.seabed_m = 200\.0: expected a seabed deeper than legs\.first\.ice_ceiling_m "
     r"\(which is PERT\(5, 10, 220\), as large as 220\)"),
    ("temperature-range", PROPELLER, "length_km = 80.0", "length_km = 80.0\ntemperature_C = 45.0",
     r"legs\.second\.temperature_C = 45\.0: expected an in-situ seawater temperature \[degC\] in \[-3, 40\]"),
    ("leg-unknown-key", PROPELLER, "seabed_m = 200.0", "seabed = 200.0",
     r"legs\.first\.seabed = 200\.0: expected a known key of \[legs\.first\].*did you mean 'seabed_m'\?"),
    # route
    ("empty-route", "legs = []\n" + GLIDER_BASE.replace('[[legs]]\nname = "only"\nlength_km = 500.0\n', ""),
     "[scenario]", "[scenario]",
     r"legs = \[\]: expected at least one \[\[legs\]\] table \(the route is empty\)"),
    ("duplicate-leg", PROPELLER, 'name = "second"', 'name = "first"',
     r"legs\[1\]\.name = 'first': expected a unique leg name \(legs\[0\] is already 'first'\)"),
    ("leg-name-chars", PROPELLER, 'name = "second"', 'name = "second.leg"',
     r"legs\[1\]\.name = 'second\.leg': expected a leg name of letters, digits, _ and - only"),
    ("leg-missing-length", GLIDER_BASE, "length_km = 500.0\n", "",
     r"legs\.only\.length_km = <missing>: expected a value for required key 'length_km'"),
    # distributions
    ("normal-efficiency", PROPELLER, 'propulsive_efficiency = {dist = "pert", min = 0.30, mode = 0.38, max = 0.44}',
     'propulsive_efficiency = {dist = "normal", mean = 0.38, sd = 0.04}',
     r"vehicle\.propulsive_efficiency = .*expected an efficiency in \(0, 1\], but Normal\(0\.38, 0\.04\) has support "
     r"\[-inf, inf\] which leaves it; use a bounded distribution, e\.g\. \{dist = \"truncnormal\".*high = 1\}.*pert"),
    ("normal-positive-field", PROPELLER, "hotel_load_W = 40.0", 'hotel_load_W = {dist = "normal", mean = 40.0, sd = 5.0}',
     r"vehicle\.hotel_load_W = .*expected a power \[W\] in \[0, inf\), but Normal.*leaves it; "
     r"use \{dist = \"lognormal\".*or \{dist = \"truncnormal\".*low = 0\}"),
    ("pert-exceeds-range", PROPELLER, "min = 0.30, mode = 0.38, max = 0.44", "min = 0.80, mode = 0.95, max = 1.10",
     r"vehicle\.propulsive_efficiency = .*but PERT\(0\.80, 0\.95, 1\.10\) has support \[0\.8, 1\.1\] which leaves it; "
     r"narrow it to lie within \(0, 1\]"),
    ("zero-sd", PROPELLER, "mean = 0.0, sd = 0.05", "mean = 0.0, sd = 0.0",
     r"legs\.first\.current_along_m_s\.sd = 0\.0: expected sd > 0; for a fixed value write a plain number"),
    ("zero-width-pert", PROPELLER, "min = 0.30, mode = 0.38, max = 0.44", "min = 0.38, mode = 0.38, max = 0.38",
     r"vehicle\.propulsive_efficiency\.max = 0\.38: expected max > min; for a fixed value write a plain number"),
    ("pert-mode-outside", PROPELLER, "min = 0.30, mode = 0.38, max = 0.44", "min = 0.30, mode = 0.50, max = 0.44",
     r"vehicle\.propulsive_efficiency\.mode = 0\.5: expected min <= mode <= max, i\.e\. in \[0\.3, 0\.44\]"),
    ("uniform-reversed", PROPELLER, "low = 0.85, high = 0.95", "low = 0.95, high = 0.85",
     r"battery\.cold_derating\.high = 0\.85: expected high > low = 0\.95"),
    ("unknown-family", PROPELLER, 'dist = "normal", mean = 0.0,', 'dist = "norml", mean = 0.0,',
     r"legs\.first\.current_along_m_s\.dist = 'norml': expected one of .*did you mean 'normal'\?"),
    ("unknown-parameter", PROPELLER, "mean = 0.0, sd = 0.05", "mean = 0.0, sigma = 0.05",
     r"legs\.first\.current_along_m_s\.sigma = 0\.05: expected a parameter of normal \(mean, sd\)"),
    ("lognormal-median", PROPELLER, "hotel_load_W = 40.0", 'hotel_load_W = {dist = "lognormal", median = -1.0, log_sd = 0.1}',
     r"vehicle\.hotel_load_W\.median = -1\.0: expected a median > 0"),
    ("lognormal-two-pairs", PROPELLER, "hotel_load_W = 40.0",
     'hotel_load_W = {dist = "lognormal", median = 40.0, log_sd = 0.1, cv = 0.1}',
     r"vehicle\.hotel_load_W\.cv = 0\.1: expected only one lognormal parametrisation"),
    ("lognormal-zero-cv", PROPELLER, "hotel_load_W = 40.0", 'hotel_load_W = {dist = "lognormal", mean = 40.0, cv = 0.0}',
     r"vehicle\.hotel_load_W\.cv = 0\.0: expected cv > 0; for a fixed value write a plain number"),
    ("truncation-misses", PROPELLER, "hotel_load_W = 40.0",
     'hotel_load_W = {dist = "truncnormal", mean = 40.0, sd = 1.0, low = 60.0, high = 70.0}',
     r"vehicle\.hotel_load_W\.low = 60\.0: expected truncation bounds that bracket the bulk of the normal"),
    ("beta-alpha", PROPELLER, "appendage_factor = 1.2",
     'appendage_factor = {dist = "beta", alpha = 0.0, beta = 2.0, low = 1.0, high = 1.5}',
     r"vehicle\.hull\.appendage_factor\.alpha = 0\.0: expected alpha > 0"),
    ("dist-bool-param", PROPELLER, "mean = 0.0, sd = 0.05", "mean = 0.0, sd = true",
     r"legs\.first\.current_along_m_s\.sd = True: expected a number \(true/false is not a number\)"),
    # correlations
    ("rank-one", PROPELLER, "rank = 0.4", "rank = 1.0",
     r"correlations\[0\]\.rank = 1\.0: expected a rank correlation in \(-1, 1\)"),
    ("rank-distribution", PROPELLER, "rank = 0.4", 'rank = {dist = "uniform", low = 0.1, high = 0.5}',
     r"correlations\[0\]\.rank = .*expected a plain number \(distributions are not allowed here\)"),
    ("correlation-fixed-input", PROPELLER, '"legs.second.current_along_m_s"]', '"vehicle.hotel_load_W"]',
     r"correlations\[0\]\.inputs = 'vehicle\.hotel_load_W': expected the name of an uncertain input "
     r"\('vehicle\.hotel_load_W' is a fixed number in this scenario\)"),
    ("correlation-not-pd", PROPELLER, "rank = 0.4",
     'rank = 0.9\n\n[[correlations]]\ninputs = ["legs.first.current_along_m_s", "battery.cold_derating"]\nrank = 0.9\n\n'
     '[[correlations]]\ninputs = ["legs.second.current_along_m_s", "battery.cold_derating"]\nrank = -0.9',
     r"correlations = \[0\.9, 0\.9, -0\.9\]: expected a positive-definite rank-correlation matrix over 3 inputs"),
    # decision
    ("probability-one", PROPELLER, "required_probability = 0.9", "required_probability = 1.0",
     r"decision\.required_probability = 1\.0: expected a probability in \(0, 1\)"),
    ("decision-distribution", PROPELLER, "ship_day_rate = 30000.0",
     'ship_day_rate = {dist = "uniform", low = 2e4, high = 4e4}',
     r"decision\.ship_day_rate = .*expected a plain number \(distributions are not allowed here\)"),
    ("currency", PROPELLER, "ship_day_rate = 30000.0", 'ship_day_rate = 30000.0\ncurrency = "euro"',
     r"decision\.currency = 'euro': expected an ISO 4217 currency code"),
    ("test-misspelt-input", PROPELLER, 'inputs = ["vehicle.propulsive_efficiency"]', 'inputs = ["vehicle.propulsive_eficiency"]',
     r"decision\.tests\[0\]\.inputs = 'vehicle\.propulsive_eficiency': expected the name of an uncertain input of "
     r"this scenario; did you mean 'vehicle\.propulsive_efficiency'\?"),
    ("test-residual-one", PROPELLER, "residual_fraction = 0.2", "residual_fraction = 1.0",
     r"decision\.tests\[0\]\.residual_fraction = 1\.0: expected a fraction in \[0, 1\)"),
    # analysis
    ("sobol-not-power-of-two", PROPELLER, "samples = 1024", "samples = 1000",
     r"analysis\.samples = 1000: expected a power of two for scheme = 'sobol'.*e\.g\. 1024"),
    ("scheme", PROPELLER, 'scheme = "sobol"', 'scheme = "sobel"',
     r"analysis\.scheme = 'sobel': expected the sampling scheme: one of .*did you mean 'sobol'\?"),
    # glider
    ("glide-angle", GLIDER_BASE, "glide_angle_deg = 26.0", "glide_angle_deg = 95.0",
     r"setpoint\.glide_angle_deg = 95\.0: expected a glide angle \[deg\] in \(0, 90\)"),
    ("net-buoyancy", GLIDER_BASE, "net_buoyancy_N = 1.6", "net_buoyancy_N = 0.0",
     r"setpoint\.net_buoyancy_N = 0\.0: expected a net buoyancy \[N\] in \(0, inf\)"),
    ("top-below-bottom", GLIDER_BASE, "top_depth_m = 0.0", "top_depth_m = 1000.0",
     r"setpoint\.bottom_depth_m = 1000\.0: expected a bottom depth deeper than setpoint\.top_depth_m"),
    ("glider-propeller-setpoint", GLIDER_BASE, "glide_angle_deg = 26.0", "glide_angle_deg = 26.0\nspeed_m_s = 0.3",
     r"setpoint\.speed_m_s = 0\.3: expected a key of \[setpoint\] \('speed_m_s' belongs to a propeller vehicle's \[setpoint\]\)"),
    ("glider-no-window", GLIDER_BASE, "length_km = 500.0", "length_km = 500.0\nice_ceiling_m = 1200.0",
     r"legs\.only\.ice_ceiling_m = 1200\.0: expected an ice ceiling shallower than setpoint\.bottom_depth_m"),
    ("polar-k-and-ar", GLIDER_BASE, "induced_drag_factor = 0.4", "induced_drag_factor = 0.4\naspect_ratio = 7.0",
     r"vehicle\.polar\.aspect_ratio = 7\.0: expected exactly one of induced_drag_factor or aspect_ratio, not both"),
    ("polar-span-efficiency", GLIDER_BASE, "induced_drag_factor = 0.4", "induced_drag_factor = 0.4\nspan_efficiency = 0.9",
     r"vehicle\.polar\.span_efficiency = 0\.9: expected span_efficiency only together with aspect_ratio"),
    ("pump-efficiency-zero", GLIDER_BASE, 'pump_efficiency = {dist = "pert", min = 0.20, mode = 0.27, max = 0.35}',
     "pump_efficiency = 0.0", r"vehicle\.pump_efficiency = 0\.0: expected an efficiency in \(0, 1\]"),
]


@pytest.mark.parametrize("case, base, old, new, match", BAD, ids=[row[0] for row in BAD])
def test_bad_input_is_rejected_with_one_line(case, base, old, new, match):
    with pytest.raises(ScenarioError, match=match) as info:
        parse(edit(base, old, new))
    message = str(info.value)
    assert "\n" not in message and "\r" not in message
    assert message.startswith("case.toml: ")
    assert info.value.file == "case.toml"


def test_at_least_25_distinct_bad_inputs():
    assert len({row[0] for row in BAD}) == len(BAD) >= 25


def test_error_carries_its_parts():
    with pytest.raises(ScenarioError) as info:
        parse(edit(PROPELLER, "speed_m_s = 1.5", "speed_m_s = -1.5"))
    err = info.value
    assert (err.key, err.value) == ("setpoint.speed_m_s", -1.5)
    assert "speed through water" in err.expected
    assert str(err) == f"case.toml: setpoint.speed_m_s = -1.5: expected {err.expected}"
    assert isinstance(err, ValueError)


def test_error_stays_one_line_with_newlines_in_the_value():
    text = edit(PROPELLER, "length_m = 4.0", 'length_m = """4\n0"""')
    with pytest.raises(ScenarioError, match=r"vehicle\.hull\.length_m = '4\\n0'") as info:
        parse(text)
    assert "\n" not in str(info.value)


def test_unreadable_file_is_a_scenario_error(tmp_path):
    missing = tmp_path / "nope.toml"
    with pytest.raises(ScenarioError, match=r"nope\.toml: expected a readable scenario file") as info:
        load_scenario(missing)
    assert "\n" not in str(info.value)


def test_load_reports_the_file_path(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(edit(PROPELLER, "speed_m_s = 1.5", "speed_m_s = 0.0"))
    with pytest.raises(ScenarioError, match=r"^.*bad\.toml: setpoint\.speed_m_s = 0\.0: expected"):
        load_scenario(path)


def test_first_problem_in_file_order_wins():
    text = edit(PROPELLER, "speed_m_s = 1.5", "speed_m_s = -1.0")
    text = edit(text, "hotel_load_W = 40.0", "hotel_load_W = -1.0")  # [vehicle] comes first
    with pytest.raises(ScenarioError, match=r"vehicle\.hotel_load_W = -1\.0"):
        parse(text)
