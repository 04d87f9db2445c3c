"""Real servers on 127.0.0.1 for the tests, started three ways:

- ``LiveServer``: the app (made by the test) on werkzeug's threaded server, in a thread of
  the test's own process; the test can reach into the app while people use it.
- ``Served``: ``sitecheck serve`` as its users start it (the installed command, a data
  folder or a database, a port), with several worker processes where a test asks.
- ``ServerProcess``: the app under waitress in a process of its own, which a test can kill
  hard (SIGKILL) and start again where the phone expects it.

A test stops only the servers it started. People talk to any of them with kit.client.

Run as a script (``ServerProcess`` does), this module is that server's process.
"""

from __future__ import annotations

import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.request
from pathlib import Path

SITECHECK = str(Path(sys.executable).with_name("sitecheck"))


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait_until_answering(url: str, process: subprocess.Popen, timeout: float, log) -> None:
    """Until ``url`` answers 200; fails with the log if the process stops or time runs out."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"the server stopped at start:\n{log()}")
        try:
            with urllib.request.urlopen(url, timeout=2) as r:
                if r.status == 200:
                    return
        except (OSError, urllib.error.URLError):
            pass
        time.sleep(0.1)
    raise RuntimeError(f"the server did not answer {url} in {timeout} s:\n{log()}")


class LiveServer:
    """The app on werkzeug's threaded server in a thread of this process. ``port`` 0 takes a
    free one; give one when the app must know its own address before it is made."""

    def __init__(self, app, *, port: int = 0):
        from werkzeug.serving import make_server

        self.app = app
        self._srv = make_server("127.0.0.1", port, app, threaded=True)
        self.port = self._srv.server_port
        self.url = f"http://127.0.0.1:{self.port}"
        self._thread = threading.Thread(target=self._srv.serve_forever, daemon=True)
        self._thread.start()

    def stop(self) -> None:
        if not self._thread.is_alive():
            return
        self._srv.shutdown()
        self._srv.server_close()
        self._thread.join(5)


class Served:
    """One ``sitecheck serve`` process tree on a data folder (``home``) or on a database
    file (``database``, whose folder is then the data folder); its stderr (the log) and
    stdout are kept in files beside the data folder."""

    def __init__(
        self,
        home: Path | None = None,
        *,
        database: Path | None = None,
        workers: int = 1,
        threads: int = 4,
        env=None,
        args=(),
        cwd=None,
    ):
        if (home is None) == (database is None):
            raise ValueError("give the data folder or the database, one of them")
        self.home = Path(home) if home is not None else Path(database).parent
        beside = self.home.parent if home is not None else self.home
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.log_path = beside / f"serve-{self.port}.log"
        self.out_path = beside / f"serve-{self.port}.out"
        where = ["--home", str(self.home)] if home is not None else ["--db", str(database)]
        command = [
            SITECHECK,
            "serve",
            *where,
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
                command, stdout=out, stderr=err, env=full_env, cwd=cwd or beside
            )
        try:
            _wait_until_answering(self.url + "/healthz", self.process, 60.0, self.log)
        except RuntimeError:
            self.stop()
            raise

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
        _wait_until_answering(self.url + "/login", self.proc, timeout, lambda: f"see {self.log}")

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
