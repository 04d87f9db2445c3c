"""Who imports whom between sitecheck's rooms, read from the source with ast.

A room is a subpackage (``sitecheck/web/``) or a top-level module (``sitecheck/cli.py``).
``python -m devtools.layers`` prints each room with the rooms it reads and any circle
between rooms; tests/test_layers.py holds the same edges to the layer table of
DEVELOPERS.md.
"""

from __future__ import annotations

import ast
import re
import sys
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "sitecheck"


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


def _imported_by_call(node: ast.Call) -> str | None:
    """The module named by ``__import__("x")`` or ``importlib.import_module("x")``; of an
    f-string, its constant start (``f"sitecheck.web.{name}"`` reads as sitecheck.web)."""
    func = node.func
    name = func.id if isinstance(func, ast.Name) else getattr(func, "attr", None)
    if name not in ("__import__", "import_module") or not node.args:
        return None
    first = node.args[0]
    if isinstance(first, ast.Constant) and isinstance(first.value, str):
        return first.value
    if isinstance(first, ast.JoinedStr) and first.values:
        head = first.values[0]
        if isinstance(head, ast.Constant) and isinstance(head.value, str):
            return head.value.rstrip(".")
    return "?"  # a module chosen at run time: named so that a contract sees it


def uses_in(path: Path, package: Path = PACKAGE) -> list[Use]:
    """Every import in the file, at any depth (a function's own import counts too), and
    every module imported by a call.

    ``from sitecheck import store`` is read as a use of sitecheck.store, so a room is
    named whichever way it is imported.
    """
    module = module_name(path, package)
    is_package = path.name == "__init__.py"
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Call):
            target = _imported_by_call(node)
            if target is not None:
                found.append(Use(module, target, node.lineno))
        elif isinstance(node, ast.Import):
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


@dataclass(frozen=True)
class Layer:
    """One row of DEVELOPERS.md's layer table: its rooms and the rooms they may import
    (None: every room of the rows below)."""

    rooms: frozenset[str]
    may_import: frozenset[str] | None


def _room_of_path(path: str) -> str | None:
    match = re.fullmatch(r"sitecheck/(\w+)(?:/|\.py)", path)
    return match.group(1) if match else None


def declared_layers(developers_md: str) -> list[Layer]:
    """The rows of the table under "## Layout", top to bottom, that name a room of the
    package. The last column is "—" (nothing of ours), "everything below", or room names
    separated by commas (words in brackets are a comment)."""
    section = developers_md.split("## Layout", 1)[1].split("\n## ", 1)[0]
    layers = []
    for line in section.splitlines():
        if not line.startswith("| `"):
            continue
        cells = [cell.strip() for cell in line.strip().strip("|").split("|")]
        rooms = {_room_of_path(p) for p in re.findall(r"`([^`]+)`", cells[0])} - {None}
        if not rooms:
            continue
        rule = re.sub(r"\([^)]*\)", "", cells[-1]).replace("`", "").strip()
        if rule == "everything below":
            may_import = None
        elif rule in ("—", "-", ""):
            may_import = frozenset()
        else:
            may_import = frozenset(word.strip() for word in rule.split(","))
        layers.append(Layer(frozenset(rooms), may_import))
    return layers


def allowed_edges(layers: list[Layer]) -> dict[str, frozenset[str]]:
    """Room -> the rooms it may import, "everything below" spelled out."""
    allowed = {}
    for i, layer in enumerate(layers):
        below = frozenset(room for lower in layers[i + 1 :] for room in lower.rooms)
        reach = below if layer.may_import is None else layer.may_import
        for room in layer.rooms:
            allowed[room] = reach | (layer.rooms - {room})
    return allowed


SQL_LIBRARIES = frozenset({"sqlite3", "sqlite_utils"})
# What a connection or a sqlite-utils database is asked to do with SQL. Plain words that other
# objects use too (get, update, insert) are left out: the import rule already keeps a module
# without the store's connection from reaching them.
SQL_CALLS = frozenset(
    {"execute", "executemany", "executescript", "query", "rows_where", "delete_where"}
)


def sql_spoken(path: Path) -> list[str]:
    """Where a file speaks SQL: imports a SQL library (by statement or by a call), names
    one, or calls a connection's SQL method. "line: what" for each place."""
    found = []
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        names: list[str] = []
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0:
            names = [node.module or ""]
        elif isinstance(node, ast.Call):
            imported = _imported_by_call(node)
            names = [imported] if imported else []
            if isinstance(node.func, ast.Attribute) and node.func.attr in SQL_CALLS:
                found.append(f"{node.lineno}: calls .{node.func.attr}()")
        elif isinstance(node, ast.Name) and node.id in SQL_LIBRARIES:
            found.append(f"{node.lineno}: uses {node.id}")
        found += [
            f"{node.lineno}: imports {name}"
            for name in names
            if name.split(".")[0] in SQL_LIBRARIES
        ]
    return found


# The first word of a statement that changes the database, or takes its write lock.
WRITE_WORDS = re.compile(r"\b(INSERT|UPDATE|DELETE|REPLACE|CREATE|DROP|ALTER|BEGIN IMMEDIATE)\b")


def _functions(path: Path) -> list[ast.FunctionDef | ast.AsyncFunctionDef]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    return [n for n in ast.walk(tree) if isinstance(n, ast.FunctionDef | ast.AsyncFunctionDef)]


def _statement_word(function: ast.FunctionDef | ast.AsyncFunctionDef) -> str | None:
    """The first writing word in the SQL a function holds, its docstring left out."""
    body = function.body
    if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant):
        body = body[1:]
    for statement in body:
        for node in ast.walk(statement):
            if isinstance(node, ast.Constant) and isinstance(node.value, str):
                match = WRITE_WORDS.search(node.value)
                if match:
                    return match.group(1)
    return None


def _called_names(function: ast.FunctionDef | ast.AsyncFunctionDef) -> set[str]:
    names = set()
    for node in ast.walk(function):
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name):
                names.add(func.id)
            elif isinstance(func, ast.Attribute):
                names.add(func.attr)
    return names


def store_writers(store: Path = PACKAGE / "store") -> dict[str, str]:
    """The store's functions that write, by name, each with why: the writing word of its
    SQL ("INSERT", "BEGIN IMMEDIATE"...) or the writer it calls ("calls add_event"), followed
    through calls by name. Two functions of one name count as one (a writer if either is)."""
    functions = [f for path in sorted(store.rglob("*.py")) for f in _functions(path)]
    writers: dict[str, str] = {}
    for function in functions:
        word = _statement_word(function)
        if word and function.name not in writers:
            writers[function.name] = word
    calls = [(f.name, _called_names(f)) for f in functions]
    grew = True
    while grew:
        grew = False
        for name, called in calls:
            if name not in writers:
                writer = next((c for c in sorted(called) if c in writers), None)
                if writer is not None:
                    writers[name] = f"calls {writer}"
                    grew = True
    return writers


def store_names_used(path: Path, package: Path = PACKAGE) -> list[tuple[int, str]]:
    """(line, name) for each name of the store a module uses: ``store.name`` (the store
    imported under any name, ``store.base.name`` too) and ``from sitecheck.store... import
    name``."""
    module = module_name(path, package)
    store = f"{package.name}.store"
    tree = ast.parse(path.read_text(encoding="utf-8"))
    aliases: set[str] = set()
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            target = _absolute(module, path.name == "__init__.py", node)
            for alias in node.names:
                if target == package.name and alias.name == "store":
                    aliases.add(alias.asname or "store")
                elif target == store or target.startswith(store + "."):
                    found.append((node.lineno, alias.name))
        elif isinstance(node, ast.Import):
            aliases.update(a.asname for a in node.names if a.name == store and a.asname)
    for node in ast.walk(tree):
        chain, inner = [], node
        while isinstance(inner, ast.Attribute):
            chain.append(inner)
            inner = inner.value
        if chain and isinstance(inner, ast.Name) and inner.id in aliases and node is chain[0]:
            found += [(node.lineno, link.attr) for link in chain]
    return sorted(found)


def main() -> int:
    edges = room_edges(every_use())
    for room in sorted(edges):
        print(f"{room:16} -> {', '.join(sorted(edges[room])) or '(nothing of ours)'}")
    groups = circles(edges)
    print("circles:", "; ".join(" <-> ".join(g) for g in groups) if groups else "none")
    return 0


if __name__ == "__main__":
    sys.exit(main())
