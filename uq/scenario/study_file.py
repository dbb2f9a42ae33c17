"""Study files: many variants of one base scenario, read and validated like scenario files.

A *study file* (TOML) names a base scenario and its variants, either as a ``[grid]`` of
scenario fields and their values (every combination is a variant) or as explicit
``[[variants]]`` with ``overrides``. Overrides are applied to the base scenario's raw TOML
mapping *before* :func:`uq.scenario.parse_scenario`, so every variant is validated by the same
reader as a scenario file, with the same one-line messages.

Study file::

    [study]
    name = "speed-and-battery"            # required
    description = "..."                   # optional
    scenario = "under_ice_section.toml"   # required, relative to the study file
    samples = 131072                      # optional; defaults from the scenario's [analysis]
    seed = 20261203                       # optional
    scheme = "sobol"                      # optional: sobol | monte-carlo | latin-hypercube
    replicates = 8                        # optional, sobol only: samples / replicates = 2^m

    [grid]                                # either a grid ...
    "setpoint.speed_m_s" = [1.0, 1.2, 1.4]
    "battery.nominal_energy_Wh" = [16000.0, 18000.0]

    [[variants]]                          # ... or explicit variants (not both)
    name = "heavy fouling"
    overrides = {"fouling.drag_increase" = {dist = "pert", min = 0.3, mode = 0.5, max = 0.8}}

A dotted path names one field of the base scenario: ``section.key``, ``vehicle.hull.key``, or
``legs.<leg name>.key``. It must exist in the base scenario file (an optional field is varied
by adding it there first); ``scenario.*`` and ``analysis.*`` cannot be overridden (the study
sets the numerical settings for all variants). A value is anything the scenario accepts at
that path: a number, a string, or a distribution table. When an override fixes a field that
the base scenario had uncertain, the rank correlations and test-catalogue entries that name
it are dropped from that variant (they would otherwise refer to an input that no longer
exists).
"""
from __future__ import annotations

import copy
import dataclasses
import difflib
import hashlib
import itertools
import json
import math
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Sequence

import numpy as np

from uq.errors import InputError
from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.fields import SCHEMES
from uq.scenario.reader import parse_scenario, parse_toml, read_text_file
from uq.scenario.types import Scenario

__all__ = [
    "MAX_VARIANTS",
    "StudyFileError",
    "VariantScenarioError",
    "StudySettingsError",
    "Variant",
    "Study",
    "load_study",
    "parse_study",
    "override_label",
]

#: Largest number of variants a study may expand to.
MAX_VARIANTS = 10_000

_FORBIDDEN_SECTIONS = {
    "scenario": "the scenario's name and description are not study variables",
    "analysis": "the study's [study] samples, seed and scheme apply to every variant",
    "correlations": "rank correlations are not addressable by a dotted path",
}
# =============================================================================== errors
class StudyFileError(ScenarioError):
    """A study file is invalid. ``str(error)`` is one line, in the scenario-file style::

        <file>: <key.path> = <value!r>: expected <what>[; did you mean 'x'?]
    """

    def __reduce__(self):
        return (StudyFileError, (self.file, self.key, self.value, self.expected, self.suggestion))


class VariantScenarioError(StudyFileError):
    """A variant's scenario (base scenario plus the variant's overrides) is invalid.

    ``str(error)`` is ``<study file>: variant '<name>': <the scenario's one-line error>``.
    ``cause`` is the :class:`uq.scenario.ScenarioError`.
    """

    def __init__(self, file: str, variant: str, cause: ScenarioError):
        self.variant = variant
        self.cause = cause
        ValueError.__init__(self, f"{file}: variant {variant!r}: {cause}")
        self.file, self.key, self.value = str(file), cause.key, cause.value
        self.expected, self.suggestion = cause.expected, cause.suggestion

    def __reduce__(self):
        return (VariantScenarioError, (self.file, self.variant, self.cause))


class StudySettingsError(InputError):
    """Numerical settings passed to :func:`run_study` are invalid (names value and need)."""


# =============================================================================== study file
@dataclass(frozen=True)
class Variant:
    """One configuration of the study: the base scenario with ``overrides`` applied."""

    name: str
    overrides: tuple[tuple[str, Any], ...]  # (dotted path, value as written)
    scenario: Scenario


@dataclass(frozen=True)
class Study:
    """A validated study file.

    ``fields`` are the dotted paths the study varies (grid keys, or the union of the
    override paths in order of first appearance); ``samples``, ``seed``, ``scheme`` and
    ``replicates`` are the study's numerical settings (defaults from the base scenario).
    """

    name: str
    description: str
    source: str
    scenario_path: str
    scenario_sha256: str
    samples: int
    seed: int
    scheme: str
    replicates: int
    fields: tuple[str, ...]
    variants: tuple[Variant, ...]
    layout: str  # "grid" | "variants"

    @property
    def input_names(self) -> tuple[str, ...]:
        """Union of the variants' input names, in order of first appearance (plan columns)."""
        union: list[str] = []
        for v in self.variants:
            union.extend(n for n in v.scenario.input_names if n not in union)
        return tuple(union)


def load_study(path: str | os.PathLike[str]) -> Study:
    """Read and validate a study file and every variant's scenario.

    Raises
    ------
    StudyFileError
        The first problem in the study file, one line naming file, key, value and need.
    VariantScenarioError
        A variant's scenario is invalid (names the variant and the scenario's problem).
    """
    label = os.fspath(path)
    # the scenario reader's safe file reading: regular files of bounded size, BOM, nesting
    text, _ = read_text_file(label, what="study file", error=StudyFileError)
    doc = parse_toml(text, source=label, error=StudyFileError)
    return parse_study(doc, source=label, base_dir=Path(label).resolve().parent)


def parse_study(doc: Mapping[str, Any], *, source: str = "<study>",
                base_dir: str | os.PathLike[str] | None = None) -> Study:
    """Validate a study given as a parsed TOML mapping (see the module docstring).

    Parameters
    ----------
    doc : Mapping
        The parsed study file.
    source : str
        File name used in error messages.
    base_dir : path-like, optional
        Folder against which ``study.scenario`` is resolved (default: the working folder).
    """
    return _StudyReader(source, Path(base_dir) if base_dir is not None else Path.cwd()).study(doc)


def _is_distribution(value: Any) -> bool:
    return isinstance(value, Mapping) and "dist" in value


def override_label(value: Any) -> str:
    """Compact text of an override value, for variant names and table cells."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return format(value, ".12g")
    if _is_distribution(value):
        params = ", ".join(f"{k}={override_label(v)}" for k, v in value.items() if k != "dist")
        return f"{value['dist']}({params})"
    return str(value)


class _StudyReader:
    _TOP = ("study", "grid", "variants")
    _STUDY_KEYS = ("name", "description", "scenario", "samples", "seed", "scheme", "replicates")

    def __init__(self, file: str, base_dir: Path):
        self.file = file
        self.base_dir = base_dir

    def fail(self, key, value, expected, suggestion=None):
        raise StudyFileError(self.file, key, value, expected, suggestion)

    def unknown(self, key, value, path, known):
        close = difflib.get_close_matches(str(key), list(known), n=1, cutoff=0.6)
        where = f"[{path}]" if path else "the top level"
        self.fail(f"{path}.{key}" if path else str(key), value,
                  f"a known key of {where} (one of: {', '.join(known)})", close[0] if close else None)

    # ------------------------------------------------------------------ document
    def study(self, doc: Mapping[str, Any]) -> Study:
        for key, value in doc.items():
            if key not in self._TOP:
                self.unknown(key, value, "", self._TOP)
        head = doc.get("study", MISSING)
        if not isinstance(head, Mapping):
            self.fail("study", head, "a [study] table with at least 'name' and 'scenario'")
        for key, value in head.items():
            if key not in self._STUDY_KEYS:
                self.unknown(key, value, "study", self._STUDY_KEYS)
        name = self.text(head.get("name", MISSING), "study.name", "the study name")
        description = head.get("description", "")
        if not isinstance(description, str):
            self.fail("study.description", description, "a string (a description)")
        base_path, base_doc, sha = self.base_scenario(head.get("scenario", MISSING))
        try:
            base = parse_scenario(base_doc, source=base_path)
        except ScenarioError as exc:
            self.fail("study.scenario", head["scenario"],
                      f"a valid scenario file ({exc})")
        samples, seed, scheme, replicates = self.settings(head, base)

        has_grid, has_variants = "grid" in doc, "variants" in doc
        if not has_grid and not has_variants:
            self.fail("grid", MISSING, "the variants: a [grid] table or [[variants]] tables")
        if has_grid and has_variants:
            self.fail("variants", doc["variants"], "no [[variants]] next to a [grid] "
                      "(give either a grid or explicit variants, not both)")
        if has_grid:
            fields, specs = self.grid(doc["grid"], base_doc)
        else:
            fields, specs = self.variant_tables(doc["variants"], base_doc)
        variants = []
        for vname, overrides in specs:
            vdoc = _apply_overrides(base_doc, overrides)
            try:
                scenario = parse_scenario(vdoc, source=base_path)
            except ScenarioError as exc:
                raise VariantScenarioError(self.file, vname, exc) from exc
            scenario = dataclasses.replace(scenario, source_path=base_path, source_sha256=sha)
            variants.append(Variant(vname, tuple(overrides), scenario))
        return Study(name=name, description=description, source=self.file,
                     scenario_path=base_path, scenario_sha256=sha, samples=samples, seed=seed,
                     scheme=scheme, replicates=replicates, fields=tuple(fields),
                     variants=tuple(variants), layout="grid" if has_grid else "variants")

    def text(self, value, path, what):
        if not isinstance(value, str) or not value.strip():
            self.fail(path, value, f"a non-empty string ({what})")
        return value

    def base_scenario(self, value) -> tuple[str, dict, str]:
        self.text(value, "study.scenario", "path of the base scenario file, relative to the study file")
        path = (self.base_dir / value) if not os.path.isabs(value) else Path(value)
        try:
            text, data = read_text_file(path)
            doc = parse_toml(text, source=str(path))
        except ScenarioError as exc:
            self.fail("study.scenario", value, f"a readable scenario file of valid TOML "
                      f"({exc.expected}: {path})")
        return str(path), doc, hashlib.sha256(data).hexdigest()

    def settings(self, head, base: Scenario) -> tuple[int, int, str, int]:
        a = base.analysis
        samples = head.get("samples", a.samples)
        seed = head.get("seed", a.seed)
        scheme = head.get("scheme", a.scheme)
        if isinstance(samples, bool) or not isinstance(samples, int) or samples < 2:
            self.fail("study.samples", samples, "an integer >= 2 (number of samples per variant)")
        if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
            self.fail("study.seed", seed, "an integer >= 0 (random seed)")
        if not isinstance(scheme, str) or scheme not in SCHEMES:
            close = difflib.get_close_matches(str(scheme), SCHEMES, n=1, cutoff=0.6)
            self.fail("study.scheme", scheme, "the sampling scheme: one of "
                      + ", ".join(repr(s) for s in SCHEMES), close[0] if close else None)
        if "replicates" in head:
            replicates = head["replicates"]
            if isinstance(replicates, bool) or not isinstance(replicates, int) or replicates < 1:
                self.fail("study.replicates", replicates, "an integer >= 1 (independent scramblings)")
            if scheme != "sobol" and replicates != 1:
                self.fail("study.replicates", replicates,
                          f"1 for scheme = {scheme!r} (replicates are scramblings of a Sobol' plan)")
        else:
            replicates = a.replicates if scheme == "sobol" else 1
        try:
            _check_settings(samples, scheme, replicates)
        except StudySettingsError as exc:
            self.fail("study.samples", samples, str(exc))
        return samples, seed, scheme, replicates

    # ------------------------------------------------------------------ variants
    def grid(self, table, base_doc) -> tuple[list[str], list[tuple[str, list]]]:
        if not isinstance(table, Mapping) or not table:
            self.fail("grid", table, "a non-empty [grid] table of dotted scenario fields = [values]")
        entries = _flatten(table, "", leaf=lambda v: not isinstance(v, Mapping) or _is_distribution(v))
        fields, lists = [], []
        for path, values in entries:
            key = f"grid.{_quote(path)}"
            if not isinstance(values, list) or not values:
                self.fail(key, values, "a non-empty list of values for the field")
            self.check_path(path, key, base_doc, values)
            shown = [override_label(v) for v in values]
            dup = next((s for i, s in enumerate(shown) if s in shown[:i]), None)
            if dup is not None:
                self.fail(key, values, f"a list of distinct values ({dup} is repeated)")
            fields.append(path)
            lists.append(values)
        count = math.prod(len(v) for v in lists)
        if count > MAX_VARIANTS:
            self.fail("grid", f"{count} combinations", f"at most {MAX_VARIANTS} variants")
        labels = _short_labels(fields)
        specs = []
        for combo in itertools.product(*lists):
            name = ", ".join(f"{lab}={override_label(v)}" for lab, v in zip(labels, combo))
            specs.append((name, list(zip(fields, combo))))
        return fields, specs

    def variant_tables(self, value, base_doc) -> tuple[list[str], list[tuple[str, list]]]:
        if not isinstance(value, list) or not value:
            self.fail("variants", value, "one or more [[variants]] tables")
        if len(value) > MAX_VARIANTS:
            self.fail("variants", f"{len(value)} tables", f"at most {MAX_VARIANTS} variants")
        known = ("name", "description", "overrides")
        fields: list[str] = []
        specs = []
        seen: dict[str, int] = {}
        for i, item in enumerate(value):
            where = f"variants[{i}]"
            if not isinstance(item, Mapping):
                self.fail(where, item, "a [[variants]] table")
            for key, v in item.items():
                if key not in known:
                    self.unknown(key, v, where, known)
            name = self.text(item.get("name", MISSING), f"{where}.name", "the variant name")
            if name in seen:
                self.fail(f"{where}.name", name, f"a unique variant name (variants[{seen[name]}] has it)")
            seen[name] = i
            if not isinstance(item.get("description", ""), str):
                self.fail(f"{where}.description", item["description"], "a string (a description)")
            overrides = item.get("overrides", {})
            if not isinstance(overrides, Mapping):
                self.fail(f"{where}.overrides", overrides,
                          "a table of dotted scenario fields = values, e.g. "
                          "{\"setpoint.speed_m_s\" = 1.2}")
            pairs = _flatten(overrides, "", leaf=lambda v: not isinstance(v, Mapping) or _is_distribution(v))
            for path, v in pairs:
                self.check_path(path, f"{where}.overrides.{_quote(path)}", base_doc, v)
                if path not in fields:
                    fields.append(path)
            specs.append((name, pairs))
        return fields, specs

    def check_path(self, path: str, key: str, base_doc: Mapping, value: Any) -> None:
        """The dotted ``path`` must name one existing field of the base scenario."""
        parts = path.split(".")
        head = parts[0]
        if head in _FORBIDDEN_SECTIONS:
            self.fail(key, value, f"a scenario field that a study may vary ({_FORBIDDEN_SECTIONS[head]})")
        node: Any = base_doc
        walked: list[str] = []
        for i, part in enumerate(parts):
            here = ".".join(walked) or "the base scenario"
            if isinstance(node, list) and walked == ["legs"]:
                names = [leg.get("name") for leg in node if isinstance(leg, Mapping)]
                if part not in names:
                    close = difflib.get_close_matches(part, [n for n in names if isinstance(n, str)], n=1)
                    self.fail(key, value, f"a field of the base scenario: it has no leg {part!r} "
                              f"(legs: {', '.join(map(str, names))})", close and close[0] or None)
                node = node[names.index(part)]
            elif isinstance(node, Mapping) and not _is_distribution(node):
                if part not in node:
                    close = difflib.get_close_matches(part, [str(k) for k in node], n=1, cutoff=0.6)
                    self.fail(key, value,
                              f"a field present in the base scenario ({path!r}: {here} has no "
                              f"key {part!r}; to vary an optional field, add it to the base "
                              f"scenario first)", close[0] if close else None)
                node = node[part]
            else:
                self.fail(key, value, f"a dotted path to one field ({'.'.join(walked)} is a value, "
                          f"not a table)")
            walked.append(part)
        if isinstance(node, list) or (isinstance(node, Mapping) and not _is_distribution(node)):
            what = "a list of legs" if path == "legs" else "a table"
            self.fail(key, value, f"a dotted path to one field ({path} is {what}; name a key in it)")


def _quote(path: str) -> str:
    return json.dumps(path) if "." in path else path


def _flatten(table: Mapping, prefix: str, *, leaf: Callable[[Any], bool]) -> list[tuple[str, Any]]:
    """``{"a": {"b": 1}, "c.d": 2}`` -> ``[("a.b", 1), ("c.d", 2)]`` (quoted or nested keys)."""
    out = []
    for key, value in table.items():
        path = f"{prefix}.{key}" if prefix else str(key)
        if leaf(value):
            out.append((path, value))
        else:
            out.extend(_flatten(value, path, leaf=leaf))
    return out


def _short_labels(fields: Sequence[str]) -> list[str]:
    """Shortest dotted suffix of each field that tells it apart from the others."""
    labels = []
    for f in fields:
        parts = f.split(".")
        for k in range(1, len(parts) + 1):
            cand = ".".join(parts[-k:])
            if all(not (o == cand or o.endswith("." + cand)) for o in fields if o != f):
                labels.append(cand)
                break
        else:
            labels.append(f)
    return labels


def _apply_overrides(base_doc: Mapping, overrides: Sequence[tuple[str, Any]]) -> dict:
    """A deep copy of the raw scenario mapping with the overrides written in (paths checked)."""
    doc = copy.deepcopy(dict(base_doc))
    now_fixed = []
    for path, value in overrides:
        parts = path.split(".")
        node: Any = doc
        for i, part in enumerate(parts[:-1]):
            if isinstance(node, list):
                node = next(leg for leg in node if isinstance(leg, Mapping) and leg.get("name") == part)
            else:
                node = node[part]
        if _is_distribution(node.get(parts[-1])) and not _is_distribution(value):
            now_fixed.append(path)
        node[parts[-1]] = copy.deepcopy(value)
    if now_fixed:
        if isinstance(doc.get("correlations"), list):
            doc["correlations"] = [c for c in doc["correlations"]
                                   if not (isinstance(c, Mapping) and isinstance(c.get("inputs"), list)
                                           and set(c["inputs"]) & set(now_fixed))]
        decision = doc.get("decision")
        if isinstance(decision, Mapping) and isinstance(decision.get("tests"), list):
            kept = []
            for t in decision["tests"]:
                if isinstance(t, Mapping) and isinstance(t.get("inputs"), list):
                    t = {**t, "inputs": [n for n in t["inputs"] if n not in now_fixed]}
                    if not t["inputs"]:
                        continue
                kept.append(t)
            decision["tests"] = kept
    return doc


def _check_settings(samples: Any, scheme: str, replicates: int) -> None:
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or samples < 2:
        raise StudySettingsError(f"samples = {samples!r}: expected an integer >= 2")
    if scheme == "sobol":
        per, rest = divmod(int(samples), replicates)
        if rest or per < 1 or per & (per - 1):
            good = replicates * (1 << max(1, round(math.log2(max(samples / replicates, 2)))))
            raise StudySettingsError(
                f"samples = {samples!r}: expected {replicates} x 2^m for scheme 'sobol' with "
                f"{replicates} replicates (scrambled Sobol' replicates need n = 2^m each), "
                f"e.g. {good}")
