"""The Flask application: one factory, one blueprint per job.

Views are thin: they parse and validate input, call :mod:`sitecheck.services` (which calls
the engineering core and the store) and render. They compute no engineering and speak no
SQL.
"""

from __future__ import annotations

import logging
import os
import secrets
import threading
import time
from pathlib import Path

from flask import Flask, current_app, g, request
from flask_wtf.csrf import CSRFError
from werkzeug.middleware.proxy_fix import ProxyFix

from sitecheck import credentials, logs, services, store
from sitecheck.config import Settings, load_settings
from sitecheck.mail import MailSender, MailSettings
from sitecheck.photos import PhotoStore, return_picture_memory_to_the_system
from sitecheck.web import compress, jsonbody
from sitecheck.web.assets import STATIC_DIR, TEMPLATE_DIR
from sitecheck.web.cookies import CheckedCookieSessions, CheckedTokens

csrf = CheckedTokens()
request_log = logging.getLogger(logs.REQUEST_LOGGER)

CSP = (
    "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data: blob:; "
    "connect-src 'self'; font-src 'self'; manifest-src 'self'; worker-src 'self'; "
    "object-src 'none'; base-uri 'none'; frame-ancestors 'none'; form-action 'self'"
)
HSTS_MAX_AGE_S = 365 * 24 * 3600


# One piece: the app factory reads top to bottom in the order a request meets what it installs
# (settings, proxies, stores, start-up sweep, mail sender, views, hooks).
def create_app(
    db_path: str | os.PathLike | None = None,
    *,
    settings: Settings | None = None,
    **config,
) -> Flask:
    """Build the app on one data folder (its database created and migrated if new).

    ``settings`` are those in force (:func:`sitecheck.config.load_settings`); without them
    they are loaded from the environment and the data folder's ``sitecheck.toml``. A
    ``db_path`` alone names the database, and its folder is the data folder (photos, records
    and key beside it). ``config`` overrides Flask settings (tests).
    """
    if settings is None:
        if db_path is not None:
            database = Path(db_path).resolve()
            settings = load_settings(home=database.parent, overrides={"database": database})
        else:
            settings = load_settings()
    app = Flask(
        "sitecheck",
        template_folder=str(TEMPLATE_DIR),
        static_folder=str(STATIC_DIR),
        static_url_path="/static",
    )
    settings.database.parent.mkdir(parents=True, exist_ok=True)
    app.session_interface = CheckedCookieSessions()
    app.extensions["settings"] = settings
    app.config.update(
        DATA_HOME=str(settings.home),
        DB_PATH=str(settings.database),
        PHOTO_DIR=str(settings.photos),
        RECORD_DIR=str(settings.records),
        SECRET_KEY=settings.secret_key or _secret_key_in(settings.secret_key_file),
        MAX_CONTENT_LENGTH=settings.max_request_mb * 1024 * 1024,
        MAX_FORM_MEMORY_SIZE=1024 * 1024,
        SESSION_COOKIE_NAME="sitecheck",
        SESSION_COOKIE_HTTPONLY=True,
        SESSION_COOKIE_SAMESITE="Lax",
        SESSION_COOKIE_SECURE=settings.secure_cookies,
        WTF_CSRF_TIME_LIMIT=None,  # the token is tied to the server-side session instead
        # The cookie outlives the server-side session it names (31 days against at most 7),
        # so signing it again on every answer (the phone's outbox sends many) buys nothing.
        SESSION_REFRESH_EACH_REQUEST=False,
        # Site records (PDF) one person may start in an hour; handing out a finished one
        # of an unchanged site, or joining one being made, is not counted.
        RECORD_PDF_PER_HOUR=settings.record_pdf_per_hour,
        LOGIN_FAILURE_WINDOW_S=credentials.THROTTLE_WINDOW_S,
        LOG_IN_RULE_ACCOUNT=credentials.ACCOUNT_AT_ADDRESS,
        LOG_IN_RULE_ADDRESS=credentials.ANY_ACCOUNT_AT_ADDRESS,
        TRUSTED_PROXIES=settings.trusted_proxies,
        # MailSettings, or None for no mail (then invitation links are handed over).
        MAIL=MailSettings.from_env(settings.mail_environment()),
        # Deliver queued mail from a background thread of this process (the one process
        # holding the sender's lease sends; see sitecheck.mail).
        MAIL_SENDER=True,
        MIN_FREE_DISK_MB=settings.min_free_disk_mb,
        SWEEP_AT_START=True,
    )
    app.config.update(config)
    proxies = _trusted_proxies(app.config["TRUSTED_PROXIES"])
    if proxies:
        # Each trusted proxy adds the address it received from to X-Forwarded-For; only that
        # many entries from the right are believed, so a client cannot choose its own address
        # by sending the header itself. The host is not taken from the proxy: links in
        # e-mails use SITECHECK_BASE_URL.
        # Flask's documented way to wrap its WSGI app, which its types call a method.
        app.wsgi_app = ProxyFix(  # type: ignore[method-assign]
            app.wsgi_app, x_for=proxies, x_proto=proxies
        )
    return_picture_memory_to_the_system()  # a server decodes pictures all day
    photos = app.extensions["photo_store"] = PhotoStore(Path(app.config["PHOTO_DIR"]))
    db = store.open_db(app.config["DB_PATH"])  # creates and migrates once, up front
    try:
        # What a crash mid-upload left behind: temporary files, pictures no row names.
        # Under `sitecheck serve` the process that starts the workers does it once for all.
        swept = services.sweep_photo_files(db, photos) if app.config["SWEEP_AT_START"] else None
    finally:
        db.conn.close()
    if swept and (swept.temporary_files or swept.orphan_files):
        app.logger.warning(
            "photo store: removed %d temporary and %d unnamed files left by a crash",
            swept.temporary_files,
            swept.orphan_files,
        )
    if app.config["MAIL"] is not None and app.config["MAIL_SENDER"]:
        sender = MailSender(app.config["DB_PATH"], app.config["MAIL"])
        app.extensions["mail_sender"] = sender
        sender.start()
    jsonbody.install(app)
    csrf.init_app(app)

    # The views import this module (get_db, csrf), so they are imported once it is whole.
    from sitecheck.web import (
        health,
        inspect,
        login,
        notices,
        pages,
        people,
        record,
        release,
        review,
        sites,
        sync,
    )

    for job in (
        health,
        login,
        people,
        pages,
        sites,
        review,
        inspect,
        release,
        sync,
        record,
        notices,
    ):
        app.register_blueprint(job.bp)

    app.before_request(_start_clock)
    app.before_request(login.load_user)
    app.after_request(_log_request)
    app.teardown_appcontext(_end_request_db)
    app.after_request(_security_headers)
    app.after_request(_wake_mail_sender)
    compress.install(app)
    app.register_error_handler(CSRFError, pages.csrf_error)
    for code in (400, 403, 404, 405, 413, 429, 500):
        app.register_error_handler(code, pages.error_page)
    pages.install_template_helpers(app)
    return app


class _ThreadConnection(threading.local):
    """Each server thread's own connection, kept from one request to the next.

    Opening a connection per request cost more than a small request's own work: the pragmas,
    and on closing the last connection a WAL checkpoint written out in the request's time.
    A connection never crosses threads (sqlite3 forbids it) nor processes: a worker forked
    from a process that had one opens its own, and leaves the parent's untouched (closing a
    connection inherited across fork can undo the parent's locks). One per thread at most:
    asked for another file, the thread closes the one it had.
    """

    db = None
    path: str | None = None
    pid: int | None = None


_thread = _ThreadConnection()


def get_db():
    """This thread's connection to the app's database (the schema was brought up to date
    when the app was made)."""
    path = current_app.config["DB_PATH"]
    if _thread.db is not None and (_thread.path != path or _thread.pid != os.getpid()):
        if _thread.pid != os.getpid():
            # Another process's connection: keep it referenced, never close it here.
            _FORKED_AWAY.append(_thread.db)
        else:
            _thread.db.conn.close()
        _thread.db = None
    if _thread.db is None:
        _thread.db = store.connect(path)
        _thread.path, _thread.pid = path, os.getpid()
    g.db = _thread.db
    return _thread.db


_FORKED_AWAY: list = []


def photo_store() -> PhotoStore:
    from flask import current_app

    return current_app.extensions["photo_store"]


def _end_request_db(_exc) -> None:
    # The connection stays open for the thread's next request; nothing a request began may
    # stay open in it (a view that failed inside a transaction has rolled it back already).
    db = g.pop("db", None)
    if db is not None:
        store.roll_back_unfinished(db)


def _start_clock() -> None:
    g.request_started = time.perf_counter()


def _log_request(response):
    """One line per request: what was asked, the answer, how long it took, and by whom."""
    started = g.get("request_started")
    ms = round((time.perf_counter() - started) * 1000, 1) if started else None
    path = logs.safe_path(request.path, request.query_string.decode("latin-1"))
    user = getattr(g, "user", None)
    request_log.info(
        "%s %s %s %s ms",
        request.method,
        path,
        response.status_code,
        ms,
        extra={
            "method": request.method,
            "path": path,
            "status": response.status_code,
            "ms": ms,
            "user": user["id"] if user else None,
        },
    )
    return response


def _security_headers(response):
    h = response.headers
    # A view may have set one of these itself (a stricter referrer policy): it keeps its own.
    # One look at what is there, not one per header: every answer passes here.
    present = {name.lower() for name, _value in h.items()}

    def add(name: str, value: str) -> None:
        if name.lower() not in present:
            h.add(name, value)

    add("X-Content-Type-Options", "nosniff")
    if current_app.config["SESSION_COOKIE_SECURE"]:
        # Secure cookies mean the app is served over HTTPS: keep browsers to it for a year,
        # so a phone on a site's open Wi-Fi is not talked down to plain HTTP. Every answer
        # says so, whichever the browser happens to fetch first.
        add("Strict-Transport-Security", f"max-age={HSTS_MAX_AGE_S}")
    path = request.path
    if path.startswith("/static/") or path == "/manifest.webmanifest":
        # A script, style sheet, icon or manifest is not a document: the policies below are
        # read from the page (and the service worker's own script) only, and on each of the
        # phone's thirty-odd first-load files they cost about 450 bytes of 150 KB.
        if "content-disposition" in present:
            del h["Content-Disposition"]
        return response
    for name, value in _DOCUMENT_HEADERS:
        add(name, value)
    if path == "/sw.js":
        return response
    # A view that deliberately marks its response private (content-addressed photos) keeps
    # its own caching; everything else a logged-in user sees is not stored.
    if getattr(g, "user", None) is not None and not response.cache_control.private:
        h["Cache-Control"] = "no-store"
    return response


_DOCUMENT_HEADERS = (
    ("Content-Security-Policy", CSP),
    ("Referrer-Policy", "same-origin"),
    ("X-Frame-Options", "DENY"),
    ("Permissions-Policy", "camera=(self), geolocation=(self), microphone=()"),
)


def _wake_mail_sender(response):
    """Anything sent that was kept may have put a bearing in someone's hands: the mail
    sender looks at once for notices to make (sitecheck.notices) instead of at its next
    idle look. Waking it is setting a flag; it never delays the answer."""
    if request.method == "POST" and response.status_code < 400:
        sender = current_app.extensions.get("mail_sender")
        if sender is not None:
            sender.wake()
    return response


def _trusted_proxies(value) -> int:
    """How many proxies in front of sitecheck add X-Forwarded-For (SITECHECK_TRUSTED_PROXIES)."""
    if value is None or value == "":
        return 0
    try:
        count = int(value)
    except (TypeError, ValueError):
        count = -1
    if count < 0 or count > 10:
        raise ValueError(
            f"SITECHECK_TRUSTED_PROXIES is {value!r}: give the number of proxies in front of "
            "sitecheck that add X-Forwarded-For (0 when browsers reach it directly, 1 behind "
            "one HTTPS proxy)"
        )
    return count


def _secret_key_in(key_file: Path) -> str:
    """One key per deployment, kept in the data folder, so every worker process signs
    cookies alike and a restart keeps people logged in."""
    if not key_file.exists():
        key_file.parent.mkdir(parents=True, exist_ok=True)
        try:
            fd = os.open(key_file, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except FileExistsError:
            pass  # another worker made it first
        else:
            with os.fdopen(fd, "w") as f:
                f.write(secrets.token_hex(32))
    return key_file.read_text().strip()
