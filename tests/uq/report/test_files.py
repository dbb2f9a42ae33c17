"""The output boundary: which folders may be replaced, atomic writes, stale work folders,
folder names, JSON without NaN, spreadsheet-safe CSV."""
from __future__ import annotations

import csv
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from uq.report import files
from uq.report.files import (
    MARKER,
    OutputRefusedError,
    ReportExistsError,
    check_output_folder,
    clean_stale_work,
    default_output_dir,
    is_tool_folder,
    json_text,
    neutralise_cell,
    safe_folder_name,
    write_csv,
    write_folder,
)


def _fill(text: str):
    def build(folder: Path) -> None:
        (folder / "index.html").write_text(text)
    return build


# ------------------------------------------------------------------ what may be replaced
def test_a_new_folder_is_written_with_the_marker(tmp_path):
    out = write_folder(tmp_path / "r", _fill("one"), kind="report")
    assert (out / "index.html").read_text() == "one"
    assert json.loads((out / MARKER).read_text())["written_by"] == "transit-risk"
    assert is_tool_folder(out)
    assert [p.name for p in tmp_path.iterdir()] == ["r"]  # no work folder left


def test_overwrite_replaces_only_a_folder_this_tool_wrote(tmp_path):
    out = write_folder(tmp_path / "r", _fill("one"), kind="report")
    with pytest.raises(ReportExistsError, match="already exists.*--overwrite"):
        write_folder(out, _fill("two"), kind="report")
    write_folder(out, _fill("two"), kind="report", overwrite=True)
    assert (out / "index.html").read_text() == "two"


@pytest.mark.parametrize("make", ["thesis-folder", "file", "symlink", "symlink-to-report"])
def test_anything_else_is_refused_even_with_overwrite(tmp_path, make):
    target = tmp_path / "target"
    if make == "thesis-folder":  # the data-loss case: a user's folder that is not a report
        target.mkdir()
        (target / "chapter1.tex").write_text("precious")
    elif make == "file":  # --out notes.txt --overwrite
        target.write_text("precious")
    else:
        real = tmp_path / "real"
        if make == "symlink-to-report":
            write_folder(real, _fill("old"), kind="report")
        else:
            real.mkdir()
            (real / "x").write_text("precious")
        target.symlink_to(real)
    before = sorted(str(p) for p in tmp_path.rglob("*"))
    with pytest.raises(OutputRefusedError, match="target"):
        write_folder(target, _fill("new"), kind="report", overwrite=True)
    assert sorted(str(p) for p in tmp_path.rglob("*")) == before  # nothing touched


def test_the_working_folder_and_its_parents_are_never_replaced(tmp_path, monkeypatch):
    work = tmp_path / "home" / "project"
    work.mkdir(parents=True)
    (work / MARKER).write_text('{"written_by": "transit-risk"}')  # even if it looks like ours
    monkeypatch.chdir(work)
    for out in (".", str(work), str(tmp_path / "home")):
        with pytest.raises(OutputRefusedError, match="working folder"):
            check_output_folder(out, overwrite=True)


def test_a_report_written_before_the_marker_is_still_recognised(tmp_path):
    old = tmp_path / "old-report"
    old.mkdir()
    (old / "summary.json").write_text(json.dumps({"schema_version": 1, "verdict": "go"}))
    check_output_folder(old, overwrite=True)  # accepted
    other = tmp_path / "data"
    other.mkdir()
    (other / "summary.json").write_text(json.dumps({"total": 3}))  # someone else's summary
    with pytest.raises(OutputRefusedError):
        check_output_folder(other, overwrite=True)


def test_an_empty_folder_is_used(tmp_path):
    (tmp_path / "r").mkdir()
    write_folder(tmp_path / "r", _fill("x"), kind="report")
    assert (tmp_path / "r" / "index.html").exists()


def test_a_failing_build_leaves_the_old_report_and_no_work_folder(tmp_path):
    out = write_folder(tmp_path / "r", _fill("old"), kind="report")

    def broken(folder: Path) -> None:
        (folder / "index.html").write_text("half")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        write_folder(out, broken, kind="report", overwrite=True)
    assert (out / "index.html").read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["r"]


# ------------------------------------------------------------------ killed runs
def _dead_pid() -> int:
    proc = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    return int(proc.stdout)  # that process has exited


def test_partial_folders_of_a_killed_run_are_removed_and_reported(tmp_path):
    dead = _dead_pid()
    stale = tmp_path / f".r.partial-{dead}-abc123"
    stale.mkdir()
    (stale / "index.html").write_text("half")
    alive = tmp_path / f".r.partial-{os.getpid()}-live99"  # a run still going: left alone
    alive.mkdir()
    other = tmp_path / f".q.partial-{dead}-abc123"  # another target's: left alone
    other.mkdir()
    said: list[str] = []
    write_folder(tmp_path / "r", _fill("new"), kind="report", notes=said.append)
    assert not stale.exists() and alive.exists() and other.exists()
    assert len(said) == 1 and "partial folder left by an interrupted run" in said[0]


def test_an_old_report_set_aside_by_a_killed_run_is_put_back(tmp_path):
    aside = tmp_path / f".r.old-{_dead_pid()}-xyz"
    write_folder(aside, _fill("old"), kind="report")  # a report, under its aside name
    said: list[str] = []
    clean_stale_work(tmp_path / "r", said.append)
    assert (tmp_path / "r" / "index.html").read_text() == "old" and not aside.exists()
    assert "put back the previous report" in said[0]


# ------------------------------------------------------------------ names
@pytest.mark.parametrize("name", [
    "/tmp/x", "../../../somewhere", "..", ".", "a/../../b", "..\\..\\windows", "C:\\x",
    "~/.ssh", "/", "", "   ", "\x00", "con", "name\nwith\nlines", "é/ü", "a" * 500,
    "./.hidden", "-rf", "$(rm -rf ~)",
])
def test_every_folder_name_stays_one_harmless_component_inside_reports(name):
    out = default_output_dir(name)
    assert out.parent == Path("reports")
    part = out.name
    assert part not in ("", ".", "..") and "/" not in part and "\\" not in part
    assert not part.startswith((".", "-")) and len(part) <= 80
    assert part == safe_folder_name(part)  # stable: sanitising twice changes nothing


# ------------------------------------------------------------------ JSON and CSV
def test_json_has_no_nan_or_infinity():
    text = json_text({"a": math.nan, "b": [np.inf, -np.inf, np.float32(1.5)], "c": np.int64(3)})
    assert json.loads(text, parse_constant=lambda c: pytest.fail(c)) == {
        "a": None, "b": [None, None, 1.5], "c": 3}


@pytest.mark.parametrize("text", ["=1+1", "+1", "-1+2", "@SUM(A1)", "\tx", "\rx",
                                  "=HYPERLINK(\"http://x\")"])
def test_formula_like_text_is_neutralised(text):
    # OWASP "CSV Injection": prefix a cell starting with = + - @ tab CR with a quote
    assert neutralise_cell(text) == "'" + text


@pytest.mark.parametrize("value", [-1.5, -3, 0, "plain", "a=b", None, math.nan])
def test_numbers_and_harmless_text_are_untouched(value):
    result = neutralise_cell(value)
    assert result is value or (isinstance(value, float) and math.isnan(result))


def test_write_csv_neutralises_text_cells_and_headers_not_numbers(tmp_path):
    frame = pd.DataFrame({"name": ["=cmd|' /C calc'!A0", "ok", "@x"],
                          "value": [-1.0, 2.0, np.inf], "-k": ["-2", "a", "b"],
                          "inputs": [["=a", "b"], ["c"], []]})
    path = tmp_path / "t.csv"
    write_csv(frame, path)
    with path.open(newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["name", "value", "'-k", "inputs"]
    assert [r[0] for r in rows[1:]] == ["'=cmd|' /C calc'!A0", "ok", "'@x"]
    assert [r[1] for r in rows[1:]] == ["-1.0", "2.0", ""]  # numbers as numbers; inf empty
    assert [r[2] for r in rows[1:]] == ["'-2", "a", "b"]
    assert rows[1][3] == "'=a;b"
