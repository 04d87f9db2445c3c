"""One person's browser reduced to cookies and requests, for tests that talk to a real
server over HTTP (kit.servers): what a phone, a browser or an attacker would send.

Each ``Client`` is one cookie jar, so threads can act as several people at once.
Redirects are not followed: a test looks at the redirect itself.
"""

from __future__ import annotations

import http.cookiejar
import json
import re
import urllib.error
import urllib.parse
import urllib.request
import uuid
from dataclasses import dataclass


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
        return None


class Client:
    """One person's browser, reduced to cookies and requests."""

    def __init__(self, base_url: str, *, timeout: float = 60):
        self.base_url = base_url
        self.timeout = timeout
        self.cookies = http.cookiejar.CookieJar()
        self._opener = urllib.request.build_opener(
            urllib.request.HTTPCookieProcessor(self.cookies), _NoRedirects()
        )

    def request(self, method: str, path: str, *, body: bytes | None = None, headers=None):
        req = urllib.request.Request(
            self.base_url + path, data=body, method=method, headers=headers or {}
        )
        try:
            with self._opener.open(req, timeout=self.timeout) as response:
                return Answer(response.status, dict(response.headers), response.read())
        except urllib.error.HTTPError as error:
            with error:
                return Answer(error.code, dict(error.headers), error.read())

    def get(self, path: str) -> Answer:
        return self.request("GET", path)

    def token(self) -> str:
        return self.get("/api/csrf").json()["token"]

    def try_log_in(self, email: str, password: str) -> Answer:
        """The log-in form sent as typed; the answer says whether it worked."""
        page = self.get("/login").text
        token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
        return self.post_form("/login", {"email": email, "password": password}, token=token)

    def log_in(self, email: str, password: str) -> Answer:
        """Logged in, or the test fails here."""
        answer = self.try_log_in(email, password)
        assert answer.status == 302, answer.text[:400]
        return answer

    def post_form(self, path: str, fields: dict, *, token: str | None = None) -> Answer:
        data = dict(fields)
        data["csrf_token"] = token or self.token()
        return self.request(
            "POST",
            path,
            body=urllib.parse.urlencode(data).encode(),
            headers={"Content-Type": "application/x-www-form-urlencoded"},
        )

    def post_json(self, path: str, value=None, *, raw: bytes | None = None, token=None) -> Answer:
        body = raw if raw is not None else json.dumps(value).encode()
        headers = {"Content-Type": "application/json", "X-CSRFToken": token or self.token()}
        return self.request("POST", path, body=body, headers=headers)

    def post_multipart(self, path: str, fields: dict, files: list[tuple[str, str, bytes]]):
        """A form with files, as a browser sends it; ``files`` as (field, file name, bytes)."""
        boundary = uuid.uuid4().hex
        parts = [
            f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"\r\n\r\n'
            f"{value}\r\n".encode()
            for name, value in fields.items()
        ]
        for field, filename, data in files:
            parts.append(
                f'--{boundary}\r\nContent-Disposition: form-data; name="{field}"; '
                f'filename="{filename}"\r\nContent-Type: image/jpeg\r\n\r\n'.encode()
                + data
                + b"\r\n"
            )
        parts.append(f"--{boundary}--\r\n".encode())
        headers = {"Content-Type": f"multipart/form-data; boundary={boundary}"}
        return self.request("POST", path, body=b"".join(parts), headers=headers)

    def post_photo(self, record_uuid: str, data: bytes, *, photo_uuid=None, token=None) -> Answer:
        """A photo as the phone's outbox sends it: multipart, the picture and its uuid."""
        boundary = uuid.uuid4().hex
        parts = [
            f'--{boundary}\r\nContent-Disposition: form-data; name="photo_uuid"\r\n\r\n'
            f"{photo_uuid or uuid.uuid4()}\r\n".encode(),
            f'--{boundary}\r\nContent-Disposition: form-data; name="photo"; '
            f'filename="IMG_0001.jpg"\r\nContent-Type: image/jpeg\r\n\r\n'.encode(),
            data,
            f"\r\n--{boundary}--\r\n".encode(),
        ]
        headers = {
            "Content-Type": f"multipart/form-data; boundary={boundary}",
            "X-CSRFToken": token or self.token(),
        }
        return self.request(
            "POST", f"/api/records/{record_uuid}/photos", body=b"".join(parts), headers=headers
        )
