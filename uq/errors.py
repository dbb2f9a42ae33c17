"""The one root of every error transit-risk raises on purpose.

Callers (and the command line) catch :class:`TransitRiskError` to tell a refused input or a
refused operation from a bug. Errors about what the user gave (a scenario file, an argument,
an array of the wrong shape) are :class:`InputError`, which is also a ``ValueError`` so that
code written against the standard library's conventions keeps working.
"""

from __future__ import annotations

__all__ = ["TransitRiskError", "InputError"]


class TransitRiskError(Exception):
    """Root of every error raised on purpose by transit-risk."""


class InputError(TransitRiskError, ValueError):
    """An input (file, argument, array) that transit-risk refuses; the message says why."""
