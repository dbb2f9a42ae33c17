"""The starter files in configs/starters/: clean, commented, and each one loads."""
from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest

import uq
from uq.cli import main
from uq.scenario.demos import STARTERS, starter_text

ROOT = Path(__file__).resolve().parents[3]
FOLDER = ROOT / "configs" / "starters"
SCENARIOS = {"propeller": "propeller", "propeller-drag": "propeller", "glider": "glider"}

# names and narrative of the bundled demos, which a starter must not carry
DEMO_WORDS = ("skerrow", "tallin", "petrel", "fulmar", "vardel", "kelmar", "ostrin", "brannoch",
              "sollen", "invented", "demo", "budget at the nominal", "hand")


@pytest.mark.parametrize("kind, vehicle", SCENARIOS.items())
def test_each_scenario_starter_loads_without_caution(kind, vehicle):
    scenario = uq.load_scenario(FOLDER / STARTERS[kind])
    assert scenario.vehicle.kind == vehicle
    assert scenario.cautions == ()
    assert len(scenario.inputs) >= 5  # uncertain inputs to show the distribution forms


def test_the_propeller_starters_cover_both_drag_models():
    hull = uq.load_scenario(FOLDER / STARTERS["propeller"]).vehicle.drag
    measured = uq.load_scenario(FOLDER / STARTERS["propeller-drag"]).vehicle.drag
    assert type(hull).__name__ == "HullGeometry" and type(measured).__name__ == "DragCoefficient"


def test_the_study_starter_loads_and_names_a_file_beside_it():
    study = uq.load_study(FOLDER / STARTERS["study"])
    assert len(study.variants) == 6  # 3 speeds x 2 packs in its [grid]
    named = tomllib.loads(starter_text("study"))["study"]["scenario"]
    assert (FOLDER / named).is_file()


@pytest.mark.parametrize("kind", STARTERS)
def test_starters_carry_no_demo_narrative_and_no_outside_file(kind):
    text = starter_text(kind)
    assert text == (FOLDER / STARTERS[kind]).read_text(encoding="utf-8")
    lowered = text.lower()
    for word in DEMO_WORDS:
        assert word not in lowered, word
    doc = tomllib.loads(text)
    assert "route" not in doc and "environment" not in doc  # no data files to lack
    # commented: at least one comment line per 5 lines
    lines = text.splitlines()
    assert sum("#" in line for line in lines) * 5 >= len(lines)


@pytest.mark.parametrize("kind", ["propeller-drag", "study"])
def test_the_starter_command_writes_each_kind(kind, tmp_path, capsys):
    path = tmp_path / "mine.toml"
    assert main(["starter", str(path), "--kind", kind]) == 0
    if kind == "study":
        study = uq.load_study(path)
        assert study.name == "mine" and (tmp_path / "mine_scenario.toml").is_file()
        assert main(["starter", str(path), "--kind", kind]) == 2  # nothing replaced
        assert re.search(r"already exists", capsys.readouterr().err)
    else:
        scenario = uq.load_scenario(path)
        assert scenario.name == "mine" and type(scenario.vehicle.drag).__name__ == "DragCoefficient"
