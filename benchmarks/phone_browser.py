"""Debian's chromium as the benchmarks drive it: the same switches as the browser tests
(tests/browser/conftest.py), on a Pixel 7-sized, touch viewport."""

from __future__ import annotations

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


def launch(playwright, chromium: str):
    return playwright.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)


def phone(playwright) -> dict:
    """The context settings of the phone the inspector is assumed to carry."""
    return {k: v for k, v in playwright.devices["Pixel 7"].items() if k != "default_browser_type"}
