"""The scenario file's one error style: ``<file>: <key.path> = <value>: expected <what>``."""

from __future__ import annotations

from typing import Any

from uq.errors import InputError

__all__ = ["MISSING", "ScenarioError"]


class _Missing:
    """Marker for a required key that is absent (shown as ``<missing>``)."""

    def __repr__(self) -> str:
        return "<missing>"


MISSING: Any = _Missing()

_MAX_VALUE_REPR = 80
_LINE_BREAK_ESCAPES = {ord(c): c.encode("unicode_escape").decode("ascii")
                       for c in "\n\r\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029"}


class ScenarioError(InputError):
    """A scenario file is invalid.  ``str(error)`` is one line::

        <file>: <key.path> = <value!r>: expected <what>[; did you mean 'x'?]

    Attributes
    ----------
    file : str
        The scenario file (or the ``source`` label of a string).
    key : str or None
        Dotted key path of the offending entry; None for whole-file problems (unreadable file,
        TOML syntax), whose message is ``<file>: expected <what>``.
    value : object
        The offending value as read (``MISSING`` when a required key is absent).
    expected : str
        What would have been accepted.
    suggestion : str or None
        The closest known key or name, for misspellings.
    """

    def __init__(self, file: str, key: str | None, value: Any = MISSING, expected: str = "",
                 suggestion: str | None = None):
        self.file = str(file)
        self.key = key
        self.value = value
        self.expected = expected
        self.suggestion = suggestion
        super().__init__(self._one_line())

    def _one_line(self) -> str:
        if self.key is None:
            text = f"{self.file}: expected {self.expected}"
        else:
            text = f"{self.file}: {self.key} = {_short_repr(self.value)}: expected {self.expected}"
        if self.suggestion is not None:
            text += f"; did you mean {self.suggestion!r}?"
        # repr() already escapes line breaks in values; this also covers file names, keys and
        # distribution parameter names, for every boundary str.splitlines() knows.
        return text.translate(_LINE_BREAK_ESCAPES)

    def __reduce__(self):
        return (ScenarioError, (self.file, self.key, self.value, self.expected, self.suggestion))


def _short_repr(value: Any) -> str:
    try:
        text = repr(value)
    except ValueError:  # an integer past Python's digit limit for int -> str (4300 digits)
        text = f"<{type(value).__name__} too large to show>"
    except RecursionError:  # a value nested deeper than repr can go
        text = f"<{type(value).__name__} nested too deeply to show>"
    if len(text) > _MAX_VALUE_REPR:
        text = text[: _MAX_VALUE_REPR - 3] + "..."
    return text


# =============================================================================== public API
