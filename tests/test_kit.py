"""The tests' own house rule: a Python file under tests/ is a test file, a conftest.py or a
helper in tests/kit/; no file imports a test file or a conftest; and the benchmarks, which
import the helpers but are not run by the suite, name only modules that exist."""

from __future__ import annotations

import ast
import importlib.util
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
TESTS = ROOT / "tests"
KIT = TESTS / "kit"


def _imported(path: Path) -> set[str]:
    """Every module a file imports, at any depth, as written (absolute imports only)."""
    names = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names.add(node.module)
    return names


def test_every_python_file_under_tests_is_a_test_a_conftest_or_a_helper_in_kit():
    strays = [
        str(path.relative_to(ROOT))
        for path in sorted(TESTS.rglob("*.py"))
        if not (
            path.name.startswith("test_")
            or path.name == "conftest.py"
            or path.is_relative_to(KIT)
            or path.is_relative_to(TESTS / "vendor")
        )
    ]
    assert strays == [], (
        f"move these helpers into tests/kit/ and import them as kit.<name>: {strays}"
    )
    assert not [p.name for p in KIT.rglob("test_*.py")], "a test file does not belong in kit/"


def test_no_file_under_tests_imports_a_test_file_or_a_conftest():
    """What two test files share is a helper in kit/ or a fixture in a conftest.py."""
    tests = {p.stem for p in TESTS.rglob("test_*.py")} | {"conftest"}
    leaks = {
        str(path.relative_to(ROOT)): sorted(_imported(path) & tests)
        for path in sorted(TESTS.rglob("*.py"))
        if not path.is_relative_to(TESTS / "vendor") and _imported(path) & tests
    }
    assert leaks == {}


def _findable(name: str) -> bool:
    try:
        return importlib.util.find_spec(name) is not None
    except ModuleNotFoundError:  # a parent package is missing
        return False


def test_the_benchmarks_import_only_modules_that_exist(monkeypatch):
    # As the benchmarks set their path: the checkout, tests/ (for kit) and benchmarks/.
    for folder in (ROOT / "benchmarks", TESTS, ROOT):
        monkeypatch.syspath_prepend(str(folder))
    monkeypatch.setattr(sys, "modules", dict(sys.modules))  # find_spec may import parents
    benchmarks = sorted((ROOT / "benchmarks").glob("*.py"))
    assert benchmarks
    missing = {
        path.name: [name for name in sorted(_imported(path)) if not _findable(name)]
        for path in benchmarks
    }
    assert {name: gone for name, gone in missing.items() if gone} == {}
