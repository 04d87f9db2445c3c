"""An installed wheel, not only a checkout, must find the screens and static files."""

from __future__ import annotations

import fnmatch
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_every_template_and_static_file_is_packaged():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = [p for globs in config["tool"]["setuptools"]["data-files"].values() for p in globs]
    for folder in ("templates", "static"):
        for path in (ROOT / folder).rglob("*"):
            if path.is_file():
                rel = path.relative_to(ROOT).as_posix()
                assert any(
                    fnmatch.fnmatchcase(rel, p) and rel.count("/") == p.count("/") for p in patterns
                ), (
                    f"{rel} would be missing from an installed sitecheck: add it to [tool.setuptools.data-files]"
                )


def test_assets_are_found_from_a_checkout():
    from sitecheck.web.assets import STATIC_DIR, TEMPLATE_DIR

    assert (TEMPLATE_DIR / "base.html").is_file() and (STATIC_DIR / "app.css").is_file()
