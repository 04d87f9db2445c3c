"""What a person does on the phone, step by step, for the browser tests. (The server the
phone talks to, as a process a test can kill and start again, is kit.servers.ServerProcess.)
"""

from __future__ import annotations

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
