"""Typed, immutable scenario: what a planner wrote in the scenario file, validated once.

A scenario keeps the file's own units (km, days, Wh, degrees) in field names that say them;
conversion to SI happens in :mod:`uq.simulate`, at the boundary to :mod:`physics`.

Any numeric field holds either a ``float`` (a fixed value) or a marginal distribution
(:class:`uq.scenario.distributions.Marginal`) whose ``name`` is the dotted key path of the field, e.g.
``legs.shelf_crossing.current_along_m_s``. ``Scenario.inputs`` lists every uncertain field in
file order; that order is the column order of every sample array.

:func:`load_scenario` and :func:`parse_scenario` are the only way in: they read TOML (data,
never code), check every key, type and physical range, and raise :class:`ScenarioError` on the
first problem with a one-line message ``<file>: <key.path> = <value>: expected <what>``.
A distribution is checked by its support: a normal efficiency is rejected because it can
leave (0, 1]. Choices made here: ``appendage_factor`` >= 1 (appendages only add drag);
in-situ temperature in [-3, 40] degC; practical salinity in (0, 42]; ``samples`` must be a
power of two for the Sobol' scheme and ``sensitivity_base_n`` always; rank correlations must
form a positive-definite matrix both as given and as the normal-copula matrix 2 sin(pi r/6).

The reader is split along the file's own seams: :mod:`uq.scenario.textfile` (reading the file
safely and parsing TOML), :mod:`uq.scenario.fields` (ranges and choices of each field),
:mod:`uq.scenario.field_reader` (numbers, distributions, the envelope, names),
:mod:`uq.scenario.read_vehicle`, :mod:`uq.scenario.read_route` and
:mod:`uq.scenario.read_decision` (one per group of sections); this module orders the sections
and checks what crosses them.
"""
from __future__ import annotations

import difflib
import hashlib
import os
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.field_table import SECTIONS
from uq.scenario.fields import VEHICLE_KINDS
from uq.scenario.read_decision import DecisionSections
from uq.scenario.read_route import RouteSections
from uq.scenario.read_vehicle import VehicleSections
from uq.scenario.textfile import MAX_FILE_BYTES, MAX_NESTING, parse_toml, read_text_file
from uq.scenario.types import Analysis, Decision, Fouling, Hardware, Limits, Recovery, Scenario, UnderIce

__all__ = ["load_scenario", "parse_scenario", "read_text_file", "parse_toml", "MAX_FILE_BYTES",
           "MAX_NESTING"]


def load_scenario(path: str | os.PathLike[str]) -> Scenario:
    """Read, validate and type a scenario file.

    Parameters
    ----------
    path : str or path-like
        A TOML scenario file (UTF-8, a byte-order mark is accepted), a regular file of at
        most :data:`MAX_FILE_BYTES`.

    Returns
    -------
    Scenario
        With ``source_path`` and ``source_sha256`` (of the file bytes) recorded.

    Raises
    ------
    ScenarioError
        On the first problem found (one-line message naming file, key path, value and what
        was expected), including an unreadable or special file, or invalid TOML.
    """
    label = os.fspath(path)
    text, data = read_text_file(label)
    scenario = parse_scenario(text, source=label)
    return replace(scenario, source_path=label, source_sha256=hashlib.sha256(data).hexdigest())


def parse_scenario(text_or_mapping: str | Mapping[str, Any], *, source: str = "<string>") -> Scenario:
    """Validate and type a scenario given as TOML text or as an already-parsed mapping.

    Parameters
    ----------
    text_or_mapping : str or Mapping
        TOML text, or a mapping shaped like the parsed TOML.
    source : str, optional
        Label used as the file name in error messages.

    Returns
    -------
    Scenario
        ``source_sha256`` is the SHA-256 of the UTF-8 text (None for a mapping);
        ``source_path`` is None (set by :func:`load_scenario`). ``cautions`` lists the
        implausible values (see :mod:`uq.scenario.envelope`) and the defaults taken.

    Raises
    ------
    ScenarioError
        On the first problem found.  Sections are read in file order and keys in file order
        within a table; cross-references (correlations, tests) are checked last.

    Notes
    -----
    Values are only read, never evaluated: TOML is data, and no string becomes code.
    """
    sha = None
    if isinstance(text_or_mapping, str):
        sha = hashlib.sha256(text_or_mapping.encode("utf-8", "surrogatepass")).hexdigest()
        doc = parse_toml(text_or_mapping, source=source)
    elif isinstance(text_or_mapping, Mapping):
        doc = text_or_mapping
    else:
        raise TypeError(f"parse_scenario() takes TOML text or a mapping, not {type(text_or_mapping).__name__}")
    reader = _Reader(source)
    try:
        scenario = reader.scenario(doc)
    except RecursionError as exc:  # a mapping nested beyond the stack (not from TOML text)
        raise ScenarioError(source, None, expected=f"tables nested at most {MAX_NESTING} deep") from exc
    return replace(scenario, source_sha256=sha, cautions=tuple(reader.cautions))



class _Reader(VehicleSections, RouteSections, DecisionSections):
    """One pass over a parsed TOML document; raises the first problem found."""

    # ------------------------------------------------------------------ document
    _SECTIONS = SECTIONS  # every section, from the field table
    _REQUIRED_SECTIONS = ("scenario", "vehicle", "battery", "setpoint", "legs")

    def scenario(self, doc: Mapping[str, Any]) -> Scenario:
        for key, value in doc.items():
            if key not in self._SECTIONS:
                self.unknown(key, value, "", list(self._SECTIONS))
        for key in self._REQUIRED_SECTIONS:
            if key == "legs" and "route" in doc:
                continue  # the legs come from the waypoints (uq.scenario.environment)
            if key not in doc:
                how = "at least one [[legs]] table" if key == "legs" else f"a [{key}] section"
                self.fail(key, MISSING, how)
        vehicle_table = self.table(doc["vehicle"], "vehicle")
        kind = self.choice(vehicle_table.get("kind", MISSING), "vehicle.kind", VEHICLE_KINDS,
                           what="the vehicle kind, stated explicitly (never guessed from the keys)")
        self.kind = kind
        parsed = self.sections(doc, vehicle_table, kind)
        route = self.route(doc, parsed, kind) if "route" in doc or "environment" in doc else None
        self.kind_checks(doc, parsed, kind)
        correlations, decision = self.cross_references(parsed, route)
        name, description = parsed["scenario"]
        return Scenario(
            name=name,
            description=description,
            vehicle=parsed["vehicle"],
            battery=parsed["battery"],
            setpoint=parsed["setpoint"],
            fouling=parsed.get("fouling", Fouling()),
            legs=parsed["legs"],
            limits=parsed.get("limits", Limits()),
            decision=decision,
            analysis=parsed.get("analysis", Analysis()),
            correlations=correlations,
            recovery=parsed.get("recovery", Recovery()),
            under_ice=parsed.get("under_ice", UnderIce()),
            hardware=parsed.get("hardware", Hardware()),
            inputs=tuple(self.inputs),
            route=route.route if route else (),
            environment=route.sources if route else (),
            data_correlations=route.correlations if route else (),
        )

    def sections(self, doc: Mapping[str, Any], vehicle_table: Mapping[str, Any],
                 kind: str) -> dict[str, Any]:
        """Each section read by its own reader, in file order (so the first problem in the
        file is the one reported)."""
        readers = {
            "scenario": self.header,
            "vehicle": lambda value: self.vehicle(vehicle_table, kind),
            "battery": self.battery,
            "setpoint": lambda value: self.setpoint(value, kind),
            "fouling": self.fouling,
            "limits": self.limits,
            "legs": self.legs,
            "correlations": self.correlations_raw,
            "recovery": self.recovery,
            "under_ice": self.under_ice,
            "hardware": self.hardware,
            "decision": self.decision,
            "analysis": self.analysis,
        }
        return {key: readers[key](value) for key, value in doc.items() if key in readers}

    def kind_checks(self, doc: Mapping[str, Any], parsed: dict[str, Any], kind: str) -> None:
        """The checks across sections that depend on the vehicle kind."""
        if kind == "glider":
            self.glider_windows(parsed["setpoint"], parsed["legs"])
            for leg in parsed["legs"]:
                for key in ("speed_m_s", "depth_m"):
                    if getattr(leg, key) is not None:
                        self.fail(f"legs.{leg.name}.{key}", getattr(leg, key),
                                  "no per-leg speed or depth for a glider (its setpoint is "
                                  "a glide angle and a dive band)")
            self.glider_policies(parsed["setpoint"], parsed["legs"])
            return
        self.propeller_windows(parsed["setpoint"], parsed["legs"])
        self.battery_in_hull(parsed["vehicle"], parsed["battery"])
        for i, item in enumerate(doc.get("legs") or ()):  # a waypoint route has no [[legs]]
            for key in ("flight_policy", "dives_per_surfacing", "payload_power_W",
                        "payload_duty_cycle"):
                if isinstance(item, Mapping) and key in item:
                    self.fail(f"legs.{item.get('name', i)}.{key}", item[key],
                              "a key of a propeller vehicle's leg ({key!r} belongs to "
                              "kind = 'glider')".replace("{key!r}", repr(key)))

    def cross_references(self, parsed: dict[str, Any], route) -> tuple[tuple, Decision]:
        """Names that refer to other parts of the file: safe exits, correlations, tests and
        the nature of inputs (checked last, once every input is known)."""
        if "under_ice" in parsed:
            names = [leg.name for leg in parsed["legs"]]
            for name in parsed["under_ice"].safe_exits_after:
                if name not in names:
                    close = difflib.get_close_matches(name, names, n=1, cutoff=0.6)
                    self.fail("under_ice.safe_exits_after", name, "the name of a leg of this "
                              "route", close[0] if close else None)
        correlations = self.correlations_check(parsed.get("correlations", []) + self.data_correlations(
            route, parsed.get("correlations", [])))
        decision: Decision = parsed.get("decision", Decision())
        for i, test in enumerate(decision.tests):
            for name in test.inputs:
                self.check_name(name, f"decision.tests[{i}].inputs")
        for key in ("knowledge", "variability"):
            for name in getattr(decision, key):
                if name not in self.fixed:  # a fixed number has no nature: ignored (a variant may fix it)
                    self.check_name(name, f"decision.{key}")
        for name in decision.knowledge:
            if name in decision.variability:
                self.fail("decision.variability", name,
                          "an input not also listed in decision.knowledge (an input has one nature)")
        return correlations, decision

    def header(self, value: Any) -> tuple[str, str]:
        table = self.table(value, "scenario")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the scenario name"),
            "description": lambda r, v, p: r.text(v, p, what="a description", nonempty=False),
        }
        out = self.read_fields(table, "scenario", fields, ("name",))
        return out["name"], out.get("description", "")
