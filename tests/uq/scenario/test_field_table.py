"""The field table (uq/scenario/field_table.py) is the reader's key list and the README's
scenario reference; these tests keep the three from drifting apart.

Nothing here is a physical check: the expected values are the repository's own files (the
README, the reader's behaviour), which is the point of a drift test.
"""
from __future__ import annotations

import copy
import tomllib
from pathlib import Path

import pytest

from uq.scenario import ScenarioError, parse_scenario
from uq.scenario import environment
from uq.scenario.envelope import COMMON, GLIDER, PROPELLER
from uq.scenario.field_table import FIELDS, Elsewhere, keys_of, markdown_reference

ROOT = Path(__file__).resolve().parents[3]
STARTERS = ROOT / "configs" / "starters"
BASE = {"propeller": STARTERS / "propeller_hull.toml", "glider": STARTERS / "glider.toml"}
ARRAYS = ("legs", "decision.tests", "hardware.subsystems", "correlations")


def test_the_readme_tables_are_the_code_tables(project_script):
    # regenerate both generated regions (scenario reference and envelope) and compare
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert project_script("readme_tables").regenerate(text) == text, (
        "README.md is out of date: run python scripts/readme_tables.py")


def test_the_reference_documents_every_key_and_the_drag_table():
    reference = markdown_reference()
    for row in FIELDS:
        assert f"| `{row.key}` |" in reference, row.key
    assert "`[vehicle.drag]`" in reference
    for key in ("coefficient", "reference_area_m2", "reference"):
        assert any(r.section == "vehicle.drag" and r.key == key for r in FIELDS)


def test_every_envelope_row_names_a_key_of_the_table():
    keys = {(r.section, r.key) for r in FIELDS}
    for limit in (*COMMON, *PROPELLER, *GLIDER):
        section, _, key = limit.field.replace("legs.*", "legs").rpartition(".")
        assert (section, key) in keys, limit.field


def test_the_environment_reader_takes_its_keys_from_the_table():
    assert (*environment._SETTINGS, *environment._FIELD_KEYS) == keys_of("environment")


def _document(kind: str) -> dict:
    doc = tomllib.loads(BASE[kind].read_text(encoding="utf-8"))
    doc.setdefault("hardware", {})["subsystems"] = [{"name": "thruster", "rate_per_day": 0.001}]
    second = "vehicle.propulsive_efficiency" if kind == "propeller" else "vehicle.pump_efficiency"
    doc["correlations"] = [{"inputs": ["vehicle.hotel_load_W", second], "rank": 0.3}]
    doc.setdefault("recovery", {})
    doc.setdefault("under_ice", {})
    return doc


def _put(doc: dict, section: str, key: str, value) -> str:
    """Set ``section.key`` (in the first table of an array) and return the key path."""
    if section in ARRAYS:
        head, _, sub = section.partition(".")
        tables = doc[head][sub] if sub else doc[head]
        tables[0][key] = value
        if section == "legs":
            return "legs[0].name" if key == "name" else f"legs.{tables[0]['name']}.{key}"
        return f"{section}[0]"
    table = doc
    for part in section.split("."):
        table = table.setdefault(part, {})
    table[key] = value
    return f"{section}.{key}"


_ROWS = [r for r in FIELDS if not isinstance(r.read, Elsewhere)]


@pytest.mark.parametrize("row", _ROWS, ids=[f"{r.section}.{r.key}" for r in _ROWS])
def test_the_reader_reads_every_row_of_the_table(row):
    # a value of the wrong type in each documented key is refused by that key's own reader
    # (never as an unknown key); a key of the other vehicle kind is refused naming the key
    for kind in ("propeller", "glider"):
        if section_absent(row, kind):
            continue
        doc = _document(kind)
        path = _put(doc, row.section, row.key, [[1]])
        with pytest.raises(ScenarioError) as info:
            parse_scenario(copy.deepcopy(doc), source=f"{kind}.toml")
        err = info.value
        assert err.key is not None and err.key.startswith(path), (err.key, path)
        if kind in row.kinds:
            assert "a known key" not in err.expected, str(err)


def section_absent(row, kind: str) -> bool:
    # sub-tables of the other kind's vehicle cannot be put in this kind's file
    return row.section in ("vehicle.hull", "vehicle.drag") and kind == "glider" or (
        row.section == "vehicle.polar" and kind == "propeller")
