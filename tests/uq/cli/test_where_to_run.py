"""Where the model runs: one option group on every command that samples, one executor builder.

Checks argument handling only (the numbers on a cluster against a local run are checked in
tests/uq/sampling/test_backends.py).
"""
from __future__ import annotations

from pathlib import Path

import pytest

from uq.cli import main
from uq.cli.main import build_parser

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
DEMO = str(CONFIGS / "under_ice_section.toml")

COMMANDS = {
    "assess": [DEMO],
    "sweep": [DEMO, "--values", "1.2,1.4"],
    "compare": [DEMO, DEMO],
    "study": ["study.toml"],
}


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize("where, expected", [
    ([], dict(workers=1, scheduler=None, scheduler_file=None, local_cluster=None)),
    (["--workers", "3"], dict(workers=3)),
    (["--scheduler", "tcp://10.0.0.5:8786"], dict(scheduler="tcp://10.0.0.5:8786")),
    (["--scheduler-file", "/scratch/sched.json"], dict(scheduler_file="/scratch/sched.json")),
    (["--local-cluster", "2"], dict(local_cluster=2)),
])
def test_every_sampling_command_takes_the_same_where_options(command, where, expected):
    args = build_parser().parse_args([command, *COMMANDS[command], *where])
    for key, value in expected.items():
        assert getattr(args, key) == value


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize("where, message", [
    (["--workers", "2", "--scheduler", "tcp://h:1"], "not allowed with argument"),
    (["--scheduler-file", "a.json", "--local-cluster", "2"], "not allowed with argument"),
    (["--local-cluster", "0"], "--local-cluster"),
])
def test_conflicting_or_bad_where_options_are_one_line_exit_2(command, where, message, capsys):
    assert main([command, *COMMANDS[command], *where]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("transit-risk: error: ") and message in err


@pytest.mark.slow  # loads the demo first: ~2.5 s
def test_a_missing_scheduler_file_is_one_line_exit_2_and_writes_nothing(tmp_path, capsys,
                                                                        monkeypatch):
    monkeypatch.chdir(tmp_path)
    missing = tmp_path / "nowhere" / "scheduler.json"
    assert main(["assess", DEMO, "--samples", "64", "--scheduler-file", str(missing)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "scheduler file" in err and "scheduler.json" in err
    assert not (tmp_path / "reports").exists() or not any((tmp_path / "reports").iterdir())
