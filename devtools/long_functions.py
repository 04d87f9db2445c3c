"""Functions longer than a limit (80 lines by default), longest first:
``python -m devtools.long_functions [LIMIT] [FOLDER...]``. A function that is one piece on
purpose says why in a comment starting "One piece:" just above it, and is listed apart."""

from __future__ import annotations

import ast
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
MARK = "One piece:"


def long_functions(
    folders: list[Path], limit: int = 80, root: Path = ROOT
) -> list[tuple[int, str, bool]]:
    """(lines, "path:line name", whether it says why it is one piece) for each function
    longer than ``limit`` lines, its decorators and docstring included."""
    found = []
    for folder in folders:
        for path in sorted(folder.rglob("*.py")):
            lines = path.read_text(encoding="utf-8").splitlines()
            for node in ast.walk(ast.parse("\n".join(lines))):
                if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                    start = min([node.lineno, *(d.lineno for d in node.decorator_list)])
                    length = node.end_lineno - start + 1
                    if length > limit:
                        head = "\n".join(lines[max(start - 4, 0) : start])
                        where = f"{path.relative_to(root).as_posix()}:{node.lineno} {node.name}"
                        found.append((length, where, MARK in head))
    return sorted(found, reverse=True)


def main(argv: list[str]) -> int:
    limit = int(argv[0]) if argv else 80
    folders = [ROOT / a for a in argv[1:]] or [ROOT / "sitecheck"]
    for length, where, explained in long_functions(folders, limit):
        print(f"{length:5} {where}{'  (one piece, says why)' if explained else ''}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
