"""Reading a scenario or study file safely: a regular UTF-8 file of bounded size, parsed as TOML
with bounded nesting.

A FIFO, device, socket or folder is refused without blocking; a byte-order mark is dropped;
nesting deep enough to exhaust the parser's stack, Python's integer-digit limit, running out
of memory and syntax errors all become one :class:`~uq.scenario.errors.ScenarioError` line
(or the caller's subclass of it).
"""
from __future__ import annotations

import os
import re
import stat
import tomllib
from typing import Any

from uq.scenario.errors import ScenarioError

__all__ = ["read_text_file", "parse_toml", "MAX_FILE_BYTES", "MAX_NESTING"]


#: Largest scenario or study file read [bytes]; real ones are a few kilobytes.
MAX_FILE_BYTES = 4 * 1024 * 1024
#: Deepest nesting of arrays and tables parsed (real files use 3 or 4 levels).
MAX_NESTING = 64
_BOM = "\ufeff"


def read_text_file(path: str | os.PathLike[str], *, what: str = "scenario file",
                   error: type[ScenarioError] = ScenarioError) -> tuple[str, bytes]:
    """Read a UTF-8 text file the safe way: a regular file of at most :data:`MAX_FILE_BYTES`.

    A FIFO, device, socket or folder is refused without reading it (a FIFO is opened
    non-blocking, so nothing hangs); a symbolic link is followed to what it names and judged
    by that. A UTF-8 byte-order mark is accepted and dropped.

    Returns
    -------
    (str, bytes)
        The text and the file's bytes (for the SHA-256 record).

    Raises
    ------
    ScenarioError (or ``error``)
        One line naming the file and what was expected.
    """
    label = os.fspath(path)

    def fail(expected: str, exc: BaseException | None = None):
        raise error(label, None, expected=expected) from exc

    try:
        fd = os.open(label, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        fail(f"a readable {what} ({exc.strerror or exc})", exc)
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            fail(f"a regular {what}, not {_file_kind(info.st_mode)}")
        if info.st_size > MAX_FILE_BYTES:
            fail(f"a {what} of at most {MAX_FILE_BYTES // 1024 // 1024} MiB "
                 f"(this one has {info.st_size:,} bytes)")
        with os.fdopen(os.dup(fd), "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        fail(f"a readable {what} ({exc.strerror or exc})", exc)
    finally:
        os.close(fd)
    if len(data) > MAX_FILE_BYTES:
        fail(f"a {what} of at most {MAX_FILE_BYTES // 1024 // 1024} MiB (it grew while read)")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        fail(f"UTF-8 text, as TOML requires ({exc.reason} at byte {exc.start})", exc)
    return (text[1:] if text.startswith(_BOM) else text), data


def _file_kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a special file"


_OPENERS = frozenset("[{")
_CLOSERS = frozenset("]}")


def _nesting_depth(text: str) -> int:
    """An upper bound of the bracket nesting of TOML text (strings and comments included)."""
    depth = deepest = 0
    for ch in text:
        if ch in _OPENERS:
            depth += 1
            if depth > deepest:
                deepest = depth
        elif ch in _CLOSERS and depth:
            depth -= 1
    return deepest


def parse_toml(text: str, *, source: str,
               error: type[ScenarioError] = ScenarioError) -> dict[str, Any]:
    """Parse TOML text; every failure is one :class:`ScenarioError` (or ``error``) line.

    Nesting deeper than :data:`MAX_NESTING` is refused before parsing (a recursive parser
    would run out of stack); running out of memory, Python's integer-digit limit and
    syntax errors are reported the same way.
    """
    if text.startswith(_BOM):
        text = text[1:]
    if _nesting_depth(text) > MAX_NESTING and _nesting_depth(_strip_strings(text)) > MAX_NESTING:
        raise error(source, None, expected=f"arrays and tables nested at most {MAX_NESTING} deep")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(source, None, expected=f"valid TOML ({exc})") from exc
    except RecursionError as exc:
        raise error(source, None, expected=f"arrays and tables nested at most {MAX_NESTING} deep") from exc
    except MemoryError as exc:
        raise error(source, None, expected="TOML that fits in memory") from exc
    except ValueError as exc:  # tomllib lets int()'s digit limit (4300 digits) through
        raise error(source, None, expected=f"TOML that Python can read ({exc})") from exc


def _strip_strings(text: str) -> str:
    """TOML text without its comments and quoted strings (for the nesting count)."""
    return re.sub(r'"""[\s\S]*?"""|\'\'\'[\s\S]*?\'\'\'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#[^\n]*',
                  "", text)
