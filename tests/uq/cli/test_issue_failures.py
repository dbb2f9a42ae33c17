"""Each failure a careful user and an attacker found is reproduced here and now refused,
cautioned or handled (data loss, impossible physics, crashes, noise, packaging)."""
from __future__ import annotations

import re
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from uq.cli import main

ROOT = Path(__file__).resolve().parents[3]
UNDER_ICE = (ROOT / "configs" / "under_ice_section.toml").read_text(encoding="utf-8")
GLIDER = (ROOT / "configs" / "glider_transit.toml").read_text(encoding="utf-8")


def _edit(text: str, old: str, new: str) -> str:
    assert text.count(old) == 1, old
    return text.replace(old, new)


def _check(tmp_path, text: str, *extra: str):
    path = tmp_path / "case.toml"
    path.write_text(text, encoding="utf-8")
    return main(["check", str(path), *extra])


# ------------------------------------------------------------------ data loss
@pytest.mark.parametrize("target", ["folder", "file"])
def test_overwrite_never_deletes_what_the_tool_did_not_write(tmp_path, capsys, monkeypatch, target):
    monkeypatch.chdir(tmp_path)
    mine = tmp_path / ("mydata" if target == "folder" else "notes.txt")
    if target == "folder":
        mine.mkdir()
        (mine / "thesis.tex").write_text("years of work")
    else:
        mine.write_text("notes")
    # refused before any computation: a huge sample count would take minutes if it ran
    assert main(["assess", "--samples", "100000000", "--out", str(mine), "--overwrite"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and ("never replaced" in err or "never replaces" in err)
    if target == "folder":
        assert (mine / "thesis.tex").read_text() == "years of work"
    else:
        assert mine.read_text() == "notes"


# ------------------------------------------------------------------ impossible physics
IMPOSSIBLE = [
    ("current-300", UNDER_ICE, 'current_along_m_s = {dist = "normal", mean = -0.05, sd = 0.05}',
     "current_along_m_s = 300.0", "legs.launch_approach.current_along_m_s"),
    ("hull-1nm", UNDER_ICE, "diameter_m = 0.52", "diameter_m = 1e-9", "vehicle.hull.diameter_m"),
    ("speed-1e6", UNDER_ICE, "speed_m_s = 1.4", "speed_m_s = 1e6", "setpoint.speed_m_s"),
    ("hotel-1e12", UNDER_ICE, 'hotel_load_W = {dist = "pert", min = 34.0, mode = 40.0, max = 52.0}',
     "hotel_load_W = 1e12", "vehicle.hotel_load_W"),
    ("depth-20km", UNDER_ICE, "depth_m = 60.0", "depth_m = 20000.0", "setpoint.depth_m"),
    ("leg-80000km", UNDER_ICE, "length_km = 205.0", "length_km = 80000.0",
     "legs.skerrow_ice_crossing.length_km"),
    ("fouling-growth-1e12", UNDER_ICE, "fouling_growth_factor = 0.4",
     "fouling_growth_factor = 1e12", "legs.skerrow_ice_crossing.fouling_growth_factor"),
    ("current-sd-5", UNDER_ICE, 'current_along_m_s = {dist = "normal", mean = -0.05, sd = 0.05}',
     'current_along_m_s = {dist = "normal", mean = -0.05, sd = 5.0}',
     "legs.launch_approach.current_along_m_s"),
    ("under-ice-no-temperature", UNDER_ICE, "temperature_C = -1.6\n", "",
     "legs.skerrow_ice_crossing.temperature_C"),
    ("seabed-above-running-depth", UNDER_ICE, "seabed_m = 150.0", "seabed_m = 40.0",
     "legs.tallin_recovery_run.seabed_m"),
]


def _glider_case(label, old, new, key):
    return (label, GLIDER, old, new, key)


_g = tomllib.loads(GLIDER)["setpoint"]
IMPOSSIBLE += [
    _glider_case("glide-89.99", f"glide_angle_deg = {_g['glide_angle_deg']}",
                 "glide_angle_deg = 89.99", "setpoint.glide_angle_deg"),
    _glider_case("buoyancy-1e6", f"net_buoyancy_N = {_g['net_buoyancy_N']}",
                 "net_buoyancy_N = 1e6", "setpoint.net_buoyancy_N"),
    _glider_case("bottom-1e300", f"bottom_depth_m = {_g['bottom_depth_m']}",
                 "bottom_depth_m = 1e300", "setpoint.bottom_depth_m"),
]


@pytest.mark.parametrize("label, base, old, new, key", IMPOSSIBLE, ids=[c[0] for c in IMPOSSIBLE])
def test_impossible_input_is_refused_naming_the_key(tmp_path, capsys, label, base, old, new, key):
    assert _check(tmp_path, _edit(base, old, new)) == 2
    err = capsys.readouterr().err
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("transit-risk: error: ")
    assert "case.toml: " in lines[0]
    assert key in lines[0] and "Traceback" not in err and "nan" not in lines[0]


def test_kwh_typed_as_wh_gets_a_caution_and_check_words_a_shortfall(tmp_path, capsys):
    text = _edit(UNDER_ICE, "nominal_energy_Wh = 16000.0", "nominal_energy_Wh = 9.0")
    assert _check(tmp_path, text) == 0
    out, err = capsys.readouterr()
    assert "was kWh written as Wh?" in err
    assert "above the reserve" not in out and "shortfall" in out  # no "-51363.5 % ... above"
    assert not re.search(r"-\d[\d,.]* %", out)


def test_open_water_leg_without_salinity_takes_the_default_with_a_caution(tmp_path, capsys):
    text = _edit(UNDER_ICE, "practical_salinity = 33.8\n", "")
    assert _check(tmp_path, text) == 0
    err = capsys.readouterr().err
    assert "legs.launch_approach.practical_salinity not given: the default 35 was used" in err


# ------------------------------------------------------------------ noise
def test_check_on_the_under_ice_demo_prints_one_plain_caution(capsys):
    from physics.seawater import reset_range_warning

    reset_range_warning()  # the physics warns once per process; earlier tests may have used it
    assert main(["check", str(ROOT / "configs" / "under_ice_section.toml")]) == 0
    err = capsys.readouterr().err.splitlines()
    cautions = [line for line in err if "viscosity" in line]
    assert len(cautions) == 1 and cautions[0].startswith("transit-risk: caution: ")
    assert ".py" not in cautions[0] and "Warning" not in cautions[0]


def test_quiet_is_quiet(capsys):
    assert main(["check", str(ROOT / "configs" / "under_ice_section.toml"), "--quiet"]) == 0
    assert capsys.readouterr() == ("", "")


# ------------------------------------------------------------------ packaging
def test_package_metadata_declares_license_and_real_floors():
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text())
    project = meta["project"]
    assert project["license"] == "BSD-3-Clause" and project["license-files"] == ["LICENSE"]
    assert "BSD 3-Clause" in (ROOT / "LICENSE").read_text()
    deps = {re.split(r"[<>=!~ ]", d)[0].lower(): d for d in project["dependencies"]}
    assert deps["numpy"].startswith("numpy>=2") and "numpoly" in deps
    # setuptools 77 is the first to read an SPDX `license` string with `license-files`
    assert any(r.startswith("setuptools>=77") for r in meta["build-system"]["requires"])
    pins = dict(line.strip().split("==") for line in (ROOT / ".ci" / "floors.txt").read_text()
                .splitlines() if "==" in line and not line.startswith("#"))
    for name, pin in pins.items():  # the CI lowest-versions check pins exactly the floors
        spec = next(d for k, d in deps.items() if k == name.lower())
        assert spec.split(">=")[1] == pin, (spec, pin)


def test_importing_the_report_leaves_matplotlib_alone():
    code = ("import sys, matplotlib; before = matplotlib.get_backend(); "
            "import uq.report, uq.report.figures; "
            "assert 'matplotlib.pyplot' not in sys.modules, 'pyplot imported'; "
            "assert matplotlib.get_backend() == before, matplotlib.get_backend()")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120, cwd=ROOT, env={"PATH": "/usr/bin:/bin",
                                                      "MPLBACKEND": "svg"})
    assert proc.returncode == 0, proc.stderr
