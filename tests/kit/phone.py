"""What a person does on the phone, step by step, for the browser tests; and the server the
phone talks to, as a process a test can kill and start again.

Run as a script, this module is that server's process (see ``ServerProcess``).
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from pathlib import Path

from playwright.sync_api import Page, expect

from sitecheck.demo import DEMO_PEOPLE

SW_CONTROLLED = "() => navigator.serviceWorker && navigator.serviceWorker.controller !== null"

# The phone's outbox as IndexedDB holds it, oldest first, without the photo bytes.
OUTBOX = """async () => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const all = await new Promise((ok) => {
    const r = db.transaction("outbox").objectStore("outbox").index("created").getAll();
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  return all.map((i) => ({uuid: i.uuid, reference: i.reference, record_sent: i.record_sent,
    attempts: i.attempts, photos: i.photos.map((p) => ({uuid: p.uuid, size: p.blob.size,
    bytes_before: p.bytes_before, bytes_after: p.bytes_after, width: p.width, height: p.height,
    captured_at: p.captured_at, captured_from: p.captured_from}))}));
}"""

# The refused list as IndexedDB holds it.
REFUSED = """async () => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const all = await new Promise((ok) => {
    const r = db.transaction("refused").objectStore("refused").getAll();
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  return all.map((i) => ({uuid: i.uuid, kind: i.kind, status: i.status, reason: i.reason,
    code: i.code, reference: i.reference}));
}"""


def log_in(page: Page, role: str) -> None:
    email, _name, password = DEMO_PEOPLE[role]
    log_in_as(page, email, password)


def log_in_as(page: Page, email: str, password: str) -> None:
    page.goto("/login")
    page.fill("#email", email)
    page.fill("#password", password)
    page.tap("button[type=submit]")
    expect(page.locator("h1")).not_to_have_text("Log in")


def log_out(page: Page) -> None:
    page.tap("form[data-logout] button")
    expect(page.locator("h1")).to_have_text("Log in")


def open_site(page: Page, name: str) -> None:
    page.goto("/")
    page.get_by_role("link", name=name).tap()
    expect(page.locator("h1")).to_have_text(name)


def wait_for_worker(page: Page) -> None:
    """Until the service worker controls the page. A failed install is retried by the page
    (static/app.js). A worker that activates while this page is still loading may not
    claim it (Chromium leaves a page mid-navigation to its next load); as a phone's next
    page would, a reload then brings it under the worker."""
    page.wait_for_function(
        "() => navigator.serviceWorker && navigator.serviceWorker.ready.then(() => true)",
        timeout=30_000,
    )
    if not page.evaluate(SW_CONTROLLED):
        page.reload()
    page.wait_for_function(SW_CONTROLLED, timeout=15_000)


def keep_site(page: Page, site_id: str, *, role: str | None = "inspector") -> None:
    """Online: (log in,) open the survey list, wait for the service worker, keep the site
    pack, then open the site's offline page once so the worker holds it."""
    if role:
        log_in(page, role)
    page.goto(f"/sites/{site_id}/inspect")
    wait_for_worker(page)
    page.get_by_role("button", name="Keep for offline").tap()
    expect(page.locator("body")).to_have_attribute("data-pack-kept", site_id)
    expect(page.locator(f'[data-pack-age="{site_id}"]')).to_contain_text("Kept for offline use")
    page.goto(f"/sites/{site_id}/offline")
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")


def record_offline(
    page: Page,
    reference: str,
    length: str,
    photo: bytes | None = None,
    *,
    photo_name: str = "IMG_0001.jpg",
) -> str:
    """Fill the offline page's as-built form for one bearing and keep it in unsent; returns
    the record's UUID once IndexedDB holds it."""
    before = page.locator("body").get_attribute("data-last-saved")
    page.locator("li[data-bearing]", has_text=reference).first.locator("button").tap()
    form = page.locator("form[data-offline-form]")
    expect(form).to_be_visible()
    expect(form.locator("[data-form-title]")).to_contain_text(reference)
    page.fill("#bearing_length", length)
    form.locator("#field-bedded").get_by_label("yes", exact=True).check()
    page.fill("#notes", f"{reference} measured with no signal.")
    if photo is not None:
        page.set_input_files(
            "#photos", files=[{"name": photo_name, "mimeType": "image/jpeg", "buffer": photo}]
        )
    form.get_by_role("button", name="Keep in unsent").tap()
    page.wait_for_function(
        "(before) => document.body.dataset.lastSaved && document.body.dataset.lastSaved !== before",
        arg=before,
    )
    expect(form).to_be_hidden()
    return page.locator("body").get_attribute("data-last-saved")


# --- a server process to kill ------------------------------------------------------------------


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class ServerProcess:
    """The app in its own process (waitress, as ``sitecheck serve`` runs it) on one port and
    one SQLite file, so a test can kill it hard (SIGKILL) and start it again where the phone
    expects it: same origin, same cookie key (kept beside the database), same outbox.

    ``die_after_acks=n`` makes the process kill itself once its n-th successful answer to a
    POST under /api/ is ready but not yet sent: the record or photo is committed and the
    phone never hears so (a lost acknowledgement, the hardest moment to die).
    """

    def __init__(self, db_path: Path, *, csrf_time_limit: int | None = None):
        self.db_path = Path(db_path)
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.csrf_time_limit = csrf_time_limit
        self.log = self.db_path.with_suffix(".log")
        self.proc: subprocess.Popen | None = None

    def start(self, *, die_after_acks: int = 0, timeout: float = 30) -> None:
        args = [sys.executable, __file__, "serve", str(self.db_path), str(self.port)]
        args += [str(die_after_acks), str(self.csrf_time_limit or 0)]
        with open(self.log, "ab") as log:
            self.proc = subprocess.Popen(args, stdout=log, stderr=subprocess.STDOUT)
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(f"the server exited at start; see {self.log}")
            try:
                with urllib.request.urlopen(self.url + "/login", timeout=2) as r:
                    if r.status == 200:
                        return
            except (urllib.error.URLError, ConnectionError, TimeoutError):
                time.sleep(0.1)
        raise RuntimeError(f"the server did not answer on {self.url} in {timeout} s")

    @property
    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    def wait_for_death(self, timeout: float = 30) -> int:
        assert self.proc is not None
        return self.proc.wait(timeout)

    def kill(self) -> None:
        if self.alive:
            os.kill(self.proc.pid, signal.SIGKILL)  # only the process this object started
            self.proc.wait(10)


def _dying_after(app, acks: int):
    """WSGI wrapper: SIGKILL this process after ``acks`` successful POST answers under /api/,
    once each is built (committed) and before its bytes leave."""
    import threading

    lock = threading.Lock()
    seen = [0]

    def wsgi(environ, start_response):
        status: list[str] = []

        def capture(s, headers, exc_info=None):
            status.append(s)
            return start_response(s, headers, exc_info)

        body = app(environ, capture)
        counted = (
            environ["REQUEST_METHOD"] == "POST"
            and environ["PATH_INFO"].startswith("/api/")
            and status
            and status[0].startswith("2")
        )
        if counted:
            with lock:
                seen[0] += 1
                if seen[0] == acks:
                    os.kill(os.getpid(), signal.SIGKILL)
        return body

    return wsgi


def _serve(db_path: str, port: int, die_after_acks: int, csrf_time_limit: int) -> None:
    from waitress import serve

    from sitecheck.web import create_app

    config = {"WTF_CSRF_TIME_LIMIT": csrf_time_limit} if csrf_time_limit else {}
    app = create_app(db_path, **config)
    wsgi = _dying_after(app, die_after_acks) if die_after_acks else app
    serve(wsgi, host="127.0.0.1", port=port, threads=4, ident="sitecheck-test")


if __name__ == "__main__" and sys.argv[1:2] == ["serve"]:
    _serve(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5]))


# --- the as-built form online, through the phone's outbox -----------------------------------------


def open_record_form(page: Page, site_id: str, bearing_id: str) -> None:
    """The online as-built form of one bearing, once its script has read any draft."""
    page.goto(f"/sites/{site_id}/bearings/{bearing_id}/record")
    expect(page.locator("body")).to_have_attribute("data-capture-ready", "1")


def fill_as_designed(page: Page, design: dict, *, photo: bytes | None = None) -> None:
    """Type the designed values in, as an inspector would who found it built as drawn."""
    page.fill("#bearing_length", f"{design['beam']['bearing_length']:g}")
    pad = design.get("padstone")
    page.check(f"input[name=padstone_present][value={'yes' if pad else 'no'}]")
    if pad:
        page.fill("#padstone_length", f"{pad['length']:g}")
        page.fill("#padstone_width", f"{pad['width']:g}")
        page.fill("#padstone_depth", f"{pad['depth']:g}")
    page.fill("#wall_thickness", f"{design['wall']['thickness']:g}")
    if design["wall"]["a1"] is not None:
        page.fill("#a1", f"{design['wall']['a1']:g}")
    page.select_option("#masonry_group", str(design["masonry"]["group"]))
    page.check("input[name=bedded][value=yes]")
    if photo is not None:
        page.set_input_files(
            "#photos", files=[{"name": "IMG_2001.jpg", "mimeType": "image/jpeg", "buffer": photo}]
        )
        expect(page.locator("[data-photo-list] li")).to_have_count(1)


# What the phone holds as drafts, without the photo bytes.
DRAFTS = """async () => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const all = await new Promise((ok) => {
    const r = db.transaction("drafts").objectStore("drafts").getAll();
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  return all.map((d) => ({key: d.key, bearing_id: d.bearing_id, values: d.values,
    photos: d.photos.map((p) => ({uuid: p.uuid, size: p.blob.size})), updated_at: d.updated_at}));
}"""
