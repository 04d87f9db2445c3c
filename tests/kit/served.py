"""``sitecheck serve`` as a real process on 127.0.0.1, and people talking to it over HTTP.

The server is started as its users start it (the installed command, a data folder, a port),
with several worker processes where a test asks; a test stops only the process it started.
Each ``Person`` is one browser's cookie jar, so threads can act as several people at once.
"""

from __future__ import annotations

import http.cookiejar
import json
import os
import re
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
import uuid
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

SITECHECK = str(Path(sys.executable).with_name("sitecheck"))


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Served:
    """One ``sitecheck serve`` process tree; its stderr (the log) is kept in a file."""

    def __init__(
        self, home: Path, *, workers: int = 1, threads: int = 4, env=None, args=(), cwd=None
    ):
        self.home = Path(home)
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.log_path = self.home.parent / f"serve-{self.port}.log"
        self.out_path = self.home.parent / f"serve-{self.port}.out"
        command = [
            SITECHECK,
            "serve",
            "--home",
            str(self.home),
            "--port",
            str(self.port),
            "--workers",
            str(workers),
            "--threads",
            str(threads),
            *args,
        ]
        full_env = {k: v for k, v in os.environ.items() if not k.startswith("SITECHECK_")}
        full_env.update(env or {})
        with open(self.log_path, "wb") as err, open(self.out_path, "wb") as out:
            self.process = subprocess.Popen(
                command, stdout=out, stderr=err, env=full_env, cwd=cwd or self.home.parent
            )
        self._wait_ready()

    def _wait_ready(self, timeout: float = 60.0) -> None:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"sitecheck serve stopped at start:\n{self.log()}")
            try:
                with urllib.request.urlopen(self.url + "/healthz", timeout=2) as r:
                    if r.status == 200:
                        return
            except (OSError, urllib.error.URLError):
                pass
            time.sleep(0.1)
        self.stop()
        raise RuntimeError(f"sitecheck serve did not answer /healthz in {timeout} s:\n{self.log()}")

    def log(self) -> str:
        return self.log_path.read_text(errors="replace")

    def printed(self) -> str:
        return self.out_path.read_text(errors="replace")

    def json_log(self) -> list[dict]:
        return [json.loads(line) for line in self.log().splitlines() if line.startswith("{")]

    def stop(self) -> None:
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)  # gunicorn's master stops its workers
            try:
                self.process.wait(30)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait(10)


@dataclass
class Answer:
    status: int
    headers: dict
    body: bytes

    def json(self):
        return json.loads(self.body)

    @property
    def text(self) -> str:
        return self.body.decode("utf-8", "replace")


class _NoRedirects(urllib.request.HTTPRedirectHandler):
    def redirect_request(self, *args, **kwargs):
        return None  # a test looks at the redirect itself


class Person:
    """One person's browser, reduced to cookies and requests."""

    def __init__(self, base_url: str):
        self.base_url = base_url
        self.cookies = http.cookiejar.CookieJar()
        self._opener = urllib.request.build_opener(
            urllib.request.HTTPCookieProcessor(self.cookies), _NoRedirects()
        )

    def request(self, method: str, path: str, *, body: bytes | None = None, headers=None):
        req = urllib.request.Request(
            self.base_url + path, data=body, method=method, headers=headers or {}
        )
        try:
            with self._opener.open(req, timeout=60) as response:
                return Answer(response.status, dict(response.headers), response.read())
        except urllib.error.HTTPError as error:
            with error:
                return Answer(error.code, dict(error.headers), error.read())

    def get(self, path: str) -> Answer:
        return self.request("GET", path)

    def token(self) -> str:
        return self.get("/api/csrf").json()["token"]

    def log_in(self, email: str, password: str) -> Answer:
        page = self.get("/login").text
        token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
        return self.post_form("/login", {"email": email, "password": password}, token=token)

    def post_form(self, path: str, fields: dict, *, token: str | None = None) -> Answer:
        data = dict(fields)
        data["csrf_token"] = token or self.token()
        return self.request(
            "POST",
            path,
            body=urllib.parse.urlencode(data).encode(),
            headers={"Content-Type": "application/x-www-form-urlencoded"},
        )

    def post_json(self, path: str, value, *, token: str | None = None) -> Answer:
        headers = {"Content-Type": "application/json", "X-CSRFToken": token or self.token()}
        return self.request("POST", path, body=json.dumps(value).encode(), headers=headers)

    def post_photo(self, record_uuid: str, data: bytes, *, token: str | None = None) -> Answer:
        """A photo as the phone's outbox sends it: multipart, the picture and its uuid."""
        boundary = uuid.uuid4().hex
        body = b"".join(
            [
                f'--{boundary}\r\nContent-Disposition: form-data; name="photo_uuid"\r\n\r\n'
                f"{uuid.uuid4()}\r\n".encode(),
                f'--{boundary}\r\nContent-Disposition: form-data; name="photo"; '
                f'filename="IMG_0001.jpg"\r\nContent-Type: image/jpeg\r\n\r\n'.encode(),
                data,
                f"\r\n--{boundary}--\r\n".encode(),
            ]
        )
        headers = {
            "Content-Type": f"multipart/form-data; boundary={boundary}",
            "X-CSRFToken": token or self.token(),
        }
        return self.request(
            "POST", f"/api/records/{record_uuid}/photos", body=body, headers=headers
        )


def as_built_record(site_id: str, bearing: dict) -> dict:
    """An as-built record as the phone sends it: invented values close to the design."""
    d = bearing["design_input"]
    return {
        "uuid": str(uuid.uuid4()),
        "site_id": site_id,
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "measurements": {
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": True,
            "padstone_length": 440,
            "padstone_width": 215,
            "padstone_depth": 140,
            "wall_thickness": 215,
            "masonry_group": 1,
            "a1": d["wall"]["a1"],
        },
        "checklist": {"bedded": True, "packing": 0, "cracks": False},
        "notes": "Sent by a test inspector.",
    }


def noisy_jpeg(seed: int, width: int = 640, height: int = 480, quality: int = 85) -> bytes:
    """A real JPEG of seeded noise: each seed a different picture, and large for its size as
    a site photo is (640 × 480 at quality 85 is about 300 KB)."""
    import io
    import random

    from PIL import Image

    rng = random.Random(seed)
    image = Image.frombytes("RGB", (width, height), rng.randbytes(width * height * 3))
    buffer = io.BytesIO()
    image.save(buffer, "JPEG", quality=quality)
    return buffer.getvalue()


PASSWORD = "correct horse battery"  # test accounts only


def prepare_home(home: Path, *, inspectors: int = 1) -> dict:
    """A data folder with one site (the demo schedule's block bearings), its engineer and
    ``inspectors`` inspectors, as the app makes them. Returns ids, e-mails and bearings."""
    from kit.web import new_site
    from sitecheck import credentials, services, store
    from sitecheck.demo import SITE_NAME, schedule_csv

    home.mkdir(parents=True, exist_ok=True)
    db = store.open_db(home / "sitecheck.db")
    try:
        hashed = credentials.hash_password(PASSWORD)
        engineer = store.create_user(
            db, email="engineer@example.test", name="Esme Engineer", password_hash=hashed
        )
        site = new_site(db, name=SITE_NAME, created_by=engineer["id"])
        people = []
        for n in range(inspectors):
            u = store.create_user(
                db, email=f"inspector{n}@example.test", name=f"Inspector {n}", password_hash=hashed
            )
            store.add_membership(
                db, user_id=u["id"], site_id=site["id"], role="inspector", invited_by=engineer["id"]
            )
            people.append(u["email"])
        text = "\n".join(x for x in schedule_csv().splitlines() if "BS 5628-1" not in x) + "\n"
        report = services.import_schedule(db, site=site, text=text, user_id=engineer["id"])
        assert report.ok, report.errors
        bearings = store.list_bearings(db, site_id=site["id"])
    finally:
        db.conn.close()
    return {
        "site_id": site["id"],
        "engineer": engineer["email"],
        "inspectors": people,
        "bearings": bearings,
    }
