"""Debian's chromium as the browser tests and the benchmarks drive it: one set of switches,
on a Pixel 7-sized, touch viewport. Playwright's own browser download does not work here;
``executable_path`` points at Debian's ``chromium`` (scripts/test installs it)."""

from __future__ import annotations

import os
import shutil

CHROMIUM = os.environ.get("CHROMIUM_PATH") or shutil.which("chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-dev-shm-usage",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-quic",
    "--no-first-run",
    "--no-default-browser-check",
]


def launch(playwright, chromium: str | None = None):
    return playwright.chromium.launch(executable_path=chromium or CHROMIUM, args=CHROMIUM_ARGS)


def phone(playwright) -> dict:
    """The context settings of the phone the inspector is assumed to carry."""
    return {k: v for k, v in playwright.devices["Pixel 7"].items() if k != "default_browser_type"}
