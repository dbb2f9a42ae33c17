"""Regenerate the README's generated tables from the code: the scenario-file reference (every
key, from :mod:`uq.scenario.field_table`, the table the reader validates with) and the
plausibility envelope (:mod:`uq.scenario.envelope`).

Usage: ``python scripts/readme_tables.py`` rewrites README.md in place;
``python scripts/readme_tables.py --check`` exits 1 when the README is out of date
(``tests/uq/scenario/test_field_table.py`` runs the same check).
Each table sits between ``<!-- NAME:begin ... -->`` and ``<!-- NAME:end -->`` lines.
"""
from __future__ import annotations

import re
import sys
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def tables() -> dict[str, str]:
    from uq.scenario.envelope import markdown_table
    from uq.scenario.field_table import markdown_reference

    return {"scenario-reference": markdown_reference(), "envelope": markdown_table()}


def regenerate(text: str) -> str:
    """``text`` with every generated region replaced by the code's current table."""
    for name, table in tables().items():
        pattern = re.compile(rf"(<!-- {name}:begin[^\n]*-->\n)[\s\S]*?(<!-- {name}:end -->)")
        if not pattern.search(text):
            raise SystemExit(f"README.md has no '<!-- {name}:begin' ... '<!-- {name}:end -->' region")
        text = pattern.sub(lambda m: m.group(1) + table + "\n" + m.group(2), text, count=1)
    return text


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    text = README.read_text(encoding="utf-8")
    new = regenerate(text)
    if "--check" in argv:
        if new != text:
            print("README.md is out of date: run python scripts/readme_tables.py", file=sys.stderr)
            return 1
        return 0
    if new != text:
        README.write_text(new, encoding="utf-8")
        print("README.md updated")
    return 0


if __name__ == "__main__":
    sys.exit(main())
