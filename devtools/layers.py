"""Who imports whom between sitecheck's rooms, read from the source with ast.

A room is a subpackage (``sitecheck/web/``) or a top-level module (``sitecheck/cli.py``).
``python -m devtools.layers`` prints each room with the rooms it reads and any circle
between rooms; tests/test_layers.py holds the same edges to the layer table of
DEVELOPERS.md.
"""

from __future__ import annotations

import ast
import sys
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "sitecheck"


@dataclass(frozen=True)
class Use:
    """One place where a module of the package reads another room or a library."""

    module: str  # dotted, e.g. "sitecheck.web.pages"
    target: str  # dotted name as imported, e.g. "sitecheck.store" or "sqlite3"
    line: int


def module_name(path: Path, package: Path = PACKAGE) -> str:
    parts = list(path.relative_to(package.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def room_of(module: str) -> str:
    """sitecheck.web.pages -> web; sitecheck.cli -> cli; sitecheck -> sitecheck."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else parts[0]


def _absolute(module: str, is_package: bool, node: ast.ImportFrom) -> str:
    if node.level == 0:
        return node.module or ""
    base = module.split(".")
    if not is_package:
        base = base[:-1]
    base = base[: len(base) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


def uses_in(path: Path, package: Path = PACKAGE) -> list[Use]:
    """Every import in the file, at any depth (a function's own import counts too).

    ``from sitecheck import store`` is read as a use of sitecheck.store, so a room is
    named whichever way it is imported.
    """
    module = module_name(path, package)
    is_package = path.name == "__init__.py"
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [Use(module, alias.name, node.lineno) for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            target = _absolute(module, is_package, node)
            if target == package.name:
                found += [
                    Use(module, f"{target}.{alias.name}", node.lineno) for alias in node.names
                ]
            else:
                found.append(Use(module, target, node.lineno))
    return found


def every_use(package: Path = PACKAGE) -> list[Use]:
    return [use for path in sorted(package.rglob("*.py")) for use in uses_in(path, package)]


def room_edges(uses: list[Use], package_name: str = "sitecheck") -> dict[str, set[str]]:
    """Room -> the other rooms of the package it imports."""
    edges: dict[str, set[str]] = defaultdict(set)
    for use in uses:
        edges[room_of(use.module)]
        if use.target.split(".")[0] != package_name or use.target == package_name:
            continue
        target = room_of(use.target)
        if target != room_of(use.module):
            edges[room_of(use.module)].add(target)
    return dict(edges)


def circles(edges: dict[str, set[str]]) -> list[list[str]]:
    """The groups of rooms that reach each other (Tarjan's strongly connected components)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(room: str) -> None:
        index[room] = low[room] = len(index)
        stack.append(room)
        on_stack.add(room)
        for other in sorted(edges.get(room, ())):
            if other not in index:
                visit(other)
                low[room] = min(low[room], low[other])
            elif other in on_stack:
                low[room] = min(low[room], index[other])
        if low[room] == index[room]:
            group = []
            while True:
                member = stack.pop()
                on_stack.discard(member)
                group.append(member)
                if member == room:
                    break
            if len(group) > 1:
                found.append(sorted(group))

    for room in sorted(edges):
        if room not in index:
            visit(room)
    return found


def main() -> int:
    edges = room_edges(every_use())
    for room in sorted(edges):
        print(f"{room:16} -> {', '.join(sorted(edges[room])) or '(nothing of ours)'}")
    groups = circles(edges)
    print("circles:", "; ".join(" <-> ".join(g) for g in groups) if groups else "none")
    return 0


if __name__ == "__main__":
    sys.exit(main())
