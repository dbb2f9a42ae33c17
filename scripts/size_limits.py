"""List library modules over the line limit and functions over the function-length limit.

The house rule (DEVELOPERS.md): no library module over ~600 lines, no function over ~120.
Usage: ``python scripts/size_limits.py [--module-lines 600] [--function-lines 120] [DIR ...]``
(default folders: uq, physics). Exit status 1 when anything is over a limit.
"""
from __future__ import annotations

import argparse
import ast
import sys
from pathlib import Path


def over_limits(folders, module_lines: int, function_lines: int):
    """Yield (path, name, lines) of every module and function over its limit."""
    for folder in folders:
        for path in sorted(Path(folder).rglob("*.py")):
            text = path.read_text(encoding="utf-8")
            n = len(text.splitlines())
            if n > module_lines:
                yield str(path), "<module>", n
            for node in ast.walk(ast.parse(text, filename=str(path))):
                if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                    length = node.end_lineno - node.lineno + 1
                    if length > function_lines:
                        yield str(path), f"{node.name}() line {node.lineno}", length


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("folders", nargs="*", default=["uq", "physics"])
    parser.add_argument("--module-lines", type=int, default=600)
    parser.add_argument("--function-lines", type=int, default=120)
    args = parser.parse_args(argv)
    rows = list(over_limits(args.folders, args.module_lines, args.function_lines))
    for path, name, lines in rows:
        print(f"{lines:5d}  {path}  {name}")
    return 1 if rows else 0


if __name__ == "__main__":
    sys.exit(main())
