"""The installed layout: every subpackage is shipped, and the front door has its names."""
import ast
from pathlib import Path

import uq

ROOT = Path(__file__).resolve().parents[2]


def test_every_subpackage_is_listed_for_installation():
    tree = ast.parse((ROOT / "pyproject.toml").read_text().split("packages = [", 1)[1]
                     .split("]", 1)[0].join("[]"))
    listed = set(ast.literal_eval(tree.body[0].value))
    found = {".".join(p.parent.relative_to(ROOT).parts)
             for top in ("physics", "uq") for p in (ROOT / top).rglob("__init__.py")}
    assert found <= listed, f"not shipped: {sorted(found - listed)}"
    assert "uq.demos" in listed and "configs" not in listed


def test_front_door_names_resolve():
    for name in uq.__all__:
        assert getattr(uq, name) is not None
    assert issubclass(uq.ScenarioError, uq.TransitRiskError)
    assert issubclass(uq.ScenarioError, ValueError)
