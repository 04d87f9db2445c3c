"""The layer table of DEVELOPERS.md is the contract: the code imports only what it allows,
every room of the package has a row, and no circle runs between rooms. Only the store speaks
SQL, and views only read it: what writes goes through a service. The checkers are tried on
small packages of their own first, so a pass means something."""

from __future__ import annotations

import ast
import textwrap
from pathlib import Path

import pytest

from devtools.layers import (
    PACKAGE,
    ROOT,
    allowed_edges,
    circles,
    declared_layers,
    every_use,
    room_edges,
    room_of,
    sql_spoken,
    store_names_used,
    store_writers,
    uses_in,
)

LAYERS = declared_layers((ROOT / "DEVELOPERS.md").read_text(encoding="utf-8"))
ALLOWED = allowed_edges(LAYERS)

# What the engineering core may not use, beyond the rooms of ours its row forbids: the web,
# the database, files, logging, pictures, warnings (advice goes into the result) and the
# console (DESIGN: the core is pure).
IMPURE_MODULES = frozenset(
    {
        "flask",
        "werkzeug",
        "sqlite3",
        "sqlite_utils",
        "os",
        "io",
        "logging",
        "pathlib",
        "shutil",
        "PIL",
        "warnings",
    }
)
IMPURE_CALLS = frozenset({"print", "open", "input"})


def forbidden_uses(package: Path, allowed: dict[str, frozenset[str]]) -> list[str]:
    offences = []
    for use in every_use(package):
        if use.target == "?":
            offences.append(f"{use.module}:{use.line} imports a module named at run time")
            continue
        if not use.target.startswith(package.name + "."):
            continue
        room, target = room_of(use.module), room_of(use.target)
        if target != room and target not in allowed.get(room, frozenset()):
            offences.append(f"{use.module}:{use.line} imports {use.target}")
    return offences


def impurities(path: Path, package: Path = PACKAGE) -> list[str]:
    """Where a module of the core reaches outside pure computation: "line: what"."""
    found = [
        f"{use.line}: imports {use.target}"
        for use in uses_in(path, package)
        if use.target == "?" or use.target.split(".")[0] in IMPURE_MODULES
    ]
    found += [
        f"{node.lineno}: calls {node.func.id}()"
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8")))
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id in IMPURE_CALLS
    ]
    return sorted(found, key=lambda where: int(where.split(":")[0]))


def rooms_in(package: Path) -> set[str]:
    return {
        path.relative_to(package).parts[0].removesuffix(".py")
        for path in package.rglob("*.py")
        if path.relative_to(package) != Path("__init__.py")
    }


def write_package(tmp_path: Path, files: dict[str, str]) -> Path:
    package = tmp_path / "sitecheck"
    for name, text in files.items():
        path = package / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(textwrap.dedent(text), encoding="utf-8")
    return package


# --- the checkers catch what they are for ---------------------------------------------------


def test_the_contract_checker_catches_an_upward_import_and_a_module_chosen_at_run_time(tmp_path):
    table = """\
        ## Layout
        | path | what | may import |
        | --- | --- | --- |
        | `sitecheck/web/` | views | everything below |
        | `sitecheck/services.py` | acts | store (and nothing else) |
        | `sitecheck/store/` | SQL | — |
        """
    allowed = allowed_edges(declared_layers(textwrap.dedent(table)))
    assert allowed == {
        "web": {"services", "store"},
        "services": {"store"},
        "store": frozenset(),
    }
    package = write_package(
        tmp_path,
        {
            "__init__.py": "",
            "web/__init__.py": "from sitecheck import services, store\n",
            "services.py": "from .store import rows\n",
            "store/__init__.py": "def rows():\n    from sitecheck.web import app\n",
            "store/more.py": "import importlib\nimportlib.import_module(name)\n",
        },
    )
    assert forbidden_uses(package, allowed) == [
        "sitecheck.store:2 imports sitecheck.web",
        "sitecheck.store.more:2 imports a module named at run time",
    ]
    assert circles(room_edges(every_use(package))) == [["services", "store", "web"]]


def test_the_sql_checker_sees_imports_names_and_calls(tmp_path):
    path = tmp_path / "views.py"
    path.write_text(
        textwrap.dedent(
            """\
            import importlib
            from sqlite_utils import Database
            def page(db):
                db.execute("SELECT 1")
                db.conn.executescript("")
                importlib.import_module("sqlite3")
                return {"count": 1}.get("count")
            def opened(sqlite3_module):
                return sqlite3.connect(":memory:")
            """
        ),
        encoding="utf-8",
    )
    assert sorted(sql_spoken(path)) == [
        "2: imports sqlite_utils",
        "4: calls .execute()",
        "5: calls .executescript()",
        "6: imports sqlite3",
        "9: uses sqlite3",
    ]


def test_the_purity_checker_sees_imports_of_every_kind_and_the_console(tmp_path):
    package = write_package(
        tmp_path,
        {
            "__init__.py": "",
            "bearing/__init__.py": "",
            "bearing/checks.py": """\
                import math
                import os.path
                from logging import getLogger
                import importlib
                def check(x, name):
                    importlib.import_module("sqlite3")
                    importlib.import_module(name)
                    print(x)
                    return math.sqrt(x)
                def words(path):
                    return open(path).read()
                """,
        },
    )
    assert impurities(package / "bearing" / "checks.py", package) == [
        "2: imports os.path",
        "3: imports logging",
        "6: imports sqlite3",
        "7: imports ?",
        "8: calls print()",
        "11: calls open()",
    ]


def test_the_writer_finder_follows_sql_and_calls_and_sees_every_way_a_view_names_the_store(
    tmp_path,
):
    package = write_package(
        tmp_path,
        {
            "__init__.py": "",
            "store/__init__.py": "from .rows import add, add_two, get, transaction\n",
            "store/rows.py": """\
                def transaction(db):
                    db.execute("BEGIN IMMEDIATE")
                def add(db):
                    \"\"\"Not an UPDATE: the docstring is words.\"\"\"
                    db.execute(f"INSERT INTO t VALUES ({1})")
                def add_two(db):
                    add(db)
                    add(db)
                def get(db):
                    \"\"\"Reads; an INSERT in a docstring is not one.\"\"\"
                    return db.execute("SELECT * FROM t")
                """,
            "web/__init__.py": "",
            "web/pages.py": """\
                from sitecheck import store
                from sitecheck import store as s
                from sitecheck.store import add
                from ..store.rows import transaction
                def page(db):
                    store.get(db)
                    s.add_two(db)
                    return store.rows.get(db)
                """,
        },
    )
    writers = store_writers(package / "store")
    assert writers == {
        "transaction": "BEGIN IMMEDIATE",
        "add": "INSERT",
        "add_two": "calls add",
    }
    used = store_names_used(package / "web" / "pages.py", package)
    assert [(line, name) for line, name in used if name in writers] == [
        (3, "add"),
        (4, "transaction"),
        (7, "add_two"),
    ]
    assert (8, "get") in used


# --- the package keeps the contract -----------------------------------------------------------


def test_every_room_of_the_package_has_one_row_of_the_layer_table():
    rows = [room for layer in LAYERS for room in layer.rooms]
    assert len(rows) == len(set(rows)), "a room stands in two rows"
    assert rooms_in(PACKAGE) == set(rows)


def test_imports_point_only_where_the_layer_table_allows():
    assert forbidden_uses(PACKAGE, ALLOWED) == []


def test_every_room_a_row_names_is_read_so_the_table_says_no_more_than_the_code():
    edges = room_edges(every_use(PACKAGE))
    unread = [
        f"{'/'.join(sorted(layer.rooms))} may import {named} but does not"
        for layer in LAYERS
        if layer.may_import is not None
        for named in sorted(layer.may_import)
        if not any(named in edges.get(room, ()) for room in layer.rooms)
    ]
    assert unread == []


def test_no_circle_runs_between_rooms():
    assert circles(room_edges(every_use(PACKAGE))) == []


@pytest.mark.parametrize(
    "path",
    sorted((PACKAGE / "bearing").rglob("*.py")),
    ids=lambda p: p.relative_to(ROOT).as_posix(),
)
def test_the_core_is_pure(path):
    assert impurities(path) == []


@pytest.mark.parametrize(
    "path",
    sorted(
        p
        for folder in (PACKAGE, ROOT / "devtools")
        for p in folder.rglob("*.py")
        if p.relative_to(ROOT).parts[:2] != ("sitecheck", "store")
    ),
    ids=lambda p: p.relative_to(ROOT).as_posix(),
)
def test_only_the_store_speaks_sql(path):
    assert sql_spoken(path) == []


# The app factory opens the database once, migrating it, before any request is served.
VIEWS_MAY_WRITE = {("sitecheck/web/__init__.py", "open_db")}


def test_views_read_the_store_and_act_through_services():
    writers = store_writers()
    # The finder sees the store's writers of every kind, so a pass is not an empty list.
    assert {"add_event", "insert_record", "looked", "touch_session", "transaction"} <= set(writers)
    assert not {"get_bearing", "bearing_lines", "review_queue", "pack_rows"} & set(writers)
    offences = [
        f"{path.relative_to(ROOT).as_posix()}:{line} calls store.{name} ({writers[name]})"
        for path in sorted((PACKAGE / "web").rglob("*.py"))
        for line, name in store_names_used(path)
        if name in writers and (path.relative_to(ROOT).as_posix(), name) not in VIEWS_MAY_WRITE
    ]
    assert offences == []
