"""`transit-risk study` through the one command line: errors, output folder, traversal,
the study page on the shared template, spreadsheet-safe study.csv."""
from __future__ import annotations

import csv
import json
import shutil
from pathlib import Path

import pytest

from uq.cli import main
from uq.report import MARKER

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "configs" / "under_ice_section.toml"


def _study(folder: Path, *, name: str = "t", body: str | None = None) -> Path:
    shutil.copy(DEMO, folder / "base.toml")
    path = folder / "study.toml"
    head = (f'[study]\nname = {json.dumps(name)}\nscenario = "base.toml"\nsamples = 256\n'
            'seed = 1\nscheme = "monte-carlo"\n')
    path.write_text(head + (body if body is not None else
                            '[[variants]]\nname = "=HYPERLINK(1)"\n'
                            '[[variants]]\nname = "fast"\n'
                            'overrides = {"setpoint.speed_m_s" = 1.6}\n'))
    return path


def _files(root: Path) -> set[str]:
    return {str(p.relative_to(root)) for p in root.rglob("*")}


def test_a_bad_study_file_is_one_line_exit_2_and_writes_nothing(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = _study(tmp_path, body='[grid]\n"setpoint.sped_m_s" = [1.2]\n')
    before = _files(tmp_path)
    assert main(["study", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith("transit-risk: error: ") and "did you mean 'speed_m_s'" in err
    assert _files(tmp_path) == before


@pytest.mark.parametrize("argv", [
    ["--samples", "x"], ["--workers", "0"], ["--workers", "2", "--scheduler", "tcp://h:1"],
    ["--no-such-option"],
])
def test_bad_options_are_one_line_exit_2(tmp_path, capsys, argv):
    path = _study(tmp_path)
    assert main(["study", str(path), *argv]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("transit-risk: error: ")


def test_study_has_debug_and_quiet_like_every_command(tmp_path, capsys):
    path = _study(tmp_path, body='[grid]\n"setpoint.sped_m_s" = [1.2]\n')
    assert main(["study", str(path), "--debug"]) == 2
    assert "Traceback" in capsys.readouterr().err  # --debug shows it


@pytest.mark.parametrize("name", ["/tmp/x-transit-risk-escape", "../../../escape", ".."])
def test_study_names_cannot_leave_reports(tmp_path, capsys, monkeypatch, name):
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    path = _study(work, name=name)
    assert main(["study", str(path), "--quiet"]) == 0, capsys.readouterr().err
    made = [p for p in (work / "reports").iterdir()]
    assert len(made) == 1 and (made[0] / "study.csv").is_file()
    assert all(p == work or work in p.parents for p in tmp_path.rglob("*"))  # nothing outside
    assert not Path("/tmp/x-transit-risk-escape").exists()


def test_study_output_refused_before_running_and_csv_is_neutralised(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = _study(tmp_path)
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("precious")
    assert main(["study", str(path), "--out", str(mine), "--overwrite"]) == 2
    err = capsys.readouterr().err
    assert "was not written by transit-risk" in err and "study (" not in err  # nothing ran
    assert (mine / "notes.txt").read_text() == "precious"

    assert main(["study", str(path), "--quiet"]) == 0
    out = tmp_path / "reports" / "t"
    assert (out / MARKER).is_file()
    with (out / "study.csv").open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert rows[0]["variant"] == "'=HYPERLINK(1)"  # neutralised text
    assert float(rows[1]["setpoint.speed_m_s"]) == 1.6  # numbers untouched
    html = (out / "index.html").read_text()
    assert "Content-Security-Policy" in html and "planning aid" in html  # the shared frame
    assert main(["study", str(path), "--quiet"]) == 2  # exists, no --overwrite
    assert main(["study", str(path), "--quiet", "--overwrite"]) == 0  # ours: replaced
