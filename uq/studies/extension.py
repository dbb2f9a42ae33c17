"""Extending a recorded run: one more look at P(success) under the run's sequential rule.

Running more samples after an UNDECIDED verdict asks the same question again; with a 95 %
interval at every look the false-GO rate grows with the looks. A run therefore declares
before its first look how many looks it may take (``[analysis] max_looks``, default 1) and
every look's interval is computed at ``1 - alpha / max_looks`` (the Bonferroni split of
:class:`uq.estimators.SequentialRule`); the recorded run's ``summary.json`` carries the
rule and the looks taken (``sequential_rule``), and an extension reads them, checks that it
repeats the same question (same scenario file, seed, scheme and replicates, more samples)
and takes the next look, refusing one beyond the declared maximum. By the union bound the
interval at whichever look the review stops keeps its nominal coverage, so the false-GO rate
stays at ``alpha / 2``. A run declared with one look (the default) spent its whole error
budget on it: it can be extended only by a new declaration, which is a new run (new seed).
Auto-convergence (``target_half_width``) declares its own doubling looks and needs no record.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, Mapping

from uq.errors import InputError

__all__ = ["ExtensionError", "RecordedRun", "recorded_run", "load_recorded_run",
           "extension_settings"]


class ExtensionError(InputError):
    """A recorded run cannot be extended as asked."""


@dataclass(frozen=True)
class RecordedRun:
    """What an extension needs from a recorded run (its ``summary.json`` or Assessment)."""

    seed: int
    scheme: str
    replicates: int
    samples: int
    confidence: float
    max_looks: int
    looks_taken: int
    scenario_sha256: str | None = None


def recorded_run(record: Any) -> RecordedRun:
    """A :class:`RecordedRun` from a parsed ``summary.json`` mapping, an Assessment or a
    RecordedRun."""
    if isinstance(record, RecordedRun):
        return record
    if not isinstance(record, Mapping):
        st, seq = record.settings, dict(getattr(record, "sequential", {}) or {})
        return RecordedRun(seed=st.seed, scheme=st.scheme, replicates=st.replicates,
                           samples=st.samples, confidence=st.confidence,
                           max_looks=int(seq.get("max_looks", st.max_looks)),
                           looks_taken=int(seq.get("looks_taken", 1)),
                           scenario_sha256=getattr(record.scenario, "source_sha256", None))
    try:
        settings, rule = record["settings"], record["sequential_rule"]
        return RecordedRun(
            seed=int(settings["seed"]), scheme=str(settings["scheme"]),
            replicates=int(settings["replicates"]), samples=int(settings["samples"]),
            confidence=float(settings["confidence"]), max_looks=int(rule["max_looks"]),
            looks_taken=int(rule["looks_taken"]),
            scenario_sha256=(record.get("scenario") or {}).get("sha256"))
    except (KeyError, TypeError, ValueError) as exc:
        raise ExtensionError(
            f"the recorded run has no usable {exc} entry: expected the summary.json of an "
            "assessment (settings and sequential_rule)") from None


def load_recorded_run(path) -> RecordedRun:
    """The :class:`RecordedRun` of a ``summary.json`` file (read as every input file is)."""
    import json

    from uq.scenario.reader import read_text_file

    text, _ = read_text_file(path, what="summary.json of the recorded run")
    try:
        return recorded_run(json.loads(text))
    except json.JSONDecodeError as exc:
        raise ExtensionError(f"{path}: not a JSON summary ({exc.msg} at line {exc.lineno}): "
                             "expected the summary.json of an assessment") from None
    except ExtensionError as exc:
        raise ExtensionError(f"{path}: {exc}") from None


def extension_settings(recorded: RecordedRun, settings, *, scenario_sha256: str | None):
    """The settings of the next look of ``recorded``, and that look's number.

    Parameters
    ----------
    recorded : RecordedRun
    settings : uq.studies.propagation.Settings
        The settings asked for (their ``samples`` is the new sample size).
    scenario_sha256 : str or None
        Hash of the scenario file being assessed.

    Returns
    -------
    (Settings, int)
        The settings with the recorded seed, scheme, replicates and declared looks, and the
        number of this look (recorded looks + 1).

    Raises
    ------
    ExtensionError
        When the extension asks a different question or would exceed the declared looks.
    """
    if (recorded.scenario_sha256 and scenario_sha256
            and recorded.scenario_sha256 != scenario_sha256):
        raise ExtensionError(
            "the recorded run assessed a different scenario file (sha256 "
            f"{recorded.scenario_sha256[:12]}..., this one {scenario_sha256[:12]}...): expected "
            "the same file, unchanged")
    if recorded.confidence != settings.confidence:
        raise ExtensionError(
            f"the recorded run's confidence is {recorded.confidence:g}, this scenario's "
            f"{settings.confidence:g}: expected the same confidence level")
    look = recorded.looks_taken + 1
    if look > recorded.max_looks:
        raise ExtensionError(
            f"the recorded run declared {recorded.max_looks} look"
            f"{'s' if recorded.max_looks != 1 else ''} at P(success) and has taken "
            f"{recorded.looks_taken}: a further look would exceed its false-GO budget. Declare "
            "more looks with [analysis] max_looks before a new run (new seed)")
    if settings.samples <= recorded.samples:
        raise ExtensionError(
            f"samples {settings.samples:,}: expected more than the recorded run's "
            f"{recorded.samples:,}")
    return dataclasses.replace(settings, seed=recorded.seed, scheme=recorded.scheme,
                               replicates=recorded.replicates,
                               max_looks=recorded.max_looks), look
