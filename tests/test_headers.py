"""Which answers carry which of the browser's security policies.

A page (and the service worker's script, whose policy governs the worker) carries them all; a
script, style sheet, icon or manifest carries only what the browser reads from it (nosniff),
since the phone's first load is thirty-odd such files within a 150 KB budget.
"""

from __future__ import annotations

import pytest

DOCUMENT_ONLY = (
    "Content-Security-Policy",
    "Permissions-Policy",
    "X-Frame-Options",
    "Referrer-Policy",
)


def test_a_page_carries_every_policy_and_is_not_stored(client_as, site):
    page = client_as("inspector").get(f"/sites/{site['id']}/inspect")
    assert page.status_code == 200
    for name in DOCUMENT_ONLY:
        assert page.headers.get(name), name
    assert "script-src 'self'" in page.headers["Content-Security-Policy"]
    assert page.headers["X-Content-Type-Options"] == "nosniff"
    assert page.headers["Cache-Control"] == "no-store"


def test_the_service_workers_script_keeps_the_policy_that_governs_the_worker(client_as):
    answer = client_as("inspector").get("/sw.js")
    assert answer.status_code == 200
    assert "worker-src 'self'" in answer.headers["Content-Security-Policy"]


@pytest.mark.parametrize(
    "path",
    [
        "/static/js/bearing/trace.js",
        "/static/app.css",
        "/static/icon-192.png",
        "/manifest.webmanifest",
    ],
)
def test_a_file_a_page_loads_carries_nosniff_and_none_of_the_pages_policies(client_as, path):
    answer = client_as("inspector").get(path, headers={"Accept-Encoding": "gzip"})
    assert answer.status_code == 200
    assert answer.headers["X-Content-Type-Options"] == "nosniff"
    for name in (*DOCUMENT_ONLY, "Content-Disposition"):
        assert name not in answer.headers, name
