"""How long the phone takes to send a full outbox when the signal returns; print it.

    .venv/bin/python benchmarks/outbox_drain.py [--records 200] [--seed 4]

A fresh demo database served as in production (`sitecheck serve`: waitress, 8 threads) in
its own process on 127.0.0.1. In Debian's chromium on a phone's screen (Pixel 7), the demo
inspector logs in, and with the phone offline the page keeps N as-built records in the
unsent outbox through the outbox's own keep(), each with one photo: a 12-megapixel
camera-like JPEG shrunk by the phone's own code (photos.js), each copy marked so that every
photo is a different picture (the server stores photos by their hash). Then the signal
returns, and the outbox sends everything, in order, one sender, as on site.

Printed: total seconds from the signal's return to an empty outbox, records/s, photos/s,
megabytes sent; then every record and photo counted in SQLite (each exactly once).
Target (issue 4): 200 records with one photo each in at most 60 s on this machine.
"""

from __future__ import annotations

import argparse
import json
import shutil
import sqlite3
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))  # kit/
from kit.chromium import launch, phone  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from photo_memory import free_port, start_server  # noqa: E402

TARGET_S = 60.0
# In the page: shrink the camera photo once with the phone's code, then keep N records, each
# with its own copy of the picture (marked with its number and a patch of its own).
QUEUE = """async ({count, siteId, seed}) => {
  const { shrink } = await import("/static/js/photos.js");
  const { keep } = await import("/static/js/outbox.js");
  const pack = window.sitePack; // fetched while online
  const camera = document.querySelector("#camera").files[0];
  const shrunk = await shrink(camera);
  const bitmap = await createImageBitmap(shrunk.blob);
  const canvas = document.createElement("canvas");
  canvas.width = bitmap.width;
  canvas.height = bitmap.height;
  const g = canvas.getContext("2d");
  let state = seed;
  const random = () => ((state = (state * 1103515245 + 12345) % 2147483648) / 2147483648);
  const bearings = pack.bearings.filter((b) => b.state !== "released");
  let bytes = 0;
  const started = performance.now();
  for (let i = 0; i < count; i += 1) {
    g.drawImage(bitmap, 0, 0);
    g.fillStyle = `rgb(${Math.floor(random() * 255)}, ${Math.floor(random() * 255)}, 90)`;
    g.fillRect(Math.floor(random() * 1400), Math.floor(random() * 1000), 120, 90);
    g.font = "64px sans-serif";
    g.fillStyle = "white";
    g.fillText(`No. ${i + 1}`, 40, 100);
    const blob = await new Promise((ok) => canvas.toBlob(ok, "image/jpeg", 0.85));
    bytes += blob.size;
    const b = bearings[i % bearings.length];
    const uuid = crypto.randomUUID();
    const measuredAt = new Date(Date.now() - (count - i) * 60000).toISOString().replace(/\\.\\d+Z$/, "Z");
    await keep({
      uuid, user: document.body.dataset.user, site_id: siteId, site_name: pack.site.name,
      bearing_id: b.id, reference: b.reference,
      record: {
        uuid, site_id: siteId, bearing_id: b.id, design_revision: b.revision,
        measured_at: measuredAt,
        measurements: { bearing_length: pack.designs[b.design].input.beam.bearing_length },
        checklist: { bedded: true, packing: 0 },
        notes: `Invented benchmark record ${i + 1}.`,
      },
      photos: [{ ...shrunk, uuid: crypto.randomUUID(), name: `IMG_${1000 + i}.jpg`, blob,
                 bytes_after: blob.size }],
    });
  }
  return { bytes, seconds: (performance.now() - started) / 1000, camera: camera.size,
           shrunk: shrunk.blob.size };
}"""

DRAINED = "() => document.querySelector('[data-unsent-count]').textContent === '0'"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--records", type=int, default=200)
    parser.add_argument("--seed", type=int, default=4)
    args = parser.parse_args()

    from photo_shrink import camera_like_jpeg
    from playwright.sync_api import sync_playwright

    from sitecheck.demo import DEMO_PEOPLE, SITE_NAME, build_demo

    chromium = shutil.which("chromium")
    if not chromium:
        print("chromium not found: apt-get install -y chromium", file=sys.stderr)
        return 3
    work = Path(tempfile.mkdtemp(prefix="sitecheck-drain-"))
    db_path = work / "demo.db"
    build_demo(db_path)
    with sqlite3.connect(db_path) as con:
        site_id = con.execute("SELECT id FROM sites WHERE name = ?", [SITE_NAME]).fetchone()[0]
    port = free_port()
    server = start_server(db_path, port, work / "server.log")
    url = f"http://127.0.0.1:{port}"
    camera = camera_like_jpeg(args.seed)
    try:
        with sync_playwright() as p:
            browser = launch(p, chromium)
            device = phone(p)
            context = browser.new_context(**device, base_url=url)
            page = context.new_page()
            email, _name, password = DEMO_PEOPLE["inspector"]
            page.goto("/login")
            page.fill("#email", email)
            page.fill("#password", password)
            page.click("button[type=submit]")
            page.wait_for_url(url + "/")
            page.goto(f"/sites/{site_id}/inspect")
            page.wait_for_function("() => document.querySelector('[data-unsent-count]')")
            page.evaluate(
                """() => { const input = document.createElement("input");
                  input.type = "file"; input.id = "camera"; document.body.append(input); }"""
            )
            page.set_input_files(
                "#camera",
                files=[{"name": "IMG_0999.jpg", "mimeType": "image/jpeg", "buffer": camera}],
            )
            page.evaluate(
                """async (siteId) => {
                  await import('/static/js/outbox.js');
                  await import('/static/js/photos.js');
                  const r = await fetch(`/api/sites/${siteId}/pack`, { cache: "no-store" });
                  window.sitePack = await r.json();
                }""",
                site_id,
            )  # modules and the site's bearings, while online
            context.set_offline(True)
            queued = page.evaluate(
                QUEUE, {"count": args.records, "siteId": site_id, "seed": args.seed}
            )
            waiting = page.evaluate("async () => (await import('/static/js/outbox.js')).counts()")
            assert waiting["unsent"] == args.records, waiting

            start = time.perf_counter()
            context.set_offline(False)  # 'online': the outbox sends
            page.wait_for_function(DRAINED, polling=100, timeout=600_000)
            seconds = time.perf_counter() - start
            left = page.evaluate("async () => (await import('/static/js/outbox.js')).counts()")
            browser.close()
    finally:
        server.kill()
        server.wait(10)

    con = sqlite3.connect(db_path)
    try:
        records = con.execute(
            "SELECT count(*), count(DISTINCT uuid) FROM as_built_records WHERE notes LIKE "
            "'Invented benchmark record %'"
        ).fetchone()
        photos = con.execute(
            "SELECT count(*), count(DISTINCT p.uuid), count(DISTINCT p.sha256) FROM photos p "
            "JOIN as_built_records r ON r.uuid = p.record_uuid "
            "WHERE r.notes LIKE 'Invented benchmark record %'"
        ).fetchone()
        integrity = con.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        con.close()

    n = args.records
    mb = queued["bytes"] / 1e6
    print(f"Outbox drain: {n} as-built records with one photo each, to {url} (waitress)")
    print(
        f"  camera photo {queued['camera']:,} bytes, kept as {queued['shrunk']:,} bytes; "
        f"photos queued: {mb:.1f} MB (queueing took {queued['seconds']:.1f} s, not timed)"
    )
    print(
        f"  drained in {seconds:.1f} s: {n / seconds:.1f} records/s, {n / seconds:.1f} photos/s, "
        f"{mb / seconds:.1f} MB/s of photos"
    )
    print(f"  left on the phone: {left['unsent']} unsent, {left['refused']} refused")
    print(
        f"  in SQLite: {records[0]} records ({records[1]} distinct), {photos[0]} photos "
        f"({photos[1]} distinct uuids, {photos[2]} distinct pictures); integrity {integrity}"
    )
    verdict = "met" if seconds <= TARGET_S and records[0] == n and photos[0] == n else "NOT met"
    print(f"target: {n} records with photos in <= {TARGET_S:.0f} s: {verdict}")
    print(
        json.dumps(
            {"seconds": round(seconds, 2), "records": n, "records_per_s": round(n / seconds, 2)}
        )
    )
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
