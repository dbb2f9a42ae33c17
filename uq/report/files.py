"""The one place where transit-risk writes the user's files: folders, JSON and CSV.

Every output folder (an assessment report, a study) goes through :func:`write_folder`:

* the target is checked **before** any computation (:func:`check_output_folder`): a new or
  empty folder is fine; an existing folder is replaced only with ``overwrite`` *and* only if
  this tool wrote it (it carries :data:`MARKER`); a file, a symbolic link, the working folder
  or one of its parents, or any other folder is refused, whatever ``overwrite`` says;
* the content is built in a hidden sibling ``.<name>.partial-<pid>-*`` and renamed into place
  only when complete; an existing report is set aside as ``.<name>.old-<pid>-*`` first and put
  back if the final rename fails, so a reader never sees half a report and an old report is
  never lost;
* partial folders left by a killed run (their process is gone) are removed by the next run
  into the same place, and an old report left aside by a run killed between its two renames
  is put back; each is reported through ``notes``.

Folder names made from scenario or study names go through :func:`safe_folder_name`;
:func:`default_output_dir` puts them under ``reports/``. JSON is written by :func:`json_text`
(no NaN or infinity: they become ``null``) and CSV by :func:`write_csv`, which neutralises
text cells a spreadsheet would run as a formula.
"""
from __future__ import annotations

import json
import os
import re
import shutil
import tempfile
import time
import unicodedata
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from uq.errors import TransitRiskError
from uq.report._format import json_safe

__all__ = [
    "MARKER",
    "REPORTS_ROOT",
    "ReportExistsError",
    "OutputRefusedError",
    "safe_folder_name",
    "default_output_dir",
    "is_tool_folder",
    "check_output_folder",
    "clean_stale_work",
    "prepare_output",
    "write_folder",
    "json_text",
    "write_json",
    "neutralise_cell",
    "write_csv",
]

#: File that marks a folder as written by transit-risk (JSON: written_by, kind, format).
MARKER = ".transit-risk-output.json"
#: Default parent of every report and study folder.
REPORTS_ROOT = "reports"

_TOOL = "transit-risk"
_SAFE_CHARS = re.compile(r"[^A-Za-z0-9._-]+")
_WINDOWS_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
                     *(f"lpt{i}" for i in range(1, 10))}
_MAX_NAME = 80
_PREFIX_CHARS = 40
# a hidden work folder of ours: .<name>.partial-<pid>-<random> or .<name>.old-<pid>-<random>
_WORK = re.compile(r"\.(?P<name>.+)\.(?P<what>partial|old)-(?P<pid>\d+)-[A-Za-z0-9_]+")
# the same without the pid, as written before the pid was recorded
_LEGACY_WORK = re.compile(r"\.(?P<name>.+)\.(?P<what>partial|old|tmp)-[A-Za-z0-9_]+")
_LEGACY_AGE_S = 3600.0


class ReportExistsError(TransitRiskError, FileExistsError):
    """The output folder already exists and ``overwrite`` was not given."""


class OutputRefusedError(ReportExistsError):
    """The output path is not something transit-risk may replace (not a folder it wrote)."""


# =============================================================================== names
def safe_folder_name(name: str) -> str:
    """A single, harmless path component made from a scenario or study name.

    Letters, digits, ``.``, ``_`` and ``-`` are kept (after Unicode NFKD folding to ASCII);
    every other run of characters (``/``, ``\\``, spaces, ...) becomes ``-``; leading and
    trailing dots and dashes are removed (no hidden files, no ``..``); at most 80 characters;
    "scenario" if nothing is left; Windows device names get a prefix.
    """
    text = unicodedata.normalize("NFKD", str(name)).encode("ascii", "ignore").decode("ascii")
    text = _SAFE_CHARS.sub("-", text)
    text = re.sub(r"-{2,}", "-", text).strip(".-")[:_MAX_NAME].strip(".-")
    if not text:
        return "scenario"
    if text.split(".")[0].lower() in _WINDOWS_RESERVED:
        text = "scenario-" + text
    return text


def default_output_dir(name: str, *, root: str | os.PathLike = REPORTS_ROOT,
                       suffix: str = "") -> Path:
    """``<root>/<safe name + suffix>``: always one component directly inside ``root``."""
    return Path(root) / safe_folder_name(f"{name}{suffix}")


# =============================================================================== checks
def is_tool_folder(path: str | os.PathLike) -> bool:
    """True if ``path`` is a real folder that transit-risk wrote (it holds :data:`MARKER`).

    Reports written before the marker existed are recognised by their ``summary.json``
    (``schema_version`` and ``verdict``) or ``study.json`` (``study`` and ``variants``).
    """
    folder = Path(path)
    if folder.is_symlink() or not folder.is_dir():
        return False
    marker = _read_json(folder / MARKER)
    if isinstance(marker, dict) and marker.get("written_by") == _TOOL:
        return True
    summary = _read_json(folder / "summary.json")
    if isinstance(summary, dict) and "schema_version" in summary and "verdict" in summary:
        return True
    study = _read_json(folder / "study.json")
    return isinstance(study, dict) and "study" in study and "variants" in study


def _read_json(path: Path) -> Any:
    try:
        if path.is_symlink() or not path.is_file() or path.stat().st_size > 50_000_000:
            return None
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def _is_empty_dir(path: Path) -> bool:
    return path.is_dir() and not path.is_symlink() and not any(path.iterdir())


def _holds_working_folder(path: Path) -> bool:
    try:
        target, here = path.resolve(), Path.cwd().resolve()
    except OSError:
        return False
    return target == here or target in here.parents


def check_output_folder(out: str | os.PathLike, *, overwrite: bool) -> None:
    """Refuse an output folder transit-risk must not write; call it before any computation.

    Raises
    ------
    OutputRefusedError
        ``out`` is a file, a symbolic link, the working folder or one of its parents, or an
        existing non-empty folder that transit-risk did not write (even with ``overwrite``).
    ReportExistsError
        ``out`` is an existing report folder of this tool and ``overwrite`` is False.
    """
    out = Path(out)
    shown = str(out)
    if out.is_symlink():
        raise OutputRefusedError(
            f"output path {shown!r} is a symbolic link: expected a new folder or a report "
            "folder this tool wrote; give another --out")
    if not out.exists():
        return
    if not out.is_dir():
        raise OutputRefusedError(
            f"output path {shown!r} is a file, not a report folder: transit-risk never "
            "replaces it (not even with --overwrite); give another --out")
    if _holds_working_folder(out):
        raise OutputRefusedError(
            f"output folder {shown!r} is the working folder or holds it: transit-risk never "
            "replaces it (not even with --overwrite); give a new folder as --out")
    if _is_empty_dir(out):
        return
    if not is_tool_folder(out):
        raise OutputRefusedError(
            f"output folder {shown!r} exists and was not written by transit-risk (no {MARKER} "
            "in it): it is never replaced, not even with --overwrite; give a new folder as --out")
    if not overwrite:
        raise ReportExistsError(
            f"report folder {shown!r} already exists: choose another --out, or pass "
            "--overwrite (overwrite=True) to replace it")


# =============================================================================== writing
def _current_umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True  # exists, but not ours to signal
    return True


def clean_stale_work(out: str | os.PathLike,
                     notes: Callable[[str], None] | None = None) -> list[str]:
    """Remove work folders beside ``out`` that a killed run left; return what was done.

    A ``.<name>.partial-<pid>-*`` folder whose process is gone is removed. A
    ``.<name>.old-<pid>-*`` folder whose process is gone holds the previous report set aside
    by a run killed between its two renames: it is put back as ``out`` when ``out`` is
    missing, and removed otherwise. Work folders of a running process are left alone.
    """
    out = Path(out)
    parent = out.parent if str(out.parent) else Path(".")
    prefix = out.name[:_PREFIX_CHARS]
    done: list[str] = []
    try:
        entries = list(parent.iterdir())
    except OSError:
        return done
    for entry in sorted(entries):
        match = _WORK.fullmatch(entry.name)
        if match is not None:
            if match["name"] != prefix or _pid_alive(int(match["pid"])):
                continue
        else:
            match = _LEGACY_WORK.fullmatch(entry.name)
            if match is None or match["name"] != prefix:
                continue
            try:
                if time.time() - entry.lstat().st_mtime < _LEGACY_AGE_S:
                    continue
            except OSError:
                continue
        if entry.is_symlink() or not entry.is_dir():
            continue
        if match["what"] == "old" and not (out.exists() or out.is_symlink()):
            previous = entry / "previous" if (entry / "previous").is_dir() else entry
            os.rename(previous, out)
            if previous != entry:
                shutil.rmtree(entry, ignore_errors=True)
            text = (f"put back the previous report {str(out)!r}, left aside by an "
                    f"interrupted run ({entry.name})")
        else:
            shutil.rmtree(entry, ignore_errors=True)
            text = f"removed {str(entry)!r}, a partial folder left by an interrupted run"
        done.append(text)
        if notes is not None:
            notes(text)
    return done


def prepare_output(out: str | os.PathLike, *, overwrite: bool,
                   notes: Callable[[str], None] | None = None) -> None:
    """Clean up after a killed run into ``out``, then :func:`check_output_folder`.

    The command line calls this before any computation, so a refused folder costs nothing.
    """
    clean_stale_work(out, notes)
    check_output_folder(out, overwrite=overwrite)


def write_folder(out: str | os.PathLike, build: Callable[[Path], None], *, kind: str,
                 overwrite: bool = False,
                 notes: Callable[[str], None] | None = None) -> Path:
    """Write a folder atomically: ``build(tmp)`` fills a hidden sibling that is then renamed.

    Parameters
    ----------
    out : path-like
        The folder to create (its parent is created if missing).
    build : callable(Path)
        Writes the files into the (empty) folder it is given.
    kind : str
        What the folder is ("report", "study"); recorded in :data:`MARKER`.
    overwrite : bool, optional
        Replace an existing folder that transit-risk wrote.
    notes : callable(str), optional
        Told about stale work folders removed or restored (see :func:`clean_stale_work`).

    Returns
    -------
    pathlib.Path
        ``out``.

    Raises
    ------
    ReportExistsError, OutputRefusedError
        See :func:`check_output_folder` (checked before and again after ``build``).
    OSError
        The folder cannot be written; nothing is left behind and an old report stays.
    """
    out = Path(out)
    parent = out.parent if str(out.parent) else Path(".")
    prepare_output(out, overwrite=overwrite, notes=notes)
    parent.mkdir(parents=True, exist_ok=True)
    stem = f".{out.name[:_PREFIX_CHARS]}"
    tmp = Path(tempfile.mkdtemp(prefix=f"{stem}.partial-{os.getpid()}-", dir=parent))
    try:
        os.chmod(tmp, 0o777 & ~_current_umask())  # mkdtemp makes it 0700; a report is shared
        build(tmp)
        (tmp / MARKER).write_text(json_text({"written_by": _TOOL, "kind": kind, "format": 1}),
                                  encoding="utf-8")
        check_output_folder(out, overwrite=overwrite)  # it may have appeared meanwhile
        _move_into_place(tmp, out, stem)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


def _move_into_place(tmp: Path, out: Path, stem: str) -> None:
    if not (out.exists() or out.is_symlink()):
        os.rename(tmp, out)
        return
    if _is_empty_dir(out):
        os.rmdir(out)
        os.rename(tmp, out)
        return
    # overwrite: set the old report aside, move the new one in, then delete the old one
    old = Path(tempfile.mkdtemp(prefix=f"{stem}.old-{os.getpid()}-", dir=out.parent))
    os.rmdir(old)
    os.rename(out, old)
    try:
        os.rename(tmp, out)
    except BaseException:
        os.rename(old, out)
        raise
    shutil.rmtree(old, ignore_errors=True)


# =============================================================================== JSON
def json_text(obj: Any) -> str:
    """``obj`` as indented UTF-8 JSON text: builtins only, NaN and infinity as ``null``."""
    return json.dumps(json_safe(obj), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def write_json(path: str | os.PathLike, obj: Any) -> None:
    """Write :func:`json_text` of ``obj`` to ``path``."""
    Path(path).write_text(json_text(obj), encoding="utf-8")


# =============================================================================== CSV
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def neutralise_cell(value: Any) -> Any:
    """A text cell that a spreadsheet would read as a formula gets a leading apostrophe.

    Text starting with ``=``, ``+``, ``-``, ``@``, tab or carriage return is prefixed with
    ``'`` (the usual spreadsheet-safe convention for CSV exports, OWASP "CSV Injection");
    numbers and other values are returned unchanged.
    """
    if isinstance(value, str) and value.startswith(_FORMULA_START):
        return "'" + value
    return value


def write_csv(frame: pd.DataFrame, path: str | os.PathLike) -> None:
    """Write ``frame`` as CSV: lists joined by ``;``, infinities as empty cells, text cells
    neutralised (:func:`neutralise_cell`), numbers untouched."""
    frame = frame.copy()
    frame.columns = [neutralise_cell(str(c)) for c in frame.columns]
    for col in frame.columns:
        if frame[col].dtype == object or pd.api.types.is_string_dtype(frame[col].dtype):
            frame[col] = frame[col].map(
                lambda v: neutralise_cell(";".join(map(str, v)) if isinstance(v, (list, tuple))
                                          else v)).astype(object)
    frame = frame.replace([np.inf, -np.inf], np.nan)  # empty cell, never 'inf'
    frame.to_csv(path, index=False)
