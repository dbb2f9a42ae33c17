"""Valid but extreme scenarios give finite outcomes and named failure modes, never NaN/inf.

Each case edits a demo file (configs/*.toml) as a parsed mapping and goes through
:func:`uq.scenario.parse_scenario`; where the loader itself rules a state out (zero hotel load,
no depth band under the ice) that is asserted, and the physics is then driven past the loader
with ``dataclasses.replace`` to check that it still names the state instead of returning NaN.

Every case runs :func:`uq.simulate.simulate_arrays` on 256 rows drawn by inverse transform
from the scenario's own marginals (seeded) and checks, besides the case's expected mode:
range_km, duration_days, margin_Wh and margin_fraction finite; failure_mode a FailureMode
member; success exactly where failure_mode == NONE; energy_per_km_Wh NaN exactly on legs never
covered. Numpy RuntimeWarnings (overflow, invalid value, divide by zero) are errors here, so
an inf or NaN computed on the way and masked later fails too.

Expected modes follow from the trade's definitions in MODEL.md (sections 4 and 6: no headway
when u <= |c_x| or u_g <= 0; glide infeasible below tan(gamma_min) = 2 sqrt(K C_D0)) or are
"derived:" as stated beside each case.
"""
from __future__ import annotations

import copy
import dataclasses
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from physics.seawater import SeawaterRangeWarning
from physics.states import FailureMode
from uq.scenario import Scenario, ScenarioError, parse_scenario
from uq.simulate import simulate_arrays

pytestmark = [
    pytest.mark.filterwarnings("error::RuntimeWarning"),
    # the under-ice demo runs in water below 0 degC, outside the viscosity fit (it warns by design)
    pytest.mark.filterwarnings(f"ignore::{SeawaterRangeWarning.__module__}.{SeawaterRangeWarning.__name__}"),
]

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
N_ROWS = 256
SEED = 20260301
MODES = {int(m) for m in FailureMode}


def _demo(name: str) -> dict:
    with open(CONFIGS / name, "rb") as fh:
        doc = tomllib.load(fh)
    # correlations and lab-test candidates name inputs that an edit may fix; neither enters
    # simulate_arrays (correlations act in the sampler, tests in the decision layer)
    doc.pop("correlations", None)
    doc.get("decision", {}).pop("tests", None)
    # the extremes check the transit's own failure states: no turn-back policy and no
    # speed-up against head currents, which would turn those states into an abort or away
    doc.pop("under_ice", None)
    doc.get("setpoint", {}).pop("min_ground_speed_m_s", None)
    return doc


GLIDER = _demo("glider_transit.toml")
PROPELLER = _demo("under_ice_section.toml")


def glider() -> dict:
    return copy.deepcopy(GLIDER)


def propeller() -> dict:
    return copy.deepcopy(PROPELLER)


def rows(scenario: Scenario, n: int = N_ROWS, seed: int = SEED) -> np.ndarray:
    """n rows by inverse transform of the scenario's marginals (independent columns)."""
    u = np.random.default_rng(seed).random((n, len(scenario.inputs)))
    if not scenario.inputs:
        return np.empty((n, 0))
    return np.column_stack([m.ppf(u[:, i]) for i, m in enumerate(scenario.inputs)])


def column(scenario: Scenario, x: np.ndarray, name: str) -> np.ndarray:
    return x[:, scenario.input_names.index(name)]


def run(scenario: Scenario, x: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """simulate_arrays plus the checks every extreme case must pass."""
    x = rows(scenario) if x is None else x
    a = simulate_arrays(scenario, x)
    n, n_legs = x.shape[0], len(scenario.legs)
    for key in ("range_km", "duration_days", "margin_Wh", "margin_fraction"):
        assert a[key].shape == (n,)
        assert np.all(np.isfinite(a[key])), f"{key} not finite in rows {np.flatnonzero(~np.isfinite(a[key]))}"
    assert np.all(a["range_km"] >= 0.0) and np.all(a["duration_days"] >= 0.0)
    # derived: margin <= (1 - reserve) * usable energy, so margin_fraction <= 1
    assert np.all(a["margin_fraction"] <= 1.0)
    mode = a["failure_mode"]
    assert set(np.unique(mode).tolist()) <= MODES
    np.testing.assert_array_equal(a["success"], mode == FailureMode.NONE)
    np.testing.assert_array_equal(a["failing_leg"] == -1, mode == FailureMode.NONE)
    assert np.all((a["failing_leg"] >= -1) & (a["failing_leg"] < n_legs))
    # energy per km: finite and positive on covered legs, NaN on legs never covered
    epk = a["energy_per_km_Wh"]
    assert epk.shape == (n, n_legs)
    assert not np.any(np.isinf(epk))
    assert np.all(epk[np.isfinite(epk)] > 0.0)
    covered = np.isfinite(epk)
    # once a leg is not covered, no later leg is (the vehicle stopped)
    assert np.all(covered[:, :-1] | ~covered[:, 1:])
    # arrived: every leg covered; stopped: every leg after the stop uncovered, every leg before covered
    assert np.all(covered[a["arrived"]])
    stop = np.isin(mode, (FailureMode.NO_HEADWAY, FailureMode.INFEASIBLE_GLIDE))
    for i in np.flatnonzero(stop):
        leg = a["failing_leg"][i]
        assert covered[i, :leg].all() and not covered[i, leg + 1:].any(), (i, leg, covered[i])
    assert not np.any(a["arrived"] & stop)
    return a


def modes(a) -> set[FailureMode]:
    return {FailureMode(m) for m in np.unique(a["failure_mode"])}


# ----------------------------------------------------------------------- currents vs speed
@pytest.mark.parametrize("along, across", [(0.0, 2.0), (-2.0, 0.0), (0.0, 1.4), (0.3, 1.4), (-1.4, 0.0)],
                         ids=["across-above-speed", "head-above-speed", "across-equal-speed",
                              "across-equal-speed-following-current", "head-equal-speed"])
def test_propeller_current_at_or_above_speed_is_no_headway(along, across):
    # MODEL.md section 6: u <= |c_x| or u_g = sqrt(u^2 - c_x^2) + c_a <= 0 is no headway; the
    # demo's setpoint is u = 1.4 m/s, so every sample stops at the entry of leg 1
    d = propeller()
    d["legs"][1]["current_along_m_s"] = along
    d["legs"][1]["current_across_m_s"] = across
    a = run(parse_scenario(d))
    assert np.all(a["failure_mode"] == FailureMode.NO_HEADWAY)
    assert np.all(a["failing_leg"] == 1)
    assert np.all(np.isfinite(a["energy_per_km_Wh"][:, 0]))
    assert np.all(np.isnan(a["energy_per_km_Wh"][:, 1:]))
    assert not a["success"].any()


def test_propeller_current_straddling_speed_fails_exactly_where_no_headway():
    d = propeller()
    d["legs"][1]["current_across_m_s"] = {"dist": "uniform", "low": 0.5, "high": 2.5}
    scenario = parse_scenario(d)
    x = rows(scenario)
    a = run(scenario, x)
    cx = column(scenario, x, "legs.skerrow_ice_crossing.current_across_m_s")
    ca = column(scenario, x, "legs.skerrow_ice_crossing.current_along_m_s")
    u = 1.4  # setpoint speed through water [m/s]
    # MODEL.md section 6, the crabbing triangle; leg 0 (38 km, mild currents) never stops a sample
    expected = (np.abs(cx) >= u) | (np.sqrt(np.maximum(u * u - cx * cx, 0.0)) + ca <= 0.0)
    assert 0 < expected.sum() < N_ROWS
    np.testing.assert_array_equal(a["failure_mode"] == FailureMode.NO_HEADWAY, expected)
    assert np.all(a["failing_leg"][expected] == 1)


def test_glider_cross_current_above_its_speed_is_no_headway():
    # the demo glider makes about 0.34 m/s through water (header of glider_transit.toml);
    # 0.6 m/s across on the open-basin leg leaves it no headway there
    d = glider()
    d["legs"][2]["current_across_m_s"] = 0.6
    a = run(parse_scenario(d))
    assert FailureMode.NO_HEADWAY in modes(a)
    assert not a["arrived"].any()
    assert np.all(np.isnan(a["energy_per_km_Wh"][:, 3]))


# ----------------------------------------------------------------------- fouled from day 0
FULLY_FOULED = {"onset_days": 0.0, "time_constant_days": 1e-3, "drag_increase": 5.0, "lift_loss": 0.9}


def test_glider_fully_fouled_from_day_zero_is_infeasible_at_once():
    # derived (MODEL.md sections 3-4): at full fouling K -> K/(1 - 0.9)^2 = 100 K and C_D0 -> 6 C_D0,
    # tan(gamma_min) = 2 sqrt(600 K C_D0) >= 2 sqrt(600 * 0.35 * 0.07) = 7.7 > tan 26 deg, and
    # the state crosses the threshold within about 0.13 tau = 11 s, a few metres of track
    d = glider()
    d["fouling"] = dict(FULLY_FOULED)
    a = run(parse_scenario(d))
    assert np.all(a["failure_mode"] == FailureMode.INFEASIBLE_GLIDE)
    assert np.all(a["failing_leg"] == 0)
    assert np.all(a["range_km"] < 0.1)  # generous: a few metres expected


@pytest.mark.parametrize("fouling", [FULLY_FOULED,
                                     {"onset_days": 0.0, "time_constant_days": 1e-300,
                                      "drag_increase": 1e300, "lift_loss": 0.0}],
                         ids=["tau-1e-3-days", "tau-1e-300-days-drag-1e300"])
def test_propeller_fully_fouled_from_day_zero_runs_out_of_energy(fouling):
    # derived: drag x 6 (or more) from the first minutes multiplies the propulsion energy per km;
    # the demo's margin (about 20 %) cannot absorb it, and nothing stops a propeller vehicle
    d = propeller()
    d["fouling"] = dict(fouling)
    a = run(parse_scenario(d))
    assert np.all(a["failure_mode"] == FailureMode.ENERGY)
    assert a["arrived"].all()


def test_glider_fouling_at_its_limits():
    d = glider()
    d["fouling"] = {"onset_days": 0.0, "time_constant_days": 1e-300, "drag_increase": 1e6,
                    "lift_loss": 1.0 - 1e-12}
    a = run(parse_scenario(d))
    assert np.all(a["failure_mode"] == FailureMode.INFEASIBLE_GLIDE)


# ----------------------------------------------------------------------- hotel load
def _without_leg_hotel(d):
    for leg in d["legs"]:
        leg.pop("hotel_load_W", None)
    return d


@pytest.mark.parametrize("make", [glider, propeller], ids=["glider", "propeller"])
def test_zero_hotel_load(make):
    d = _without_leg_hotel(make())
    d["vehicle"]["hotel_load_W"] = 0.0
    zero = parse_scenario(d)  # a valid, extreme scenario: no hotel load at all
    x = rows(zero)
    d["vehicle"]["hotel_load_W"] = 1e-300
    tiny = parse_scenario(d)
    a_tiny = run(tiny, x)

    def with_hotel(watts):
        return dataclasses.replace(tiny, vehicle=dataclasses.replace(tiny.vehicle, hotel_load_W=watts))

    a_zero = run(with_hotel(0.0), x)
    assert FailureMode.NONE in modes(a_zero)
    # derived: 1e-300 W changes no float of the budget
    np.testing.assert_array_equal(a_zero["failure_mode"], a_tiny["failure_mode"])
    # derived: speeds (so the time and fouling paths) do not depend on the hotel load, and a
    # hotel load only adds power: on the same rows every covered leg costs more per km with it
    a_some = run(with_hotel(1.0), x)
    both = np.isfinite(a_zero["energy_per_km_Wh"])
    np.testing.assert_array_equal(both, np.isfinite(a_some["energy_per_km_Wh"]))
    assert np.all(a_zero["energy_per_km_Wh"][both] < a_some["energy_per_km_Wh"][both])


# ----------------------------------------------------------------------- no spread at all
def _fix_every_input(doc: dict) -> dict:
    """Replace every distribution table by its median (a plain number)."""
    medians = {m.name: m.median for m in parse_scenario(doc).inputs}

    def walk(node, path):
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for key, value in list(items):
            # a leg's input names use the leg's name, not its index
            named = isinstance(node, list) and isinstance(value, dict)
            here = path + [value.get("name", key) if named else key]
            if isinstance(value, dict) and "dist" in value:
                node[key] = medians[".".join(str(p) for p in here)]
            elif isinstance(value, (dict, list)):
                walk(value, here)

    walk(doc, [])
    return doc


@pytest.mark.parametrize("make", [glider, propeller], ids=["glider", "propeller"])
def test_zero_spread_scenario_with_no_inputs(make):
    scenario = parse_scenario(_fix_every_input(make()))
    assert scenario.inputs == ()
    a = run(scenario, np.empty((N_ROWS, 0)))
    one = run(scenario, np.empty((1, 0)))
    # derived: nothing varies, so every row is the same transit (and both demos succeed at
    # their medians, as their headers work out)
    for key in ("range_km", "duration_days", "margin_Wh", "margin_fraction", "failure_mode"):
        np.testing.assert_array_equal(a[key], np.full(N_ROWS, one[key][0]))
    assert one["success"][0]


# ----------------------------------------------------------------------- glide angle vs polar
C_D0, K = 0.08, 0.40  # the glider demo's modes, fixed here
GAMMA_MIN_DEG = math.degrees(math.atan(2.0 * math.sqrt(K * C_D0)))  # MODEL.md section 4: 19.69 deg


def _glider_at_angle(relative, *, fouling):
    d = glider()
    d["vehicle"]["polar"]["zero_lift_drag"] = C_D0
    d["vehicle"]["polar"]["induced_drag_factor"] = K
    d["setpoint"]["glide_angle_deg"] = GAMMA_MIN_DEG * (1.0 + relative)
    if not fouling:
        d.pop("fouling")
    return parse_scenario(d)


@pytest.mark.parametrize("relative", [-1e-9, -1e-6, -1e-3])
@pytest.mark.parametrize("fouling", [False, True], ids=["clean", "fouling"])
def test_glide_angle_below_polar_minimum_is_infeasible_from_the_start(relative, fouling):
    a = run(_glider_at_angle(relative, fouling=fouling))
    assert np.all(a["failure_mode"] == FailureMode.INFEASIBLE_GLIDE)
    assert np.all(a["failing_leg"] == 0)
    assert np.all(a["range_km"] == 0.0) and np.all(a["duration_days"] == 0.0)
    assert np.all(np.isnan(a["energy_per_km_Wh"]))


@pytest.mark.parametrize("relative", [1e-9, 1e-6, 1e-3])
def test_glide_angle_just_above_polar_minimum(relative):
    # clean polar: feasible everywhere on the route (the polar never changes), so the glide
    # never fails; only currents, energy or time can
    clean = run(_glider_at_angle(relative, fouling=False))
    assert FailureMode.INFEASIBLE_GLIDE not in modes(clean)
    assert FailureMode.NONE in modes(clean)
    # with fouling the minimum angle rises above the setpoint as soon as fouling starts
    fouled = run(_glider_at_angle(relative, fouling=True))
    assert FailureMode.INFEASIBLE_GLIDE in modes(fouled)


# ----------------------------------------------------------------------- ice and depth band
def test_ice_ceiling_leaving_no_depth_band():
    d = glider()
    d["legs"][1]["ice_ceiling_m"] = 1000.0  # = setpoint.bottom_depth_m
    with pytest.raises(ScenarioError, match=r"legs\.boundary_current_crossing\.ice_ceiling_m = 1000\.0: "
                                            r"expected an ice ceiling shallower than setpoint\.bottom_depth_m"):
        parse_scenario(d)
    d["legs"][1]["ice_ceiling_m"] = 900.0
    scenario = parse_scenario(d)
    for ceiling in (1000.0, 1200.0):  # no band (zero, negative): past the loader
        legs = list(scenario.legs)
        legs[1] = dataclasses.replace(legs[1], ice_ceiling_m=ceiling)
        a = run(dataclasses.replace(scenario, legs=tuple(legs)))
        assert np.all(a["failure_mode"] == FailureMode.INFEASIBLE_GLIDE)
        assert np.all(a["failing_leg"] == 1)
        assert np.all(np.isnan(a["energy_per_km_Wh"][:, 1:]))


@pytest.mark.parametrize("ceiling", [1000.0 - 1e-9, 999.0])
def test_ice_ceiling_leaving_a_sliver_of_depth_band(ceiling):
    # derived (MODEL.md section 5): cycle-mean speed (2 dz / tan g) / (2 dz / w + 2 t_inflection)
    # -> 0 as dz -> 0 (1 m: 4.1 m per 192 s = 0.02 m/s), below the 0.12-0.32 m/s cross current
    d = glider()
    d["legs"][1]["ice_ceiling_m"] = ceiling
    a = run(parse_scenario(d))
    assert np.all(a["failure_mode"] == FailureMode.NO_HEADWAY)
    assert np.all(a["failing_leg"] == 1)


# ----------------------------------------------------------------------- other limits of range
def _edit(make, *edits):
    d = make()
    for path, value in edits:
        node = d
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    return parse_scenario(d)


OTHER_CASES = {
    # derived: usable energy reaches zero after 1/0.0499 = 20 days, the glider needs ~64
    "battery-fades-out": (glider, [(("battery", "fade_per_day"), 0.0499)], FailureMode.ENERGY),
    "reserve-almost-all": (glider, [(("battery", "reserve_fraction"), 1.0 - 1e-12)], FailureMode.ENERGY),
    "empty-battery": (glider, [(("battery", "nominal_energy_Wh"), 1e-300)], FailureMode.ENERGY),
    "huge-battery": (propeller, [(("battery", "nominal_energy_Wh"), 1e300)], FailureMode.NONE),
    "tiny-duration-limit": (propeller, [(("limits", "max_duration_days"), 1e-300)], FailureMode.TIME_LIMIT),
    "tiny-leg": (propeller, [(("legs", 0, "length_km"), 1e-300)], FailureMode.NONE),
    "tiny-leg-glider": (glider, [(("legs", 0, "length_km"), 1e-300)], FailureMode.NONE),
    "huge-leg": (glider, [(("legs", 2, "length_km"), 1e7), (("limits", "max_duration_days"), math.inf)],
                 FailureMode.ENERGY),
    # derived: at 89.999 deg the horizontal speed is ~1e-5 of the speed, far below any current
    "near-vertical-glide": (glider, [(("setpoint", "glide_angle_deg"), 89.999)], FailureMode.NO_HEADWAY),
    "tiny-buoyancy": (glider, [(("setpoint", "net_buoyancy_N"), 1e-12)], FailureMode.NO_HEADWAY),
    "huge-buoyancy": (glider, [(("setpoint", "net_buoyancy_N"), 1e6)], FailureMode.ENERGY),
    "tiny-speed": (propeller, [(("setpoint", "speed_m_s"), 1e-9)], FailureMode.NO_HEADWAY),
    "huge-speed": (propeller, [(("setpoint", "speed_m_s"), 1e3)], FailureMode.ENERGY),
    "never-fouls": (propeller, [(("fouling", "time_constant_days"), math.inf)], FailureMode.NONE),
    "no-inflection-cost": (glider, [(("vehicle", "inflection_time_s"), 0.0),
                                    (("vehicle", "inflection_energy_J"), 0.0)], FailureMode.NONE),
    "hot-salty-water": (glider, [(("legs", j, key), v) for j in range(4)
                                 for key, v in (("temperature_C", 40.0), ("practical_salinity", 42.0))],
                        FailureMode.NONE),
    "cold-fresh-water": (glider, [(("legs", j, key), v) for j in range(4)
                                  for key, v in (("temperature_C", -3.0), ("practical_salinity", 1e-9))],
                         FailureMode.NONE),
}


@pytest.mark.parametrize("case", list(OTHER_CASES), ids=list(OTHER_CASES))
def test_other_extremes_stay_finite(case):
    make, edits, expected = OTHER_CASES[case]
    a = run(_edit(make, *edits))
    assert expected in modes(a)
