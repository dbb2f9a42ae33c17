"""transit-risk command line: end to end on the bundled demo, errors, overwrite, interrupts.

Small runs (--samples 256 --sensitivity-base 64); most calls go through ``main(argv)`` in
process, a few through ``python -m uq.cli`` to check the real exit status and signals.
"""
from __future__ import annotations

import json
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from uq.cli import main
from uq.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "configs" / "under_ice_section.toml"
GLIDER = ROOT / "configs" / "glider_transit.toml"
FAST = ["--samples", "256", "--sensitivity-base", "64"]


def _run_module(args, **kwargs):
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-m", "uq.cli", *args], capture_output=True,
                          text=True, env=env, timeout=120, **kwargs)


def _one_error_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("transit-risk: error: ")
    assert "Traceback" not in err
    return lines[0]


# ---------------------------------------------------------------------- end to end
def test_assess_default_demo_writes_the_report(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["assess", *FAST]) == 0  # no SCENARIO: the bundled demo
    captured = capsys.readouterr()
    out = tmp_path / "reports" / "skerrow-under-ice"  # the demo's [scenario] name
    for name in ("index.html", "summary.json", "range_curve.csv", "sensitivity.csv",
                 "tests.csv", "contingency.csv", "failures.csv", "inputs.csv",
                 "figures/range_curve.png", "figures/sensitivity_failure.svg"):
        assert (out / name).is_file(), name
    summary = json.loads((out / "summary.json").read_text(),
                         parse_constant=lambda c: pytest.fail(f"{c} in summary.json"))
    assert summary["samples"] == 256 and summary["sensitivity_base_n"] == 64
    assert summary["verdict"] in ("go", "no-go", "undecided")
    # stdout: the verdict sentence and where the report is
    assert summary["verdict_sentence"] in captured.out
    # the last line: the verdict, then the knowledge-band sentence
    last = captured.out.strip().splitlines()[-1]
    assert last.startswith(summary["verdict_sentence"]) and "credibility" in last
    assert "reports/skerrow-under-ice/index.html" in captured.out
    # stderr is not a terminal here: plain one-line stage messages, no bar characters
    stages = captured.err.strip().splitlines()
    assert stages and all(line.startswith("transit-risk: ") for line in stages)
    assert "\r" not in captured.err


def test_quiet_prints_nothing(tmp_path, capsys):
    assert main(["assess", str(DEMO), *FAST, "--quiet", "--out", str(tmp_path / "r")]) == 0
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err == ""


def test_second_run_needs_overwrite_and_leaves_the_first_intact(tmp_path, capsys):
    out = tmp_path / "r"
    assert main(["assess", str(DEMO), *FAST, "--quiet", "--out", str(out)]) == 0
    before = (out / "summary.json").read_bytes()
    assert main(["assess", str(DEMO), *FAST, "--quiet", "--out", str(out), "--seed", "7"]) == 2
    line = _one_error_line(capsys.readouterr().err)
    assert "already exists" in line and "--overwrite" in line
    assert (out / "summary.json").read_bytes() == before
    assert main(["assess", str(DEMO), *FAST, "--quiet", "--out", str(out), "--seed", "7",
                 "--overwrite"]) == 0
    assert json.loads((out / "summary.json").read_text())["seed"] == 7
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r"]


def test_failure_mid_report_leaves_nothing(tmp_path, capsys, monkeypatch):
    from uq.report import figures

    def boom(*args, **kwargs):
        raise OSError("simulated write failure")

    monkeypatch.setattr(figures, "failures_figure", boom)
    assert main(["assess", str(DEMO), *FAST, "--quiet", "--out", str(tmp_path / "r")]) == 2
    assert "simulated write failure" in _one_error_line(capsys.readouterr().err)
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------------- bad input
def _bad_scenario(tmp_path) -> Path:
    text = DEMO.read_text(encoding="utf-8").replace(
        "propulsive_efficiency = {dist = \"pert\", min = 0.30, mode = 0.38, max = 0.44}",
        "propulsive_efficiency = 1.5")
    path = tmp_path / "bad_efficiency.toml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("case", ["missing", "toml", "scenario", "option"])
def test_bad_input_is_one_line_and_exit_2(case, tmp_path, capsys):
    if case == "missing":
        argv = ["check", str(tmp_path / "nowhere.toml")]
        expect = "nowhere.toml"
    elif case == "toml":
        (tmp_path / "broken.toml").write_text("[scenario\nname = 'x'\n")
        argv = ["assess", str(tmp_path / "broken.toml"), "--out", str(tmp_path / "r")]
        expect = "valid TOML"
    elif case == "scenario":
        argv = ["assess", str(_bad_scenario(tmp_path)), "--out", str(tmp_path / "r")]
        expect = "vehicle.propulsive_efficiency"
    else:
        argv = ["sweep", str(DEMO), "--values", "1.2,fast"]
        expect = "--values"
    assert main(argv) == 2
    assert expect in _one_error_line(capsys.readouterr().err)
    assert not (tmp_path / "r").exists()


def test_real_process_exit_status_and_debug_traceback(tmp_path):
    bad = _bad_scenario(tmp_path)
    res = _run_module(["check", str(bad)])
    assert res.returncode == 2 and res.stdout == ""
    _one_error_line(res.stderr)
    res = _run_module(["check", str(bad), "--debug"])
    assert res.returncode == 2 and "Traceback" in res.stderr
    assert res.stderr.strip().splitlines()[-1].startswith("transit-risk: error: ")


# ---------------------------------------------------------------------- check, starter
def test_check_prints_the_nominal_result_with_units(capsys):
    assert main(["check", str(GLIDER)]) == 0
    out = capsys.readouterr().out
    for pattern in (r"route length\s+1,600\.0 km", r"range\s+[\d,.]+ km",
                    r"duration\s+[\d.]+ days", r"energy margin\s+[\d,]+ Wh",
                    r"success\s+(yes|no)", r"slope_approach\s+[\d.]+ Wh/km"):
        assert re.search(pattern, out), pattern
    # hand budget (derived): 1,600 km at the held 0.32 m/s, less ~5 % of each 1000 m cycle
    # spent turning and at the surface (0.30 m/s cycle-mean), takes 61 days in still water;
    # the head currents on the crossing and the slope and the drift made good only add, and
    # the nominal transit is within the 90-day limit (the file's [limits])
    days = float(re.search(r"duration\s+([\d.]+) days", out).group(1))
    assert 61.0 <= days <= 90.0


@pytest.mark.parametrize("kind", ["propeller", "glider"])
def test_starter_writes_a_scenario_that_loads(kind, tmp_path, capsys):
    path = tmp_path / "my_mission.toml"
    assert main(["starter", str(path), "--kind", kind]) == 0
    text = path.read_text(encoding="utf-8")
    assert text.startswith("# Starter scenario")
    scenario = load_scenario(path)
    assert scenario.vehicle.kind == kind and scenario.name == "my_mission"
    before = path.read_bytes()
    assert main(["starter", str(path)]) == 2  # refuses to overwrite
    assert "--overwrite" in _one_error_line(capsys.readouterr().err)
    assert path.read_bytes() == before
    assert main(["starter", str(path), "--kind", kind, "--overwrite"]) == 0
    assert [p.name for p in tmp_path.iterdir()] == ["my_mission.toml"]  # no temp file left


# ---------------------------------------------------------------------- sweep, compare
def test_sweep_and_compare_add_their_sections(tmp_path, capsys):
    out = tmp_path / "sweep"
    assert main(["sweep", str(DEMO), "--values", "1.2,1.4", *FAST, "--quiet",
                 "--out", str(out)]) == 0
    assert '<section id="sweep">' in (out / "index.html").read_text(encoding="utf-8")
    assert (out / "sweep.csv").is_file()
    slow = tmp_path / "slow.toml"
    slow.write_text(DEMO.read_text(encoding="utf-8").replace("speed_m_s = 1.4", "speed_m_s = 1.2")
                    .replace('name = "skerrow-under-ice"', 'name = "skerrow-slow"'))
    out = tmp_path / "compare"
    assert main(["compare", str(DEMO), str(slow), *FAST, "--quiet", "--out", str(out)]) == 0
    assert '<section id="comparison">' in (out / "index.html").read_text(encoding="utf-8")
    assert (out / "comparison.csv").is_file()
    assert main(["sweep", str(DEMO), "--values", "20", "--field", "setpoint.glide_angle_deg",
                 "--out", str(tmp_path / "x")]) == 2
    assert "setpoint.glide_angle_deg" in _one_error_line(capsys.readouterr().err)


def test_compare_refuses_a_pair_that_is_not_comparable(tmp_path, capsys):
    # a propeller AUV against a glider: exit 2, one line naming both, before any work
    out = tmp_path / "pair"
    assert main(["compare", str(DEMO), str(GLIDER), "--out", str(out)]) == 2
    line = _one_error_line(capsys.readouterr().err)
    assert "not comparable" in line and "propeller" in line and "glider" in line
    assert "--force" in line and not out.exists()
    # the same kind, a route 40 % longer: refused too; --force compares with a caution
    longer = tmp_path / "longer.toml"
    longer.write_text(DEMO.read_text(encoding="utf-8")
                      .replace('name = "skerrow-under-ice"', 'name = "skerrow-longer"')
                      .replace("length_km = 205.0", "length_km = 320.0"))
    assert load_scenario(longer).route_length_km > 1.05 * load_scenario(DEMO).route_length_km
    assert main(["compare", str(DEMO), str(longer), "--out", str(out)]) == 2
    assert "route" in _one_error_line(capsys.readouterr().err)
    assert main(["compare", str(DEMO), str(longer), *FAST, "--force", "--out", str(out)]) == 0
    err = capsys.readouterr().err
    assert "caution: compared although not comparable" in err
    page = (out / "index.html").read_text(encoding="utf-8")
    assert "Compared although not comparable" in page


# ---------------------------------------------------------------------- interrupts
@pytest.mark.parametrize("sig, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_interrupt_leaves_no_report_and_no_debris(sig, status, tmp_path):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = tmp_path / "reports" / "r"
    proc = subprocess.Popen(
        [sys.executable, "-m", "uq.cli", "assess", str(DEMO), "--samples", "1048576",
         "--out", str(out)], stderr=subprocess.PIPE, stdout=subprocess.PIPE, text=True, env=env)
    try:
        first = proc.stderr.readline()  # "transit-risk: propagation..." once it has started
        assert first.startswith("transit-risk: propagation"), first
        time.sleep(0.3)
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == status, err
    assert err.strip().splitlines()[-1].startswith("transit-risk: error: ")
    assert "Traceback" not in err
    assert not out.exists()
    assert not (tmp_path / "reports").exists() or list((tmp_path / "reports").iterdir()) == []


def test_study_subcommand_reaches_the_batch_runner(tmp_path, capsys):
    from uq.cli import main

    code = main(["study", str(tmp_path / "missing-study.toml")])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and "study file" in err[0]
