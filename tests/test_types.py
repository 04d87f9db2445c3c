"""mypy's profiles in pyproject.toml: the core, the store and the services under mypy's own strict mode,
flag for flag, and the rest of the package under its default. Each profile is tried on small
modules of a package of its own, so a clean run of scripts/test means what it says."""

from __future__ import annotations

import shutil
import subprocess
import sys
import textwrap
import tomllib
from pathlib import Path

import pytest
from mypy.main import process_options

ROOT = Path(__file__).resolve().parents[1]
CONFIG = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["mypy"]
STRICT_AREAS = (
    "sitecheck.bearing",
    "sitecheck.bearing.*",
    "sitecheck.store",
    "sitecheck.store.*",
    "sitecheck.services",
    "sitecheck.sessions",
)


def _strict_block() -> dict:
    blocks = [o for o in CONFIG["overrides"] if "sitecheck.bearing" in o["module"]]
    assert len(blocks) == 1, "one block holds the strict profile"
    return blocks[0]


def _options(args: list[str], folder: Path, monkeypatch: pytest.MonkeyPatch):
    monkeypatch.chdir(folder)  # no configuration file there: mypy's own values
    _sources, options = process_options([*args, "-c", "pass"])
    return options


def test_the_strict_profile_is_mypys_strict_mode(tmp_path, monkeypatch):
    strict = _options(["--strict"], tmp_path, monkeypatch)
    default = _options([], tmp_path, monkeypatch)
    names = [n for n in dir(strict) if not n.startswith("_") and not callable(getattr(strict, n))]
    wanted = {n: getattr(strict, n) for n in names if getattr(strict, n) != getattr(default, n)}
    # Flags that mypy takes only for the whole run sit in the global section.
    given = {**CONFIG, **_strict_block()}
    assert len(wanted) >= 10, wanted  # mypy 2.4's --strict turns on thirteen
    assert {n: given.get(n) for n in wanted} == wanted


def test_the_strict_profile_covers_the_core_the_store_and_the_services():
    assert set(_strict_block()["module"]) == set(STRICT_AREAS)
    assert CONFIG["files"] == ["sitecheck"]


PROBE = """
def untyped(x):
    return x

def count(items: list) -> int:
    return len(items)
"""


def _run_mypy(folder: Path) -> str:
    shutil.copy(ROOT / "pyproject.toml", folder / "pyproject.toml")
    for area in ("bearing", "web", "store"):
        (folder / "sitecheck" / area).mkdir(parents=True)
        (folder / "sitecheck" / area / "__init__.py").write_text("")
        (folder / "sitecheck" / area / "probe.py").write_text(textwrap.dedent(PROBE))
    (folder / "sitecheck" / "__init__.py").write_text("")
    (folder / "sitecheck" / "services.py").write_text(textwrap.dedent(PROBE))
    # A plain type error too, in a strict area and in a default one.
    with (folder / "sitecheck" / "store" / "probe.py").open("a") as probe:
        probe.write('\nwrong: int = "text"\n')
    (folder / "sitecheck" / "web" / "probe.py").write_text(
        textwrap.dedent(PROBE) + '\nwrong: int = "text"\n'
    )
    done = subprocess.run(
        [sys.executable, "-m", "mypy", "--no-incremental"],
        cwd=folder,
        capture_output=True,
        text=True,
        timeout=300,
    )
    return done.stdout + done.stderr


def test_mypy_holds_each_area_to_its_profile(tmp_path):
    out = _run_mypy(tmp_path)
    lines = [line for line in out.splitlines() if ": error:" in line]
    by_file: dict[str, set[str]] = {}
    for line in lines:
        path, _, rest = line.partition(":")
        by_file.setdefault(path, set()).add(rest.rsplit("[", 1)[-1].rstrip("]"))
    strict_codes = {"no-untyped-def", "type-arg"}
    assert by_file.get("sitecheck/bearing/probe.py") == strict_codes, out
    assert by_file.get("sitecheck/services.py") == strict_codes, out
    # The default profile: unannotated code passes, a wrong type does not.
    assert by_file.get("sitecheck/web/probe.py") == {"assignment"}, out
    assert by_file.get("sitecheck/store/probe.py") == {*strict_codes, "assignment"}, out
