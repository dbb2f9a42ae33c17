"""House rule (DEVELOPERS.md, STYLE.md): no library module over ~600 lines, no function over
~120 lines, in uq/ and physics/. Checked with scripts/size_limits.py's own scan."""
from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_no_module_or_function_over_the_limits(project_script):
    over = list(project_script("size_limits").over_limits([ROOT / "uq", ROOT / "physics"], 600, 120))
    assert over == [], "over the size limits: " + "; ".join(f"{p} {n} ({k} lines)" for p, n, k in over)


def test_the_scan_finds_a_long_function(tmp_path, project_script):
    # the scan itself can fail: a 130-line function and a 700-line module are reported
    body = "\n".join(f"    x{i} = {i}" for i in range(129))
    text = "def long():\n" + body + "\n" + "pass\n" * 600  # 1 + 129 + 600 lines
    (tmp_path / "long.py").write_text(text, encoding="utf-8")
    found = {(n.split("(")[0], k) for _, n, k in project_script("size_limits").over_limits([tmp_path], 600, 120)}
    assert ("long", 130) in found
    assert ("<module>", 730) in found
