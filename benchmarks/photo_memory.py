"""How much memory the server takes when many photos arrive at once, and whether log-in still
answers meanwhile; print it.

    .venv/bin/python benchmarks/photo_memory.py [--uploads 24] [--only flood-png]

A fresh demo database served as in production (`sitecheck serve`: waitress, 8 threads) in
its own process on 127.0.0.1. The demo inspector logs in and sends one as-built record per
upload; then every upload is sent at the same moment, each on its own connection, as the
phone's outbox sends a photo (multipart, with its own photo id). Meanwhile another
connection asks for /login every 50 ms. The server's resident memory is read from
/proc/<pid>/status every 10 ms.

Pictures (each its own run, on a fresh server):
- flood-png: a 0.16 MB PNG of 7000 x 7000 pixels of one colour: small to send, huge to
  decode (the picture of the attack);
- flood-png-alpha: the same with a transparent layer (a fourth byte per pixel);
- lossless-at-limit: the largest PNG with transparency the server accepts;
- camera-48mp: an invented 8000 x 6000 camera photo (JPEG, under the 15 MB limit).

Printed per picture: the answers, the server's memory before, at its peak and after, and
/login's answer times during the uploads. Targets (issue 12): peak <= 500 MB and /login
<= 1 s for 24 uploads of the flood PNG at once.
"""

from __future__ import annotations

import argparse
import io
import json
import shutil
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from kit.client import Client  # noqa: E402

TARGET_PEAK_MB = 500
TARGET_LOGIN_S = 1.0


def free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_server(db_path: Path, port: int, log: Path) -> subprocess.Popen:
    code = "from sitecheck.cli import main; raise SystemExit(main())"
    args = [sys.executable, "-c", code, "serve", "--db", str(db_path), "--port", str(port)]
    with open(log, "ab") as out:
        proc = subprocess.Popen(args, stdout=out, stderr=subprocess.STDOUT)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise RuntimeError(f"the server exited; see {log}")
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/login", timeout=2):
                return proc
        except (urllib.error.URLError, ConnectionError, TimeoutError):
            time.sleep(0.1)
    proc.kill()
    raise RuntimeError("the server did not start in 30 s")


def rss_mb(pid: int) -> tuple[float, float]:
    """(resident now, resident at its highest since the process started), in MB."""
    fields = {}
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        name, _, value = line.partition(":")
        if name in ("VmRSS", "VmHWM"):
            fields[name] = int(value.split()[0]) / 1024
    return fields["VmRSS"], fields["VmHWM"]


def pictures() -> dict[str, bytes]:
    from PIL import Image

    from sitecheck.photos import PhotoLimits

    def png(image) -> bytes:
        out = io.BytesIO()
        image.save(out, "PNG")
        return out.getvalue()

    limits = PhotoLimits()
    # The lower bound for pictures decoded at full size, where the server has one.
    lossless = getattr(limits, "max_full_decode_pixels", limits.max_pixels)
    side = int(lossless**0.5)
    at_limit = Image.radial_gradient("L").resize((side, side)).convert("RGBA")
    at_limit.putalpha(200)
    sys.path.insert(0, str(ROOT / "benchmarks"))
    from photo_shrink import camera_like_jpeg

    camera = Image.open(io.BytesIO(camera_like_jpeg(7, 8000, 6000)))
    out = io.BytesIO()
    camera.save(out, "JPEG", quality=85)
    return {
        "flood-png": png(Image.new("RGB", (7000, 7000), (180, 170, 160))),
        "flood-png-alpha": png(Image.new("RGBA", (7000, 7000), (180, 170, 160, 200))),
        "lossless-at-limit": png(at_limit),
        "camera-48mp": out.getvalue(),
    }


def run(name: str, data: bytes, uploads: int, work: Path) -> dict:
    from sitecheck.demo import DEMO_PEOPLE, SITE_NAME, build_demo

    folder = work / name
    folder.mkdir()
    db_path = folder / "demo.db"
    build_demo(db_path)
    with sqlite3.connect(db_path) as con:
        site_id = con.execute("SELECT id FROM sites WHERE name = ?", [SITE_NAME]).fetchone()[0]
    port = free_port()
    server = start_server(db_path, port, folder / "server.log")
    url = f"http://127.0.0.1:{port}"
    try:
        email, _name, password = DEMO_PEOPLE["inspector"]
        phone = Client(url)
        phone.log_in(email, password)
        pack = phone.get(f"/api/sites/{site_id}/pack").json()
        open_bearings = [b for b in pack["bearings"] if b["state"] != "released"]
        records = []
        for n in range(uploads):
            b = open_bearings[n % len(open_bearings)]
            body = {
                "uuid": str(uuid.uuid4()),
                "site_id": site_id,
                "bearing_id": b["id"],
                "design_revision": b["revision"],
                "measured_at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
                "measurements": {
                    "bearing_length": pack["designs"][b["design"]]["input"]["beam"][
                        "bearing_length"
                    ]
                },
                "checklist": {"bedded": True, "packing": 0},
                "notes": f"Invented benchmark record {n + 1}.",
            }
            answer = phone.post_json("/api/records", body)
            assert answer.status == 201, answer.text[:300]
            records.append(body["uuid"])
        token = phone.token()
        time.sleep(1.0)  # let the server settle after the records
        before, _ = rss_mb(server.pid)

        done = threading.Event()
        samples: list[float] = []
        logins: list[float] = []

        def sample() -> None:
            while not done.is_set():
                samples.append(rss_mb(server.pid)[0])
                time.sleep(0.01)

        def log_in_page() -> None:
            visitor = Client(url)
            while not done.is_set():
                started = time.perf_counter()
                answer = visitor.get("/login")
                logins.append(time.perf_counter() - started)
                assert answer.status == 200, answer.status
                time.sleep(0.05)

        statuses: list[int] = [0] * uploads
        seconds: list[float] = [0.0] * uploads
        go = threading.Barrier(uploads)

        def upload(n: int) -> None:
            go.wait()  # the same phone, a connection per photo
            started = time.perf_counter()
            statuses[n] = phone.post_photo(records[n], data, token=token).status
            seconds[n] = time.perf_counter() - started

        watchers = [threading.Thread(target=sample), threading.Thread(target=log_in_page)]
        for t in watchers:
            t.start()
        started = time.perf_counter()
        senders = [threading.Thread(target=upload, args=(n,)) for n in range(uploads)]
        for t in senders:
            t.start()
        for t in senders:
            t.join(600)
        total = time.perf_counter() - started
        time.sleep(0.5)
        done.set()
        for t in watchers:
            t.join(30)
        time.sleep(2.0)
        after, highest = rss_mb(server.pid)
    finally:
        server.kill()
        server.wait(10)
    histogram: dict[int, int] = {}
    for status in statuses:
        histogram[status] = histogram.get(status, 0) + 1
    return {
        "picture": name,
        "bytes": len(data),
        "uploads": uploads,
        "answers": dict(sorted(histogram.items())),
        "seconds": round(total, 2),
        "slowest_upload_s": round(max(seconds), 2),
        "rss_before_mb": round(before, 1),
        "rss_peak_mb": round(max([*samples, before]), 1),
        "rss_high_water_mb": round(highest, 1),
        "rss_after_mb": round(after, 1),
        "login_asked": len(logins),
        "login_median_s": round(statistics.median(logins), 3) if logins else None,
        "login_max_s": round(max(logins), 3) if logins else None,
    }


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--uploads", type=int, default=24)
    parser.add_argument("--only", help="one picture by name")
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="sitecheck-photo-memory-"))
    results = []
    try:
        for name, data in pictures().items():
            if args.only and name != args.only:
                continue
            result = run(name, data, args.uploads, work)
            results.append(result)
            print(
                f"{name}: {result['uploads']} uploads of {result['bytes'] / 1e6:.2f} MB at once, "
                f"answers {result['answers']}, {result['seconds']} s (slowest "
                f"{result['slowest_upload_s']} s)"
            )
            print(
                f"  server memory: {result['rss_before_mb']} MB before, peak "
                f"{result['rss_peak_mb']} MB (high-water {result['rss_high_water_mb']} MB), "
                f"{result['rss_after_mb']} MB after"
            )
            print(
                f"  /login meanwhile: {result['login_asked']} asked, median "
                f"{result['login_median_s']} s, slowest {result['login_max_s']} s"
            )
    finally:
        shutil.rmtree(work, ignore_errors=True)
    flood = next((r for r in results if r["picture"] == "flood-png"), None)
    if flood:
        met = (
            flood["rss_high_water_mb"] <= TARGET_PEAK_MB
            and (flood["login_max_s"] or 0) <= TARGET_LOGIN_S
        )
        print(
            f"target: peak <= {TARGET_PEAK_MB} MB and /login <= {TARGET_LOGIN_S:g} s with "
            f"{flood['uploads']} flood PNGs at once: {'met' if met else 'NOT met'}"
        )
    print(json.dumps(results))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
