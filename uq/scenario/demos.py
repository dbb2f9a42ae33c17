"""The bundled demo scenarios and study files.

They live in the repository's top-level ``configs/`` folder and install as the package data of
``uq.demos`` (``pyproject.toml`` maps that package onto the folder), so a plain
``pip install .`` carries them without a top-level ``configs`` import package.
"""
from __future__ import annotations

from contextlib import contextmanager
from importlib import resources
from pathlib import Path
from typing import Iterator

__all__ = ["DEMOS", "DATA_DEMO", "DATA_DEMO_FILES", "STARTERS", "demo_path", "demo_text",
           "starter_text"]

#: bundled demo scenarios, by vehicle kind
DEMOS = {"propeller": "under_ice_section.toml", "glider": "glider_transit.toml"}
#: the demo whose route is waypoints and whose environment comes from a bundled data file
#: (needs the ocean extra); its files must sit side by side, as in the installed package
DATA_DEMO = "sollen_sea_transit.toml"
DATA_DEMO_FILES = (DATA_DEMO, "sollen_sea.nc")
#: clean, commented starter files (configs/starters/), by kind; the study's base scenario is
#: the propeller starter, written beside it
STARTERS = {"propeller": "propeller_hull.toml", "propeller-drag": "propeller_drag.toml",
            "glider": "glider.toml", "study": "study.toml"}
#: the base scenario the study starter names
STUDY_STARTER_BASE = STARTERS["propeller"]


def _folder():
    try:
        return resources.files("uq.demos")
    except ModuleNotFoundError:
        # running from a source checkout that was not installed (or installed elsewhere):
        # the folder the package data comes from
        return Path(__file__).resolve().parents[2] / "configs"


@contextmanager
def demo_path(name: str) -> Iterator[Path]:
    """A filesystem path of a bundled demo file (works from a wheel or a zip too)."""
    with resources.as_file(_folder() / name) as path:
        yield path


def demo_text(name: str) -> str:
    """The text of a bundled demo file."""
    return (_folder() / name).read_text(encoding="utf-8")


def starter_text(kind: str) -> str:
    """The text of the bundled starter file of ``kind`` (a key of :data:`STARTERS`)."""
    return _folder().joinpath("starters", STARTERS[kind]).read_text(encoding="utf-8")
