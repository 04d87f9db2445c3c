"""Bytes a phone downloads the first time an inspector goes through the app; print them.

    .venv/bin/python benchmarks/offline_first_load.py [--keep-dir DIR]

A fresh demo database, the app on 127.0.0.1 (waitress, as `sitecheck serve`), Debian's
chromium through Playwright with a phone's screen (Pixel 7) and an empty profile. The
inspector's path: the log-in page, logging in (to the site list), a site's survey list,
"Keep for offline" (the site pack, the service worker's precache, the offline page), the
as-built form of one bearing, and the offline page itself. Photos are left out (none of
these screens shows one, and any /photos/ URL would be skipped).

Two counts of the same traffic:
- "wire": what chromium received, headers and bodies, from Playwright's per-request sizes
  (the context sees the service worker's own fetches too); a response chromium took from
  its HTTP cache counts 0.
- "sent": each response as the app produced it (status line, headers, body as sent, gzipped
  when the phone asks for it and the app compresses it), counted in the server; also the
  bodies' size before gzip, to show what compression saves.
Target (issue 4): at most 150 KB (153,600 bytes) for the screens, excluding photos.
"""

from __future__ import annotations

import argparse
import gzip
import logging
import shutil
import sys
import tempfile
import threading
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))  # kit/
from kit.chromium import launch, phone  # noqa: E402

TARGET = 150 * 1024
SW_CONTROLLED = "() => navigator.serviceWorker && navigator.serviceWorker.controller !== null"


class ResponseCounter:
    """WSGI wrapper: each response as the app built it (status line, headers, body as sent)
    and the body's size before any gzip the app applied, by request."""

    def __init__(self, app):
        self.app = app
        self.lock = threading.Lock()
        self.rows: list[dict] = []

    def __call__(self, environ, start_response):
        head: list[int] = []
        status: list[int] = []

        gzipped: list[bool] = []

        def capture(s, headers, exc_info=None):
            status.append(int(s.split()[0]))
            gzipped.append(any(k.lower() == "content-encoding" for k, _v in headers))
            # HTTP/1.1 status line, each header line, the blank line; waitress adds a few
            # of its own (Date, Server, Connection), about 80 bytes, not counted here.
            head.append(
                len(f"HTTP/1.1 {s}\r\n") + sum(len(f"{k}: {v}\r\n") for k, v in headers) + 2
            )
            return start_response(s, headers, exc_info)

        body = self.app(environ, capture)
        chunks = [bytes(c) for c in body]
        if hasattr(body, "close"):
            body.close()
        data = b"".join(chunks)
        with self.lock:
            self.rows.append(
                {
                    "method": environ["REQUEST_METHOD"],
                    "path": environ["PATH_INFO"],
                    "status": status[0] if status else 0,
                    "head": head[0] if head else 0,
                    "body": len(data),
                    "raw": len(gzip.decompress(data)) if data and gzipped[0] else len(data),
                }
            )
        return chunks


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--keep-dir", help="build the demo here and keep it (default: a temp dir)")
    args = parser.parse_args()

    from playwright.sync_api import sync_playwright
    from waitress import create_server

    # Its queue warnings are about this machine's two busy cores, not about the figure.
    logging.getLogger("waitress.queue").setLevel(logging.ERROR)

    from sitecheck.demo import DEMO_PEOPLE, SITE_NAME, build_demo
    from sitecheck.web import create_app

    work = Path(args.keep_dir or tempfile.mkdtemp(prefix="sitecheck-load-"))
    db_path = work / "demo.db"
    build_demo(db_path)
    counter = ResponseCounter(create_app(db_path))
    server = create_server(counter, host="127.0.0.1", port=0, threads=4)
    url = f"http://127.0.0.1:{server.effective_port}"
    threading.Thread(target=server.run, daemon=True).start()

    chromium = shutil.which("chromium")
    if not chromium:
        print("chromium not found: apt-get install -y chromium", file=sys.stderr)
        return 3
    wire: list[tuple[str, str, str, int, bool]] = []  # screen, method, path, bytes, by worker
    screen = ["?"]
    try:
        with sync_playwright() as p:
            browser = launch(p, chromium)
            device = phone(p)
            context = browser.new_context(**device, base_url=url)

            def finished(request):
                path = request.url.split(url, 1)[-1].split("?", 1)[0]
                response = request.response()
                if "/photos/" in path or (response is not None and response.from_service_worker):
                    # Answered by the service worker from its cache: nothing crossed the
                    # network for it (the worker's own fetch, if any, is counted itself).
                    return
                sizes = request.sizes()
                size = sizes["responseHeadersSize"] + max(sizes["responseBodySize"], 0)
                wire.append(
                    (screen[0], request.method, path, size, request.service_worker is not None)
                )

            context.on("requestfinished", finished)
            page = context.new_page()

            email, _name, password = DEMO_PEOPLE["inspector"]
            screen[0] = "log-in page"
            page.goto("/login")
            page.wait_for_load_state("networkidle")
            page.wait_for_function(SW_CONTROLLED, timeout=30_000)  # install + precache done
            page.wait_for_load_state("networkidle")

            screen[0] = "site list (log in)"
            page.fill("#email", email)
            page.fill("#password", password)
            page.click("button[type=submit]")
            page.wait_for_load_state("networkidle")

            screen[0] = "site page"
            page.get_by_role("link", name=SITE_NAME).first.click()
            page.wait_for_load_state("networkidle")
            site_path = page.url.split(url, 1)[1].rstrip("/")

            screen[0] = "survey list"
            page.get_by_role("link", name="Survey list").click()
            page.wait_for_load_state("networkidle")

            screen[0] = "keep for offline"
            page.get_by_role("button", name="Keep for offline").click()
            page.wait_for_function("() => document.body.dataset.packKept")
            page.wait_for_load_state("networkidle")

            screen[0] = "as-built form"
            page.get_by_role("link", name="Record as built").first.click()
            page.wait_for_load_state("networkidle")

            screen[0] = "offline page"
            page.goto(f"{site_path}/offline")
            page.wait_for_function("() => document.body.dataset.packReady === '1'")
            page.wait_for_load_state("networkidle")
            page.wait_for_timeout(500)
            browser.close()
    finally:
        server.close()

    _report(wire, counter.rows, site_path)
    if not args.keep_dir:
        shutil.rmtree(work, ignore_errors=True)
    return 0


def _report(wire, sent_rows, site_path: str) -> None:
    def is_pack(path: str) -> bool:
        return path.startswith("/api/sites/") and path.endswith("/pack")

    print(f"First load of the inspector's screens on a phone (site {site_path}); no photos")
    print()
    print(f"{'screen':<20} {'requests':>8} {'wire bytes':>11}  (of which the service worker's)")
    by_screen: dict[str, list] = defaultdict(list)
    for row in wire:
        by_screen[row[0]].append(row)
    for name, rows in by_screen.items():
        total = sum(r[3] for r in rows)
        by_worker = sum(r[3] for r in rows if r[4])
        print(f"{name:<20} {len(rows):>8} {total:>11,}  ({by_worker:,})")
    print()
    print(f"{'response':<46} {'n':>2} {'wire':>8} {'head':>6} {'body':>8} {'unzipped':>8}")
    sent: dict[tuple[str, str], list[dict]] = defaultdict(list)
    for row in sent_rows:
        sent[(row["method"], _short(row["path"], site_path))].append(row)
    wire_by: dict[tuple[str, str], int] = defaultdict(int)
    for _screen, method, path, size, _sw in wire:
        wire_by[(method, _short(path, site_path))] += size
    for key, rows in sorted(sent.items(), key=lambda kv: -sum(r["body"] for r in kv[1])):
        print(
            f"{key[0] + ' ' + key[1][:40]:<46} {len(rows):>2} {wire_by.get(key, 0):>8,} "
            f"{sum(r['head'] for r in rows):>6,} {sum(r['body'] for r in rows):>8,} "
            f"{sum(r['raw'] for r in rows):>8,}"
        )
    screens = [r for r in sent_rows if not is_pack(r["path"]) and "/photos/" not in r["path"]]
    pack = [r for r in sent_rows if is_pack(r["path"])]
    screens_wire = sum(r[3] for r in wire if not is_pack(r[2]))
    screens_sent = sum(r["head"] + r["body"] for r in screens)
    screens_raw = sum(r["head"] + r["raw"] for r in screens)
    mirror = sum(
        r["head"] + r["body"]
        for r in screens
        if "/static/js/bearing/" in r["path"] or r["path"].endswith("/verdict.js")
    )
    print()
    print(f"screens and shell, chromium's wire count:      {screens_wire:>9,} bytes")
    print(f"screens and shell, as the server sent them:    {screens_sent:>9,} bytes")
    print(f"  of which the phone's re-check (verdict.js, js/bearing/): {mirror:,} bytes")
    print(
        f"  of which response headers:                   {sum(r['head'] for r in screens):>9,} bytes"
    )
    print(f"screens and shell had nothing been gzipped:    {screens_raw:>9,} bytes")
    print(
        f"site pack (data for offline use, not a screen): "
        f"{sum(r['head'] + r['body'] for r in pack):,} bytes "
        f"(unzipped {sum(r['head'] + r['raw'] for r in pack):,})"
    )
    figure = max(screens_wire, screens_sent)
    verdict = "within" if figure <= TARGET else "OVER"
    print(
        f"target for the screens: <= {TARGET:,} bytes (150 KB); measured {figure:,}: "
        f"{verdict} ({figure / TARGET:.0%} of the target)"
    )


def _short(path: str, site_path: str) -> str:
    """Paths with the site's id (and a bearing's) shortened, so the table reads."""
    path = path.replace(site_path, "/sites/<site>")
    parts = path.split("/")
    if len(parts) > 4 and parts[3] == "bearings":
        parts[4] = "<bearing>"
    return "/".join(parts)


if __name__ == "__main__":
    raise SystemExit(main())
